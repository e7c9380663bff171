"""Parameter conventions: recognition, conversions and the closure check, by hand."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from agepost.chains.checks import ChainWarning
from agepost.chains.conventions import resolve
from agepost.chains.options import ReadOptions
from agepost.errors import ChainFormatError


def _resolve(columns, **options):
    arrays = {k: np.asarray(v, dtype=float) for k, v in columns.items()}
    return resolve(arrays, ReadOptions(**options), source="chain.txt")


def test_h_becomes_h0_times_100():
    # hand calculation: H0 = 100 h, so h = 0.675 -> 67.5 km/s/Mpc
    resolved = _resolve({"h": [0.675, 0.70], "Omega_m": [0.3, 0.31]})
    assert_allclose(resolved.parameters["H0"], [67.5, 70.0], rtol=1e-15)
    assert dict(resolved.recognition)["H0"] == "100 * column h"


def test_physical_matter_density_divided_by_h_squared():
    # hand calculation: Omega_m = omega_m / h^2 = 0.1430 / 0.6766^2 = 0.1430 / 0.45778756
    resolved = _resolve({"H0": [67.66], "omega_m": [0.1430]})
    assert_allclose(resolved.parameters["Omega_m"], [0.1430 / 0.45778756], rtol=1e-12)


def test_baryons_plus_cdm_plus_neutrinos():
    # hand calculation: (0.02242 + 0.11933 + 0.00064) / 0.6766^2 = 0.14239 / 0.45778756
    resolved = _resolve(
        {"h": [0.6766], "omega_b": [0.02242], "omega_c": [0.11933], "omega_nu": [0.00064]}
    )
    assert_allclose(resolved.parameters["Omega_m"], [0.14239 / 0.45778756], rtol=1e-12)
    assert "omega_nu" in resolved.used_columns


def test_absent_optional_parameters_are_left_out_and_noted():
    resolved = _resolve({"H0": [70.0], "Omega_m": [0.3]})
    assert list(resolved.parameters.columns) == ["H0", "Omega_m"]
    assert dict(resolved.recognition)["Omega_k"] == "absent: model default"
    assert any(note.startswith("w0: no column") for note in resolved.notes)


def test_w_is_recognised_as_w0_and_mapping_wins():
    resolved = _resolve({"H0": [70.0], "Om": [0.3], "w": [-0.9]})
    assert_allclose(resolved.parameters["w0"], [-0.9])
    resolved = _resolve(
        {"H0": [70.0], "Om": [0.3], "w": [-0.9], "dew": [-1.1]}, mapping={"w0": "dew"}
    )
    assert_allclose(resolved.parameters["w0"], [-1.1])
    assert dict(resolved.recognition)["w0"] == "column dew (mapping)"


def test_mapping_expression_and_fixed_value():
    resolved = _resolve(
        {"hubble": [0.7], "ob": [0.0224], "oc": [0.12]},
        mapping={"H0": "100 * hubble", "Omega_m": "(ob + oc) / hubble**2"},
        fixed={"m_nu": 0.1},
    )
    # hand calculation: 0.1424 / 0.49 = 0.29061224...
    assert_allclose(resolved.parameters["Omega_m"], [0.1424 / 0.49], rtol=1e-14)
    assert resolved.fixed == {"m_nu": 0.1}


def test_two_names_for_one_quantity_are_ambiguous():
    with pytest.raises(ChainFormatError, match="'w0' and 'w'.*mapping.w0"):
        _resolve({"H0": [70.0], "Omega_m": [0.3], "w0": [-1.0], "w": [-1.0]})


def test_fixed_value_that_shadows_a_column_is_refused():
    with pytest.raises(ChainFormatError, match="fixed to 70.0.*column 'H0'"):
        _resolve({"H0": [70.0], "Omega_m": [0.3]}, fixed={"H0": 70.0})


def test_missing_matter_density_suggests_nearest_column():
    with pytest.raises(ChainFormatError, match="no column gives Omega_m.*did you mean 'Omega_mm'"):
        _resolve({"H0": [70.0], "Omega_mm": [0.3]})


def test_missing_h0():
    with pytest.raises(ChainFormatError, match="no column gives H0"):
        _resolve({"Omega_m": [0.3]})


def test_h_in_an_h0_column_warns_with_the_fix():
    with pytest.warns(ChainWarning, match=r"looks like h = H0/100.*mapping.H0 = \"100 \* H0\""):
        _resolve({"H0": [0.68, 0.70], "Omega_m": [0.3, 0.3]})


@pytest.mark.parametrize(("name", "value"), [("Omega_m", 31.5), ("Omega_m", -0.1), ("m_nu", -0.01)])
def test_values_outside_physical_ranges_are_refused(name, value):
    columns = {"H0": [70.0, 70.0], "Omega_m": [0.3, 0.3], "m_nu": [0.06, 0.06]}
    columns[name] = [columns[name][0], value]
    with pytest.raises(ChainFormatError, match=f"{name} has 1 value.*data row 2"):
        _resolve(columns)


# Closure: Omega_Lambda = 1 - Omega_m - Omega_k - (what the chain left outside Omega_m).
# Hand calculation at h = 0.675 (h^2 = 0.455625), Omega_m = 0.3, flat:
#   photons: Omega_gamma h^2 = 2.473e-5 at 2.7255 K (DESIGN.md check source, from the
#   radiation constant); with N_eff = 3.044 massless neutrinos the radiation is
#   2.473e-5 * (1 + 0.22711 * 3.044) / 0.455625 = 9.18e-5;
#   massive neutrinos: 0.06 eV / 93.14 eV / 0.455625 = 1.4138e-3 (Mangano et al. 2005).
CLOSURE_CASES = [
    (0.7, "no radiation"),
    (0.7 - 9.18e-5, "photons and massless neutrinos"),
]


@pytest.mark.parametrize(("omega_lambda", "label"), CLOSURE_CASES)
def test_omega_lambda_consistent_with_a_convention(omega_lambda, label):
    resolved = _resolve({"H0": [67.5], "Omega_m": [0.3], "Omega_Lambda": [omega_lambda]})
    assert any(
        note.startswith(f"Omega_Lambda closes the budget with {label}") for note in resolved.notes
    )
    assert "Omega_Lambda" not in resolved.parameters.columns


def test_omega_lambda_showing_neutrinos_outside_omega_m_warns_with_fix():
    with pytest.warns(ChainWarning, match=r"exclude massive neutrinos.*m_nu / 93.14"):
        _resolve({"H0": [67.5], "Omega_m": [0.3], "Omega_Lambda": [0.7 - 1.4138e-3]})


def test_omega_lambda_mismatch_is_reported_not_ignored():
    # 1 - 0.3 - 0.65 = 0.05: no convention explains it (likely curvature)
    with pytest.warns(ChainWarning, match="does not close.*= 0.05.*mapping.Omega_k"):
        resolved = _resolve({"H0": [67.5], "Omega_m": [0.3], "Omega_Lambda": [0.65]})
    assert any("does not close" in note for note in resolved.notes)


def test_baryon_plus_cdm_densities_get_the_neutrinos_added(tmp_path):
    # Omega_m counts massive neutrinos (DESIGN.md); a chain of omega_b and omega_c lacks
    # them, so Omega_nu h^2 = m_nu / 93.14 eV (Mangano et al. 2005) is added. Hand
    # calculation: (0.02237 + 0.1200 + 0.06/93.14) / 0.6736^2 = 0.315187...
    from agepost.chains import ReadOptions, read_chains

    path = tmp_path / "physical.txt"
    path.write_text("h omega_b omega_c\n0.6736 0.02237 0.1200\n")
    samples = read_chains(path, ReadOptions(fixed={"m_nu": 0.06}))
    expected = (0.02237 + 0.1200 + 0.06 / 93.14) / 0.6736**2
    assert abs(samples.parameters["Omega_m"][0] - expected) < 1e-12
    assert any("93.14" in note for note in samples.notes)
