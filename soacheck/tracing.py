"""Tracing black curves on a gridded log-log datasheet picture, from a seed on each curve.

Each seed is placed on the picture through the axes' calibrations, its curve followed
through the dark pixels by :mod:`soacheck.curve_following`, and the pixels reduced to
vertices on log-log axes by :mod:`soacheck.vertices`, in the plot's values. The overlay
draws what was traced over the picture, for a person to check it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import shapely

from soacheck.calibration import AxisCalibration, Seed, decades_disagree, range_calibration
from soacheck.curve_following import SEED_RADIUS_PX, TracedPixels, column_runs, follow_curve, land_seed
from soacheck.errors import SoacheckError
from soacheck.picture import Frame, dark_mask, decades_seen, grid_lines
from soacheck.vertices import SIMPLIFY_DECADES, merge_straight, sharpen, simplify


def framed_axis(
    grey: np.ndarray, frame: Frame, value_range: tuple[float, float], *, vertical: bool, name: str
) -> AxisCalibration:
    """A log axis with ``value_range`` at the frame's edges, checked against the decades of the grid.

    Parameters
    ----------
    grey
        Grey levels, shape ``(rows, columns)``.
    frame
        The plot's frame.
    value_range
        The values at the low and the high edge (left and right, or bottom and top).
    vertical
        True for the y axis.
    name
        How the range is named in a message, such as ``--y-range 0.1:100``.

    Raises
    ------
    SoacheckError
        When the range spans a different number of decades than the grid shows.
    """
    edges = (frame.bottom, frame.top) if vertical else (frame.left, frame.right)
    axis = range_calibration(*edges, value_range, log=True)
    seen = decades_seen(grid_lines(grey, frame, horizontal=vertical), abs(edges[1] - edges[0]))
    disagreement = decades_disagree(axis, seen, name)
    if disagreement:
        raise SoacheckError(disagreement)
    return axis


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
    vx, vy = merge_straight(vx, vy, lx, ly, tolerance_decades)
    # a curve that runs into the frame goes on to the frame's edge (a broken one's last
    # piece may stop up to a gap short of it)
    reach = frame.line_px + 2 + pixels.bridged_px
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
