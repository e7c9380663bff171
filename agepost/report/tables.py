"""Render quantity summaries as a JSON-ready record, CSV text and LaTeX table rows.

Functions here return text or dicts; files are written by the caller through
:class:`agepost.outputs.OutputFolder`.

LaTeX digits
------------
A value with asymmetric errors is written ``value^{+up}_{-down}`` (median and the ends of
the equal-tailed interval). The larger error is rounded to two significant digits, and
the value and the smaller error are rounded to the same decimal place; for example
``13.78723 (+0.02131, -0.01984) -> 13.787^{+0.021}_{-0.020}`` and
``4567.2 (+123, -98) -> 4570^{+120}_{-100}``. Very small or large numbers (decimal
exponent of the value or larger error <= -4 or >= 5) get a power of ten factored out:
``3.66996e-4 (+1.9e-6, -1.8e-6) -> (3.670^{+0.019}_{-0.018}) \\times 10^{-4}``. If both
errors are zero the value is given to six significant digits with ``\\pm 0``; an
interval that is not quoted (NaN) is written ``--``.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Mapping
from typing import Any

from agepost.stats.summary import QuantitySummary

_INTERVAL_FIELDS = ("equal_tail_lo", "equal_tail_hi", "hpd_lo", "hpd_hi", "upper", "lower")


def quantity_record(summary: QuantitySummary, *, unit: str) -> dict[str, Any]:
    """JSON-ready dict of one quantity (NaN stays NaN; the JSON writer turns it into null).

    Keys: ``unit, n_samples, mean, median, std, mode, intervals, ess, ess_kish,
    ess_autocorr, mcse, rhat, warnings``; ``intervals`` maps each level key (``"0.68"``)
    to ``{"equal_tail": [lo, hi], "hpd": [lo, hi], "upper": x, "lower": x}``.
    """
    return {
        "unit": unit,
        "n_samples": summary.n_samples,
        "mean": summary.mean,
        "median": summary.median,
        "std": summary.std,
        "mode": summary.mode,
        "intervals": {
            key: {
                "equal_tail": list(interval.equal_tail),
                "hpd": list(interval.hpd),
                "upper": interval.upper,
                "lower": interval.lower,
            }
            for key, interval in summary.intervals.items()
        },
        "ess": summary.ess,
        "ess_kish": summary.ess_kish,
        "ess_autocorr": summary.ess_autocorr,
        "mcse": dict(summary.mcse),
        "rhat": summary.rhat,
        "warnings": list(summary.warnings),
    }


def _csv_number(value: float | None) -> str:
    if value is None or not math.isfinite(value):
        return ""
    return repr(float(value))


def summary_csv(summaries: Mapping[str, QuantitySummary], units: Mapping[str, str]) -> str:
    """CSV text, one row per quantity, full float precision; empty cell for NaN/None.

    Columns: ``quantity, unit, n_samples, mean, median, std, mode``, then for each level
    key ``K``: ``equal_tail_lo_K, equal_tail_hi_K, hpd_lo_K, hpd_hi_K, upper_K, lower_K``,
    then ``ess, ess_kish, ess_autocorr, rhat, mcse_mean, mcse_median, warnings`` (joined
    with ``" | "``). Levels are the union over quantities in first-seen order.
    """
    level_keys: list[str] = []
    for summary in summaries.values():
        level_keys += [key for key in summary.intervals if key not in level_keys]
    header = ["quantity", "unit", "n_samples", "mean", "median", "std", "mode"]
    header += [f"{field}_{key}" for key in level_keys for field in _INTERVAL_FIELDS]
    header += ["ess", "ess_kish", "ess_autocorr", "rhat", "mcse_mean", "mcse_median", "warnings"]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for name, s in summaries.items():
        row = [name, units.get(name, ""), str(s.n_samples)]
        row += [_csv_number(v) for v in (s.mean, s.median, s.std, s.mode)]
        for key in level_keys:
            interval = s.intervals.get(key)
            ends = (
                (*interval.equal_tail, *interval.hpd, interval.upper, interval.lower)
                if interval is not None
                else (math.nan,) * len(_INTERVAL_FIELDS)
            )
            row += [_csv_number(v) for v in ends]
        row += [_csv_number(v) for v in (s.ess, s.ess_kish, s.ess_autocorr, s.rhat)]
        row += [_csv_number(s.mcse.get("mean")), _csv_number(s.mcse.get("median"))]
        row.append(" | ".join(s.warnings))
        writer.writerow(row)
    return buffer.getvalue()


def _decimal_place(error: float) -> int:
    """Decimals that keep two significant digits of ``error`` (negative: round to tens...)."""
    decimals = 1 - math.floor(math.log10(error))
    if round(error, decimals) >= 10 ** (2 - decimals):  # 0.0996 -> 0.100: one digit too many
        decimals -= 1
    return decimals


def _fixed(value: float, decimals: int) -> str:
    rounded = round(value, decimals) + 0.0  # + 0.0 turns -0.0 into 0.0
    return f"{rounded:.{max(decimals, 0)}f}"


def round_to_error(value: float | None, error: float | None) -> str:
    """``value`` as text, rounded to the decimal place that leaves ``error`` two digits.

    Without a usable error (None, zero or not finite) the value gets six significant
    digits; a missing value gives ``"--"``.

    Examples
    --------
    >>> round_to_error(13.78723, 0.0213)
    '13.787'
    """
    if value is None or not math.isfinite(value):
        return "--"
    if error is None or not math.isfinite(error) or error == 0:
        return f"{value:.6g}"
    return _fixed(value, _decimal_place(abs(error)))


#: A power of ten is factored out when the value's (or larger error's) decimal exponent is
#: at or below the first number or at or above the second.
SCIENTIFIC_EXPONENTS = (-4, 5)


def asymmetric_parts(
    value: float, plus: float, minus: float
) -> tuple[str, str, str, int | None] | None:
    """Rounded texts ``(value, plus, minus, exponent)`` of a value with asymmetric errors.

    Digits follow the module rule. ``exponent`` is None in fixed notation, or the power of
    ten factored out of all three (see :data:`SCIENTIFIC_EXPONENTS`). Returns None when a
    number is not finite or both errors are zero.
    """
    if not all(math.isfinite(v) for v in (value, plus, minus)):
        return None
    larger = max(abs(plus), abs(minus))
    if larger == 0:
        return None
    exponent = math.floor(math.log10(max(abs(value), larger)))
    low, high = SCIENTIFIC_EXPONENTS
    scale = 10.0**exponent if (exponent <= low or exponent >= high) else 1.0
    decimals = _decimal_place(larger / scale)
    texts = [_fixed(v / scale, decimals) for v in (value, abs(plus), abs(minus))]
    return texts[0], texts[1], texts[2], (exponent if scale != 1.0 else None)


def format_asymmetric(value: float, plus: float, minus: float) -> str:
    """LaTeX ``value^{+plus}_{-minus}`` with digits set by the larger error (see module doc).

    Examples
    --------
    >>> format_asymmetric(13.78723, 0.02131, 0.01984)
    '13.787^{+0.021}_{-0.020}'
    >>> format_asymmetric(3.66996e-4, 1.9e-6, 1.8e-6)
    '(3.670^{+0.019}_{-0.018}) \\\\times 10^{-4}'
    """
    parts = asymmetric_parts(value, plus, minus)
    if parts is None:
        finite = all(math.isfinite(v) for v in (value, plus, minus))
        return f"{value:.6g} \\pm 0" if finite else "--"
    text = f"{parts[0]}^{{+{parts[1]}}}_{{-{parts[2]}}}"
    return text if parts[3] is None else f"({text}) \\times 10^{{{parts[3]}}}"


_LATEX_SPECIAL = {
    "\\": r"\textbackslash{}",
    "&": r"\&",
    "%": r"\%",
    "$": r"\$",
    "#": r"\#",
    "_": r"\_",
    "{": r"\{",
    "}": r"\}",
}


def _escape(text: str) -> str:
    return "".join(_LATEX_SPECIAL.get(char, char) for char in text)


def summary_latex(
    summaries: Mapping[str, QuantitySummary],
    units: Mapping[str, str],
    labels: Mapping[str, str] | None = None,
) -> str:
    """A LaTeX ``tabular``: one row per quantity, one column per credible level.

    Each cell is the median with asymmetric errors to the ends of that level's
    equal-tailed interval, digits as in the module docstring. The header names the level
    of each column and carries a unit column. ``labels`` map quantity names to LaTeX
    (used verbatim, e.g. ``"$t_0$"``); names without a label are escaped. Units are
    LaTeX too (e.g. ``"Gyr"``).
    """
    labels = labels or {}
    level_keys: list[str] = []
    for summary in summaries.values():
        level_keys += [key for key in summary.intervals if key not in level_keys]
    percent = [f"{100 * float(key):g}\\%" for key in level_keys]
    lines = [
        "% median and equal-tailed credible interval, digits from the larger error",
        "\\begin{tabular}{ll" + "c" * len(level_keys) + "}",
        "\\hline",
        "Quantity & Unit & " + " & ".join(f"median, {p} interval" for p in percent) + " \\\\",
        "\\hline",
    ]
    for name, s in summaries.items():
        cells = []
        for key in level_keys:
            interval = s.intervals.get(key)
            if interval is None:
                cells.append("--")
                continue
            low, high = interval.equal_tail
            text = format_asymmetric(s.median, high - s.median, s.median - low)
            cells.append(text if text == "--" else f"${text}$")
        label = labels.get(name, _escape(name))
        lines.append(f"{label} & {units.get(name, '')} & " + " & ".join(cells) + " \\\\")
    lines += ["\\hline", "\\end{tabular}", ""]
    return "\n".join(lines)
