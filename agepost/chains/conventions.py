"""Turn a chain's own columns into the canonical parameters, saying where each came from.

Resolution order for every parameter: the declared ``mapping`` (a column name or an
expression), then a ``fixed`` value, then automatic recognition of common column names
(:data:`ALIASES`), then the conversions

* ``H0 = 100 h`` from a column of the dimensionless Hubble parameter ``h``;
* ``Omega_m = omega_m / h^2`` from a physical matter density, or
  ``Omega_m = (omega_b + omega_c [+ omega_nu]) / h^2`` from its parts.

Parameters still missing (``Omega_k``, ``w0``, ``wa``, ``m_nu``, ``N_eff``) are left out;
:func:`agepost.derive.derive` fills its defaults and reports them, and the notes say so.
An ``Omega_Lambda`` column is never used as input, only checked against closure.
"""

from __future__ import annotations

import dataclasses
import difflib
from collections.abc import Mapping

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from agepost.chains import checks
from agepost.chains.expressions import is_plain_name, parse_expression
from agepost.chains.options import ReadOptions
from agepost.chains.sampleset import CANONICAL_PARAMETERS
from agepost.errors import ChainFormatError
from agepost.physics.background import DEFAULTS

#: Omega_nu h^2 = sum m_nu / 93.14 eV for non-relativistic neutrinos (Mangano et al. 2005).
NEUTRINO_EV_PER_OMEGA_H2 = 93.14

#: Column names recognised without a mapping, by the quantity they hold. ``h`` and the
#: lower-case physical densities ``omega_x = Omega_x h^2`` are converted.
ALIASES: dict[str, tuple[str, ...]] = {
    "H0": ("H0", "H_0"),
    "h": ("h",),
    "Omega_m": ("Omega_m", "Omega_M", "Omega_m0", "Om"),
    "omega_m": ("omega_m", "omh2"),
    "omega_b": ("omega_b", "obh2"),
    "omega_c": ("omega_c", "omega_cdm", "och2"),
    "omega_nu": ("omega_nu", "onuh2"),
    "Omega_k": ("Omega_k", "Omega_K", "Ok"),
    "Omega_Lambda": ("Omega_Lambda", "Omega_L", "Omega_de"),
    "w0": ("w0", "w", "w_0"),
    "wa": ("wa", "w_a"),
    "m_nu": ("m_nu", "mnu", "sum_m_nu"),
    "N_eff": ("N_eff", "Neff"),
}

#: Parameters a chain may lack; derive fills them from the model settings.
OPTIONAL: tuple[str, ...] = ("Omega_k", "w0", "wa", "m_nu", "N_eff")


@dataclasses.dataclass(frozen=True)
class Resolved:
    """Canonical parameters of one block of rows and how each was found.

    Attributes
    ----------
    parameters : DataFrame (n_rows, n_found) with canonical column names.
    fixed : canonical name -> value held for every row.
    recognition : (parameter, origin) pairs in canonical order, ``Omega_Lambda`` last.
    notes : sentences for the report (absent parameters, ignored columns, checks).
    used_columns : the chain columns that fed a parameter.
    """

    parameters: pd.DataFrame
    fixed: dict[str, float]
    recognition: tuple[tuple[str, str], ...]
    notes: tuple[str, ...]
    used_columns: frozenset[str]


def find_alias(columns: Mapping[str, NDArray], quantity: str, *, source: str) -> str | None:
    """The chain column holding ``quantity`` under a recognised name, or None.

    Raises
    ------
    ChainFormatError
        Two recognised names for the same quantity are both present.
    """
    present = [name for name in ALIASES[quantity] if name in columns]
    if len(present) > 1:
        raise ChainFormatError(
            f"{source}: columns {present[0]!r} and {present[1]!r} both look like {quantity}; "
            f'say which one to use with mapping.{_canonical_key(quantity)} = "{present[0]}"'
        )
    return present[0] if present else None


def resolve(
    columns: Mapping[str, NDArray],
    options: ReadOptions,
    *,
    source: str,
    rows: NDArray | None = None,
) -> Resolved:
    """Canonical parameters from the chain's columns, per the options.

    Parameters
    ----------
    columns : mapping of column name -> (n_rows,) float array
    options : ReadOptions
        ``mapping`` and ``fixed`` are used here.
    source : str
        File name for messages.
    rows : (n_rows,) int or None
        Row number of each row in the file's data (from 0), for messages.
    """
    state = _State(columns=columns, source=source, rows=rows)
    for name in (*CANONICAL_PARAMETERS, "Omega_Lambda"):
        if name in options.mapping:
            state.from_mapping(name, options.mapping[name])
        elif name in options.fixed:
            state.from_fixed(name, options.fixed[name])
        elif name == "H0":
            state.find_h0()
        elif name == "Omega_m":
            state.find_omega_m()
        else:
            state.find_plain(name)
    if "H0" not in state.values and "H0" not in state.fixed:
        raise ChainFormatError(
            f"{source}: no column gives H0; name a column H0 (km/s/Mpc) or h, or set "
            f"mapping.H0{_suggest('H0', columns)}"
        )
    if "Omega_m" not in state.values and "Omega_m" not in state.fixed:
        raise ChainFormatError(
            f"{source}: no column gives Omega_m; name a column Omega_m, omega_m (= Omega_m h^2) "
            f"or omega_b and omega_c, or set mapping.Omega_m{_suggest('Omega_m', columns)}"
        )
    return state.finish()


@dataclasses.dataclass
class _State:
    """Working space of :func:`resolve` (mutable, private)."""

    columns: Mapping[str, NDArray]
    source: str
    rows: NDArray | None
    values: dict[str, NDArray] = dataclasses.field(default_factory=dict)
    fixed: dict[str, float] = dataclasses.field(default_factory=dict)
    origins: dict[str, str] = dataclasses.field(default_factory=dict)
    used: set[str] = dataclasses.field(default_factory=set)
    notes: list[str] = dataclasses.field(default_factory=list)

    def from_mapping(self, name: str, text: str) -> None:
        where = f"{self.source}: mapping.{name}"
        if is_plain_name(text):
            column = text.strip()
            if column not in self.columns:
                raise ChainFormatError(
                    f"{where} names column {column!r}, which the file lacks"
                    f"{_suggest(column, self.columns)}"
                )
            self.values[name] = np.asarray(self.columns[column], dtype=float)
            self.origins[name] = f"column {column} (mapping)"
            self.used.add(column)
            return
        expression = parse_expression(text, where=where)
        try:
            self.values[name] = expression.evaluate(self.columns)
        except ChainFormatError as error:
            raise ChainFormatError(f"{where}: {error.message}") from None
        self.origins[name] = f"expression {text.strip()} (mapping)"
        self.used.update(expression.columns)

    def from_fixed(self, name: str, value: float) -> None:
        quantity = "Omega_Lambda" if name == "Omega_Lambda" else name
        column = (
            find_alias(self.columns, quantity, source=self.source) if quantity in ALIASES else None
        )
        if column is not None:
            raise ChainFormatError(
                f"{self.source}: {name} is fixed to {value} in the options but the file has a "
                f"column {column!r} for it; remove fixed.{name} or map {name} to the column"
            )
        self.fixed[name] = value
        self.origins[name] = f"fixed value {value:g}"

    def take_column(self, name: str, column: str, origin: str | None = None) -> None:
        self.values[name] = np.asarray(self.columns[column], dtype=float)
        self.origins[name] = origin or f"column {column}"
        self.used.add(column)

    def find_h0(self) -> None:
        column = find_alias(self.columns, "H0", source=self.source)
        if column is not None:
            self.take_column("H0", column)
            checks.warn_if_little_h(self.values["H0"], column=column, source=self.source)
            return
        column = find_alias(self.columns, "h", source=self.source)
        if column is not None:
            self.values["H0"] = 100.0 * np.asarray(self.columns[column], dtype=float)
            self.origins["H0"] = f"100 * column {column}"
            self.used.add(column)

    def little_h(self) -> tuple[NDArray | float, str]:
        """h = H0/100 for the physical-density conversions, and its description."""
        if "H0" in self.values:
            return self.values["H0"] / 100.0, "H0/100"
        if "H0" in self.fixed:
            return self.fixed["H0"] / 100.0, "fixed H0/100"
        raise ChainFormatError(
            f"{self.source}: physical densities (omega_x = Omega_x h^2) need H0 or h; add a column "
            "or set fixed.H0"
        )

    def find_omega_m(self) -> None:
        column = find_alias(self.columns, "Omega_m", source=self.source)
        if column is not None:
            self.take_column("Omega_m", column)
            return
        physical = find_alias(self.columns, "omega_m", source=self.source)
        parts = [
            find_alias(self.columns, q, source=self.source)
            for q in ("omega_b", "omega_c", "omega_nu")
        ]
        if physical is None and (parts[0] is None or parts[1] is None):
            return
        h, h_text = self.little_h()
        if physical is not None:
            summed = [physical]
        else:
            summed = [p for p in parts if p is not None]
        total = sum(np.asarray(self.columns[c], dtype=float) for c in summed)
        origin = f"({' + '.join(summed)}) / ({h_text})^2"
        if physical is None and parts[2] is None:
            # Omega_m counts massive neutrinos (DESIGN.md); omega_b + omega_c does not.
            m_nu, m_nu_text = self.neutrino_mass()
            total = total + m_nu / NEUTRINO_EV_PER_OMEGA_H2
            origin = f"({' + '.join(summed)} + {m_nu_text}/93.14 eV) / ({h_text})^2"
            self.notes.append(
                f"Omega_m: no omega_nu column, so the massive neutrinos ({m_nu_text}, "
                "Omega_nu h^2 = sum m_nu / 93.14 eV) were added to omega_b + omega_c"
            )
        self.values["Omega_m"] = np.broadcast_to(total / np.square(h), np.shape(total)).copy()
        self.origins["Omega_m"] = origin
        self.used.update(summed)

    def neutrino_mass(self) -> tuple[NDArray | float, str]:
        """Sum of neutrino masses (eV) per row for the omega_nu fill-in, and its description."""
        column = find_alias(self.columns, "m_nu", source=self.source)
        if column is not None:
            return np.asarray(self.columns[column], dtype=float), f"column {column}"
        if "m_nu" in self.fixed:
            return float(self.fixed["m_nu"]), f"fixed m_nu = {self.fixed['m_nu']} eV"
        return DEFAULTS["m_nu"], f"default m_nu = {DEFAULTS['m_nu']} eV"

    def find_plain(self, name: str) -> None:
        column = find_alias(self.columns, name, source=self.source)
        if column is not None:
            self.take_column(name, column)
        elif name in OPTIONAL:
            self.origins[name] = "absent: model default"
            self.notes.append(f"{name}: no column in the chain; the model default is used")

    def finish(self) -> Resolved:
        checks.check_ranges(self.values, self.fixed, source=self.source, rows=self.rows)
        if "Omega_Lambda" in self.values or "Omega_Lambda" in self.fixed:
            self.notes.append(checks.closure_note(self.values, self.fixed, source=self.source))
        parameters = pd.DataFrame(
            {k: self.values[k] for k in CANONICAL_PARAMETERS if k in self.values}
        )
        order = [*CANONICAL_PARAMETERS, "Omega_Lambda"]
        recognition = tuple((k, self.origins[k]) for k in order if k in self.origins)
        return Resolved(
            parameters=parameters,
            fixed={k: v for k, v in self.fixed.items() if k in CANONICAL_PARAMETERS},
            recognition=recognition,
            notes=tuple(self.notes),
            used_columns=frozenset(self.used),
        )


def _canonical_key(quantity: str) -> str:
    """The mapping key that replaces an ambiguous quantity (``h`` -> ``H0``)."""
    return {
        "h": "H0",
        "omega_m": "Omega_m",
        "omega_b": "Omega_m",
        "omega_c": "Omega_m",
        "omega_nu": "Omega_m",
    }.get(quantity, quantity)


def _suggest(name: str, columns: Mapping[str, NDArray]) -> str:
    close = difflib.get_close_matches(name, list(columns), n=1, cutoff=0.5)
    return f"; did you mean {close[0]!r}?" if close else _columns_hint(columns)


def _columns_hint(columns: Mapping[str, NDArray]) -> str:
    names = list(columns)
    shown = ", ".join(names[:12]) + (", ..." if len(names) > 12 else "")
    return f" (the file's columns: {shown})"
