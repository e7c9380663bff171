"""JSON record, CSV and LaTeX rendering of summaries, including the rounding rule."""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np
import pytest

from agepost.outputs import dumps_json
from agepost.report.tables import (
    format_asymmetric,
    quantity_record,
    round_to_error,
    summary_csv,
    summary_latex,
)
from agepost.stats.summary import summarise


@pytest.fixture(scope="module")
def summaries():
    rng = np.random.default_rng(41)
    age = rng.normal(13.787, 0.02, size=8000)
    lookback = rng.gamma(4.0, 0.5, size=8000)
    return {
        "age": summarise(age, chain_id=np.repeat([0, 1], 4000)),
        "lookback_z0.5": summarise(lookback),
        "tiny": summarise(rng.normal(size=150)),  # 0.95 level not supported
    }


# Rounding cases worked by hand from the rule: two significant digits on the larger
# error, value and smaller error to the same decimal place (common practice in papers).
ROUNDING_CASES = [
    ((13.78723, 0.02131, 0.01984), "13.787^{+0.021}_{-0.020}"),
    ((13.78723, 0.0199, 0.0214), "13.787^{+0.020}_{-0.021}"),
    ((4567.2, 123.0, 98.0), "4570^{+120}_{-100}"),
    ((0.5, 0.0996, 0.05), "0.50^{+0.10}_{-0.05}"),  # 0.0996 rounds up to 0.10
    ((12.3, 9.96, 1.0), "12^{+10}_{-1}"),  # 9.96 -> 10, still two digits
    ((0.31112, 0.0071, 0.0069), "0.3111^{+0.0071}_{-0.0069}"),
    ((67.66, 0.42, 0.42), "67.66^{+0.42}_{-0.42}"),
    ((-0.0001, 0.002, 0.001), "-0.0001^{+0.0020}_{-0.0010}"),
    ((-0.00004, 0.002, 0.001), "0.0000^{+0.0020}_{-0.0010}"),  # no "-0.0000"
    ((1.25, 0.15, 0.1), "1.25^{+0.15}_{-0.10}"),
    ((1.0, 0.0, 0.0), "1 \\pm 0"),
    # powers of ten factored out for very small or large numbers
    ((3.66996e-4, 1.9e-6, 1.8e-6), "(3.670^{+0.019}_{-0.018}) \\times 10^{-4}"),
    ((2.345e-7, 3.1e-8, 2.2e-8), "(2.35^{+0.31}_{-0.22}) \\times 10^{-7}"),
    ((123456.0, 2345.0, 1999.0), "(1.235^{+0.023}_{-0.020}) \\times 10^{5}"),
    ((-0.0001, 0.00002, 0.00003), "(-1.00^{+0.20}_{-0.30}) \\times 10^{-4}"),
    ((math.nan, 0.1, 0.1), "--"),
    ((1.0, math.nan, 0.1), "--"),
]


@pytest.mark.parametrize(("args", "expected"), ROUNDING_CASES)
def test_rounding_table(args, expected):
    assert format_asymmetric(*args) == expected


def test_record_keys_and_strict_json(summaries):
    record = quantity_record(summaries["tiny"], unit="Gyr")
    assert set(record) == {
        "unit",
        "n_samples",
        "mean",
        "median",
        "std",
        "mode",
        "intervals",
        "ess",
        "ess_kish",
        "ess_autocorr",
        "mcse",
        "rhat",
        "warnings",
    }
    assert set(record["intervals"]["0.68"]) == {"equal_tail", "hpd", "upper", "lower"}
    parsed = json.loads(dumps_json(record))
    assert parsed["intervals"]["0.95"]["equal_tail"] == [None, None]
    assert parsed["rhat"] is None
    assert parsed["warnings"] and "0.95" in parsed["warnings"][-1]
    age = json.loads(dumps_json(quantity_record(summaries["age"], unit="Gyr")))
    assert age["rhat"] == pytest.approx(summaries["age"].rhat)
    assert age["intervals"]["0.68"]["hpd"] == list(summaries["age"].intervals["0.68"].hpd)


def test_csv_one_row_per_quantity_full_precision(summaries):
    text = summary_csv(summaries, {"age": "Gyr", "lookback_z0.5": "Gyr"})
    rows = list(csv.DictReader(io.StringIO(text)))
    assert [row["quantity"] for row in rows] == list(summaries)
    age = rows[0]
    assert age["unit"] == "Gyr"
    assert float(age["median"]) == summaries["age"].median  # repr round-trips exactly
    assert float(age["hpd_hi_0.95"]) == summaries["age"].intervals["0.95"].hpd[1]
    assert rows[2]["upper_0.95"] == "" and rows[2]["rhat"] == ""
    assert "0.95 intervals are not quoted" in rows[2]["warnings"]


def test_latex_table(summaries):
    age = summaries["age"]
    text = summary_latex(summaries, {"age": "Gyr", "lookback_z0.5": "Gyr"}, {"age": "$t_0$"})
    lines = text.splitlines()
    assert "\\begin{tabular}{llcc}" in lines
    header = next(line for line in lines if line.startswith("Quantity"))
    assert "Unit" in header and "68\\%" in header and "95\\%" in header
    row = next(line for line in lines if line.startswith("$t_0$"))
    low, high = age.intervals["0.68"].equal_tail
    assert format_asymmetric(age.median, high - age.median, age.median - low) in row
    assert "& Gyr &" in row
    assert any(line.startswith("lookback\\_z0.5 & Gyr") for line in lines)  # escaped name
    tiny = next(line for line in lines if line.startswith("tiny"))
    assert tiny.rstrip(" \\").endswith("--")
    assert text.count("\\\\") == 1 + len(summaries)


@pytest.mark.parametrize(
    ("value", "error", "expected"),
    [
        (13.78723, 0.0213, "13.787"),
        (13.78723, 0.0996, "13.79"),  # error rounds up to 0.10
        (4567.2, 123.0, "4570"),
        (2.5, None, "2.5"),
        (2.5, 0.0, "2.5"),
        (math.nan, 0.1, "--"),
        (None, 0.1, "--"),
    ],
)
def test_round_to_error(value, error, expected):
    assert round_to_error(value, error) == expected
