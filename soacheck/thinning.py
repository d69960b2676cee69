"""Thinning a long waveform for a plot: a fixed number of bins over the whole trace, peaks kept.

A trace of any length is fed chunk by chunk. Samples fall into bins of ``width`` samples;
in each bin the samples where a watched quantity is at its extreme are kept (the highest
voltage, current and junction temperature, the least margin), so a short spike survives
however long the trace, where a plain every-n-th sample would skip it. When the bins
outnumber the budget, neighbouring bins merge and the width doubles; since the extreme
of two bins is the extreme of their two extremes, merging needs only the samples already
kept. Memory stays at a few samples a bin, whatever the length of the trace or the size
of its chunks (min/max decimation: common practice for plotting long records, no source).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np


def bin_maxima(bin_of: np.ndarray, keys: list[np.ndarray]) -> np.ndarray:
    """Positions of each bin's highest value of every key, sorted and unique (any bins).

    ``bin_of`` is non-decreasing, shape ``(n,)``; keys have shape ``(n,)``, no NaN. Among equal
    highest values the first is taken.
    """
    n = bin_of.size
    if n == 0:
        return np.zeros(0, dtype=np.intp)
    starts = np.flatnonzero(np.r_[True, bin_of[1:] != bin_of[:-1]])
    position = np.arange(n)
    chosen = []
    for key in keys:
        top = np.repeat(np.maximum.reduceat(key, starts), np.diff(np.r_[starts, n]))
        chosen.append(np.minimum.reduceat(np.where(key == top, position, n), starts))
    return np.unique(np.concatenate(chosen))


def _aligned_maxima(first_bin_start: int, width: int, keys: list[np.ndarray]) -> np.ndarray:
    """``bin_maxima`` for bins of ``width`` samples starting ``first_bin_start`` samples into the
    arrays (a partial bin before it); whole bins are reduced as rows of a reshaped view (one pass)."""
    n = keys[0].size
    head = min(first_bin_start, n)
    whole = (n - head) // width
    cut = head + whole * width
    chosen = []
    for key in keys:
        for lo, hi in ((0, head), (cut, n)):
            if hi > lo:
                chosen.append(np.array([lo + int(np.argmax(key[lo:hi]))]))
        if whole:
            chosen.append(head + width * np.arange(whole) + np.argmax(key[head:cut].reshape(whole, width), axis=1))
    return np.unique(np.concatenate(chosen)) if chosen else np.zeros(0, dtype=np.intp)


class PeakThinner:
    """Keep a fixed budget of bins over a waveform fed in chunks, with each bin's peaks.

    Parameters
    ----------
    bins
        How many bins to keep at most (each keeps up to one sample per key).
    names
        The stored channels, in the order ``columns_at`` returns them.
    keys
        How many keys ``add`` watches; the kept samples are those where a key is highest.
    """

    def __init__(self, bins: int, names: tuple[str, ...], keys: int) -> None:
        self.bins = max(1, int(bins))
        self.names = names
        self.width = 1
        self.count = 0  # samples seen
        self.index = np.zeros(0, dtype=np.int64)  # sample number of each kept sample
        self.kept = [np.zeros(0) for _ in names]
        self.kept_keys = [np.zeros(0) for _ in range(keys)]

    def add(self, keys: list[np.ndarray], columns_at: Callable[[np.ndarray], list[np.ndarray]]) -> None:
        """The next chunk: ``keys`` (no NaN) pick the samples; ``columns_at(positions)`` gives their channels."""
        n = keys[0].size
        if n == 0:
            return
        first = int(self.index[0]) if self.index.size else self.count
        width = self.width
        while (self.count + n - 1) // width - first // width >= self.bins:  # wide enough for all seen so far
            width *= 2
        if width != self.width and self.index.size:  # merge kept bins: the peaks of peaks
            self._keep(bin_maxima(self.index // width, self.kept_keys))
        self.width = width
        pick = _aligned_maxima((-self.count) % width, width, keys)
        fresh = self.count + pick
        self.count += n
        self.index = np.r_[self.index, fresh]
        self.kept = [np.r_[k, np.asarray(c, dtype=float)] for k, c in zip(self.kept, columns_at(pick), strict=True)]
        self.kept_keys = [np.r_[k, key[pick]] for k, key in zip(self.kept_keys, keys, strict=True)]
        # the last bin before this chunk may have gone on in it: reduce that bin once more
        tail = int(np.searchsorted(self.index // width, int(fresh[0]) // width)) if fresh.size else self.index.size
        if self.index.size - tail > len(keys):
            last = bin_maxima(self.index[tail:] // width, [k[tail:] for k in self.kept_keys])
            self._keep(np.r_[np.arange(tail), tail + last])

    def _keep(self, pick: np.ndarray) -> None:
        self.index = self.index[pick]
        self.kept = [k[pick] for k in self.kept]
        self.kept_keys = [k[pick] for k in self.kept_keys]

    def result(self) -> dict[str, np.ndarray]:
        """The kept samples of every channel, in time order (copies: no chunk stays alive)."""
        return {name: values.copy() for name, values in zip(self.names, self.kept, strict=True)}


class SpanThinner:
    """Keep a fixed budget of excursion spans for a plot, each with its judged margin.

    An excursion is recorded as the sample number of its first sample, its first and last
    time, and its least margin against the boundary that judged it (with the time of that
    least margin). Excursions starting in the same bin of ``width`` samples merge into one
    span from the first start to the last end, keeping the least margin and its time; when
    the bins outnumber the budget the width doubles, as in :class:`PeakThinner`, so the
    worst excursion of every bin survives however long the trace.

    Parameters
    ----------
    bins
        How many spans to keep at most.
    """

    names = ("start", "end", "margin", "margin_time")

    def __init__(self, bins: int) -> None:
        self.bins = max(1, int(bins))
        self.width = 1
        self.first_row = np.zeros(0, dtype=np.int64)
        self.kept = [np.zeros(0) for _ in self.names]

    def add(self, first_row, start_s, end_s, margin, margin_time_s) -> None:
        """Excursions that ended, in time order: first sample numbers, first and last times [s], margins, times [s]."""
        first_row = np.r_[self.first_row, np.asarray(first_row, dtype=np.int64)]
        columns = [
            np.r_[k, np.asarray(c, dtype=float)]
            for k, c in zip(self.kept, (start_s, end_s, margin, margin_time_s), strict=True)
        ]
        if first_row.size == 0:
            return
        width = self.width
        while first_row[-1] // width - first_row[0] // width >= self.bins:
            width *= 2
        self.width = width
        bin_of = first_row // width
        cuts = np.flatnonzero(np.r_[True, bin_of[1:] != bin_of[:-1]])
        if cuts.size < first_row.size:  # merge the excursions of each bin: the worst one's margin and time
            start, end, margin_, time = columns
            worst = np.minimum.reduceat(margin_, cuts)
            position = np.arange(first_row.size)
            at_worst = np.minimum.reduceat(
                np.where(margin_ == np.repeat(worst, np.diff(np.r_[cuts, first_row.size])), position, first_row.size),
                cuts,
            )
            columns = [start[cuts], np.maximum.reduceat(end, cuts), worst, time[at_worst]]
            first_row = first_row[cuts]
        self.first_row, self.kept = first_row, columns

    def result(self) -> dict[str, np.ndarray]:
        """The kept spans: ``start``, ``end`` [s], ``margin`` (fraction), ``margin_time`` [s], each ``(spans,)``."""
        return {name: values.copy() for name, values in zip(self.names, self.kept, strict=True)}


def judged_margins(t_s: np.ndarray, dc_margin: np.ndarray, spans: dict[str, np.ndarray]) -> np.ndarray:
    """The margin of thinned samples against the boundary that judged them, one per sample.

    A sample above the DC boundary (DC margin below 0) inside an excursion span takes the
    span's judged margin (the excursion's least margin against its pulse curve); every
    other sample keeps its DC margin.

    Parameters
    ----------
    t_s, dc_margin
        Kept samples' times [s] and margins to the DC boundary (fraction), each ``(n,)``.
    spans
        :meth:`SpanThinner.result` (empty: no excursions).

    Returns
    -------
    numpy.ndarray
        Margins (fraction), ``(n,)``, a new array.
    """
    t = np.asarray(t_s, dtype=float)
    margin = np.asarray(dc_margin, dtype=float).copy()
    if not spans or spans["start"].size == 0:
        return margin
    start, end = spans["start"], spans["end"]
    k = np.searchsorted(start, t, side="right") - 1
    inside = (k >= 0) & (t <= end[np.maximum(k, 0)]) & (margin < 0)
    margin[inside] = spans["margin"][k[inside]]
    return margin


def judged_margin_line(
    t_s: np.ndarray, dc_margin: np.ndarray, spans: dict[str, np.ndarray]
) -> tuple[np.ndarray, np.ndarray]:
    """The margin of thinned samples against the boundary that judged them, with each span's worst.

    Each sample's margin is :func:`judged_margins`; each span's least margin is added at its
    own time, so the worst excursion of every bin is drawn even when no kept sample lies in it.

    Parameters
    ----------
    t_s, dc_margin
        Kept samples' times [s] and margins to the DC boundary (fraction), each ``(n,)``.
    spans
        :meth:`SpanThinner.result` (empty: no excursions).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Times [s] and margins (fraction), in time order, each ``(n + spans,)``.
    """
    t = np.asarray(t_s, dtype=float)
    margin = judged_margins(t, dc_margin, spans)
    if not spans or spans["start"].size == 0:
        return t, margin
    times = np.r_[t, spans["margin_time"]]
    order = np.argsort(times, kind="stable")
    return times[order], np.r_[margin, spans["margin"]][order]
