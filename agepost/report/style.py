"""The house look of agepost figures: a colour-blind-safe palette, fonts and sizes.

Colours come from the Okabe-Ito palette, distinguishable under the common forms of colour
blindness and in greyscale by their lightness. Figures are drawn at the width they are
printed at (one journal column, 3.4 inches) with 7-point text, so nothing needs scaling.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from typing import Any

import matplotlib as mpl

#: One journal column, inches.
COLUMN_WIDTH_IN = 3.4
#: Two journal columns, inches.
PAGE_WIDTH_IN = 7.0
#: Main colour (Okabe-Ito blue), its dark companion for lines, and two accents.
MAIN = "#0072B2"
DARK = "#0B3954"
ACCENT = "#E69F00"
SECOND = "#D55E00"
#: Raster resolution of PNG output, dots per inch.
PNG_DPI = 300

_RC: dict[str, Any] = {
    "font.size": 7.0,
    "axes.labelsize": 7.5,
    "axes.titlesize": 7.5,
    "xtick.labelsize": 6.5,
    "ytick.labelsize": 6.5,
    "legend.fontsize": 6.5,
    "legend.frameon": False,
    "axes.linewidth": 0.6,
    "xtick.major.width": 0.6,
    "ytick.major.width": 0.6,
    "xtick.major.size": 2.5,
    "ytick.major.size": 2.5,
    "xtick.direction": "in",
    "ytick.direction": "in",
    "xtick.top": True,
    "ytick.right": True,
    "lines.linewidth": 1.0,
    "axes.spines.top": True,
    "savefig.bbox": "tight",
    "savefig.pad_inches": 0.02,
    "pdf.fonttype": 42,
}


@contextlib.contextmanager
def house_style() -> Iterator[None]:
    """Apply the house matplotlib settings inside a ``with`` block (global state restored)."""
    # matplotlib types rc keys as literals; a plain dict of known keys is what it expects
    with mpl.rc_context(_RC):  # type: ignore[arg-type]
        yield


def band_alpha(level: float) -> float:
    """Fill opacity of a credible band: wider levels are paler."""
    return 0.55 if level <= 0.7 else 0.28
