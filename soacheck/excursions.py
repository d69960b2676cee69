"""Excursions of a waveform above a boundary: pure reductions over arrays of samples.

An *excursion* is a run of samples above the DC boundary. These functions find the runs,
turn log excesses into margins, and carry a run that is still open across chunk borders;
:class:`soacheck.trace.TraceChecker` keeps the bookkeeping.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass
class OpenRun:
    """An excursion above the DC boundary that has not ended yet, reduced per boundary."""

    start_s: float
    min_margin: np.ndarray  # (boundaries,)
    min_time: np.ndarray
    first_negative_s: np.ndarray
    first_negative_sample: list
    negative_s: np.ndarray
    pending_negative: np.ndarray  # flags of the last sample, whose hold time is not known yet
    last_t: float
    start_tj_c: float = float("nan")  # junction temperature at the first sample, NaN without a thermal model


def excess_margin(excess: np.ndarray) -> np.ndarray:
    """Margin 1 − exp(excess) from ln(I / I_allowed); 1 where the excess is NaN (zero current, nothing allowed)."""
    margin = -np.expm1(excess)
    return np.where(np.isnan(margin), 1.0, margin)


def run_edges(outside: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First index and one past the last index of each run of True in ``outside``, each ``(runs,)``."""
    edges = np.diff(outside.astype(np.int8), prepend=np.int8(0), append=np.int8(0))
    return np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)


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
    )
