"""Timing shared by the benchmarks: the best of several runs (the least disturbed by other load)."""

from __future__ import annotations

import time
from collections.abc import Callable


def best_of(runs: int, fn: Callable[[], object]) -> float:
    """The shortest wall time of ``runs`` calls of ``fn``. [s]"""
    return best_of_interleaved(runs, fn)[0]


def best_of_interleaved(runs: int, *fns: Callable[[], object]) -> list[float]:
    """The shortest wall time of each of ``fns`` over ``runs`` rounds, the calls taking turns. [s]

    On a shared machine a quiet moment then serves the reference and the measured code alike,
    so a ratio of the two is not skewed by load that came and went between them.
    """
    best = [float("inf")] * len(fns)
    for _ in range(runs):
        for k, fn in enumerate(fns):
            start = time.perf_counter()
            fn()
            best[k] = min(best[k], time.perf_counter() - start)
    return best
