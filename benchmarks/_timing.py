"""Timing shared by the benchmarks: the best of several runs (the least disturbed by other load)."""

from __future__ import annotations

import time
from collections.abc import Callable


def best_of(runs: int, fn: Callable[[], object]) -> float:
    """The shortest wall time of ``runs`` calls of ``fn``. [s]"""
    best = float("inf")
    for _ in range(runs):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best
