"""Benchmark: peak memory of ``soacheck trace`` on a trace and on one three or ten times longer, CSV and Parquet.

Writes a trace (100 kS/s, a pulsed load on a slowly varying supply; invented) of each
length to a temporary folder, chunk by chunk, as CSV and as Parquet, then runs
``python -m soacheck trace PART FILE --json --plot FILE.png`` in a subprocess for each
and reads its peak resident memory. Prints both peaks and their ratio per format, for the
default ``--chunk-rows`` and for ``--chunk-rows 1000``. Targets: the longer trace within
1.3x of the shorter, and under 600 MB.

The shorter trace is 1e7 samples (250 MB of CSV): shorter ones would fit inside the
reader's fixed working set (a few CSV blocks of 24 MB parsed at once, and the chunks read
ahead), so their peak would say nothing about growth with length. Disk and time: the
default lengths (1e7 and 3e7 samples) write about 1.3 GB and run in a few minutes.
``--full`` uses 1e7 and 1e8 samples: about 3.5 GB of CSV and 1.6 GB of
Parquet in the temporary folder (``--dir``), and tens of minutes on a laptop.

Run: ``python benchmarks/trace_memory.py [--full] [--dir FOLDER]``.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
PART = "demo-npn-to3-250w"  # invented bundled part with a 4-term Foster network
WRITE_ROWS = 2_000_000


def chunks(samples: int):
    """(t, v, i) in pieces: 8 A for 1 ms every 10 ms on 1 A, at 20-30 V (invented)."""
    rng = np.random.default_rng(0)
    for start in range(0, samples, WRITE_ROWS):
        k = np.arange(start, min(samples, start + WRITE_ROWS))
        t = k * 1e-5
        v = 25.0 + 5.0 * np.sin(t * 0.5) + rng.normal(0, 0.02, k.size)
        i = np.where((k % 1000) < 100, 8.0, 1.0) + rng.normal(0, 0.01, k.size)
        yield np.round(t, 6), np.round(v, 4), np.round(np.abs(i), 4)


def write_csv(path: Path, samples: int) -> None:
    with open(path, "w") as out:
        out.write("time,voltage,current\n")
        for t, v, i in chunks(samples):
            np.savetxt(out, np.column_stack([t, v, i]), fmt=("%.6f", "%.4f", "%.4f"), delimiter=",")


def write_parquet(path: Path, samples: int) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    schema = pa.schema([("time", pa.float64()), ("voltage", pa.float64()), ("current", pa.float64())])
    with pq.ParquetWriter(path, schema) as writer:
        for t, v, i in chunks(samples):
            writer.write_table(pa.table({"time": t, "voltage": v, "current": i}, schema=schema))


def peak_mb(path: Path, chunk_rows: int | None) -> tuple[float, float]:
    """Peak resident memory [MB] and wall time [s] of one ``soacheck trace`` run in a subprocess."""
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    plot = path.with_suffix(".png")
    argv = [sys.executable, "-m", "soacheck", "trace", PART, str(path), "--json", "--plot", str(plot), "--force"]
    argv += [] if chunk_rows is None else ["--chunk-rows", str(chunk_rows)]
    start = time.perf_counter()
    child = subprocess.Popen(argv, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(child.pid, 0)
    if os.waitstatus_to_exitcode(status) not in (0, 1):
        raise SystemExit(f"{' '.join(argv)} failed: {child.stderr.read().decode(errors='replace')}")
    return usage.ru_maxrss / 1024, time.perf_counter() - start


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--full", action="store_true", help="1e7 and 1e8 samples (several GB of disk)")
    parser.add_argument("--dir", type=Path, default=None, help="folder for the generated traces")
    parser.add_argument("--formats", default="csv,parquet")
    args = parser.parse_args()
    short, long = (10_000_000, 100_000_000) if args.full else (10_000_000, 30_000_000)
    with tempfile.TemporaryDirectory(dir=args.dir) as folder:
        for kind in args.formats.split(","):
            write = write_csv if kind == "csv" else write_parquet
            files = {}
            for n in (short, long):
                files[n] = Path(folder) / f"trace-{n}.{kind}"
                write(files[n], n)
            for chunk_rows in (None, 1000):
                if chunk_rows == 1000 and args.full:
                    continue  # a hundred thousand chunks of 1000 rows: hours, not minutes
                runs = {n: peak_mb(files[n], chunk_rows) for n in (short, long)}
                label = f"{kind}, --chunk-rows {chunk_rows or 'default'}"
                sizes = ", ".join(f"{n:.0e}: {files[n].stat().st_size / 1e6:.0f} MB file" for n in (short, long))
                print(f"{label} ({sizes})")
                for n, (mb, seconds) in runs.items():
                    print(f"  {n:.0e} samples: peak {mb:.0f} MB, {seconds:.1f} s")
                print(f"  peak_ratio_long_vs_short: {runs[long][0] / runs[short][0]:.2f} (target <= 1.3; under 600 MB)")
                for n in (short, long):
                    files[n].with_suffix(".png").unlink(missing_ok=True)


if __name__ == "__main__":
    main()
