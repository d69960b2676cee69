"""The derated SOA boundary: pulse lines, the allowed current, exact polylines.

Derating for case temperature scales each mechanism line by its own factor, and the
derated boundary is the lower envelope of the derated lines, each extended as a straight
line in log-log space across the voltage range. Corners therefore move with temperature;
at 25 °C the envelope is the digitized polyline itself (for a curve that is concave in
log-log space, as a physical SOA is).

All functions are vectorized over arrays of points; loops run only over the few
mechanism lines of a curve and the few digitized pulse widths.

References
----------
- Derating: the thermal limit falls as (tj_max − Tc)/(tj_max − 25 °C), i.e.
  P = (tj_max − Tc)/Rth (common practice, the definition of Rth in JEDEC JESD51-1);
  current and voltage limits are not derated (common practice).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from soacheck.derating import BreakdownDerating, mechanism_factors
from soacheck.instability import instability_line
from soacheck.mechanisms import MechanismLine, current_cap_a, interp_chunk, mechanism_lines
from soacheck.parts import REFERENCE_CASE_C, Part, SoaCurve
from soacheck.repeated import repeated_pulse_lines
from soacheck.thermal_model import thermal_model
from soacheck.units import DC


@dataclass(frozen=True, eq=False)
class PulseLines:
    """The mechanism lines that bound the SOA for one pulse condition, before derating.

    Attributes
    ----------
    lines
        Mechanism lines at 25 °C case, the rated current cap among them.
    curve
        The digitized curve the non-thermal lines come from.
    modelled
        True when the thermal line comes from the part's thermal model,
        P = (tj_max − 25 °C)/Zth(tp, D), instead of the digitized curve.
    """

    lines: tuple[MechanismLine, ...]
    curve: SoaCurve
    modelled: bool


def pulse_lines(
    part: Part,
    *,
    pulse_s: float = DC,
    duty: float = 0.0,
    use_model: bool = True,
    beyond_case_k_per_w: float = 0.0,
) -> PulseLines:
    """Mechanism lines for a single pulse (``duty`` 0), a pulse train, or DC.

    Without a thermal model the digitized curve is used: the next longer width, and DC
    for a repetitive train (conservative: a single-pulse curve is not safe for a train).
    With a model (``[thermal]`` terms or ``zth.csv``) and a finite pulse, the thermal line
    is P = (tj_max − 25 °C)/Zth(tp, D), later derated to (tj_max − Tc)/Zth(tp, D); second
    breakdown, instability and the on-resistance line still come from the next longer
    digitized curve; the current limit is ``i_pulse_max`` where given (for widths up to the
    longest pulse curve).

    A FET or IGBT with a transfer characteristic gains the thermal instability cap of
    :func:`instability_line`, for the impedance the pulse condition sees: Zth(tp, D) with a
    model, else rth_jc (never less than Zth(tp), so conservative); for DC rth_jc plus
    ``beyond_case_k_per_w``, the path from the case to what holds its temperature (the
    interface and heatsink on a heatsink, 0 with the case held). [K/W]
    """
    continuous = math.isinf(pulse_s) or duty >= 1.0
    model = thermal_model(part) if use_model and not continuous else None
    if model is None:
        curve = part.dc_curve if continuous or duty > 0 else part.curve_for(pulse_s)
        z = part.ratings.rth_jc_k_per_w + (beyond_case_k_per_w if continuous else 0.0)
        return PulseLines((*mechanism_lines(part, curve), *instability_line(part, z)), curve, False)
    curve = part.curve_for(pulse_s)
    rated = part.ratings.i_pulse_max_a if not curve.is_dc else None
    kept = [
        line
        for line in mechanism_lines(part, curve)[:-1]
        if line.mechanism != "power" and not (rated and line.mechanism == "current")
    ]
    log_p = math.log((part.ratings.tj_max_c - REFERENCE_CASE_C) / float(model.pulse_zth(pulse_s, duty)))
    thermal = MechanismLine("power", np.array([0.0, 1.0]), np.array([log_p, log_p - 1.0]))
    cap = MechanismLine("current", np.array([0.0]), np.array([math.log(rated or current_cap_a(part, curve))]))
    unstable = instability_line(part, float(model.pulse_zth(pulse_s, duty)))
    return PulseLines((*kept, thermal, cap, *unstable), curve, True)


@dataclass(frozen=True, eq=False)
class Allowed:
    """The derated boundary evaluated at given voltages.

    All arrays have the broadcast shape of the inputs, flattened to ``(n,)``.

    Attributes
    ----------
    current_a
        Highest current allowed at each voltage; 0 where nothing is allowed, NaN where
        the point cannot be evaluated. [A]
    limit
        The mechanism that sets ``current_a`` (see :data:`Limit`).
    curve_pulse_s
        Pulse width of the digitized curve used. [s]
    modelled
        True where the thermal limit came from the part's thermal model.
    below_data, above_data
        True where the voltage lies below the curve's lowest digitized voltage, or between
        its highest digitized voltage and ``v_max``: the end segment was extended.
    """

    current_a: np.ndarray
    limit: np.ndarray
    curve_pulse_s: np.ndarray
    modelled: np.ndarray
    below_data: np.ndarray
    above_data: np.ndarray

    @property
    def extrapolated(self) -> np.ndarray:
        return self.below_data | self.above_data


def _derated_lines(
    log_v: np.ndarray, tc_c: np.ndarray, part: Part, lines: tuple[MechanismLine, ...], breakdown: BreakdownDerating
) -> np.ndarray:
    """ln I of every derated mechanism line at every point, shape ``(lines, points)``."""
    if tc_c.size > 1 and tc_c.min() == tc_c.max():  # one case temperature for every point: derate once
        tc_c = tc_c[:1]
    factors = mechanism_factors(tc_c, part, breakdown)
    stacked = np.empty((len(lines), log_v.size))  # filled in place: no list of lines to stack
    with np.errstate(divide="ignore"):
        for row, line in zip(stacked, lines, strict=True):
            row[...] = line(log_v)
            if line.derated:
                row += np.log(factors[line.mechanism])
    return stacked


def _lower_envelope(stacked: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The minimum over lines and the index of the line that gives it, each shape ``(points,)``."""
    which = np.argmin(stacked, axis=0)
    return np.take_along_axis(stacked, which[None], axis=0)[0], which


FEW_CONDITIONS = 16
"""A key column with at most this many distinct values is coded by comparisons, not by a sort."""


def distinct_rows(columns: Sequence[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """The distinct rows of the key ``columns`` (each ``(n,)``; sorted) and the index of each row among them,
    shapes ``(k, c)`` and ``(n,)``.

    What ``np.unique(np.column_stack(columns), axis=0, return_inverse=True)`` gives for rows
    without NaN, with the common case of a single condition for every point answered from each
    column's least and greatest value, without stacking them. Columns of a few distinct values
    each (pulse widths, duties, flags) are coded by one comparison per value and the rows by
    their mixed-radix number (first column most significant, so in lexicographic order);
    otherwise one sort of each column and of the combined codes (sorting the rows as records
    is ten times slower).
    """
    columns = [np.asarray(c) for c in columns]
    n = columns[0].size
    if n and all(c.min() == c.max() for c in columns):
        return np.array([[float(c[0]) for c in columns]]), np.zeros(n, dtype=np.intp)
    coded = [few_values(c) for c in columns]
    sizes = [0 if found is None else found[0].size for found in coded]
    if n and all(sizes) and math.prod(sizes) <= max(n, 1 << 16):
        number = np.zeros(n, dtype=np.intp)
        for values, code in coded:
            number *= values.size
            number += code
        present = np.flatnonzero(np.bincount(number, minlength=math.prod(sizes)))
        index = np.zeros(math.prod(sizes), dtype=np.intp)
        index[present] = np.arange(present.size)
        rows = np.empty((present.size, len(columns)))
        rest = present
        for j in reversed(range(len(columns))):
            rest, code = np.divmod(rest, sizes[j])
            rows[:, j] = coded[j][0][code]
        return rows, index[number]
    keys = np.column_stack(columns).astype(float)
    group = np.zeros(keys.shape[0], dtype=np.int64)
    for column in keys.T:  # codes in sorted order, so the combined codes sort the rows lexicographically
        values, code = np.unique(column, return_inverse=True)
        _, group = np.unique(group * values.size + np.ravel(code), return_inverse=True)
        group = np.ravel(group)
    _, first = np.unique(group, return_index=True)
    return keys[first], group.astype(np.intp)


def few_values(column: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """``np.unique(column, return_inverse=True)`` (values as float) for a column ``(n,)`` of at most
    :data:`FEW_CONDITIONS` distinct values and no NaN, by one comparison per value; else None
    (and for an empty column)."""
    if column.size == 0 or np.unique(column[:256]).size > FEW_CONDITIONS:
        return None
    codes = np.full(column.shape, -1, dtype=np.intp)
    found: list[float] = []
    open_row = 0
    while open_row >= 0:
        value = column[open_row]
        if value != value or len(found) == FEW_CONDITIONS:  # NaN, or too many: sorted the usual way
            return None
        codes[column == value] = len(found)
        found.append(float(value))
        open_row = int(np.argmax(codes < 0)) if (codes < 0).any() else -1
    order = np.argsort(found)
    rank = np.empty(len(found), dtype=np.intp)
    rank[order] = np.arange(len(found))
    return np.array(found)[order], rank[codes]


def allowed_current(
    voltage_v: np.ndarray | float,
    part: Part,
    *,
    tc_c: np.ndarray | float = REFERENCE_CASE_C,
    pulse_s: np.ndarray | float = DC,
    duty: np.ndarray | float = 0.0,
    idle_current_a: np.ndarray | float = 0.0,
    breakdown: BreakdownDerating = "auto",
    use_model: bool = True,
    beyond_case_k_per_w: float = 0.0,
) -> Allowed:
    """Highest current the part may carry at each voltage, case temperature and pulse condition.

    Parameters
    ----------
    voltage_v
        Collector-emitter or drain-source voltage, any shape. [V]
    part
        The part.
    tc_c
        Case temperature, broadcast against ``voltage_v``. [°C]
    pulse_s
        Pulse width, ``inf`` for DC, broadcast against ``voltage_v``. Without a thermal
        model a width between two digitized widths uses the longer curve, and one shorter
        than the shortest uses the shortest. [s]
    duty
        Duty cycle of a periodic pulse train, 0 for a single pulse, broadcast. [1]
    idle_current_a
        Current standing between pulses, at the same voltage, broadcast; 0 for none. [A]
    breakdown
        Derating of second breakdown or instability, see :data:`BreakdownDerating`.
    use_model
        Use the part's thermal model for the thermal limit of pulses (see :func:`pulse_lines`).
    beyond_case_k_per_w
        Thermal resistance from the case to what holds its temperature, for the DC thermal
        instability cap of a part with a transfer characteristic (see :func:`pulse_lines`). [K/W]

    Returns
    -------
    Allowed
        Flattened arrays of the broadcast shape.

    Notes
    -----
    Within a segment the boundary is I = I_k·(V/V_k)^m_k (log-log interpolation, exact
    for power-law segments; linear interpolation would lie above a falling segment).
    Below the lowest digitized voltage the first segment extends, capped by the rated
    current; above ``v_max`` nothing is allowed (limit ``voltage``); at or above
    ``tj_max`` nothing is allowed (limit ``case_at_tj_max``). Under a policy
    (``part.policy``) the boundary is the policy's (:func:`~soacheck.derating.mechanism_factors`),
    nothing is allowed above its voltage fraction of ``v_max`` (limit ``policy_voltage``)
    nor at a case at or above its junction ceiling (limit ``case_at_tj_ceiling``). A non-finite or non-positive
    voltage, or a non-finite case temperature or pulse, or a duty outside [0, 1], or a
    negative idle current, gives NaN with limit ``invalid``.

    Pulses repeated (a duty) or on a standing current, with a thermal model, follow
    :func:`~soacheck.repeated.repeated_pulse_lines`; without a model a pulse on a standing
    current is judged as DC (conservative). The standing current must itself lie inside the
    DC boundary.
    """
    v, tc, tp, d, idle = (
        np.ravel(a).astype(float) for a in np.broadcast_arrays(voltage_v, tc_c, pulse_s, duty, idle_current_a)
    )
    n = v.size
    allowed = np.full(n, np.nan)
    names = ["invalid"]  # each limit as a code into names: no array of a million Python strings

    def code(name: str) -> int:
        if name not in names:
            names.append(name)
        return names.index(name)

    limit = np.zeros(n, dtype=np.intp)
    curve_pulse = np.full(n, np.nan)
    modelled = np.zeros(n, dtype=bool)
    below = np.zeros(n, dtype=bool)
    above = np.zeros(n, dtype=bool)

    valid = np.isfinite(v) & (v > 0) & np.isfinite(tc) & (tp > 0) & (d >= 0) & (d <= 1) & (idle >= 0)
    # group the points by the pulse condition that decides their lines: a width and duty
    # where the thermal model applies, else just the digitized curve that will be used
    model_applies = use_model and thermal_model(part) is not None
    continuous = np.isinf(tp) | (d >= 1)
    by_model = model_applies & ~continuous
    asked = np.where(valid, tp, DC)
    if asked.size and asked.min() == asked.max():  # one width for every point: one curve
        curve_s = np.full(asked.shape, part.pulse_widths_s[part.curve_index(asked[0])])
    else:
        curve_s = part.pulse_widths_s[part.curve_index(asked)]
    by_curve = np.where(continuous | (d > 0) | (idle > 0), DC, curve_s)
    keys = [np.where(by_model, tp, by_curve), np.where(by_model, d, 0.0)]
    with np.errstate(divide="ignore", invalid="ignore"):
        log_v = np.log(np.where(valid, v, 1.0))
    if valid.any():
        all_valid = bool(valid.all())
        conditions, group = distinct_rows(keys if all_valid else [key[valid] for key in keys])
        every = all_valid and len(conditions) == 1  # every point under one condition: no index arrays
        rows = np.flatnonzero(valid)
        for k, (width, train) in enumerate(conditions):
            sel = slice(None) if every else rows if len(conditions) == 1 else rows[group == k]
            bound = pulse_lines(
                part, pulse_s=width, duty=train, use_model=use_model, beyond_case_k_per_w=beyond_case_k_per_w
            )
            if bound.modelled:
                stacked = repeated_pulse_lines(
                    v[sel], tc[sel], idle[sel], part, bound, width, train, breakdown=breakdown
                )
            else:
                stacked = _derated_lines(log_v[sel], tc[sel], part, bound.lines, breakdown)
            log_i, which = _lower_envelope(stacked)
            allowed[sel] = np.exp(log_i)
            limit[sel] = np.array([code(line.mechanism) for line in bound.lines])[which]
            curve_pulse[sel] = bound.curve.pulse_s
            modelled[sel] = bound.modelled
            below[sel] = v[sel] < bound.curve.voltage_v[0] * (1 - 1e-9)
            above[sel] = v[sel] > bound.curve.voltage_v[-1] * (1 + 1e-9)

    standing = valid & (idle > 0) & ~continuous
    if standing.any():  # between pulses the standing current sits at the same voltage, as DC
        dc = allowed_current(
            v[standing],
            part,
            tc_c=tc[standing],
            breakdown=breakdown,
            use_model=use_model,
            beyond_case_k_per_w=beyond_case_k_per_w,
        )
        over = np.flatnonzero(standing)[idle[standing] > dc.current_a]
        written, which = np.unique(dc.limit[idle[standing] > dc.current_a], return_inverse=True)
        allowed[over], limit[over] = 0.0, np.array([code(name) for name in written.tolist()], dtype=np.intp)[which]

    too_hot = valid & (tc >= part.tj_limit_c)
    allowed[too_hot] = 0.0
    limit[too_hot] = np.where(
        tc[too_hot] >= part.ratings.tj_max_c, code("case_at_tj_max"), code(part.case_limit(part.tj_limit_c))
    )
    over_v = valid & (v > part.v_limit_v)
    allowed[over_v], above[over_v] = 0.0, False
    limit[over_v] = np.where(v[over_v] > part.ratings.v_max_v, code("voltage"), code(part.v_limit))
    return Allowed(allowed, np.array(names)[limit], curve_pulse, modelled, below, above)


@dataclass(frozen=True, eq=False)
class BoundaryPolyline:
    """The derated boundary of one curve at one case temperature, as exact vertices.

    Attributes
    ----------
    voltage_v, current_a
        Vertices, shape ``(k,)``, from ``v_min_v`` to ``v_max``; every corner of the lower
        envelope is a vertex, so straight lines between them on log-log axes are exact.
    limit
        Mechanism of the piece that starts at each vertex, shape ``(k,)``.
    """

    voltage_v: np.ndarray
    current_a: np.ndarray
    limit: np.ndarray

    @property
    def is_empty(self) -> bool:
        return not np.any(self.current_a > 0)

    def current_at(self, voltage_v: np.ndarray) -> np.ndarray:
        """Allowed current at voltages of any shape. [A] See :meth:`log_current_at`."""
        return np.exp(self.log_current_at(voltage_v))

    def log_current_at(self, voltage_v: np.ndarray, *, out: np.ndarray | None = None) -> np.ndarray:
        """ln of the allowed current at voltages of any shape: straight between vertices on
        log-log axes, the first piece extended below the first vertex, −inf above the last.

        One ``log`` and one ``interp`` per point: the fast path for many points at one case
        temperature. ``out``: a float array of ``voltage_v``'s shape to work in, which may
        then hold the answer (None: fresh arrays).
        """
        x = np.log(self.voltage_v)
        with np.errstate(divide="ignore"):
            y = np.log(self.current_a)
            lv = np.log(voltage_v, out=out)
        slope = (y[1] - y[0]) / (x[1] - x[0]) if x.size > 1 and np.isfinite(y[:2]).all() else 0.0
        # extend the first piece to the left by one far vertex, so that interp does it all
        x_far = x[0] - 1000.0
        bounds = (np.min(lv), np.max(lv)) if np.size(lv) else None
        far_left = bounds is not None and bounds[0] < x_far  # below 1e-434 V, or at 0 V: the far left end
        out = interp_chunk(
            lv, np.r_[x_far, x], np.r_[y[0] - 1000.0 * slope, y], right=-np.inf, bounds=bounds, overwrite_x=not far_left
        )
        if far_left:
            left = y[0] if slope == 0 else y[0] + slope * (lv - x[0])
            out = np.where(lv < x_far, left, out)
        return out


def boundary_polyline(
    part: Part,
    *,
    tc_c: float = REFERENCE_CASE_C,
    pulse_s: float = DC,
    duty: float = 0.0,
    breakdown: BreakdownDerating = "auto",
    use_model: bool = True,
    v_min_v: float | None = None,
) -> BoundaryPolyline:
    """Exact vertices of the derated boundary, for plots and polygons.

    The lower envelope of piecewise-linear functions (on log axes) has its corners at the
    functions' own vertices or where two of them cross; both are found, so the
    polyline agrees with :func:`allowed_current` everywhere between ``v_min_v`` (default:
    a decade below the lowest digitized voltage) and ``v_max``.
    """
    bound = pulse_lines(part, pulse_s=pulse_s, duty=duty, use_model=use_model)
    v_lo = v_min_v if v_min_v is not None else bound.curve.voltage_v[0] / 10
    return envelope_polyline(part, bound.lines, tc_c=tc_c, breakdown=breakdown, v_min_v=v_lo)


def envelope_polyline(
    part: Part,
    lines: tuple[MechanismLine, ...],
    *,
    tc_c: float,
    breakdown: BreakdownDerating = "auto",
    v_min_v: float,
) -> BoundaryPolyline:
    """Exact vertices of the lower envelope of derated ``lines`` from ``v_min_v`` to ``v_max``.

    Under a policy the polyline ends at its voltage fraction of ``v_max`` and is empty at a
    case at or above its junction ceiling.
    """
    x_lo, x_hi = math.log(v_min_v), math.log(part.v_limit_v)
    vertices = np.concatenate([line.log_v for line in lines])
    x = np.unique(np.r_[x_lo, x_hi, vertices[(vertices > x_lo) & (vertices < x_hi)]])
    y = _derated_lines(x, np.full(x.shape, float(tc_c)), part, lines, breakdown)
    if np.all(np.isneginf(y)) or tc_c >= part.tj_limit_c:
        v = np.exp(np.array([x_lo, x_hi]))
        name = part.case_limit(tc_c)
        return BoundaryPolyline(v, np.zeros(2), np.array([name, name]))
    # crossings of every pair of lines inside every interval between vertices
    finite = np.where(np.isfinite(y), y, -1e6)
    diff = finite[:, None, :] - finite[None, :, :]  # (lines, lines, points)
    a, b = diff[..., :-1], diff[..., 1:]
    cross = (a * b) < 0
    with np.errstate(divide="ignore", invalid="ignore"):
        t = a / (a - b)
    xa, xb = x[:-1], x[1:]
    x_cross = (xa + t * (xb - xa))[cross]
    x = np.unique(np.r_[x, x_cross])
    log_i, which = _lower_envelope(_derated_lines(x, np.full(x.shape, float(tc_c)), part, lines, breakdown))
    mechanisms = np.array([line.mechanism for line in lines])[which]
    # drop vertices where nothing bends: crossings of lines that are not on the envelope
    slope = np.diff(log_i) / np.diff(x)
    keep = np.r_[True, (np.abs(np.diff(slope)) > 1e-9) | (mechanisms[1:-1] != mechanisms[:-2]), True]
    return BoundaryPolyline(np.exp(x[keep]), np.exp(log_i[keep]), mechanisms[keep])


def evaluate_lines(
    voltage_v: np.ndarray,
    part: Part,
    lines: tuple[MechanismLine, ...],
    *,
    tc_c: np.ndarray | float,
    breakdown: BreakdownDerating = "auto",
) -> tuple[np.ndarray, np.ndarray]:
    """Allowed current [A] and bounding mechanism of derated ``lines`` at voltages above zero.

    The voltage and case-temperature limits are not applied here; see :func:`allowed_current`.
    """
    v, tc = np.broadcast_arrays(np.asarray(voltage_v, dtype=float), np.asarray(tc_c, dtype=float))
    log_i, which = _lower_envelope(_derated_lines(np.log(v), tc, part, lines, breakdown))
    return np.exp(log_i), np.array([line.mechanism for line in lines])[which]


def model_consistency(part: Part, *, tolerance: float = 0.10) -> list[str]:
    """Where a part's thermal model and its other data disagree, in words (lint-level).

    Checks Σ R against ``rth_jc`` (within 5 %) and, for each digitized pulse curve, the
    power of its constant-power segment against (tj_max − 25 °C)/Zth(tp) from the model
    (within ``tolerance``: digitizing error of ±2 % per coordinate gives ±4 % in power,
    and a single-pulse curve read off a small plot is rarely better than ±10 %; common
    practice, no source).
    """
    model = thermal_model(part)
    if model is None:
        return []
    found = []
    rth = part.ratings.rth_jc_k_per_w
    if abs(model.foster.rth_k_per_w - rth) > 0.05 * rth:
        found.append(
            f"thermal model: Zth(∞) = Σ R = {model.foster.rth_k_per_w:.4g} K/W differs from rth_jc = {rth:g} K/W"
        )
    for curve in part.curves[:-1]:
        thermal = [line for line in mechanism_lines(part, curve) if line.mechanism == "power"]
        if not thermal:
            continue
        digitized_w = float(np.exp(np.mean(np.concatenate([line.log_v + line.log_i for line in thermal]))))
        model_w = (part.ratings.tj_max_c - REFERENCE_CASE_C) / float(model.pulse_zth(curve.pulse_s))
        if abs(digitized_w / model_w - 1) > tolerance:
            found.append(
                f"curve '{curve.label}': its constant-power segment is {digitized_w:.4g} W but the thermal model "
                f"gives {model_w:.4g} W (check the Zth data or the digitized curve)"
            )
    return found


def max_case_temp(
    voltage_v: np.ndarray,
    current_a: np.ndarray,
    part: Part,
    *,
    pulse_s: float = DC,
    duty: float = 0.0,
    breakdown: BreakdownDerating = "auto",
    step_k: float = 0.05,
    lowest_c: float = -55.0,
) -> float | None:
    """The highest case temperature at which every point is still inside. [°C]

    Each mechanism line k allows the point while its derating factor f_k(Tc) stays at or
    above I/I_k(V); the factors never rise with Tc, so each gives a highest Tc, found by
    inverting f_k tabulated every ``step_k`` kelvin (rounded down: conservative). The
    answer is the lowest over lines and points; None when a point is outside even at
    ``lowest_c`` (or above ``v_max``; under a policy, its junction ceiling and voltage fraction).
    """
    v = np.asarray(voltage_v, dtype=float).ravel()
    i = np.asarray(current_a, dtype=float).ravel()
    if np.any(v > part.v_limit_v):
        return None
    bound = pulse_lines(part, pulse_s=pulse_s, duty=duty)
    grid = np.arange(lowest_c, part.tj_limit_c, step_k)
    factors = mechanism_factors(grid, part, breakdown)
    log_v = np.log(v)
    highest = np.inf
    for line in bound.lines:
        with np.errstate(divide="ignore", over="ignore"):
            need = i / np.exp(line(log_v))  # the factor this line must keep
        f = factors[line.mechanism] if line.derated else np.ones_like(grid)
        # f is non-increasing on the grid: the last grid point where f >= need
        count = np.searchsorted(-f, -need, side="right")
        if np.any(count == 0):
            return None
        highest = min(highest, float(grid[count.min() - 1]))
    return highest
