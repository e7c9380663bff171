"""One seeded posterior written in every layout the readers support."""

import gzip
from pathlib import Path

import h5py
import numpy as np
import pandas as pd
import pytest

NAMES = ("weight", "minus_log_posterior", "H0", "Omega_m", "w")


def seeded_posterior(n_rows: int = 300, seed: int = 20240611) -> pd.DataFrame:
    """A small weighted posterior of an invented 'Okapi cluster' analysis (demo values)."""
    rng = np.random.default_rng(seed)
    return pd.DataFrame(
        {
            "weight": rng.integers(1, 5, n_rows).astype(float),
            "minus_log_posterior": rng.gamma(3.0, 1.0, n_rows),
            "H0": rng.normal(67.5, 0.6, n_rows),
            "Omega_m": rng.normal(0.31, 0.01, n_rows),
            "w": rng.normal(-1.0, 0.05, n_rows),
        }
    )


def _text(frame: pd.DataFrame, separator: str) -> str:
    return "".join(separator.join(repr(float(v)) for v in row) + "\n" for row in frame.to_numpy())


def write_layouts(frame: pd.DataFrame, folder: Path) -> dict[str, tuple[Path, dict]]:
    """Every layout of ``frame``: name -> (path, ReadOptions keywords needed to read it)."""
    names = list(frame.columns)
    values = frame.to_numpy()
    out: dict[str, tuple[Path, dict]] = {}

    path = folder / "header.csv"
    path.write_text(",".join(names) + "\n" + _text(frame, ","))
    out["csv header row"] = (path, {})

    path = folder / "commented.txt"
    path.write_text("# Okapi cluster, run A\n#  " + "  ".join(names) + "\n" + _text(frame, "  "))
    out["whitespace commented header"] = (path, {})

    path = folder / "bare.txt"
    path.write_text(_text(frame, " "))
    sidecar = folder / "bare.names"
    sidecar.write_text("".join(f"{n}    a description\n" for n in names))
    out["no header, sidecar names"] = (path, {"names_file": sidecar})
    out["no header, names option"] = (path, {"names": tuple(names)})

    path = folder / "tabs.tsv.gz"
    path.write_bytes(gzip.compress(("\t".join(names) + "\n" + _text(frame, "\t")).encode()))
    out["gzip tab header"] = (path, {})

    path = folder / "table.h5"
    with h5py.File(path, "w") as handle:
        handle.create_dataset("posterior/samples", data=values).attrs["names"] = names
    out["hdf5 2-D dataset"] = (path, {})

    path = folder / "columns.h5"
    with h5py.File(path, "w") as handle:
        for name in names:
            handle.create_dataset(f"run/{name}", data=frame[name].to_numpy())
    out["hdf5 group of 1-D datasets"] = (path, {"dataset": "run"})

    path = folder / "structured.npy"
    np.save(path, frame.to_records(index=False), allow_pickle=False)
    out["npy structured"] = (path, {})

    path = folder / "plain.npy"
    np.save(path, values, allow_pickle=False)
    out["npy plain with names"] = (path, {"names": tuple(names)})

    path = folder / "table.npz"
    np.savez(path, samples=values, names=np.array(names))
    out["npz 2-D with names"] = (path, {})

    path = folder / "columns.npz"
    np.savez(path, **{n: frame[n].to_numpy() for n in names})
    out["npz 1-D columns"] = (path, {})
    return out


@pytest.fixture
def posterior() -> pd.DataFrame:
    """The seeded posterior as a DataFrame."""
    return seeded_posterior()


@pytest.fixture
def layouts(posterior: pd.DataFrame, tmp_path: Path) -> dict[str, tuple[Path, dict]]:
    """The seeded posterior in every layout: name -> (path, ReadOptions keywords)."""
    return write_layouts(posterior, tmp_path)
