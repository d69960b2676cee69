"""Benchmark: a million operating points through ``check --points --json``, against reading the file.

Writes a CSV of N points (voltage, current, case temperature, pulse; every point at the
same case temperature and pulse, the common case, or with ``--mixed`` a few of each), then
runs in subprocesses, each the best of ``--runs``: (a) ``pandas.read_csv`` of the file;
(b) ``python -m soacheck check PART --points FILE --json`` into /dev/null; (c) the same
as a table (the worst rows and a summary). Prints wall times, peak resident memory of
each, and ``ratio_vs_read_csv`` of (b). Targets: (b) at most 5x (a), under 1 GB.

Run: ``python benchmarks/points_check.py [--points N] [--mixed] [--runs N]``.
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
PART = "demo-npn-to3-250w"  # invented bundled part


def run(argv: list[str], runs: int) -> tuple[float, float]:
    """Best wall time [s] and the largest peak resident memory [MB] of ``runs`` runs of a command."""
    env = {**os.environ, "PYTHONPATH": str(ROOT), "COLUMNS": "120"}
    best, peak = float("inf"), 0.0
    for _ in range(runs):
        start = time.perf_counter()
        with open(os.devnull, "wb") as sink:
            child = subprocess.Popen(argv, cwd=ROOT, env=env, stdout=sink, stderr=subprocess.PIPE)
            _, status, usage = os.wait4(child.pid, 0)
        best = min(best, time.perf_counter() - start)
        peak = max(peak, usage.ru_maxrss / 1024)
        if os.waitstatus_to_exitcode(status) not in (0, 1):
            raise SystemExit(f"{' '.join(argv)} failed: {child.stderr.read().decode(errors='replace')}")
    return best, peak


def write_points(path: Path, n: int, mixed: bool) -> None:
    rng = np.random.default_rng(0)
    v = np.round(rng.uniform(2.0, 60.0, n), 3)
    i = np.round(rng.uniform(0.05, 4.0, n), 4)
    tc = rng.choice([25.0, 60.0, 85.0], n) if mixed else np.full(n, 40.0)
    pulse = rng.choice(["dc", "1ms", "10ms"], n) if mixed else np.full(n, "dc")
    import pandas as pd

    pd.DataFrame({"voltage": v, "current": i, "case_temp": tc, "pulse": pulse}).to_csv(path, index=False)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=1_000_000)
    parser.add_argument("--mixed", action="store_true", help="three case temperatures and three pulse widths")
    parser.add_argument("--runs", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "points.csv"
        write_points(path, args.points, args.mixed)
        size_mb = path.stat().st_size / 1e6
        reader = "import sys, pandas; pandas.read_csv(sys.argv[1])"
        read_s, read_mb = run([sys.executable, "-c", reader, str(path)], args.runs)
        check = [sys.executable, "-m", "soacheck", "check", PART, "--points", str(path)]
        json_s, json_mb = run([*check, "--json"], args.runs)
        table_s, table_mb = run(check, args.runs)
    kind = "mixed conditions" if args.mixed else "one condition"
    print(f"points: {args.points} ({kind}), file {size_mb:.0f} MB")
    print(f"pandas.read_csv: {read_s:.2f} s, peak {read_mb:.0f} MB")
    print(f"check --json: {json_s:.2f} s, peak {json_mb:.0f} MB (target under 1024 MB)")
    print(f"check (table of the worst rows): {table_s:.2f} s, peak {table_mb:.0f} MB")
    print(f"ratio_vs_read_csv: {json_s / read_s:.2f} (target <= 5)")


if __name__ == "__main__":
    main()
