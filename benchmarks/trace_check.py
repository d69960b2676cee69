"""Benchmark: the whole trace check of a 10-million-sample trace against a bare numpy pass.

Times, in the same run and on the same arrays: (a) the bare pass ``v * i``; (b) the trace
check: power, junction temperature through a 4-term Foster network, the SOA lookup of
every sample at a fixed case temperature, excursions above DC and the summary, fed in
chunks as the CLI does. Prints the ratio b/a on its last line as
``ratio_vs_numpy_pass: X`` (target: at most 20) and the peak resident memory (target:
under 2 GB). Ratios, not seconds: these machines are shared and noisy.

Run: ``python benchmarks/trace_check.py [--samples N]``.
"""

from __future__ import annotations

import argparse
import resource

import numpy as np
from _timing import best_of

from soacheck.library import bundled_library
from soacheck.partfiles import read_part
from soacheck.trace import TraceChecker


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=10_000_000)
    parser.add_argument("--chunk", type=int, default=1_000_000)
    args = parser.parse_args()

    part = read_part(bundled_library() / "demo-npn-to3-250w")  # invented demo part, 4-term Foster network
    n = args.samples
    t = np.arange(n) * 1e-5  # 100 s at 100 kS/s
    rng = np.random.default_rng(0)
    v = 20.0 + 10.0 * np.sin(t * 3.0) + rng.normal(0, 0.05, n)
    i = np.where((t % 0.05) < 5e-4, 9.0, 2.0) + rng.normal(0, 0.01, n)

    def bare():
        return v * i

    def check():
        checker = TraceChecker(part, tc_c=40.0, plot_points=20000)
        for start in range(0, n, args.chunk):
            stop = start + args.chunk
            checker.feed(t[start:stop], v[start:stop], i[start:stop])
        return checker.result()

    result = check()  # warm-up, and the answer
    t_bare = best_of(5, bare)
    t_check = best_of(3, check)
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        f"samples: {n}, verdict: {result.verdict}, excursions: {result.excursions}, tj_peak: {result.tj_peak_c:.2f} °C"
    )
    print(f"bare numpy pass v*i: {t_bare * 1e3:.1f} ms; trace check: {t_check * 1e3:.1f} ms")
    print(f"peak resident memory: {peak_mb:.0f} MB")
    print(f"ratio_vs_numpy_pass: {t_check / t_bare:.1f}")


if __name__ == "__main__":
    main()
