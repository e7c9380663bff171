"""A one-page, self-contained HTML report of a run: inputs, model, summary table, warnings, figures.

The page needs nothing outside itself: styles are inline, figures are embedded as base64
PNG ``data:`` URIs, and there are no scripts, fonts or links to fetch, so it opens offline
and can be mailed or archived as one file. Every piece of text is HTML-escaped.
"""

from __future__ import annotations

import base64
import html
import math
from collections.abc import Mapping, Sequence
from typing import Any

from agepost.report.tables import asymmetric_parts, round_to_error

#: Context keys :func:`render_report` understands (all optional).
CONTEXT_KEYS = (
    "title",
    "subtitle",
    "inputs",
    "model",
    "summary",
    "labels",
    "excluded",
    "warnings",
    "captions",
)
_PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
_DASH = "&ndash;"

_STYLE = """
body { font-family: 'DejaVu Sans', Helvetica, Arial, sans-serif; color: #1b1b1b;
       max-width: 68rem; margin: 1.5rem auto; padding: 0 1rem; line-height: 1.4; }
h1 { font-size: 1.5rem; margin-bottom: 0.2rem; color: #0B3954; }
h2 { font-size: 1.1rem; border-bottom: 2px solid #0072B2; padding-bottom: 0.15rem;
     margin-top: 1.6rem; color: #0B3954; }
p.sub { color: #555; margin-top: 0; }
table { border-collapse: collapse; font-size: 0.85rem; margin: 0.4rem 0; }
th, td { padding: 0.2rem 0.6rem; text-align: left; border-bottom: 1px solid #d8d8d8; }
thead th { background: #eef4f8; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
ul.warn li { color: #8a3b00; }
p.none { color: #2d6a2d; }
figure { margin: 1rem 0; page-break-inside: avoid; }
figure img { max-width: 100%; height: auto; border: 1px solid #e2e2e2; }
figcaption { font-size: 0.85rem; color: #444; }
@media print { body { margin: 0; } h2 { page-break-after: avoid; } }
"""


def _text(value: Any) -> str:
    return html.escape(str(value), quote=True)


def _cell(content: str) -> str:
    return f'<td class="num">{content}</td>'


def _key_value_table(rows: Mapping[str, Any]) -> str:
    if not rows:
        return '<p class="none">none</p>'
    body = "".join(f"<tr><th>{_text(k)}</th><td>{_text(v)}</td></tr>" for k, v in rows.items())
    return f"<table>{body}</table>"


def _finite(value: Any) -> bool:
    return isinstance(value, int | float) and math.isfinite(value)


def _asymmetric(median: Any, ends: Sequence[Any]) -> str:
    if not (_finite(median) and all(_finite(v) for v in ends)):
        return _DASH
    low, high = ends
    parts = asymmetric_parts(median, high - median, median - low)
    if parts is None:
        return _text(f"{median:.6g} ± 0")
    value, plus, minus, exponent = parts
    text = f"{_text(value)}<sup>+{_text(plus)}</sup><sub>&minus;{_text(minus)}</sub>"
    return text if exponent is None else f"({text}) &times; 10<sup>{exponent}</sup>"


def _level_keys(summary: Mapping[str, Mapping[str, Any]]) -> list[str]:
    keys: list[str] = []
    for record in summary.values():
        keys += [key for key in record.get("intervals", {}) if key not in keys]
    return keys


def _summary_row(label: str, record: Mapping[str, Any], keys: Sequence[str]) -> str:
    """One quantity: every number rounded so the first level's larger error has two digits."""
    intervals = record.get("intervals", {})
    median: Any = record.get("median")
    first: list[Any] = (
        intervals.get(keys[0], {}).get("equal_tail", [None, None]) if keys else [None, None]
    )
    error = (
        max(first[1] - median, median - first[0]) if all(map(_finite, [median, *first])) else None
    )
    cells = [f"<th>{_text(label)}</th>", f"<td>{_text(record.get('unit', ''))}</td>"]
    for key in keys:
        item = intervals.get(key, {})
        cells.append(_cell(_asymmetric(median, item.get("equal_tail", [None, None]))))
        hpd = [
            round_to_error(v, error) if _finite(v) else "--" for v in item.get("hpd", [None, None])
        ]
        cells.append(_cell(_DASH if "--" in hpd else _text(f"[{hpd[0]}, {hpd[1]}]")))
    for name in ("mean", "std"):
        value = record.get(name)
        cells.append(_cell(_text(round_to_error(value, error)) if _finite(value) else _DASH))
    ess, rhat = record.get("ess"), record.get("rhat")
    cells.append(_cell(_text(f"{ess:.0f}") if _finite(ess) else _DASH))
    cells.append(_cell(_text(f"{rhat:.4f}") if _finite(rhat) else _DASH))
    mcse = record.get("mcse", {}).get("median")
    cells.append(_cell(_text(f"{mcse:.2g}") if _finite(mcse) else _DASH))
    return "<tr>" + "".join(cells) + "</tr>"


def _summary_table(summary: Mapping[str, Mapping[str, Any]], labels: Mapping[str, str]) -> str:
    if not summary:
        return '<p class="none">no quantities</p>'
    keys = _level_keys(summary)
    head = ["quantity", "unit"]
    for key in keys:
        percent = f"{100 * float(key):g}%"
        head += [f"median, {percent} equal-tailed", f"{percent} HPD"]
    head += ["mean", "std", "ESS", "R-hat", "MCSE of median"]
    header = "".join(f"<th>{_text(h)}</th>" for h in head)
    rows = "".join(
        _summary_row(labels.get(name, name), record, keys) for name, record in summary.items()
    )
    return f"<table><thead><tr>{header}</tr></thead><tbody>{rows}</tbody></table>"


def _warning_list(context: Mapping[str, Any]) -> str:
    items = [str(text) for text in context.get("warnings", ())]
    for name, record in context.get("summary", {}).items():
        items += [f"{name}: {text}" for text in record.get("warnings", ())]
    if not items:
        return '<p class="none">No warnings.</p>'
    return '<ul class="warn">' + "".join(f"<li>{_text(t)}</li>" for t in items) + "</ul>"


def _figure(name: str, png: bytes, caption: str) -> str:
    if not png.startswith(_PNG_MAGIC):
        raise ValueError(f"figure {name!r} is not PNG data; pass the bytes of a .png file")
    data = base64.b64encode(png).decode("ascii")
    return (
        f'<figure><img src="data:image/png;base64,{data}" alt="{_text(caption)}">'
        f"<figcaption>{_text(caption)}</figcaption></figure>"
    )


def render_report(context: Mapping[str, Any], figures: Mapping[str, bytes]) -> str:
    """HTML text of the one-page report.

    Parameters
    ----------
    context : mapping
        All keys optional:

        - ``title`` (str), ``subtitle`` (str, e.g. tool version and date, given by caller);
        - ``inputs`` (mapping label -> value: files, checksums, rows read);
        - ``model`` (mapping setting -> value: radiation model, defaults filled in);
        - ``summary`` (mapping quantity -> record of
          :func:`agepost.report.tables.quantity_record`);
        - ``labels`` (mapping quantity -> plain-text label for the table);
        - ``excluded`` (mapping reason -> count of samples left out);
        - ``warnings`` (sequence of run-level warnings; each quantity's own warnings are
          listed too, prefixed with its name);
        - ``captions`` (mapping figure name -> caption; default the name).
    figures : mapping name -> PNG bytes
        Embedded in the given order.

    Returns
    -------
    str, a complete HTML5 document.

    Raises
    ------
    ValueError
        An unknown context key or figure bytes that are not PNG (a programming error).
    """
    unknown = sorted(set(context) - set(CONTEXT_KEYS))
    if unknown:
        raise ValueError(f"unknown report context keys {unknown}; known: {', '.join(CONTEXT_KEYS)}")
    title = str(context.get("title", "agepost report"))
    captions = context.get("captions", {})
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{_text(title)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>{_text(title)}</h1>",
    ]
    if context.get("subtitle"):
        parts.append(f'<p class="sub">{_text(context["subtitle"])}</p>')
    parts += [
        "<h2>Inputs</h2>",
        _key_value_table(context.get("inputs", {})),
        "<h2>Model and defaults</h2>",
        _key_value_table(context.get("model", {})),
        "<h2>Summary</h2>",
        _summary_table(context.get("summary", {}), context.get("labels", {})),
        "<h2>Excluded samples</h2>",
        _key_value_table(context.get("excluded", {})),
        "<h2>Warnings</h2>",
        _warning_list(context),
    ]
    if figures:
        parts.append("<h2>Figures</h2>")
        parts += [_figure(name, png, captions.get(name, name)) for name, png in figures.items()]
    parts.append("</body></html>")
    return "\n".join(parts) + "\n"
