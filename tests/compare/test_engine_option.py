"""compare --engine: chain inputs derived on Dask give the comparison of the local engine."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from agepost.cli import main

REPOSITORY = Path(__file__).resolve().parents[2]


@pytest.mark.slow
def test_dask_engine_gives_the_local_comparison(tmp_path, capsys):
    pytest.importorskip("dask.distributed")
    chains = [
        str(REPOSITORY / "sample_chains" / f"lantern_{name}_1.txt")
        for name in ("lcdm", "curved_w0wa")
    ]
    records = {}
    for engine in ("local", "dask"):
        out = tmp_path / engine
        extra = ["--workers", "2"] if engine == "dask" else []
        code = main(
            [
                "compare",
                *chains,
                "--z",
                "1",
                "--out",
                str(out),
                "--engine",
                engine,
                *extra,
                "--quiet",
            ]
        )
        assert code == 0, capsys.readouterr().err
        records[engine] = json.loads((out / "comparison.json").read_text())
    # Same seeds and the same derived samples: the two records agree exactly.
    assert records["local"]["pairs"] == records["dask"]["pairs"]
    assert records["local"]["quantities"] == records["dask"]["quantities"]
