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


class _Rows:
    """Columns of rows that grow at their end, a row costing amortized constant time: room is
    doubled when it runs out, instead of every chunk's rows copying all the rows kept before."""

    def __init__(self, dtypes: list) -> None:
        self.size = 0
        self.columns = [np.zeros(16, dtype=dtype) for dtype in dtypes]

    def __getitem__(self, k: int) -> np.ndarray:
        """Column ``k``, its rows so far (a view)."""
        return self.columns[k][: self.size]

    def extend(self, values: list[np.ndarray]) -> None:
        """Append rows: one array per column, all of one length."""
        stop = self.size + len(values[0])
        if stop > self.columns[0].size:
            room = max(stop, 2 * self.columns[0].size)
            self.columns = [np.concatenate([c[: self.size], np.zeros(room - self.size, c.dtype)]) for c in self.columns]
        for column, value in zip(self.columns, values, strict=True):
            column[self.size : stop] = value
        self.size = stop

    def keep(self, pick: np.ndarray, start: int = 0, stop: int | None = None) -> None:
        """Of the rows from ``start`` to ``stop`` (None: the last), keep rows ``start + pick`` (``pick``
        sorted); the rows before ``start`` and from ``stop`` on stay, in order."""
        stop = self.size if stop is None else stop
        end = start + pick.size
        for column in self.columns:
            after = column[stop : self.size].copy()
            column[start:end] = column[start:stop][pick]
            column[end : end + after.size] = after
        self.size = end + self.size - stop


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
        self.keys = keys
        self.width = 1
        self.count = 0  # samples seen
        # each kept sample: its sample number, its channels, its keys
        self.rows = _Rows([np.int64] + [float] * (len(names) + keys))

    def _index(self) -> np.ndarray:
        return self.rows[0]

    def _keys(self, start: int = 0) -> list[np.ndarray]:
        first = 1 + len(self.names)
        return [self.rows[first + k][start:] for k in range(self.keys)]

    def add(self, keys: list[np.ndarray], columns_at: Callable[[np.ndarray], list[np.ndarray]]) -> None:
        """The next chunk: ``keys`` (no NaN) pick the samples; ``columns_at(positions)`` gives their channels."""
        n = keys[0].size
        if n == 0:
            return
        index = self._index()
        first = int(index[0]) if index.size else self.count
        width = self.width
        while (self.count + n - 1) // width - first // width >= self.bins:  # wide enough for all seen so far
            width *= 2
        if width != self.width and index.size:  # merge kept bins: the peaks of peaks
            self.rows.keep(bin_maxima(index // width, self._keys()))
        self.width = width
        pick = _aligned_maxima((-self.count) % width, width, keys)
        fresh = self.count + pick
        self.count += n
        self.rows.extend([fresh, *(np.asarray(c, dtype=float) for c in columns_at(pick)), *(key[pick] for key in keys)])
        if fresh.size:
            # the last bin before this chunk may go on in it: its samples kept before, and the chunk's in it,
            # are reduced again (the chunk's other bins are reduced already)
            shared = int(fresh[0]) // width
            start, stop = np.searchsorted(self._index(), [shared * width, (shared + 1) * width])
            if stop - start > 1:
                index, keys_kept = self._index()[start:stop], [k[start:stop] for k in self._keys()]
                self.rows.keep(bin_maxima(index // width, keys_kept), start=int(start), stop=int(stop))

    def result(self) -> dict[str, np.ndarray]:
        """The kept samples of every channel, in time order (copies: no chunk stays alive)."""
        return {name: self.rows[1 + k].copy() for k, name in enumerate(self.names)}


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
