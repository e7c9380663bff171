"""Whole runs through the pipeline: nothing half-written, clear errors, unchanged results."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

import agepost.pipeline
from agepost.cli import main
from agepost.config import settings_from_config
from agepost.outputs import dumps_json
from agepost.pipeline import compute, summary_record

REPOSITORY = Path(__file__).resolve().parents[1]


def write_text_chain(path: Path, n: int = 3000, *, seed: int = 1, extra: str | None = None) -> Path:
    rng = np.random.default_rng(seed)
    columns = [rng.integers(1, 4, n), rng.normal(68.0, 0.8, n), rng.normal(0.31, 0.01, n)]
    names = ["weight", "H0", "Omega_m"]
    if extra:
        columns.append(rng.normal(-1.0, 0.05, n))
        names.append(extra)
    np.savetxt(path, np.column_stack(columns), header=" ".join(names), comments="")
    return path


def leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir()) if folder.exists() else []


def test_streaming_run_reports_what_the_in_memory_computation_reports(tmp_path, capsys):
    # The command streams chunks through samples.h5 and reads a small run back; the
    # notebook path reads the whole chain at once. The summaries must be identical.
    config = REPOSITORY / "configs" / "demo.toml"
    assert main(["run", str(config), "--out", str(tmp_path / "demo"), "--quiet"]) == 0
    written = json.loads((tmp_path / "demo" / "summary.json").read_text())
    settings = settings_from_config(config)
    expected = json.loads(dumps_json(summary_record(compute(settings), settings)))
    # Tolerance: the physics shares quadrature nodes within a chunk, so ages computed in
    # other chunks differ in the last bits (~1e-15) and every summary number follows; a
    # Monte Carlo error can move more (~1e-10) when a sample's indicator x <= Q(p) flips.
    assert_close(written, expected, rel=1e-8)


def assert_close(a, b, *, rel, path=""):
    """Equal JSON documents, floats to a relative tolerance."""
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for key in a:
            assert_close(a[key], b[key], rel=rel, path=f"{path}/{key}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for x, y in zip(a, b, strict=True):
            assert_close(x, y, rel=rel, path=path)
    elif isinstance(a, float) and isinstance(b, float):
        assert a == pytest.approx(b, rel=rel, abs=1e-300), path
    else:
        assert a == b, path


def test_an_interrupted_run_leaves_no_outputs_and_keeps_old_ones(tmp_path, capsys, monkeypatch):
    chain = write_text_chain(tmp_path / "chain.txt")
    out = tmp_path / "out"
    assert main(["derive", str(chain), "--out", str(out), "--quiet"]) == 0
    before = {name: (out / name).read_bytes() for name in leftovers(out)}

    def interrupt(*args, **kwargs):
        raise KeyboardInterrupt  # as if Ctrl-C arrived while the figure was being drawn

    monkeypatch.setattr(agepost.pipeline, "_figures_and_report", interrupt)
    assert main(["derive", str(chain), "--out", str(out), "--quiet", "--force", "--z", "1"]) == 130
    assert "no partial outputs" in capsys.readouterr().err
    assert {name: (out / name).read_bytes() for name in leftovers(out)} == before  # untouched
    fresh = tmp_path / "fresh"
    assert main(["derive", str(chain), "--out", str(fresh), "--quiet"]) == 130
    assert leftovers(fresh) == []  # no file, no hidden staging folder


def test_chain_files_that_disagree_in_columns_exit_2_without_outputs(tmp_path, capsys):
    first = write_text_chain(tmp_path / "a.txt")
    second = write_text_chain(tmp_path / "b.txt", extra="w")
    code = main(["derive", str(first), str(second), "--out", str(tmp_path / "out"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert "same parameters" in err and "b.txt" in err
    assert leftovers(tmp_path / "out") == []


def test_a_glob_matching_nothing_exits_2(tmp_path, capsys):
    code = main(["derive", str(tmp_path / "none_*.txt"), "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == 2 and "matches no file" in err and "Traceback" not in err
    code = main(["run", str(tmp_path / "none_*.toml"), "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert code == 2 and "matches no configuration file" in err


def test_scheduler_without_dask_engine_is_refused(tmp_path, capsys):
    chain = write_text_chain(tmp_path / "chain.txt", n=50)
    code = main(["derive", str(chain), "--out", str(tmp_path / "o"), "--scheduler", "tcp://x:1"])
    assert code == 2 and "--engine dask" in capsys.readouterr().err
