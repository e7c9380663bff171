"""Plausibility checks on resolved chain parameters: ranges, units and closure.

These catch unit and convention mistakes (a percentage for a density, ``h`` in a column
named H0, an ``Omega_Lambda`` that closes the budget under another convention), not
unlikely posteriors: the range limits are far wider than any real posterior.
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping

import numpy as np
from numpy.typing import NDArray

from agepost.errors import ChainFormatError
from agepost.physics.constants import NEUTRINO_TO_PHOTON_PER_SPECIES, OMEGA_GAMMA_H2_PER_K4


class ChainWarning(UserWarning):
    """A chain looks suspicious but can still be used (the fix is in the message)."""


#: Values outside these closed ranges are refused as a unit or naming mistake.
PHYSICAL_RANGES: dict[str, tuple[float, float]] = {
    "H0": (1e-3, 500.0),
    "Omega_m": (0.0, 5.0),
    "Omega_k": (-5.0, 5.0),
    "Omega_Lambda": (-5.0, 5.0),
    "w0": (-10.0, 10.0),
    "wa": (-20.0, 20.0),
    "m_nu": (0.0, 20.0),
    "N_eff": (0.0, 50.0),
}

#: Omega_nu h^2 = sum m_nu / 93.14 eV for non-relativistic neutrinos today
#: (Mangano et al. 2005; used here only to name a closure convention).
NEUTRINO_MASS_PER_OMEGA_H2_EV = 93.14

#: Closure differences below this are taken as agreement with a convention.
CLOSURE_TOLERANCE = 2e-5

_T_CMB_K = 2.7255
_DEFAULTS = {"Omega_k": 0.0, "m_nu": 0.06, "N_eff": 3.044}


def warn_if_little_h(h0: NDArray, *, column: str, source: str) -> None:
    """Warn when a column named like H0 holds values near 0.7 (h rather than km/s/Mpc)."""
    finite = h0[np.isfinite(h0)]
    if finite.size and 0.2 <= float(np.median(finite)) <= 2.0:
        warnings.warn(
            f"{source}: column {column!r} has values near {float(np.median(finite)):.3g}, which "
            f"looks like h = H0/100 rather than H0 in km/s/Mpc; rename the column to h or set "
            f'mapping.H0 = "100 * {column}"',
            ChainWarning,
            stacklevel=3,
        )


def row_text(rows: NDArray | None, index: int) -> str:
    """``"data row N"`` (from 1) for the ``index``-th row of a block, in file numbering."""
    return f"data row {(index if rows is None else int(rows[index])) + 1}"


def check_ranges(
    values: Mapping[str, NDArray],
    fixed: Mapping[str, float],
    *,
    source: str,
    rows: NDArray | None = None,
) -> None:
    """Refuse values outside :data:`PHYSICAL_RANGES` (NaN and inf are left to the NaN policy)."""
    for name, (low, high) in PHYSICAL_RANGES.items():
        if name in fixed and not low <= fixed[name] <= high:
            raise ChainFormatError(
                f"{source}: fixed {name} = {fixed[name]} is outside the physical range "
                f"[{low:g}, {high:g}]; check its units"
            )
        if name not in values:
            continue
        column = values[name]
        bad = np.isfinite(column) & ((column < low) | (column > high))
        if bad.any():
            row = int(np.argmax(bad))
            raise ChainFormatError(
                f"{source}: {name} has {int(bad.sum())} value(s) outside the physical range "
                f"[{low:g}, {high:g}], first {column[row]:g} at {row_text(rows, row)}; check the "
                "column's units and name (a percentage, or a physical density omega = Omega h^2?)"
            )


def _value(values: Mapping[str, NDArray], fixed: Mapping[str, float], name: str) -> NDArray | float:
    if name in values:
        return values[name]
    return fixed.get(name, _DEFAULTS.get(name, 0.0))


def closure_candidates(
    values: Mapping[str, NDArray], fixed: Mapping[str, float]
) -> dict[str, NDArray | float]:
    """Expected ``1 - Omega_m - Omega_k - Omega_Lambda`` under each common convention.

    Photons from T_cmb = 2.7255 K and relativistic neutrinos (N_eff species, each
    (7/8)(4/11)^(4/3) of the photons); massive neutrinos as Omega_nu h^2 = m_nu / 93.14 eV.
    """
    h = np.asarray(_value(values, fixed, "H0"), dtype=float) / 100.0
    n_eff = np.asarray(_value(values, fixed, "N_eff"), dtype=float)
    m_nu = np.asarray(_value(values, fixed, "m_nu"), dtype=float)
    photons = OMEGA_GAMMA_H2_PER_K4 * _T_CMB_K**4 / h**2
    radiation = photons * (1.0 + NEUTRINO_TO_PHOTON_PER_SPECIES * n_eff)
    massive = m_nu / NEUTRINO_MASS_PER_OMEGA_H2_EV / h**2
    return {
        "no radiation, Omega_m includes any massive neutrinos": 0.0,
        "photons and massless neutrinos outside Omega_m": radiation,
        "massive neutrinos outside Omega_m": massive,
        "photons, neutrinos and massive neutrinos all outside Omega_m": radiation + massive,
    }


def closure_note(values: Mapping[str, NDArray], fixed: Mapping[str, float], *, source: str) -> str:
    """Check an ``Omega_Lambda`` column against closure and say which convention it implies.

    A mismatch with every convention is also issued as a :class:`ChainWarning`.
    """
    lam = _value(values, fixed, "Omega_Lambda")
    residual = 1.0 - _value(values, fixed, "Omega_m") - _value(values, fixed, "Omega_k") - lam
    residual = np.atleast_1d(np.asarray(residual, dtype=float))
    finite = np.isfinite(residual)
    if not finite.any():
        return "Omega_Lambda: no finite values to check against closure"
    gaps = {
        label: float(
            np.median(np.abs(residual - np.broadcast_to(expected, residual.shape))[finite])
        )
        for label, expected in closure_candidates(values, fixed).items()
    }
    label, gap = min(gaps.items(), key=lambda item: item[1])
    median = float(np.median(residual[finite]))
    if gap <= CLOSURE_TOLERANCE:
        note = (
            f"Omega_Lambda closes the budget with {label} (median 1 - Omega_m - Omega_k - "
            f"Omega_Lambda = {median:.3g}); agepost recomputes dark energy by closure with "
            "massive neutrinos inside Omega_m"
        )
        if "massive neutrinos outside" in label:
            note += (
                "; the chain's Omega_m seems to exclude massive neutrinos: add them with "
                'mapping.Omega_m = "Omega_m + m_nu / 93.14 / (H0 / 100)**2"'
            )
            warnings.warn(f"{source}: {note}", ChainWarning, stacklevel=4)
        return note
    note = (
        f"Omega_Lambda does not close the budget under any usual convention: median "
        f"1 - Omega_m - Omega_k - Omega_Lambda = {median:.3g} (nearest convention, {label}, "
        f"is off by {gap:.3g}); if the chain has curvature without an Omega_k column, set "
        'mapping.Omega_k = "1 - Omega_m - Omega_Lambda"'
    )
    warnings.warn(f"{source}: {note}", ChainWarning, stacklevel=4)
    return note
