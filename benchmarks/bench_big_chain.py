"""Stream a large HDF5 chain through the reader and derive, in bounded memory.

Writes a seeded flat matter + Lambda chain (columns weight, H0, Omega_m) as one 2-D HDF5
dataset, then reads it with :func:`agepost.chains.iter_chain_chunks` and maps every row
to the age and the lookback time at z = 1 with :func:`agepost.derive.derive_chunks`,
keeping only running sums. Printed: rows per second, peak resident memory, and two
baselines measured in the same process on the same machine:

* raw read: the same file read in the same slices with h5py and nothing else (the I/O
  ceiling);
* in memory: ``derive`` on one chunk already in memory (the computation ceiling).

Disk use: 24 bytes per row (three float64 columns), 1.2 GB at the default 50 million
rows, written to ``--folder`` (default: a new temporary folder, removed afterwards unless
``--keep``). The goal of issue 3 is peak memory under 1 GiB at 50 million rows.

Run: ``python benchmarks/bench_big_chain.py [--rows 50000000] [--chunk-rows 1000000]``.
"""

from __future__ import annotations

import argparse
import resource
import shutil
import tempfile
import time
import tracemalloc
from pathlib import Path

import h5py
import numpy as np

from agepost.chains import ReadOptions, iter_chain_chunks, read_chains
from agepost.derive import derive, derive_chunks

NAMES = ["weight", "H0", "Omega_m"]
REDSHIFTS = (1.0,)


def peak_rss_mib() -> float:
    """Peak resident memory of this process so far (Linux reports KiB)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def write_chain(path: Path, n_rows: int, *, block_rows: int, seed: int = 12345) -> float:
    """Write the seeded chain in blocks; return seconds taken."""
    rng = np.random.default_rng(seed)
    start = time.perf_counter()
    with h5py.File(path, "w") as handle:
        dataset = handle.create_dataset(
            "chain", shape=(n_rows, len(NAMES)), dtype="f8", chunks=(min(65536, n_rows), len(NAMES))
        )
        dataset.attrs["names"] = NAMES
        for first in range(0, n_rows, block_rows):
            n = min(block_rows, n_rows - first)
            dataset[first : first + n] = np.column_stack(
                [
                    rng.integers(1, 4, n).astype(float),
                    rng.normal(67.5, 0.6, n),
                    rng.normal(0.31, 0.01, n),
                ]
            )
    return time.perf_counter() - start


def raw_read(path: Path, chunk_rows: int) -> float:
    """Rows per second for h5py slices alone (baseline)."""
    start = time.perf_counter()
    with h5py.File(path, "r") as handle:
        dataset = handle["chain"]
        total = 0.0
        for first in range(0, dataset.shape[0], chunk_rows):
            total += float(dataset[first : first + chunk_rows, 0].sum())
        n_rows = dataset.shape[0]
    return n_rows / (time.perf_counter() - start)


def stream(path: Path, chunk_rows: int) -> tuple[float, float, int]:
    """Rows per second through reader + derive, the weighted mean age, rows seen."""
    start = time.perf_counter()
    weight_sum = age_sum = 0.0
    n_rows = 0
    for derived in derive_chunks(
        iter_chain_chunks(path, ReadOptions(), chunk_rows=chunk_rows), REDSHIFTS
    ):
        kept = derived.kept
        weight_sum += float(derived.weights[kept].sum())
        age_sum += float((derived.weights[kept] * derived.quantities["age"].to_numpy()[kept]).sum())
        n_rows += len(derived.weights)
    return n_rows / (time.perf_counter() - start), age_sum / weight_sum, n_rows


def in_memory(path: Path, chunk_rows: int) -> float:
    """Rows per second for derive on one chunk already in memory (baseline)."""
    samples = next(iter_chain_chunks(path, ReadOptions(), chunk_rows=chunk_rows))
    start = time.perf_counter()
    derive(samples, REDSHIFTS)
    return samples.n_samples / (time.perf_counter() - start)


def traced_chunk_peak_mib(path: Path, chunk_rows: int) -> float:
    """tracemalloc peak while reading and deriving the first two chunks."""
    tracemalloc.start()
    chunks = iter_chain_chunks(path, ReadOptions(), chunk_rows=chunk_rows)
    for i, _ in enumerate(derive_chunks(chunks, REDSHIFTS)):
        if i == 1:
            break
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    return peak


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--rows", type=int, default=50_000_000, help="rows to write (24 bytes each)"
    )
    parser.add_argument("--chunk-rows", type=int, default=1_000_000, help="rows per streamed chunk")
    parser.add_argument("--folder", type=Path, default=None, help="where to write the chain file")
    parser.add_argument("--keep", action="store_true", help="keep the chain file afterwards")
    args = parser.parse_args()

    folder = args.folder or Path(tempfile.mkdtemp(prefix="agepost_bench_"))
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "big_chain.h5"
    try:
        seconds = write_chain(path, args.rows, block_rows=args.chunk_rows)
        print(
            f"wrote {args.rows:,} rows ({path.stat().st_size / 2**30:.2f} GiB) in {seconds:.1f} s"
        )
        rss_before = peak_rss_mib()
        rate, mean_age, n_rows = stream(path, args.chunk_rows)
        rss_after = peak_rss_mib()
        print(
            f"streamed read + derive: {n_rows:,} rows, {rate:,.0f} rows/s, "
            f"weighted mean age {mean_age:.4f} Gyr"
        )
        print(
            f"peak resident memory: {rss_after:.0f} MiB (before streaming {rss_before:.0f} MiB); "
            "goal < 1024 MiB"
        )
        print(
            f"tracemalloc peak over two chunks of {args.chunk_rows:,} rows: "
            f"{traced_chunk_peak_mib(path, args.chunk_rows):.0f} MiB"
        )
        io_rate = raw_read(path, args.chunk_rows)
        cpu_rate = in_memory(path, args.chunk_rows)
        print(
            f"baseline raw h5py read: {io_rate:,.0f} rows/s (streamed/raw = {rate / io_rate:.3f})"
        )
        print(
            f"baseline derive in memory: {cpu_rate:,.0f} rows/s "
            f"(streamed/in-memory = {rate / cpu_rate:.3f})"
        )
        if args.rows <= 2_000_000:
            whole = read_chains(path)
            print(
                f"check: read_chains gives {whole.n_samples:,} rows, "
                f"as streamed: {whole.n_samples == n_rows}"
            )
    finally:
        if args.keep:
            print(f"kept {path}")
        elif args.folder is None:
            shutil.rmtree(folder)
        else:
            path.unlink(missing_ok=True)


if __name__ == "__main__":
    main()
