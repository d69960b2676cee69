"""Excursions of a waveform above a boundary: pure reductions over arrays of samples.

An *excursion* is a run of samples above the DC boundary. These functions find the runs,
turn log excesses into margins, reduce each run in one linear pass, and carry a run that
is still open across chunk borders; :class:`soacheck.trace.TraceChecker` keeps the
bookkeeping.

Reductions work on the log excess x = ln(I / I_allowed) rather than on the margin
1 − eˣ: the margin falls as x rises, so a run's least margin is 1 − e^max(x) and a sample
is outside exactly when x > 0; only one value per run is turned into a margin. A NaN
excess (zero current where nothing is allowed) counts as inside, margin 1.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass
class OpenRun:
    """An excursion above the DC boundary that has not ended yet, reduced per boundary.

    Only the boundaries that may still judge it are reduced (those at least as long as the
    excursion so far); the others hold NaN margins and no negative sample.
    """

    start_s: float
    min_margin: np.ndarray  # (boundaries,)
    min_time: np.ndarray
    first_negative_s: np.ndarray
    first_negative_sample: list
    negative_s: np.ndarray
    pending_negative: np.ndarray  # flags of the last sample, whose hold time is not known yet
    last_t: float
    start_tj_c: float = float("nan")  # junction temperature at the first sample, NaN without a thermal model
    start_row: int = 0  # sample number of the first sample in the whole trace


def excess_margin(excess: np.ndarray) -> np.ndarray:
    """Margin 1 − exp(excess) from ln(I / I_allowed); 1 where the excess is NaN (zero current, nothing allowed)."""
    margin = -np.expm1(excess)
    return np.where(np.isnan(margin), 1.0, margin)


def run_maxima(excess: np.ndarray, offsets: np.ndarray) -> np.ndarray:
    """Highest log excess of each run, NaN ignored (NaN where a run is all NaN), shape ``(runs,)``.

    ``excess`` holds the runs' samples back to back, shape ``(n,)``; ``offsets`` the first
    position of each run, increasing, shape ``(runs,)``, ``offsets[0] == 0``.
    """
    return np.fmax.reduceat(excess, offsets)


def first_at_max(excess: np.ndarray) -> int:
    """Position of the first sample at the highest log excess of ``excess`` (0 if all are NaN)."""
    top = np.fmax.reduce(excess)
    return 0 if np.isnan(top) else int(np.argmax(excess == top))


def run_edges(rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First index and one past the last index of each run of consecutive indices, each ``(runs,)``.

    ``rows`` are the increasing positions of the samples in runs (``np.flatnonzero(outside)``),
    so the work is proportional to the samples in runs, not to the whole chunk.
    """
    if rows.size == 0:
        return rows[:0], rows[:0]
    breaks = np.flatnonzero(np.diff(rows) != 1)
    return rows[np.r_[0, breaks + 1]], rows[np.r_[breaks, rows.size - 1]] + 1


def merge_runs(a: OpenRun, b: OpenRun, t_join: float) -> OpenRun:
    """One excursion from ``a`` (ended at a chunk's end) and ``b`` (its continuation from ``t_join``)."""
    take_b = b.min_margin < a.min_margin
    first_b = ~np.isfinite(a.first_negative_s)
    return OpenRun(
        start_s=a.start_s,
        min_margin=np.where(take_b, b.min_margin, a.min_margin),
        min_time=np.where(take_b, b.min_time, a.min_time),
        first_negative_s=np.where(first_b, b.first_negative_s, a.first_negative_s),
        first_negative_sample=[
            sb if fb else sa
            for sa, sb, fb in zip(a.first_negative_sample, b.first_negative_sample, first_b, strict=True)
        ],
        negative_s=a.negative_s + b.negative_s + a.pending_negative * (t_join - a.last_t),
        pending_negative=b.pending_negative,
        last_t=b.last_t,
        start_tj_c=a.start_tj_c,
        start_row=a.start_row,
    )
