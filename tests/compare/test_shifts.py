"""Shared names, per-pair differences and the comparison records."""

from __future__ import annotations

import csv
import io
import json
import zlib

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import stats

from agepost.compare.records import comparison_csv, comparison_record
from agepost.compare.shifts import compare_runs, pair_key, shared_names
from agepost.errors import InputError
from agepost.outputs import dumps_json
from agepost.stats.difference import difference_summary


def gaussian_run(make_run, label, age_mean, age_sd, h0_mean, *, n=3000, seed=0, extra=None):
    rng = np.random.default_rng(seed)
    quantities = {"age": rng.normal(age_mean, age_sd, n), "lookback_z1": rng.normal(7.9, 0.05, n)}
    quantities |= extra or {}
    parameters = {
        "H0": rng.normal(h0_mean, 0.8, n),
        "Omega_m": rng.normal(0.31, 0.01, n),
        "w0": np.full(n, -1.0),
    }
    return make_run(parameters, quantities, chain_id=np.repeat(np.arange(3), n // 3), label=label)


@pytest.fixture
def runs(make_run):
    return [
        gaussian_run(make_run, "early", 13.80, 0.02, 67.5, seed=1),
        gaussian_run(
            make_run, "late", 13.60, 0.08, 72.0, seed=2, extra={"lookback_z2": np.zeros(3000)}
        ),
        gaussian_run(make_run, "third", 13.70, 0.05, 70.0, seed=3),
    ]


def test_shared_names_keep_first_order_and_varying_parameters(runs):
    quantities, parameters = shared_names(runs)
    assert quantities == ("age", "lookback_z1")  # lookback_z2 is only in one run
    assert parameters == ("H0", "Omega_m")  # w0 holds one value in every run


def test_runs_sharing_nothing_are_refused(make_run):
    a = make_run({"H0": [1.0, 2.0]}, {"lookback_z1": [1.0, 2.0]}, label="a")
    b = make_run({"H0": [1.0, 2.0]}, {"lookback_z2": [1.0, 2.0]}, label="b")
    with pytest.raises(
        InputError, match="share no derived quantity .*a: lookback_z1; b: lookback_z2"
    ):
        shared_names([a, b])
    with pytest.raises(InputError, match="at least two runs"):
        compare_runs([a])


def test_every_pair_is_second_minus_first_with_its_own_seed(runs):
    comparison = compare_runs(runs, n_draws=4000, seed=5)
    assert list(comparison.pairs) == ["late - early", "third - early", "third - late"]
    assert comparison.pairs["third - late"] == ("late", "third")
    d = comparison.differences["age"]["late - early"]
    # The two sets are Gaussian (seeded draws): difference -0.20 with sigma sqrt(0.02^2 + 0.08^2).
    s_d = np.hypot(0.02, 0.08)
    assert_allclose(d.mean, -0.20, atol=4 * s_d / np.sqrt(3000))
    assert_allclose(d.tension_sigma, 0.20 / s_d, atol=0.15)
    # The same draws as a direct call with the documented per-quantity generator.
    rng = np.random.default_rng(np.random.SeedSequence([5, 0, 1, zlib.crc32(b"age")]))
    direct = difference_summary(
        runs[0].quantities["age"],
        runs[0].weights,
        runs[1].quantities["age"],
        runs[1].weights,
        n_draws=4000,
        rng=rng,
        ess_first=comparison.summaries["early"]["age"].ess,
        ess_second=comparison.summaries["late"]["age"].ess,
    )
    assert d == direct
    # Comparing fewer runs leaves this pair's draws unchanged.
    assert compare_runs(runs[:2], n_draws=4000, seed=5).differences["age"]["late - early"] == d
    assert pair_key("a", "b") == "b - a"


def test_records_have_the_documented_keys(runs):
    comparison = compare_runs(runs[:2], n_draws=2000, levels=(0.68, 0.95), seed=1)
    record = json.loads(dumps_json(comparison_record(comparison, runs[:2])))
    assert set(record) >= {"runs", "pairs", "quantities", "parameters", "resampling", "warnings"}
    age = record["quantities"]["age"]
    assert age["unit"] == "Gyr" and set(age["runs"]) == {"early", "late"}
    pair = age["differences"]["late - early"]
    assert set(pair) >= {
        "first",
        "second",
        "difference",
        "prob_same_sign",
        "tension_sigma",
        "tension_is_lower_bound",
        "tension_sigma_gaussian",
        "n_draws",
    }
    assert set(pair["difference"]["intervals"]["0.68"]) == {"equal_tail", "hpd", "upper", "lower"}
    assert record["parameters"]["H0"]["unit"] == "km/s/Mpc"
    assert record["resampling"]["seed"] == 1
    assert_allclose(pair["prob_same_sign"], stats.norm.cdf(0.2 / np.hypot(0.02, 0.08)), atol=0.01)


def test_csv_has_a_run_row_per_run_and_a_shift_row_per_pair(runs):
    comparison = compare_runs(runs, n_draws=1000, seed=1)
    rows = list(csv.DictReader(io.StringIO(comparison_csv(comparison))))
    age = [row for row in rows if row["quantity"] == "age"]
    assert [row["row"] for row in age] == ["run"] * 3 + ["shift"] * 3
    assert age[0]["label"] == "early" and age[3]["label"] == "late - early"
    assert age[0]["prob_same_sign"] == "" and float(age[3]["prob_same_sign"]) > 0.5
    assert float(age[3]["median"]) == comparison.differences["age"]["late - early"].median
    assert len(rows) == 4 * 6  # (age, lookback_z1, H0, Omega_m) x (3 runs + 3 pairs)
