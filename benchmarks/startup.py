"""Benchmark: what a command costs to start, against ``python -c "import numpy"``.

Runs each command in a fresh subprocess (this checkout's code, through
``python -m soacheck``) and takes the best of several runs, so that the figure is the
start-up cost and not the load of a shared machine. Prints each command's time and its
ratio to a bare ``import numpy``. Targets: ``--help`` and ``parts`` at most 3x, a single
point ``check`` at most 5x.

Run: ``python benchmarks/startup.py [--runs N]``.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

COMMANDS = {
    "import numpy": ([sys.executable, "-c", "import numpy"], None),
    "soacheck --help": ([sys.executable, "-m", "soacheck", "--help"], 3.0),
    "soacheck parts": ([sys.executable, "-m", "soacheck", "parts"], 3.0),
    "soacheck check (one point)": (
        [sys.executable, "-m", "soacheck", "check", "demo-npn-to3-250w", "-v", "20", "-i", "2"],
        5.0,
    ),
}


def best_wall_s(argv: list[str], runs: int) -> float:
    """The shortest wall time of ``runs`` runs of a command. [s]"""
    env = {**os.environ, "PYTHONPATH": str(ROOT), "COLUMNS": "120"}
    best = float("inf")
    for _ in range(runs):
        start = time.perf_counter()
        done = subprocess.run(argv, cwd=ROOT, env=env, capture_output=True)
        best = min(best, time.perf_counter() - start)
        if done.returncode not in (0, 1):
            raise SystemExit(f"{' '.join(argv)} failed: {done.stderr.decode(errors='replace')}")
    return best


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7)
    args = parser.parse_args()
    times = {name: best_wall_s(argv, args.runs) for name, (argv, _) in COMMANDS.items()}
    numpy_s = times["import numpy"]
    print(f"import numpy: {numpy_s * 1e3:.0f} ms (best of {args.runs})")
    for name, (_, target) in COMMANDS.items():
        if target is None:
            continue
        ratio = times[name] / numpy_s
        status = "ok" if ratio <= target else "OVER"
        print(
            f"{name}: {times[name] * 1e3:.0f} ms, ratio_vs_import_numpy: {ratio:.2f} (target <= {target:g}x) {status}"
        )


if __name__ == "__main__":
    main()
