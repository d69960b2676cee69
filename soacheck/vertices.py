"""A traced curve's vertices: Douglas-Peucker on log-log axes, corners put where straight stretches cross.

References
----------
D. H. Douglas, T. K. Peucker, "Algorithms for the reduction of the number of points
required to represent a digitized line or its caricature", Cartographica 10(2), 1973.
"""

from __future__ import annotations

import numpy as np
import shapely

SIMPLIFY_DECADES = 0.005  # Douglas-Peucker tolerance on log-log axes: 0.5 % of a decade


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


def merge_straight(
    vx: np.ndarray, vy: np.ndarray, x: np.ndarray, y: np.ndarray, tolerance: float, *, slope_step: float = 0.1
) -> tuple[np.ndarray, np.ndarray]:
    """Drop inner vertices between two segments that are one straight line.

    A vertex goes when the slopes on either side differ by less than ``slope_step`` (on
    log-log axes one mechanism's slope band is wider, so no mechanism is lost) and every
    traced point ``(x, y)`` between its neighbours lies within twice ``tolerance`` of the
    straight line joining them. Grid lines as dark as the curves leave such kinks.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        The vertices left, x rising.
    """
    vx, vy = list(vx), list(vy)
    j = 1
    while j < len(vx) - 1:
        before = (vy[j] - vy[j - 1]) / (vx[j] - vx[j - 1])
        after = (vy[j + 1] - vy[j]) / (vx[j + 1] - vx[j])
        between = (x >= vx[j - 1]) & (x <= vx[j + 1])
        line = np.interp(x[between], [vx[j - 1], vx[j + 1]], [vy[j - 1], vy[j + 1]])
        if abs(before - after) < slope_step and np.all(np.abs(y[between] - line) <= 2 * tolerance):
            del vx[j], vy[j]
        else:
            j += 1
    return np.array(vx), np.array(vy)
