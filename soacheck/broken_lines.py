"""Dashed and dotted curves: how far a trace bridges a gap, the heading at a dot, the pieces' ends.

A broken curve is a row of pieces (dashes or dots) along one line. The column tracer of
:mod:`soacheck.curve_following` bridges the gap after a piece when the next piece lies within
:data:`BRIDGE_DEG` of the curve's heading, the gap at most :func:`bridge_px` long; when
nothing lies in line, a corner fell in the gap: it is crossed onto the first piece ahead
within :data:`BEND_DEG` of the heading and within 1.5 times the curve's own longest gap
so far (a neighbouring curve lies further off than the curve's own pieces). A dot shows
no direction of its own: at a seed on a dot the heading is the line through the nearest
pieces either side that lie in line with it (:func:`heading_at`). The end columns of a
piece are cut slantwise (a butt cap across a sloping line) or lightly inked, so their
middles are off the line; :func:`piece_middles` keeps a piece's inner columns, or a short
piece's centre of ink alone, and leaves out a piece off the line its neighbours draw.

The dash patterns a datasheet uses scale with the line width: gaps of 1.6 to 1.7 line
widths in matplotlib's ``--``, ``:`` and ``-.`` patterns (its rcParams
``lines.dashed_pattern``, ``lines.dotted_pattern``); a bridge of five line widths covers
them and patterns with gaps three times as long (common practice, no source).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import ndimage

BRIDGE_WIDTHS = 5.0  # the longest bridged gap, in line widths
BRIDGE_MIN_PX = 12.0  # and never less than this [px]
BRIDGE_DEG = 10.0  # a piece beyond a gap lies within this angle of the heading: the curve goes on straight
BEND_DEG = 60.0  # the widest turn crossed within a gap, when one piece alone lies ahead in that cone
TAN_BRIDGE = math.tan(math.radians(BRIDGE_DEG))
COS_BEND = math.cos(math.radians(BEND_DEG))


def bridge_px(width_px: float) -> float:
    """The longest gap bridged along a curve drawn ``width_px`` wide. [px]"""
    return max(BRIDGE_MIN_PX, BRIDGE_WIDTHS * width_px)


def within_bend(d_column: np.ndarray, d_row: np.ndarray, slope: float, step: int, reach_px: float) -> np.ndarray:
    """Which offsets ``(d_column, d_row)`` from the last point lie ahead within :data:`BEND_DEG` and ``reach_px``.

    ``slope`` is the heading in rows per column and ``step`` the direction of travel
    (+1 right, -1 left); shapes broadcast.
    """
    heading = np.array([step, step * slope]) / math.hypot(1.0, slope)
    distance = np.hypot(d_column, d_row)
    along = (d_column * heading[0] + d_row * heading[1]) / np.maximum(distance, 1e-12)
    return (distance <= reach_px) & (along >= COS_BEND)


def heading_at(mask: np.ndarray, row: float, column: float, width_px: float) -> float | None:
    """The heading of a broken curve at a short piece near ``(row, column)``, in rows per column, or None.

    The pieces of ``mask`` (8-connected) within :func:`bridge_px` plus the piece's own length
    are measured from the centre of the piece at the point: the heading is the line through
    the nearest pair, one ahead and one behind, whose directions differ from opposite by at
    most :data:`BRIDGE_DEG` (a regular dash pattern puts them in line). None when the piece
    at the point is longer than twice :func:`bridge_px` (a solid line), or no pair is in
    line (the seed is at the curve's end).
    """
    longest = 2 * bridge_px(width_px)
    r0, c0 = max(int(row - 2 * longest), 0), max(int(column - 2 * longest), 0)
    window = mask[r0 : int(row + 2 * longest) + 1, c0 : int(column + 2 * longest) + 1]
    labels, count = ndimage.label(window, structure=np.ones((3, 3)))
    r, c = int(round(row)) - r0, int(round(column)) - c0
    if count < 3 or not (0 <= r < labels.shape[0] and 0 <= c < labels.shape[1]):
        return None
    near = labels[max(r - 2, 0) : r + 3, max(c - 2, 0) : c + 3]
    if not near.any():
        return None
    own = int(np.bincount(near[near > 0]).argmax())
    extent = ndimage.find_objects(labels)[own - 1]
    length = math.hypot(extent[0].stop - extent[0].start, extent[1].stop - extent[1].start)
    if length > longest:
        return None  # a solid line
    reach = length + bridge_px(width_px)
    centres = np.array(ndimage.center_of_mass(window, labels, np.arange(1, count + 1)))
    offsets = centres - centres[own - 1]
    distance = np.hypot(offsets[:, 0], offsets[:, 1])
    candidate = (distance > 0) & (distance <= reach)
    ahead = np.flatnonzero(candidate & (offsets[:, 1] > 0))
    behind = np.flatnonzero(candidate & (offsets[:, 1] < 0))
    if not ahead.size or not behind.size:
        return None
    a, b = offsets[ahead][:, None, :], offsets[behind][None, :, :]
    cosine = -(a * b).sum(axis=2) / (distance[ahead][:, None] * distance[behind][None, :])
    total = distance[ahead][:, None] + distance[behind][None, :]
    total = np.where(cosine >= math.cos(math.radians(BRIDGE_DEG)), total, np.inf)
    if not np.isfinite(total).any():
        return None
    i, j = np.unravel_index(np.argmin(total), total.shape)
    d_row, d_column = offsets[ahead[i]] - offsets[behind[j]]
    return float(d_row / d_column)


def piece_middles(
    column: np.ndarray, row: np.ndarray, clear: np.ndarray, ink: np.ndarray, width_px: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The middles of a broken curve's pieces, without their end columns.

    Parameters
    ----------
    column, row
        One point per traced column, columns rising; a step of more than one column is a gap,
        shape ``(n,)``. [px]
    clear
        False for points that are a straight continuation through a merged stroke, shape ``(n,)``.
    ink
        The ink in each point's column of the piece (darkness summed over the run), shape ``(n,)``. [px]
    width_px
        The line's width. [px]

    Returns
    -------
    (numpy.ndarray, numpy.ndarray, numpy.ndarray)
        Columns, rows and clear flags of the points kept. A piece keeps its columns more than
        ``width · |sin φ| + 1`` from an end beside a gap (φ the line's angle, from the pieces
        either side); a piece with no such column becomes one point at its centre of ink,
        which for a dash or dot symmetric about its middle lies on the line. The curve's own
        ends are a piece's ends too: a frame cuts them, a tick mark touches them. A point more
        than half a line width (1.5 px at least) off the chord of its neighbours, off the line
        through the two before it and off the line through the two after it is left out (a
        letter of a label or a tick mark taken for a piece). An unbroken curve is returned as
        it is.

    Notes
    -----
    A butt cap across a line at angle φ covers ``width · |sin φ|`` columns slantwise; one
    more column is the antialiased edge.
    """
    starts = np.flatnonzero(np.diff(column) > 1) + 1
    if not starts.size:
        return column, row, clear
    bounds = np.concatenate([[0], starts, [column.size]])
    weight = np.maximum(ink, 1e-9)
    mass = np.add.reduceat(weight, bounds[:-1])
    mid_c = np.add.reduceat(weight * column, bounds[:-1]) / mass
    mid_r = np.add.reduceat(weight * row, bounds[:-1]) / mass
    # the line's slope at each piece, from its neighbours' centres (its own at the curve's ends)
    before, after = np.r_[0, np.arange(mid_c.size - 1)], np.r_[np.arange(1, mid_c.size), mid_c.size - 1]
    slope = (mid_r[after] - mid_r[before]) / np.maximum(mid_c[after] - mid_c[before], 1e-9)
    partial = width_px * np.abs(slope) / np.hypot(1.0, slope) + 1.0  # [columns]
    piece = np.repeat(np.arange(mid_c.size), np.diff(bounds))
    first, last = column[bounds[:-1]][piece], column[bounds[1:] - 1][piece]
    inner = (column - first >= partial[piece]) & (last - column >= partial[piece])
    has_inner = np.bincount(piece, weights=inner, minlength=mid_c.size) > 0
    keep = inner & has_inner[piece]
    short = np.flatnonzero(~has_inner)
    short_clear = np.logical_and.reduceat(clear, bounds[:-1])[short]
    c = np.concatenate([column[keep], mid_c[short]])
    r = np.concatenate([row[keep], mid_r[short]])
    k = np.concatenate([clear[keep], short_clear])
    order = np.argsort(c, kind="stable")
    c, r, k = c[order], r[order], k[order]
    # a point off every line its neighbours draw (the chord between them, the line through
    # the two before it, the line through the two after it) by more than half a line width
    # is a letter or a tick mark
    if c.size >= 3:
        off = np.full((3, c.size), np.inf)
        for row_of, (a, b) in enumerate(((-1, 1), (-2, -1), (1, 2))):
            lo, hi = max(0, -min(a, b)), c.size - max(0, max(a, b))
            at = np.arange(lo, hi)
            ca, ra, cb, rb = c[at + a], r[at + a], c[at + b], r[at + b]
            on_line = ra + (rb - ra) * (c[at] - ca) / np.where(cb == ca, 1e-9, cb - ca)
            off[row_of, at] = np.abs(r[at] - on_line)
        fits = off.min(axis=0) <= max(0.5 * width_px, 1.5)
        c, r, k = c[fits], r[fits], k[fits]
    return c, r, k
