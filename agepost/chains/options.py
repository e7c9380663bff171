"""How to read a chain: one validated, immutable set of reading options.

The options come from the ``[chain]`` table of a TOML configuration
(:meth:`ReadOptions.from_table`), from command-line flags laid over it
(:meth:`ReadOptions.overlay`), or from keyword arguments in a notebook. Every value is
checked once, here, so the readers can trust what they receive.
"""

from __future__ import annotations

import dataclasses
import difflib
from collections.abc import Collection, Mapping
from pathlib import Path
from typing import Any

from agepost.chains.sampleset import CANONICAL_PARAMETERS
from agepost.errors import ConfigError

#: What the log-posterior column holds; ``minus_log_posterior`` is negated on reading.
LOG_POSTERIOR_KINDS: tuple[str, ...] = ("minus_log_posterior", "log_posterior", "log_likelihood")

#: What to do with NaN or infinite parameter values: keep them (derive flags the rows as
#: non-finite input, and the count is reported) or refuse the file.
NAN_POLICIES: tuple[str, ...] = ("exclude", "raise")

#: File layouts a reader exists for; ``None`` in :attr:`ReadOptions.layout` means detect.
LAYOUTS: tuple[str, ...] = ("text", "hdf5", "emcee", "npy", "npz")

#: Column separators for text files; ``None`` means detect from the first data line.
SEPARATORS: dict[str, str] = {"comma": ",", "tab": "\t", "whitespace": r"\s+"}

#: Parameters a mapping or a fixed value may name: the canonical ones plus the dark-energy
#: density, which is only checked against closure.
MAPPABLE: tuple[str, ...] = (*CANONICAL_PARAMETERS, "Omega_Lambda")


@dataclasses.dataclass(frozen=True)
class ReadOptions:
    """Options for reading chain files (every field optional).

    Attributes
    ----------
    names : tuple of str or None
        Column names for a file without a header row (or an HDF5 dataset or emcee file
        without stored names). Overrides a header row if both exist.
    names_file : Path or None
        Sidecar text file with one column name per line (first token of each line).
    weight_column, log_weight_column : str or None
        Column of non-negative weights (multiplicities), or of natural-log weights.
        Default: a column named ``weight``, ``weights`` or ``multiplicity`` if present.
    log_posterior_column : str or None
        Column holding a log-posterior-like value, kept in ``SampleSet.log_posterior``.
    log_posterior_kind : str
        One of :data:`LOG_POSTERIOR_KINDS`; ``minus_log_posterior`` values are negated.
    dataset : str or None
        HDF5 path inside the file: a 2-D dataset, a group of 1-D datasets, or an emcee
        backend group. Default: detected when the file offers exactly one candidate.
    burn_in : float or int
        A float in [0, 1) is the fraction of each chain dropped from its start; an int
        >= 0 is a count of rows (steps, for walkers) dropped from each chain.
    thin : int
        Keep every ``thin``-th row of each chain after the burn-in (>= 1).
    mapping : dict
        Parameter name (see :data:`MAPPABLE`) -> a column name or an arithmetic
        expression of columns (see :mod:`agepost.chains.expressions`).
    fixed : dict
        Parameter name -> one value for every sample (H0 in km/s/Mpc, m_nu in eV).
    nan_policy : str
        ``"exclude"`` (default) or ``"raise"``, see :data:`NAN_POLICIES`.
    plot_cap : int or None
        Largest number of samples drawn for figures; statistics always use every row.
    layout : str or None
        Force a layout from :data:`LAYOUTS` instead of detecting it.
    separator : str or None
        Text column separator (a key of :data:`SEPARATORS`) instead of detecting it.
    from_config : frozenset of str
        Names of the fields that a configuration table set (for provenance).
    """

    names: tuple[str, ...] | None = None
    names_file: Path | None = None
    weight_column: str | None = None
    log_weight_column: str | None = None
    log_posterior_column: str | None = None
    log_posterior_kind: str = "minus_log_posterior"
    dataset: str | None = None
    burn_in: float | int = 0
    thin: int = 1
    mapping: dict[str, str] = dataclasses.field(default_factory=dict)
    fixed: dict[str, float] = dataclasses.field(default_factory=dict)
    nan_policy: str = "exclude"
    plot_cap: int | None = None
    layout: str | None = None
    separator: str | None = None
    from_config: frozenset[str] = dataclasses.field(default=frozenset(), compare=False, repr=False)

    def __post_init__(self) -> None:
        for name, value in _checked_fields(self).items():
            object.__setattr__(self, name, value)

    @classmethod
    def from_table(
        cls, table: Mapping[str, Any], *, where: str, ignore: Collection[str] = ()
    ) -> ReadOptions:
        """Validate the ``[chain]`` table of a configuration.

        Parameters
        ----------
        table : mapping
            Keys are the field names of this class (except ``from_config``).
        where : str
            Where the table came from, for messages (``"demo.toml [chain]"``).
        ignore : collection of str
            Keys the caller handles itself (for example the chain file list).

        Raises
        ------
        ConfigError
            An unknown key (the nearest valid one is suggested) or an invalid value.
        """
        valid = [f for f in _FIELD_NAMES if f != "from_config"]
        for key in table:
            if key not in valid and key not in ignore:
                raise ConfigError(f"{where}: unknown key {key!r}{_nearest(key, [*valid, *ignore])}")
        values = {k: v for k, v in table.items() if k in valid}
        try:
            return cls(**values, from_config=frozenset(values))
        except ConfigError as error:
            raise ConfigError(f"{where}: {error.message}") from None

    def overlay(self, cli_values: Mapping[str, Any]) -> tuple[ReadOptions, dict[str, str]]:
        """Lay command-line values over these options; ``None`` means "flag not given".

        ``names`` may be a comma-separated string, or the path of an existing names file
        (then it sets ``names_file``); ``burn_in`` and ``thin`` may be strings.

        Returns
        -------
        options : ReadOptions
            The merged options.
        sources : dict
            For every field: ``"command line"``, ``"config"`` or ``"default"``.
        """
        given = {k: v for k, v in cli_values.items() if v is not None}
        unknown = [k for k in given if k not in _FIELD_NAMES or k == "from_config"]
        if unknown:
            raise ConfigError(f"command line: unknown chain option {unknown[0]!r}")
        given = _parse_cli_strings(given)
        try:
            merged = dataclasses.replace(self, **given)
        except ConfigError as error:
            raise ConfigError(f"command line: {error.message}") from None
        sources = {}
        for name in _FIELD_NAMES:
            if name == "from_config":
                continue
            if name in given:
                sources[name] = "command line"
            elif name in self.from_config:
                sources[name] = "config"
            else:
                sources[name] = "default"
        return merged, sources

    def burn_in_rows(self, n_rows: int) -> int:
        """Rows dropped from the start of a chain of ``n_rows`` rows (or steps)."""
        if isinstance(self.burn_in, float):
            return int(self.burn_in * n_rows)
        return int(self.burn_in)


_FIELD_NAMES: tuple[str, ...] = tuple(f.name for f in dataclasses.fields(ReadOptions))


def _nearest(word: str, choices: Collection[str]) -> str:
    """``"; did you mean 'x'?"`` for the closest choice, or a list of all choices."""
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.5)
    if close:
        return f"; did you mean {close[0]!r}?"
    return f"; valid keys are {', '.join(sorted(choices))}"


def _parse_cli_strings(given: dict[str, Any]) -> dict[str, Any]:
    """Turn command-line strings into the types the fields expect."""
    out = dict(given)
    names = out.get("names")
    if isinstance(names, str):
        if "," not in names and Path(names).is_file():
            out["names_file"] = Path(out.pop("names"))
        else:
            out["names"] = tuple(n.strip() for n in names.split(",") if n.strip())
    for key in ("burn_in", "thin", "plot_cap"):
        text = out.get(key)
        if isinstance(text, str):
            out[key] = _number(key, text)
    return out


def _number(key: str, text: str) -> int | float:
    try:
        return int(text)
    except ValueError:
        pass
    try:
        return float(text)
    except ValueError:
        raise ConfigError(f"command line: {key} = {text!r} is not a number") from None


def _checked_fields(options: ReadOptions) -> dict[str, Any]:
    """Each field normalised (tuples, Paths, floats) or a ConfigError."""
    out: dict[str, Any] = {
        "names": _names(options.names),
        "names_file": None if options.names_file is None else Path(options.names_file),
        "burn_in": _burn_in(options.burn_in),
        "thin": _positive_int("thin", options.thin),
        "plot_cap": None
        if options.plot_cap is None
        else _positive_int("plot_cap", options.plot_cap),
        "mapping": _mapping(options.mapping),
        "fixed": _fixed(options.fixed),
    }
    for name in ("weight_column", "log_weight_column", "log_posterior_column", "dataset"):
        value = getattr(options, name)
        if value is not None and (not isinstance(value, str) or not value.strip()):
            raise ConfigError(f"{name} must be a non-empty string, not {value!r}")
    if options.weight_column is not None and options.log_weight_column is not None:
        raise ConfigError("give weight_column or log_weight_column, not both")
    both = sorted(set(out["mapping"]) & set(out["fixed"]))
    if both:
        raise ConfigError(f"{both[0]} is both in mapping and in fixed; keep one of them")
    _choice("log_posterior_kind", options.log_posterior_kind, LOG_POSTERIOR_KINDS)
    _choice("nan_policy", options.nan_policy, NAN_POLICIES)
    if options.layout is not None:
        _choice("layout", options.layout, LAYOUTS)
    if options.separator is not None:
        _choice("separator", options.separator, tuple(SEPARATORS))
    out["from_config"] = frozenset(options.from_config)
    return out


def _choice(name: str, value: Any, choices: tuple[str, ...]) -> None:
    if value not in choices:
        raise ConfigError(f"{name} = {value!r} is not allowed; use one of {', '.join(choices)}")


def _names(names: Any) -> tuple[str, ...] | None:
    if names is None:
        return None
    if isinstance(names, str) or not all(isinstance(n, str) and n.strip() for n in names):
        raise ConfigError(f"names must be a list of non-empty strings, not {names!r}")
    names = tuple(n.strip() for n in names)
    duplicated = sorted({n for n in names if names.count(n) > 1})
    if duplicated:
        raise ConfigError(
            f"names lists {duplicated[0]!r} more than once; give each column one name"
        )
    return names


def _burn_in(value: Any) -> float | int:
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise ConfigError(f"burn_in must be a fraction in [0, 1) or a whole count, not {value!r}")
    if isinstance(value, float):
        if not 0.0 <= value < 1.0:
            raise ConfigError(
                f"burn_in = {value} is not a fraction in [0, 1); give a fraction like 0.3 "
                "or a whole number of rows like 500"
            )
        return value
    if value < 0:
        raise ConfigError(f"burn_in = {value} is negative; give a count >= 0")
    return value


def _positive_int(name: str, value: Any) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise ConfigError(f"{name} = {value!r} must be a whole number >= 1")
    return value


def _parameter_key(where: str, key: Any) -> None:
    if key not in MAPPABLE:
        raise ConfigError(f"{where}: {key!r} is not a parameter{_nearest(str(key), MAPPABLE)}")


def _mapping(mapping: Any) -> dict[str, str]:
    if not isinstance(mapping, Mapping):
        raise ConfigError(
            f'mapping must be a table of parameter = "column or expression", not {mapping!r}'
        )
    for key, value in mapping.items():
        _parameter_key("mapping", key)
        if not isinstance(value, str) or not value.strip():
            raise ConfigError(
                f"mapping.{key} must be a column name or expression string, not {value!r}"
            )
    return dict(mapping)


def _fixed(fixed: Any) -> dict[str, float]:
    if not isinstance(fixed, Mapping):
        raise ConfigError(f"fixed must be a table of parameter = number, not {fixed!r}")
    out = {}
    for key, value in fixed.items():
        _parameter_key("fixed", key)
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ConfigError(f"fixed.{key} must be a number, not {value!r}")
        out[key] = float(value)
    return out
