"""The in-memory form of a chain: canonical parameter columns, weights and chain ids."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from agepost.errors import ChainFormatError

#: Canonical parameter columns, in display order, with the keyword of
#: :func:`agepost.physics.background.make_background` each one feeds.
CANONICAL_PARAMETERS: dict[str, str] = {
    "H0": "h0",
    "Omega_m": "omega_m",
    "Omega_k": "omega_k",
    "w0": "w0",
    "wa": "wa",
    "m_nu": "m_nu",
    "N_eff": "n_eff",
}


@dataclasses.dataclass(frozen=True)
class SampleSet:
    """Weighted posterior samples of the canonical parameters.

    Attributes
    ----------
    parameters : DataFrame, shape (n_samples, n_columns)
        Columns named as in :data:`CANONICAL_PARAMETERS` (``H0`` in km/s/Mpc, ``m_nu`` in
        eV); only the ones the chain carries. Parameters the chain does not carry are in
        ``fixed``.
    weights : (n_samples,) float
        Non-negative multiplicities or importance weights (zero is allowed).
    chain_id : (n_samples,) int
        Which independent chain (file, walker) each row came from, numbered from 0.
    fixed : dict
        Parameters held at one value for every sample, by canonical name.
    source : str
        Where the samples came from, for reports (file names).
    notes : tuple of str
        What the reader decided on the user's behalf (defaults, recognised columns).
    log_posterior : (n_samples,) float or None
        Log-posterior (or log-likelihood) stored in the chain, if any.
    """

    parameters: pd.DataFrame
    weights: NDArray[np.float64]
    chain_id: NDArray[np.int64]
    fixed: dict[str, float] = dataclasses.field(default_factory=dict)
    source: str = ""
    notes: tuple[str, ...] = ()
    log_posterior: NDArray[np.float64] | None = None

    def __post_init__(self) -> None:
        n = len(self.parameters)
        if self.weights.shape != (n,) or self.chain_id.shape != (n,):
            raise ChainFormatError(
                f"{self.source or 'chain'}: weights {self.weights.shape} and chain ids "
                f"{self.chain_id.shape} must both have shape ({n},)"
            )
        unknown = [c for c in self.parameters.columns if c not in CANONICAL_PARAMETERS]
        unknown += [c for c in self.fixed if c not in CANONICAL_PARAMETERS]
        if unknown:
            raise ChainFormatError(
                f"{self.source or 'chain'}: {unknown} are not canonical parameter names "
                f"({', '.join(CANONICAL_PARAMETERS)})"
            )

    @property
    def n_samples(self) -> int:
        """Number of rows (zero-weight rows included)."""
        return len(self.parameters)

    @property
    def n_chains(self) -> int:
        """Number of distinct chain ids."""
        return int(np.unique(self.chain_id).size)

    def column(self, name: str) -> NDArray[np.float64]:
        """Values of a canonical parameter for every sample, from a column or ``fixed``."""
        if name in self.parameters.columns:
            return self.parameters[name].to_numpy(dtype=float)
        if name in self.fixed:
            return np.full(self.n_samples, float(self.fixed[name]))
        raise ChainFormatError(
            f"{self.source or 'chain'}: parameter {name!r} is neither a column nor fixed"
        )

    def has(self, name: str) -> bool:
        """True when ``name`` is a column or a fixed value."""
        return name in self.parameters.columns or name in self.fixed

    def take(self, rows: NDArray[np.intp] | slice) -> SampleSet:
        """A subset of rows with everything else kept."""
        return dataclasses.replace(
            self,
            parameters=self.parameters.iloc[rows].reset_index(drop=True),
            weights=self.weights[rows],
            chain_id=self.chain_id[rows],
            log_posterior=None if self.log_posterior is None else self.log_posterior[rows],
        )
