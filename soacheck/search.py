"""Monotone searches: the largest (or smallest) argument for which a predicate holds.

Each search assumes monotonicity: past the answer, a larger argument never passes again
(or, for counts, a larger count never fails again). Nothing here knows about parts or
stages; callers pass a predicate.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

MAX_COUNT = 256
"""The most devices in parallel :func:`fewest` tries."""


def most_demanding_safe(
    passes: Callable[[float], bool], start: float, *, rel_tol: float = 1e-3, max_runs: int = 60
) -> float | None:
    """The largest x for which ``passes(x)``, by expanding then bisecting on a log scale.

    ``passes(x)`` is False when x is not safe or cannot be run at all (see
    :func:`soacheck.stage_run.passes_at`). Assumes that a larger x is never safer, which
    holds for current, power and conductance setpoints of a load. None when even
    ``start / 2**20`` fails.
    """
    runs = 0

    def safe(x: float) -> bool:
        nonlocal runs
        runs += 1
        return passes(x)

    lo, hi = None, None
    x = start
    if safe(x):
        lo = x
        for _ in range(20):
            x *= 2
            if not safe(x):
                hi = x
                break
            lo = x
        if hi is None:
            return lo
    else:
        hi = x
        for _ in range(20):
            x /= 2
            if safe(x):
                lo = x
                break
            hi = x
        if lo is None:
            return None
    while hi / lo > 1 + rel_tol and runs < max_runs:
        mid = math.sqrt(lo * hi)
        if safe(mid):
            lo = mid
        else:
            hi = mid
    return lo


def max_safe_setpoint(
    passes: Callable[[float], bool], setpoint: float, mode: str, *, rel_tol: float = 1e-3
) -> float | None:
    """The most demanding load setpoint that stays safe, from ``passes(setpoint)``.

    For ``cc`` (A) and ``cp`` (W) that is the highest setpoint; for ``cr`` (Ω) the lowest
    resistance, found by searching the conductance 1/R, which grows with the load. None when
    no setpoint searched is safe.
    """
    if mode != "cr":
        return most_demanding_safe(passes, setpoint, rel_tol=rel_tol)
    best = most_demanding_safe(lambda g: passes(1.0 / g), 1.0 / setpoint, rel_tol=rel_tol)
    return None if best is None else 1.0 / best


def fewest(passes: Callable[[int], bool], start: int) -> int | None:
    """The smallest count in [1, MAX_COUNT] that passes, by doubling then bisecting (monotone)."""
    lo, hi = 0, max(1, start)  # lo fails (0 devices), hi to be found passing
    while not passes(hi):
        lo, hi = hi, hi * 2
        if hi > MAX_COUNT:
            if lo >= MAX_COUNT:  # MAX_COUNT itself just failed: not asked again
                return None
            return None if not passes(MAX_COUNT) else bisect_count(passes, lo, MAX_COUNT)
    return bisect_count(passes, lo, hi)


def bisect_count(passes: Callable[[int], bool], lo: int, hi: int) -> int:
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if passes(mid):
            hi = mid
        else:
            lo = mid
    return hi


def highest_linear(passes: Callable[[float], bool], start: float, stop: float, *, tol: float = 0.1) -> float:
    """The largest x in [start, stop] that passes, given that ``start`` passes (bisection to ``tol``)."""
    if passes(stop):
        return stop
    lo, hi = start, stop
    while hi - lo > tol:
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if passes(mid) else (lo, mid)
    return lo


def highest(passes: Callable[[float], bool], start: float, *, rel_tol: float = 1e-3) -> float:
    """The largest x > 0 that passes, given that ``start`` passes and larger x never helps."""
    lo, hi = start, start * 2
    for _ in range(30):
        if not passes(hi):
            break
        lo, hi = hi, hi * 2
    else:
        return lo
    while hi / lo > 1 + rel_tol:
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if passes(mid) else (lo, mid)
    return lo


def highest_each(passes: Callable[[np.ndarray], np.ndarray], lo: np.ndarray, hi: np.ndarray, *, steps: int = 60):
    """Element-wise, the largest x in [lo, hi] for which ``passes(x)``, by bisection vectorized over arrays.

    ``lo`` must pass (it is returned where ``hi`` fails at every step), and past the answer a
    larger x never passes again. ``steps`` halvings leave the answer within (hi − lo)/2^steps
    below the true one, on the passing side.
    """
    lo = np.array(lo, dtype=float)
    top = np.array(hi, dtype=float)
    hi = top.copy()
    for _ in range(steps):
        mid = 0.5 * (lo + hi)
        ok = passes(mid)
        lo = np.where(ok, mid, lo)
        hi = np.where(ok, hi, mid)
    return np.where(passes(top), top, lo)


def fewest_guided(score: Callable[[int], tuple[bool, float | None]], start: int, *, guesses: int = 2) -> int | None:
    """:func:`fewest` led by margins: the same answer, in fewer evaluations.

    ``score(n)`` returns (passes, margin) for a count n, the margin 1 − load/capacity of the
    most loaded device, or None where it says nothing about the count (a runaway, say).
    Where n devices fail with margin m < 0, sharing the load among more devices brings it
    to zero near n(1 − m) devices (the load on each falls as 1/n; elementary): up to
    ``guesses`` evaluations go to such estimates (and the count below one that passes), then
    a bisection between the largest count known to fail and the smallest known to pass.
    A first failure without a margin tries MAX_COUNT next, so a part that no count saves
    costs two evaluations, not nine. Same assumption as :func:`fewest`: a larger count
    never fails where a smaller one passes; nothing is asked twice.
    """
    known: dict[int, bool] = {}
    margins: dict[int, float] = {}

    def passes(n: int) -> bool:
        if any(ok and k <= n for k, ok in known.items()):
            return True
        if any(not ok and k >= n for k, ok in known.items()):
            return False
        ok, margin = score(n)
        known[n] = ok
        if margin is not None and math.isfinite(margin):
            margins[n] = margin
        return ok

    def bracket() -> tuple[int, int]:
        failing = max((k for k, ok in known.items() if not ok), default=0)
        return failing, min((k for k, ok in known.items() if ok), default=MAX_COUNT + 1)

    first = max(1, start)
    if not passes(first) and first not in margins and first < MAX_COUNT:
        passes(MAX_COUNT)
    for _ in range(guesses):
        failing, passing = bracket()
        if passing - failing <= 1 or failing not in margins:
            break
        guess = math.ceil(failing * (1.0 - margins[failing]) * (1 - 1e-12))
        guess = min(max(guess, failing + 1), passing - 1, MAX_COUNT)
        if passes(guess) and guess - 1 > failing:
            passes(guess - 1)  # the count below settles it when the estimate is right
    failing, passing = bracket()
    if passing > MAX_COUNT:
        return fewest(passes, start)  # doubling, answered from memory where it can be
    return bisect_count(passes, failing, passing)
