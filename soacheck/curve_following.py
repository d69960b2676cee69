"""Following one black curve through a picture's dark pixels, column by column, from a seed.

The dark mask of :mod:`soacheck.picture` is cut into vertical runs of dark pixels, column by
column (:func:`column_runs`). A seed lands on the nearest run (:func:`land_seed`); from there
the curve is followed in both directions (:func:`follow_curve`): in each column the dark run
nearest the straight continuation of the last few columns is taken (so the trace goes straight
on where two curves touch or cross), else a run touching the previous one (a bend), else the
column is a gap. A gap is bridged as :mod:`soacheck.broken_lines` says (the pieces of a dashed
or dotted curve, a removed grid line); a longer one ends the curve. A run far longer than the
stroke that does not go on as a steep line is a vertical line across the curve: the curve goes
on beyond a leftover of a vertical grid line and ends at a voltage limit drawn down to the
frame. The result is pixels, one per column (:class:`TracedPixels`); :mod:`soacheck.tracing`
turns them into a curve's vertices in the plot's values.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from soacheck.broken_lines import TAN_BRIDGE, bridge_px, heading_at, piece_middles, within_bend
from soacheck.picture import Frame, stroke_width_px

SEED_RADIUS_PX = 15.0  # a seed must lie this close to a curve (reading a value by eye is good to a few px)


@dataclass(frozen=True)
class ColumnRuns:
    """Every vertical run of dark pixels, grouped by column.

    Attributes
    ----------
    first, last
        First and last row of each run, shape ``(n,)``. [px]
    centre
        Darkness-weighted middle of each run, one pixel of antialiasing either side
        included, so that it falls between pixel rows. [px]
    offsets
        Runs of column ``c`` are ``offsets[c]:offsets[c + 1]``, shape ``(columns + 1,)``.
    ink
        Darkness summed over each run and the pixel either side, shape ``(n,)``. [px]
    """

    first: np.ndarray
    last: np.ndarray
    centre: np.ndarray
    offsets: np.ndarray
    ink: np.ndarray

    def column(self, c: int) -> slice:
        """The runs of column ``c``."""
        return slice(int(self.offsets[c]), int(self.offsets[c + 1]))


def column_runs(mask: np.ndarray, grey: np.ndarray) -> ColumnRuns:
    """The vertical runs of ``mask`` (shape ``(rows, columns)``), weighted by darkness ``1 - grey``."""
    rows, columns = mask.shape
    edges = np.diff(np.pad(mask, ((1, 1), (0, 0))).astype(np.int8), axis=0).T  # (columns, rows + 1)
    start_col, first = np.nonzero(edges == 1)
    _, end = np.nonzero(edges == -1)
    last = end - 1
    weight = np.clip(1.0 - grey, 0.0, 1.0)
    cum_w = np.vstack([np.zeros(columns), np.cumsum(weight, axis=0)])
    cum_wr = np.vstack([np.zeros(columns), np.cumsum(weight * np.arange(rows)[:, None], axis=0)])
    lo = np.maximum(first - 1, 0)
    hi = np.minimum(last + 1, rows - 1) + 1
    total = cum_w[hi, start_col] - cum_w[lo, start_col]
    centre = (cum_wr[hi, start_col] - cum_wr[lo, start_col]) / np.maximum(total, 1e-12)
    offsets = np.searchsorted(start_col, np.arange(columns + 1))
    return ColumnRuns(first, last, centre, offsets, total)


def _dark_ahead(runs: ColumnRuns, c: int, slope: float, row: float, step: int, stop: int, ahead: int) -> bool:
    """Whether the straight line from ``row`` at column ``c`` runs on through dark pixels for ``ahead`` columns."""
    hits = 0
    for n in range(1, ahead + 1):
        k = c + n * step
        if (stop - k) * step < 0:
            return hits >= 0.8 * (n - 1) and n > 2
        span = runs.column(k)
        expect = row + slope * n * step
        hits += bool(np.any((runs.first[span] - 1 <= expect) & (expect <= runs.last[span] + 1)))
    return hits >= 0.8 * ahead


def _steep_on(runs: ColumnRuns, c: int, step: int, stop: int, first: int, last: int, entry: float) -> bool:
    """Whether a long run at column ``c`` goes on as a steep line: a run in the next column meets its far end
    and not its near one (a vertical line two pixels wide fills the next column end to end)."""
    if (stop - c) * step <= 0:
        return False
    far, near = (last, first) if abs(last - entry) > abs(first - entry) else (first, last)
    span = runs.column(c + step)
    meets_far = (runs.first[span] - 2 <= far) & (far <= runs.last[span] + 2)
    meets_near = (runs.first[span] <= near) & (near <= runs.last[span])
    return bool(np.any(meets_far & ~meets_near))


def _short_run_near(
    runs: ColumnRuns, c: int, stop: int, step: int, rows: tuple[float, ...], tolerance: float, short: float
) -> bool:
    """Whether one of the next four columns from ``c`` holds a run no longer than ``short`` near one of ``rows``."""
    for n in range(4):
        k = c + n * step
        if (stop - k) * step < 0:
            return False
        span = runs.column(k)
        first, last = runs.first[span], runs.last[span]
        shorts = last - first + 1 <= short
        for row in rows:
            if np.any(shorts & (first - tolerance - 0.6 * n <= row) & (row <= last + tolerance + 0.6 * n)):
                return True
    return False


def _follow(
    runs: ColumnRuns, seed: int, seed_column: int, width_px: float, step: int, stop: int, heading: float | None
) -> tuple[list, float]:
    """Columns, rows, ambiguity and ink of the curve from run ``seed`` on, one column at a time,
    and the longest gap bridged [px].

    ``heading`` (rows per column) stands for the curve's direction until the trace has
    columns of its own to fit one: three, and on a broken curve two pieces' worth (a seed
    on a dot); None: straight across.
    """
    columns, centres, clear = [seed_column], [float(runs.centre[seed])], [True]
    ink = [float(runs.ink[seed])]
    lengths = [runs.last[seed] - runs.first[seed] + 1]
    previous = (runs.first[seed], runs.last[seed])
    window = max(6, int(3 * width_px))
    reach_px = bridge_px(width_px)
    max_gap = int(np.ceil(reach_px))
    gap = 0
    bridged_px = 0.0
    since = 0  # the first column of the present heading: a turn within a gap starts a new one
    bend = None  # the first piece seen within the turning cone during the present gap: (column, run)
    c = seed_column
    while (stop - c) * step > 0:
        c += step
        # the last `window` clear columns: through a crossing (merged, not clear) the
        # direction from before it carries on; on a broken curve they span a few pieces,
        # whose end columns lean off the line
        wide = window + int(3 * bridged_px)
        recent = []
        for k in range(len(columns) - 1, since - 1, -1):
            if len(recent) == wide or abs(columns[k] - c) > 4 * window + gap + 3 * bridged_px:
                break
            if clear[k]:
                recent.append(k)
        # three columns; on a broken curve two pieces or more (a dot's columns alone lie flat)
        broken = bridged_px or heading is not None
        spread = abs(columns[recent[0]] - columns[recent[-1]]) if recent else 0
        if len(recent) >= 3 and (not broken or spread > (bridged_px or reach_px) + width_px):
            slope, intercept = np.polyfit(np.take(columns, recent), np.take(centres, recent), 1)
            predicted = slope * c + intercept
        else:
            slope = heading if heading is not None else 0.0
            predicted = centres[-1] + slope * (c - columns[-1])
        span = runs.column(c)
        first, last, centre = runs.first[span], runs.last[span], runs.centre[span]
        chosen = None
        if first.size:
            off = np.maximum(first - predicted, 0) + np.maximum(predicted - last, 0)
            k = int(np.argmin(off))
            # across a gap (a dash's, a removed grid line's) the curve goes on within
            # BRIDGE_DEG of its heading, or has bent by 0.6 px per missing column, 2 px at most
            gap_px = gap * np.hypot(1.0, slope)
            if off[k] <= max(2.0, width_px / 2) + 0.5 * abs(slope) + max(min(0.6 * gap, 2.0), TAN_BRIDGE * gap_px):
                chosen = k
            elif gap == 0 and not bridged_px:  # a bend within a stroke; a broken curve turns in line (below)
                touching = np.flatnonzero((first <= previous[1] + 1) & (last >= previous[0] - 1))
                if touching.size:
                    chosen = int(touching[np.argmin(np.abs(centre[touching] - centres[-1]))])
            elif bend is None:
                # a turn is crossed within 1.5 times the curve's own longest gap so far
                turn_px = 1.5 * bridged_px if bridged_px else reach_px
                ahead = within_bend(c - columns[-1], centre - centres[-1], slope, step, min(turn_px, reach_px))
                if ahead.any():
                    k = int(np.flatnonzero(ahead)[np.argmin(np.abs(centre[ahead] - predicted))])
                    bend = (c, span.start + k)
        if chosen is None:
            gap += 1
            if gap <= max_gap:
                continue
            if bend is None:
                break
            # nothing straight on: the curve turned within the gap, onto the piece in the cone
            c, run = bend
            heading = (float(runs.centre[run]) - centres[-1]) / (c - columns[-1])
            bridged_px = max(bridged_px, float(np.hypot(c - columns[-1], runs.centre[run] - centres[-1])))
            since = len(columns)
            span = runs.column(c)
            first, last, centre = runs.first[span], runs.last[span], runs.centre[span]
            chosen = run - span.start
            slope, predicted, recent = heading, float(runs.centre[run]), []
        elif gap:
            bridged_px = max(bridged_px, float(np.hypot(c - columns[-1], centre[chosen] - centres[-1])))
        gap = 0
        bend = None
        expected = width_px * np.hypot(1.0, slope) + abs(slope)
        length = last[chosen] - first[chosen] + 1
        usual = np.median(np.take(lengths, recent)) if len(recent) >= 3 else expected
        inside = first[chosen] - 0.5 <= predicted <= last[chosen] + 0.5
        skewed = abs(centre[chosen] - predicted) > 0.35 + 0.25 * abs(slope)
        merged = inside and (length > max(usual, expected) + 0.75 or skewed) and len(recent) >= 3
        if merged and not _dark_ahead(runs, c, slope, predicted, step, stop, max(4, int(3 * width_px) + 2)):
            merged = False  # nothing straight ahead: a bend, not a crossing
        half = expected / 2
        clipped = float(np.clip(predicted, first[chosen] + half - 0.5, last[chosen] - half + 0.5))
        row = clipped if merged else float(centre[chosen])
        long = length > 2 * max(usual, expected) + 3
        if long and not merged and not _steep_on(runs, c, step, stop, first[chosen], last[chosen], centres[-1]):
            columns.append(c)
            centres.append(clipped)
            clear.append(False)
            ink.append(float(runs.ink[span.start + chosen]))
            lengths.append(length)
            previous = (int(np.floor(clipped - half)), int(np.ceil(clipped + half)))
            if _short_run_near(
                runs, c + step, stop, step, (predicted + slope * step, centres[-2]), 2.0 + abs(slope), 2 * usual + 3
            ):
                continue  # a leftover of a vertical grid line: the curve goes on beyond it
            break  # a vertical line (a voltage limit drawn down to the frame): the curve ends here
        columns.append(c)
        centres.append(row)
        clear.append(not merged)
        ink.append(float(runs.ink[span.start + chosen]))
        lengths.append(length)
        previous = (first[chosen], last[chosen])
    return [columns, centres, clear, ink], bridged_px


@dataclass(frozen=True)
class Seeded:
    """Where a seed lands: the run it picks and what a reader should be told about it."""

    column: int
    run: int
    distance_px: float
    note: str


def land_seed(runs: ColumnRuns, column: float, row: float, *, radius_px: float = SEED_RADIUS_PX) -> Seeded | None:
    """The run of dark pixels nearest a seed within ``radius_px``, or None.

    Runs in the columns within ``radius_px`` are measured by their distance from the
    seed (to the nearest pixel of the run). When a second, separate run in the same column
    lies within the radius and within twice the distance to the first plus 3 px, the seed
    sits between two curves: the nearer is taken and the note says so.
    """
    c0 = int(round(column))
    best = None
    for c in range(int(np.floor(c0 - radius_px)), int(np.ceil(c0 + radius_px)) + 1):
        if c < 0 or c >= runs.offsets.size - 1:
            continue
        span = runs.column(c)
        off = np.maximum(runs.first[span] - row, 0) + np.maximum(row - runs.last[span], 0)
        distance = np.hypot(off, c - column)
        if distance.size and (best is None or distance.min() < best[0]):
            k = int(np.argmin(distance))
            best = (float(distance[k]), c, span.start + k)
    if best is None or best[0] > radius_px:
        return None
    distance, c, run = best
    span = runs.column(c)
    off = np.maximum(runs.first[span] - row, 0) + np.maximum(row - runs.last[span], 0)
    others = np.sort(off[np.arange(span.start, span.stop) != run])
    note = ""
    if others.size and others[0] <= min(radius_px, 2 * distance + 3):
        note = (
            f"the seed lies between two curves ({distance:.0f} px from one, {others[0]:.0f} px from the other); "
            "traced the nearer"
        )
    return Seeded(c, run, distance, note)


@dataclass(frozen=True)
class TracedPixels:
    """A curve as followed: one point per column, left to right.

    Attributes
    ----------
    column, row
        Pixel coordinates of the curve's middle, shape ``(n,)``; rows count downward. [px]
    clear
        False where the column held a merged stroke (a crossing, a touching curve, a label
        on the line) and the point is the straight continuation instead, shape ``(n,)``.
    width_px
        Width of the stroke near the seed. [px]
    bridged_px
        The longest gap bridged between two pieces of a dashed or dotted curve; 0 for an
        unbroken one. [px]
    """

    column: np.ndarray
    row: np.ndarray
    clear: np.ndarray
    width_px: float
    bridged_px: float = 0.0


def follow_curve(mask: np.ndarray, grey: np.ndarray, runs: ColumnRuns, seeded: Seeded, frame: Frame) -> TracedPixels:
    """Follow the curve through ``seeded`` to both its ends, inside the frame.

    Gaps of a dashed or dotted curve are bridged (:mod:`soacheck.broken_lines`); its points
    are then the middles of its pieces (:func:`~soacheck.broken_lines.piece_middles`).
    """
    run = seeded.run
    row = int(round(runs.centre[run]))
    width = stroke_width_px(mask, row, seeded.column)
    heading = heading_at(mask, float(runs.centre[run]), float(seeded.column), width)
    lo = int(np.ceil(frame.left)) + frame.line_px
    hi = int(np.floor(frame.right)) - frame.line_px
    left, left_gap = _follow(runs, run, seeded.column, width, -1, lo, heading)
    right, right_gap = _follow(runs, run, seeded.column, width, +1, hi, heading)
    column = np.array(left[0][:0:-1] + right[0], dtype=float)
    row_px = np.array(left[1][:0:-1] + right[1])
    clear = np.array(left[2][:0:-1] + right[2])
    ink = np.array(left[3][:0:-1] + right[3])
    bridged = max(left_gap, right_gap)
    if bridged:
        column, row_px, clear = piece_middles(column, row_px, clear, ink, width)
    return TracedPixels(column, row_px, clear, width, bridged)
