"""The HTML report: content, self-containment, and rendering in a headless browser."""

from __future__ import annotations

import base64
import io
import re
import shutil
import subprocess
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import numpy as np
import pytest
from matplotlib.figure import Figure
from matplotlib.image import imread

from agepost.report.html import render_report
from agepost.report.tables import quantity_record
from agepost.stats.summary import summarise

CHROMIUM = shutil.which("chromium") or (
    "/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None
)


def png_figure(colour: str) -> bytes:
    """A small PNG: a filled square of one colour (so the screenshot can look for it)."""
    fig = Figure(figsize=(3.0, 2.0))
    ax = fig.add_subplot()
    ax.fill_between([0, 1], 0, 1, color=colour)
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=100)
    return buffer.getvalue()


@pytest.fixture(scope="module")
def context():
    rng = np.random.default_rng(91)
    age = summarise(rng.normal(13.787, 0.02, 8000), chain_id=np.repeat([0, 1], 4000))
    tiny = summarise(rng.normal(2.0, 0.3, 150))
    return {
        "title": "Okapi cluster <age> & times",
        "subtitle": "agepost 0.1.0",
        "inputs": {"chain": "lantern_deep_field.txt", "rows read": 8000},
        "model": {"radiation": "full", "m_nu [eV]": 0.06},
        "summary": {
            "age": quantity_record(age, unit="Gyr"),
            "lookback_z0.5": quantity_record(tiny, unit="Gyr"),
        },
        "labels": {"age": "age today"},
        "excluded": {"no big bang": 3},
        "warnings": ["3 samples have no big bang"],
        "captions": {"corner": "Corner plot of the inputs with the age"},
    }


@pytest.fixture(scope="module")
def figures():
    return {"corner": png_figure("#0072B2"), "marginal_age": png_figure("#E69F00")}


def test_report_contains_everything_and_nothing_external(context, figures):
    text = render_report(context, figures)
    assert text.startswith("<!DOCTYPE html>") and text.rstrip().endswith("</html>")
    # every figure embedded byte for byte
    embedded = re.findall(r'src="data:image/png;base64,([A-Za-z0-9+/=]+)"', text)
    assert [base64.b64decode(data) for data in embedded] == list(figures.values())
    # nothing to fetch, nothing to run
    lowered = text.lower()
    for forbidden in ("http", "<script", "<link", "@import", "url("):
        assert forbidden not in lowered, forbidden
    # escaped title, inputs, model, labels, excluded counts, caption
    assert "Okapi cluster &lt;age&gt; &amp; times" in text
    for piece in ("lantern_deep_field.txt", "radiation", "age today", "no big bang", "Corner plot"):
        assert piece in text
    # warnings: run-level and per quantity, prefixed by its name
    assert "3 samples have no big bang" in text
    assert "lookback_z0.5: the 0.95 intervals are not quoted" in text


def test_summary_table_numbers(context, figures):
    text = render_report(context, figures)
    record = context["summary"]["age"]
    low, high = record["intervals"]["0.68"]["equal_tail"]
    median = record["median"]
    digits = re.search(r"<tr><th>age today</th>.*?</tr>", text).group(0)
    # the median rounded as in the LaTeX table, with its asymmetric errors
    from agepost.report.tables import format_asymmetric

    value = format_asymmetric(median, high - median, median - low).split("^")[0]
    assert f">{value}<sup>+" in digits
    assert "<th>median, 68% equal-tailed</th>" in text and "<th>95% HPD</th>" in text
    assert f"{record['rhat']:.4f}" in digits
    # the unsupported 95 % level is shown as a dash, not a number
    tiny_row = re.search(r"<tr><th>lookback_z0.5</th>.*?</tr>", text).group(0)
    assert tiny_row.count("&ndash;") >= 2


def test_bad_figure_and_context(context):
    with pytest.raises(ValueError, match="not PNG"):
        render_report(context, {"corner": b"GIF89a"})
    with pytest.raises(ValueError, match="unknown report context keys"):
        render_report({"tilte": "x"}, {})


def test_empty_context_renders():
    text = render_report({}, {})
    assert "<h1>agepost report</h1>" in text and "No warnings." in text


@pytest.mark.slow
@pytest.mark.skipif(
    CHROMIUM is None, reason="chromium is not installed (CI installs Debian's chromium)"
)
def test_report_renders_in_headless_chromium(tmp_path, context, figures):
    page = tmp_path / "report.html"
    page.write_text(render_report(context, figures), encoding="utf-8")
    screenshot = tmp_path / "shot.png"
    command = [
        CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
        "--no-first-run", "--disable-background-networking", "--disable-component-update",
        "--disable-sync", f"--user-data-dir={tmp_path / 'profile'}",
        f"--screenshot={screenshot}", "--window-size=1200,1600", page.as_uri(),
    ]  # fmt: skip
    subprocess.run(command, check=True, capture_output=True, timeout=120)
    assert screenshot.stat().st_size > 20_000
    pixels = imread(screenshot)[..., :3]
    assert pixels.shape[:2] == (1600, 1200)
    # Both embedded figures were drawn: their fill colours appear in the screenshot.
    for rgb in ((0x00, 0x72, 0xB2), (0xE6, 0x9F, 0x00)):
        close = np.all(np.abs(pixels - np.array(rgb) / 255) < 0.04, axis=-1)
        assert close.sum() > 2_000, rgb


def test_tiny_values_get_a_power_of_ten():
    x = np.random.default_rng(92).normal(3.67e-4, 1.9e-6, 4000)
    text = render_report({"summary": {"t_z1100": quantity_record(summarise(x), unit="Gyr")}}, {})
    assert "&times; 10<sup>-4</sup>" in text
