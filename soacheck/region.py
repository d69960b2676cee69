"""The derated safe region as a shapely polygon, and where a path crosses its edge.

The only module that imports shapely. Coordinates are (log10 V, log10 I): distances in
decades.
"""

from __future__ import annotations

import math

import numpy as np
import shapely

from soacheck.boundary import boundary_polyline
from soacheck.derating import BreakdownDerating
from soacheck.parts import REFERENCE_CASE_C, Part
from soacheck.units import DC


def region_polygon(
    part: Part,
    *,
    tc_c: float = REFERENCE_CASE_C,
    pulse_s: float = DC,
    duty: float = 0.0,
    breakdown: BreakdownDerating = "auto",
    use_model: bool = True,
    v_min_v: float | None = None,
    i_floor_a: float | None = None,
) -> shapely.Polygon:
    """The derated safe region as a shapely polygon in (log10 V, log10 I) coordinates.

    The region lies under the boundary from ``v_min_v`` to ``v_max`` and above
    ``i_floor_a`` (default: a thousandth of the lowest boundary current). Distances in
    these coordinates are in decades. Empty at or above ``tj_max``.
    """
    poly = boundary_polyline(
        part, tc_c=tc_c, pulse_s=pulse_s, duty=duty, breakdown=breakdown, use_model=use_model, v_min_v=v_min_v
    )
    if poly.is_empty:
        return shapely.Polygon()
    floor = i_floor_a if i_floor_a is not None else poly.current_a.min() / 1000
    x = np.log10(poly.voltage_v)
    y = np.log10(poly.current_a)
    ring = np.column_stack([np.r_[x[0], x, x[-1]], np.r_[math.log10(floor), y, math.log10(floor)]])
    return shapely.Polygon(ring)


def path_crossings(voltage_v: np.ndarray, current_a: np.ndarray, polygon: shapely.Polygon) -> np.ndarray:
    """Where a V–I path crosses the boundary of a :func:`region_polygon`, shape ``(k, 2)`` in V and A.

    The path is the polyline through the points in order, straight on log-log axes.
    """
    path = shapely.linestrings(np.log10(voltage_v), np.log10(current_a))
    hits = shapely.get_coordinates(shapely.intersection(path, polygon.exterior))
    return 10.0**hits
