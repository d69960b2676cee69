"""Tracing black curves on a gridded log-log datasheet picture, from a seed on each curve.

The picture is read as grey levels (0 black, 1 white). Pixels darker than mid-grey are
*dark*; the frame and any grid line dark enough to count are long straight lines across
the frame, found by a probabilistic Hough transform and taken out of the dark mask except
where a stroke runs on beyond them (a curve crossing). A curve is then followed column
by column from its seed, in both directions: in each column the dark run nearest the
straight continuation of the last few columns is taken (so the trace goes straight on
where two curves touch or cross), else a run touching the previous one (a bend), else
the column is a gap; a gap longer than a few line widths ends the curve.

Each traced curve is simplified on log-log axes with the Douglas-Peucker algorithm
(shapely's ``simplify``) and its vertices are sharpened to the crossings of straight
lines fitted to the pixels between them.

References
----------
D. H. Douglas, T. K. Peucker, "Algorithms for the reduction of the number of points
required to represent a digitized line or its caricature", Cartographica 10(2), 1973.
J. Matas, C. Galambos, J. Kittler, "Robust detection of lines using the progressive
probabilistic Hough transform", Computer Vision and Image Understanding 78(1), 2000.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from scipy import ndimage
from skimage.color import rgb2gray, rgba2rgb
from skimage.morphology import skeletonize
from skimage.transform import probabilistic_hough_line

from soacheck.calibration import AxisCalibration, Seed
from soacheck.errors import SoacheckError

DARK_BELOW = 0.5  # grey level under which a pixel is ink of a curve, the frame or text (0 black, 1 white)
INK_BELOW = 0.96  # grey level under which a pixel is any ink, the light grid included
SEED_RADIUS_PX = 15.0  # a seed must lie this close to a curve (reading a value by eye is good to a few px)
SIMPLIFY_DECADES = 0.005  # Douglas-Peucker tolerance on log-log axes: 0.5 % of a decade


def grey_levels(image: np.ndarray) -> np.ndarray:
    """Grey levels 0 (black) to 1 (white), shape ``(rows, columns)``, of an RGB(A) or grey image."""
    data = np.asarray(image, dtype=float)
    if data.max() > 1.0:
        data = data / 255.0
    if data.ndim == 3 and data.shape[2] == 4:
        data = rgba2rgb(data)
    if data.ndim == 3:
        data = rgb2gray(data[..., :3])
    return data


# --------------------------------------------------------------------------- straight lines


@dataclass(frozen=True)
class Band:
    """A long straight line of the picture: the pixel rows (or columns) it covers.

    Attributes
    ----------
    first, last
        First and last row (horizontal line) or column (vertical line) it covers. [px]
    start, end
        Where along its length it starts and ends. [px]
    """

    first: int
    last: int
    start: int
    end: int

    @property
    def centre(self) -> float:
        """The line's middle across its width. [px]"""
        return 0.5 * (self.first + self.last)


def long_lines(mask: np.ndarray, *, horizontal: bool, min_length_px: float) -> list[Band]:
    """Straight horizontal (or vertical) lines of ``mask`` at least ``min_length_px`` long.

    Found with the progressive probabilistic Hough transform restricted to the one
    direction (skimage's ``probabilistic_hough_line``, seeded, so the result repeats);
    adjacent rows are merged into one band, so a line several pixels wide is one band.
    """
    theta = np.array([np.pi / 2]) if horizontal else np.array([0.0])
    segments = probabilistic_hough_line(
        mask, threshold=10, line_length=int(min_length_px), line_gap=3, theta=theta, rng=0
    )
    if not segments:
        return []
    across = np.array([s[0][1] if horizontal else s[0][0] for s in segments])
    along = np.array([sorted((s[0][0], s[1][0]) if horizontal else (s[0][1], s[1][1])) for s in segments])
    order = np.argsort(across, kind="stable")
    across, along = across[order], along[order]
    breaks = np.flatnonzero(np.diff(across) > 1) + 1
    bands = []
    for group in np.split(np.arange(across.size), breaks):
        bands.append(
            Band(int(across[group[0]]), int(across[group[-1]]), int(along[group, 0].min()), int(along[group, 1].max()))
        )
    return bands


@dataclass(frozen=True)
class Frame:
    """The plot's frame: the pixel position of each edge line's middle. [px]"""

    left: float
    right: float
    top: float
    bottom: float
    line_px: int  # the widest edge line's width [px]


def find_frame(grey: np.ndarray) -> Frame:
    """The frame: the outermost long dark lines, horizontal and vertical, that span half the picture.

    Raises
    ------
    SoacheckError
        When no rectangle of long dark lines is found (a plot with no frame drawn).
    """
    dark = grey < DARK_BELOW
    rows, columns = grey.shape
    horizontal = long_lines(dark, horizontal=True, min_length_px=0.5 * columns)
    vertical = long_lines(dark, horizontal=False, min_length_px=0.5 * rows)
    if len(horizontal) < 2 or len(vertical) < 2:
        raise SoacheckError(
            "no plot frame found (two long dark lines across and two down the picture); give the axis "
            "calibration as pixel ticks with --x PX1=V1,PX2=V2 --y PY1=I1,PY2=I2 instead"
        )
    top, bottom = horizontal[0], horizontal[-1]
    left, right = vertical[0], vertical[-1]
    width = max(b.last - b.first + 1 for b in (top, bottom, left, right))
    return Frame(
        _line_middle(grey.T, left),
        _line_middle(grey.T, right),
        _line_middle(grey, top),
        _line_middle(grey, bottom),
        width,
    )


def _line_middle(grey: np.ndarray, band: Band) -> float:
    """A horizontal band's middle between pixel rows: its darkness profile's centroid, one row either side."""
    rows = np.arange(max(band.first - 1, 0), min(band.last + 2, grey.shape[0]))
    profile = np.clip(1.0 - grey[rows, band.start : band.end + 1], 0.0, 1.0).mean(axis=1)
    return float((profile * rows).sum() / profile.sum())


def grid_lines(grey: np.ndarray, frame: Frame, *, horizontal: bool) -> np.ndarray:
    """Middles of the grid lines across the frame (light or dark), frame lines included. [px]"""
    ink = grey < INK_BELOW
    span = (frame.right - frame.left) if horizontal else (frame.bottom - frame.top)
    bands = long_lines(ink, horizontal=horizontal, min_length_px=0.85 * span)
    return np.array([b.centre for b in bands])


def decades_seen(positions_px: np.ndarray, span_px: float) -> float | None:
    """Decades across a frame of ``span_px`` from the grid line positions of a log axis, or None.

    On a log grid with minor lines at 2..9 the widest gap, from 1 to 2, is log10(2) of a
    decade and opens every decade; the decade's length is the spacing of those openings
    (or the widest gap / log10 2 when only one shows). With major lines alone every gap
    is a decade. Returns None with fewer than three lines.
    """
    p = np.unique(np.round(positions_px, 1))
    if p.size < 3:
        return None
    gaps = np.diff(p)
    if gaps.max() / gaps.min() < 1.3:
        decade_px = float(np.median(gaps))
    else:
        opens = p[:-1][gaps > 0.8 * gaps.max()]
        decade_px = float(np.median(np.diff(opens))) if opens.size >= 2 else float(gaps.max() / np.log10(2))
    return span_px / decade_px


def dark_mask(grey: np.ndarray, frame: Frame) -> np.ndarray:
    """Dark pixels inside the frame, with the frame and long dark grid lines taken out.

    A long line's pixels are kept where the dark stroke carries on beyond the line on
    either side (a curve crossing it, or a curve drawn along it and wider than it).
    """
    dark = grey < DARK_BELOW
    inside = np.zeros_like(dark)
    pad = frame.line_px // 2 + 1
    top, bottom = int(frame.top) + pad, int(np.ceil(frame.bottom)) - pad + 1
    inside[top:bottom, int(frame.left) + pad : int(np.ceil(frame.right)) - pad + 1] = True
    dark &= inside
    for horizontal in (True, False):
        span = (frame.right - frame.left) if horizontal else (frame.bottom - frame.top)
        bands = long_lines(dark, horizontal=horizontal, min_length_px=0.8 * span)
        view = dark if horizontal else dark.T  # a view: rows of `view` run along the line
        for band in bands:
            keep = view[max(band.first - 1, 0)] | view[min(band.last + 1, view.shape[0] - 1)]
            view[band.first : band.last + 1, ~keep] = False
    return dark


def stroke_width_px(mask: np.ndarray, row: int, column: int, radius: int = 12) -> float:
    """Width of the dark stroke near a pixel: twice the median distance to its edge along its skeleton. [px]"""
    r0, c0 = max(row - radius, 0), max(column - radius, 0)
    window = mask[r0 : row + radius + 1, c0 : column + radius + 1]
    skeleton = skeletonize(window)
    if not skeleton.any():
        return 1.0
    depth = ndimage.distance_transform_edt(window)
    return float(max(1.0, 2.0 * np.median(depth[skeleton]) - 0.5))


# --------------------------------------------------------------------------- following a curve


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
    """

    first: np.ndarray
    last: np.ndarray
    centre: np.ndarray
    offsets: np.ndarray

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
    return ColumnRuns(first, last, centre, offsets)


def _follow(runs: ColumnRuns, seed: int, seed_column: int, width_px: float, step: int, stop: int) -> list:
    """Columns, rows and ambiguity of the curve from run ``seed`` on, one column at a time."""
    columns, centres, clear = [seed_column], [float(runs.centre[seed])], [True]
    lengths = [runs.last[seed] - runs.first[seed] + 1]
    previous = (runs.first[seed], runs.last[seed])
    window = max(6, int(3 * width_px))
    max_gap = max(12, int(4 * width_px))
    gap = 0
    c = seed_column
    while (stop - c) * step > 0:
        c += step
        recent = []
        for k in range(len(columns) - 1, -1, -1):
            if abs(columns[k] - c) > window + gap:
                break
            if clear[k]:
                recent.append(k)
        if len(recent) >= 3:
            slope, intercept = np.polyfit(np.take(columns, recent), np.take(centres, recent), 1)
            predicted = slope * c + intercept
        else:
            slope, predicted = 0.0, centres[-1]
        span = runs.column(c)
        first, last, centre = runs.first[span], runs.last[span], runs.centre[span]
        chosen = None
        if first.size:
            off = np.maximum(first - predicted, 0) + np.maximum(predicted - last, 0)
            k = int(np.argmin(off))
            if off[k] <= max(2.0, width_px / 2) + 0.5 * abs(slope):
                chosen = k
            elif gap == 0:
                touching = np.flatnonzero((first <= previous[1] + 1) & (last >= previous[0] - 1))
                if touching.size:
                    chosen = int(touching[np.argmin(np.abs(centre[touching] - centres[-1]))])
        if chosen is None:
            gap += 1
            if gap > max_gap:
                break
            continue
        gap = 0
        expected = width_px * np.hypot(1.0, slope) + abs(slope)
        length = last[chosen] - first[chosen] + 1
        usual = np.median(np.take(lengths, recent)) if len(recent) >= 3 else expected
        merged = length > max(usual, expected) + 1.5
        if merged:
            half = expected / 2
            row = float(np.clip(predicted, first[chosen] + half - 0.5, last[chosen] - half + 0.5))
        else:
            row = float(centre[chosen])
        columns.append(c)
        centres.append(row)
        clear.append(not merged)
        lengths.append(length)
        previous = (first[chosen], last[chosen])
    return [columns, centres, clear]


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
    """

    column: np.ndarray
    row: np.ndarray
    clear: np.ndarray
    width_px: float


def follow_curve(mask: np.ndarray, grey: np.ndarray, runs: ColumnRuns, seeded: Seeded, frame: Frame) -> TracedPixels:
    """Follow the curve through ``seeded`` to both its ends, inside the frame."""
    run = seeded.run
    row = int(round(runs.centre[run]))
    width = stroke_width_px(mask, row, seeded.column)
    lo = int(np.ceil(frame.left)) + frame.line_px
    hi = int(np.floor(frame.right)) - frame.line_px
    left = _follow(runs, run, seeded.column, width, -1, lo)
    right = _follow(runs, run, seeded.column, width, +1, hi)
    column = np.array(left[0][:0:-1] + right[0], dtype=float)
    row_px = np.array(left[1][:0:-1] + right[1])
    clear = np.array(left[2][:0:-1] + right[2])
    return TracedPixels(column, row_px, clear, width)


# --------------------------------------------------------------------------- vertices


def simplify(x: np.ndarray, y: np.ndarray, tolerance: float) -> np.ndarray:
    """Indices of the points Douglas-Peucker keeps of the polyline ``(x, y)`` (x rising).

    shapely's ``simplify`` without topology preservation is the plain Douglas-Peucker
    algorithm: every dropped point lies within ``tolerance`` of the kept polyline.
    """
    line = shapely.LineString(np.column_stack([x, y]))
    kept = shapely.get_coordinates(shapely.simplify(line, tolerance, preserve_topology=False))
    return np.searchsorted(x, kept[:, 0])


def sharpen(
    x: np.ndarray, y: np.ndarray, keep: np.ndarray, clear: np.ndarray, *, margin: int, tolerance: float
) -> tuple[np.ndarray, np.ndarray]:
    """Vertices at the crossings of straight lines fitted between the kept points.

    Points within ``margin`` of a kept point (a rounded or anti-aliased corner) and points
    that are not ``clear`` are left out of the fits. A run of segments too short for a fit
    (a corner cut in pieces by Douglas-Peucker, or a bump where another curve touches) is
    replaced by one vertex where its neighbours' lines cross between their far ends, or
    dropped when those lines are one straight line (parallel and within ``tolerance``);
    then every inner vertex moves to the crossing of its two neighbouring lines when that
    crossing lies between its neighbours, and an end vertex moves onto its line.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        The vertices' x and y, at most ``len(keep)`` of them, x rising.
    """

    def fit(a: int, b: int):
        inner = np.arange(a + margin, b - margin + 1)
        inner = inner[clear[inner]] if inner.size else inner
        return np.polyfit(x[inner], y[inner], 1) if inner.size >= 3 else None

    def parallel(before, after) -> bool:
        return abs(before[0] - after[0]) < 0.05

    def crossing(before, after) -> float | None:
        if before is None or after is None or parallel(before, after):
            return None
        return float((after[1] - before[1]) / (before[0] - after[0]))

    index = [int(k) for k in keep]
    vx, vy = list(x[keep].astype(float)), list(y[keep].astype(float))
    fits = [fit(a, b) for a, b in zip(index[:-1], index[1:], strict=True)]
    j = 1
    while j < len(fits) - 1:
        k = j  # fits[j:k] is a run of segments too short to fit
        while k < len(fits) - 1 and fits[k] is None:
            k += 1
        before, after = fits[j - 1], fits[k]
        if k > j and before is not None and after is not None:
            cx = crossing(before, after)
            middle = 0.5 * (vx[j] + vx[k])
            if cx is not None and vx[j - 1] < cx < vx[k + 1]:
                del fits[j:k], vx[j + 1 : k + 1], vy[j + 1 : k + 1], index[j + 1 : k + 1]
                vx[j], vy[j] = cx, float(np.polyval(before, cx))
            elif parallel(before, after) and abs(np.polyval(before, middle) - np.polyval(after, middle)) < tolerance:
                del fits[j - 1 : k + 1], vx[j : k + 1], vy[j : k + 1], index[j : k + 1]
                fits.insert(j - 1, fit(index[j - 1], index[j]))
                continue
        j += 1
    for end, inner in ((0, 1), (-1, -2)):
        if len(fits) > 1 and fits[end] is None and fits[inner] is not None:
            del fits[end], vx[inner], vy[inner], index[inner]
    for j in range(1, len(vx) - 1):
        cx = crossing(fits[j - 1], fits[j])
        if cx is not None and vx[j - 1] < cx < vx[j + 1]:
            vx[j], vy[j] = cx, float(np.polyval(fits[j - 1], cx))
    if fits[0] is not None:
        vy[0] = float(np.polyval(fits[0], vx[0]))
    if fits[-1] is not None:
        vy[-1] = float(np.polyval(fits[-1], vx[-1]))
    return np.array(vx), np.array(vy)


# --------------------------------------------------------------------------- from seeds to curves


@dataclass(frozen=True)
class TracedCurve:
    """A traced curve: its pixels, its vertices and how well they describe it.

    Attributes
    ----------
    seed
        The seed it was traced from.
    pixels
        The curve's middle, one point per column.
    x, y
        The vertices in the plot's values (V and A, or s and K/W), x rising, shape ``(m,)``.
    column_px, row_px
        The vertices in pixels, shape ``(m,)``.
    largest_px
        Largest distance from a traced pixel to the polyline through the vertices. [px]
    largest_decades
        Largest difference in log10 y between a traced pixel and the polyline. [decades]
    note
        What the reader should know (a seed between two curves), or "".
    """

    seed: Seed
    pixels: TracedPixels
    x: np.ndarray
    y: np.ndarray
    column_px: np.ndarray
    row_px: np.ndarray
    largest_px: float
    largest_decades: float
    note: str


def trace_curves(
    grey: np.ndarray,
    frame: Frame,
    seeds: Sequence[Seed],
    x_axis: AxisCalibration,
    y_axis: AxisCalibration,
    *,
    tolerance_decades: float = SIMPLIFY_DECADES,
) -> list[TracedCurve]:
    """Trace the curve through each seed and simplify it on log-log axes.

    Parameters
    ----------
    grey
        Grey levels, shape ``(rows, columns)``, 0 black to 1 white.
    frame
        The plot's frame; tracing stays inside it.
    seeds
        One seed per curve, in the plot's values.
    x_axis, y_axis
        The axes' calibrations (logarithmic).
    tolerance_decades
        Douglas-Peucker tolerance on log-log axes. [decades]

    Raises
    ------
    SoacheckError
        A seed outside the frame, with no curve within ``SEED_RADIUS_PX``, or on a mark too
        short to be a curve (a label, a tick).
    """
    mask = dark_mask(grey, frame)
    runs = column_runs(mask, grey)
    traced = []
    for seed in seeds:
        column = float(x_axis.pixel(seed.x))
        row = float(y_axis.pixel(seed.y))
        if not (frame.left < column < frame.right and frame.top < row < frame.bottom):
            raise SoacheckError(f"seed {seed.label}: lies outside the plot's frame; read it off a curve inside it")
        seeded = land_seed(runs, column, row)
        if seeded is None:
            raise SoacheckError(
                f"seed {seed.label}: no curve within {SEED_RADIUS_PX:g} px of it; read the seed off the curve "
                "(or check the axis calibration)"
            )
        pixels = follow_curve(mask, grey, runs, seeded, frame)
        length = pixels.column[-1] - pixels.column[0]
        if length < max(20.0, 0.05 * (frame.right - frame.left)):
            raise SoacheckError(
                f"seed {seed.label}: the dark mark nearest it is only {length:.0f} px long (a label or a tick?), "
                "not a curve; move the seed onto the curve"
            )
        traced.append(_vertices(pixels, seed, seeded.note, frame, x_axis, y_axis, tolerance_decades))
    return traced


def _vertices(pixels, seed, note, frame, x_axis, y_axis, tolerance_decades) -> TracedCurve:
    lx = np.log10(x_axis.value(pixels.column))
    ly = np.log10(y_axis.value(pixels.row))
    keep = simplify(lx, ly, tolerance_decades)
    vx, vy = sharpen(lx, ly, keep, pixels.clear, margin=int(2 * pixels.width_px) + 2, tolerance=tolerance_decades)
    # a curve that runs into the frame goes on to the frame's edge
    reach = frame.line_px + 2
    for end, inner, edge in ((0, 1, frame.left), (-1, -2, frame.right)):
        if vx.size > 1 and abs(pixels.column[end] - edge) <= reach:
            edge_x = float(np.log10(x_axis.value(edge)))
            vy[end] = vy[inner] + (vy[end] - vy[inner]) * (edge_x - vx[inner]) / (vx[end] - vx[inner])
            vx[end] = edge_x
    x, y = 10.0**vx, 10.0**vy
    column_px, row_px = x_axis.pixel(x), y_axis.pixel(y)
    line = shapely.LineString(np.column_stack([column_px, row_px]))
    largest_px = float(shapely.distance(shapely.points(pixels.column, pixels.row), line).max())
    largest_decades = float(np.abs(ly - np.interp(lx, vx, vy)).max())
    return TracedCurve(seed, pixels, x, y, column_px, row_px, largest_px, largest_decades, note)


OVERLAY_COLOUR = "#e6007e"  # magenta: stands out on black curves and a grey grid, and in greyscale as mid-dark


def plot_overlay(image: np.ndarray, curves: Sequence[TracedCurve], ax=None):
    """The picture with each traced curve, its vertices and its label drawn over it; returns the axes.

    Pass an ``ax`` that fills its figure (``fig.add_axes((0, 0, 1, 1))``) sized to the
    picture for a pixel-for-pixel overlay.
    """
    if ax is None:
        from matplotlib.figure import Figure

        rows, columns = np.asarray(image).shape[:2]
        ax = Figure(figsize=(columns / 100, rows / 100), dpi=100).add_axes((0, 0, 1, 1))
    ax.imshow(image, interpolation="nearest")
    ax.set_axis_off()
    for curve in curves:
        ax.plot(curve.pixels.column, curve.pixels.row, color=OVERLAY_COLOUR, linewidth=0.8, alpha=0.6)
        ax.plot(
            curve.column_px,
            curve.row_px,
            color=OVERLAY_COLOUR,
            linewidth=1.2,
            marker="o",
            markersize=4,
            markerfacecolor="white",
        )
        k = len(curve.column_px) // 2
        middle = (0.5 * (curve.column_px[k - 1] + curve.column_px[k]), 0.5 * (curve.row_px[k - 1] + curve.row_px[k]))
        ax.annotate(
            curve.seed.name or "Zth",
            middle,
            xytext=(4, -8),
            textcoords="offset points",
            color=OVERLAY_COLOUR,
            fontsize=8,
            fontweight="bold",
        )
    return ax
