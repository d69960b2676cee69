"""Benchmark: the trace check of 10 million samples, whatever the waveform, against a bare numpy pass.

For each waveform, times in the same run and on the same arrays: (a) the bare pass
``v * i``; (b) the whole trace check (power, junction temperature through a 4-term Foster
network, the SOA lookup of every sample at a fixed case temperature, excursions above DC
judged against the pulse curves, the summary, the plot's thinning), fed in chunks as the
command does. Waveforms (invented): 0 %, 10 % and 30 % of the samples above the DC
boundary (one run of 100 or 300 samples in every 1000, at 1.05x the DC limit, else at 0.5x), and a
pulsed load, 8 A for 1 ms every 10 ms on 0.5 A at 40 V. Prints ``ratio_vs_numpy_pass`` of
each (target: at most 20; aim: 8). The floor is the junction temperature: two passes of
``scipy.signal.lfilter`` over the samples alone cost about 4x the bare pass.

Then end to end from a file, as ``soacheck trace`` reads it: (c) the check from a CSV file
against ``pandas.read_csv`` of the same file (target: at most 2x), and (d) from Parquet
against ``pyarrow.parquet.read_table`` (target: at most 3x). Ratios, not seconds: these
machines are shared and noisy: the reference and the check take turns over ``--runs``
rounds and the best of each is kept.

Run: ``python benchmarks/trace_check.py [--samples N] [--runs N] [--no-files | --files-only]``.
"""

from __future__ import annotations

import argparse
import resource
import tempfile
from pathlib import Path

import numpy as np
from _timing import best_of_interleaved

from soacheck.boundary import allowed_current
from soacheck.library import bundled_library
from soacheck.partfiles import read_part
from soacheck.trace import TraceChecker
from soacheck.tracechunks import DEFAULT_CHUNK_ROWS
from soacheck.tracefiles import iter_trace

CASE_C = 40.0


def above_dc(part, n: int, fraction: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """In every 1000 samples (10 ms), a run of ``fraction`` x 1000 at 1.05x the DC limit, the rest at 0.5x."""
    t = np.arange(n) * 1e-5  # 100 kS/s
    v = 20.0 + 5.0 * np.sin(t * 0.3)
    high = (np.arange(n) % 1000) < round(fraction * 1000)
    coarse = np.arange(0, n, 1000)
    limit = np.interp(np.arange(n), coarse, allowed_current(v[coarse], part, tc_c=CASE_C).current_a)
    return t, v, np.where(high, 1.05, 0.5) * limit


def pulsed(n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """8 A for 1 ms every 10 ms on 0.5 A, at 40 V (an electronic load's pulse test, invented)."""
    t = np.arange(n) * 1e-5
    rng = np.random.default_rng(2)
    v = 40.0 + rng.normal(0, 0.05, n)
    i = np.where((np.arange(n) % 1000) < 100, 8.0, 0.5) + np.abs(rng.normal(0, 0.01, n))
    return t, v, i


def check_arrays(part, t, v, i, chunk: int):
    checker = TraceChecker(part, tc_c=CASE_C, plot_points=20000)
    for start in range(0, t.size, chunk):
        stop = start + chunk
        checker.feed(t[start:stop], v[start:stop], i[start:stop])
    return checker.result()


def check_file(part, path: Path, chunk: int):
    checker = TraceChecker(part, tc_c=CASE_C, plot_points=20000)
    for t, v, i, _ in iter_trace(path, chunk_rows=chunk):
        checker.feed(t, v, i)
    return checker.result()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=10_000_000)
    parser.add_argument(
        "--chunk", type=int, default=DEFAULT_CHUNK_ROWS, help="samples a chunk (default: the command's)"
    )
    parser.add_argument("--no-files", action="store_true", help="skip the end-to-end runs from CSV and Parquet")
    parser.add_argument("--files-only", action="store_true", help="only the end-to-end runs from CSV and Parquet")
    parser.add_argument("--runs", type=int, default=5, help="rounds; the best of each is kept (shared machines)")
    args = parser.parse_args()
    part = read_part(bundled_library() / "demo-npn-to3-250w")  # invented demo part, 4-term Foster network
    n = args.samples
    waveforms = {f"{p:.0%} above DC": (lambda p=p: above_dc(part, n, p)) for p in (0.0, 0.1, 0.3)}
    waveforms["pulsed 8 A, 1 ms in 10 ms, 40 V"] = lambda: pulsed(n)
    for name, make in waveforms.items() if not args.files_only else ():
        t, v, i = make()
        share = float(np.mean(i > allowed_current(v, part, tc_c=CASE_C).current_a)) if n <= 2e7 else float("nan")
        result = check_arrays(part, t, v, i, args.chunk)  # warm-up, and the answer
        t_bare, t_check = best_of_interleaved(
            args.runs, lambda v=v, i=i: v * i, lambda t=t, v=v, i=i: check_arrays(part, t, v, i, args.chunk)
        )
        print(
            f"{name}: {share:.1%} of samples above DC, verdict {result.verdict}, excursions {result.excursions}, "
            f"check {t_check * 1e3:.0f} ms, bare v*i {t_bare * 1e3:.1f} ms"
        )
        print(f"  ratio_vs_numpy_pass: {t_check / t_bare:.1f} (target <= 20, aim 8)")
    if args.no_files:
        return
    import pandas as pd
    import pyarrow as pa
    import pyarrow.parquet as pq

    t, v, i = pulsed(n)
    with tempfile.TemporaryDirectory() as folder:
        csv, parquet = Path(folder) / "trace.csv", Path(folder) / "trace.parquet"
        frame = pd.DataFrame({"time": np.round(t, 6), "voltage": np.round(v, 4), "current": np.round(i, 4)})
        frame.to_csv(csv, index=False)
        pq.write_table(pa.Table.from_pandas(frame, preserve_index=False), parquet)
        del frame, t, v, i
        t_read, t_csv = best_of_interleaved(
            args.runs, lambda: pd.read_csv(csv), lambda: check_file(part, csv, args.chunk)
        )
        print(f"from CSV ({csv.stat().st_size / 1e6:.0f} MB): check {t_csv:.2f} s, pandas.read_csv {t_read:.2f} s")
        print(f"  ratio_vs_read_csv: {t_csv / t_read:.2f} (target <= 2)")
        t_read, t_pq = best_of_interleaved(
            args.runs, lambda: pq.read_table(parquet), lambda: check_file(part, parquet, args.chunk)
        )
        print(f"from Parquet ({parquet.stat().st_size / 1e6:.0f} MB): check {t_pq:.2f} s, pyarrow read {t_read:.2f} s")
        print(f"  ratio_vs_read_table: {t_pq / t_read:.2f} (target <= 3)")
    print(f"peak resident memory: {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB")


if __name__ == "__main__":
    main()
