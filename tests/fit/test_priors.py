"""Priors and the free/fixed parameter model."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from agepost.errors import ConfigError
from agepost.fit.priors import FitModel, FreeParameter, Prior


@pytest.mark.parametrize(
    "prior",
    [
        Prior("uniform", 50.0, 90.0),
        Prior("gaussian", mean=0.3, sd=0.05),
        Prior("gaussian", minimum=0.0, maximum=0.35, mean=0.3, sd=0.05),
    ],
)
def test_prior_densities_are_normalised(prior):
    # scipy.integrate.quad of exp(log density) over the support must be 1
    lo = prior.minimum if math.isfinite(prior.minimum) else prior.mean - 12 * prior.sd
    hi = prior.maximum if math.isfinite(prior.maximum) else prior.mean + 12 * prior.sd
    total, _ = integrate.quad(
        lambda x: math.exp(prior.log_density(np.array([x]))[0]), lo, hi, epsabs=1e-12
    )
    assert total == pytest.approx(1.0, abs=1e-9)
    assert prior.log_density(np.array([hi + 1.0]))[0] == -np.inf or not math.isfinite(prior.maximum)


def test_gaussian_log_density_matches_the_normal_formula():
    # textbook normal density: -(x - m)^2 / (2 s^2) - ln(s sqrt(2 pi))
    prior = Prior("gaussian", mean=1.0, sd=2.0)
    x = np.array([-3.0, 1.0, 4.0])
    expected = -((x - 1.0) ** 2) / 8.0 - math.log(2.0 * math.sqrt(2 * math.pi))
    np.testing.assert_allclose(prior.log_density(x), expected, rtol=1e-14)


@pytest.mark.parametrize(
    ("kwargs", "pattern"),
    [
        ({"kind": "flat", "minimum": 0, "maximum": 1}, "prior 'flat' is unknown"),
        ({"kind": "uniform", "minimum": 1, "maximum": 1}, r"prior range \[1, 1\] is empty"),
        ({"kind": "uniform", "minimum": 0}, "a uniform prior needs finite min and max"),
        (
            {"kind": "gaussian", "mean": 0.0, "sd": -1.0},
            "a gaussian prior needs a finite mean and sd > 0",
        ),
    ],
)
def test_bad_priors(kwargs, pattern):
    with pytest.raises(ConfigError, match=pattern):
        Prior(**kwargs)


def test_prior_range_excluding_the_start_is_refused():
    with pytest.raises(
        ConfigError, match=r"start value 95.0 of H0 lies outside its prior range \[50.0, 90.0\]"
    ):
        FreeParameter("H0", Prior("uniform", 50.0, 90.0), 95.0)


def test_model_needs_a_free_parameter_and_known_names():
    free_h0 = FreeParameter("H0", Prior("uniform", 50.0, 90.0), 70.0)
    with pytest.raises(ConfigError, match="no parameter is free"):
        FitModel((), {"H0": 70.0, "Omega_m": 0.3})
    with pytest.raises(ConfigError, match="parameter 'sigma8' cannot be fitted"):
        FitModel((free_h0,), {"Omega_m": 0.3, "sigma8": 0.8})
    with pytest.raises(ConfigError, match="Omega_m has no default"):
        FitModel((free_h0,), {})
    with pytest.raises(ConfigError, match="H0 is given twice"):
        FitModel((free_h0,), {"H0": 70.0, "Omega_m": 0.3})
    with pytest.raises(ConfigError, match="radiation model 'some' is unknown"):
        FitModel((free_h0,), {"Omega_m": 0.3}, radiation="some")


def test_values_fill_fixed_and_default_parameters():
    model = FitModel(
        (FreeParameter("Omega_m", Prior("uniform", 0.0, 1.0), 0.3),), {"H0": 67.0, "w0": -0.9}
    )
    values = model.values(np.array([[0.25], [0.35]]))
    np.testing.assert_array_equal(values["Omega_m"], [0.25, 0.35])
    assert values["H0"].tolist() == [67.0, 67.0] and values["w0"].tolist() == [-0.9, -0.9]
    # core defaults: flat, cosmological constant, m_nu 0.06 eV, N_eff 3.044
    assert model.fixed_values() == {
        "Omega_k": 0.0,
        "w0": -0.9,
        "wa": 0.0,
        "m_nu": 0.06,
        "N_eff": 3.044,
        "H0": 67.0,
    }
    np.testing.assert_allclose(model.log_prior(np.array([[0.5], [1.5]])), [0.0, -np.inf])
