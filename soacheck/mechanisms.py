"""Segment mechanisms: what draws each piece of a digitized SOA curve.

A digitized SOA curve is a polyline on log-log axes. Each segment is classified by its
slope m = ln(I2/I1) / ln(V2/V1) into the physical mechanism that draws it; a run of
segments with one mechanism is a *mechanism line*. The rated current cap is a line of
its own.

References
----------
- Slope bands and mechanisms: common practice, no source; second breakdown:
  Scarlett & Shockley, IEEE Int. Conv. Rec. 1963; MOSFET linear-mode instability:
  Spirito et al., MIEL 2002.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from soacheck.parts import Part, SoaCurve

Mechanism = Literal["on_resistance", "current", "power", "second_breakdown", "thermal_instability", "unclassified"]
Limit = Literal[
    "on_resistance",
    "current",
    "power",
    "second_breakdown",
    "thermal_instability",
    "unclassified",
    "voltage",
    "case_at_tj_max",
    "case_at_tj_ceiling",
    "tj_max",
    "tj_ceiling",
    "policy_voltage",
    "invalid",
]


LIMITS: tuple[str, ...] = get_args(Limit)

# Slope bands on log-log axes (common practice, no source): digitizing error of about
# ±2 % per coordinate gives slope errors of a few hundredths.
CURRENT_BAND = 0.15
ON_RESISTANCE_BAND = 0.15
THERMAL_BAND = 0.12
STEEPEST_SLOPE = -8.0


# --------------------------------------------------------------------------- classification


def segment_slopes(voltage_v: np.ndarray, current_a: np.ndarray) -> np.ndarray:
    """Slopes of a polyline's segments on log-log axes, shape ``(n - 1,)``.

    m = ln(I₂/I₁) / ln(V₂/V₁), independent of the logarithm's base.
    """
    lv = np.log(np.asarray(voltage_v, dtype=float))
    li = np.log(np.asarray(current_a, dtype=float))
    return np.diff(li) / np.diff(lv)


def classify_slopes(slopes: np.ndarray, *, bipolar: bool) -> np.ndarray:
    """Name the mechanism of each segment from its log-log slope.

    Parameters
    ----------
    slopes
        Segment slopes in curve order, shape ``(k,)``.
    bipolar
        True for a bipolar part: a steep segment is second breakdown and no segment may be
        an on-resistance line. False for FETs and IGBTs: a steep segment is linear-mode
        instability, and a leading run of slopes near +1 is the on-resistance line.

    Returns
    -------
    numpy.ndarray of str, shape ``(k,)``
        ``current`` for \\|m\\| ≤ 0.15, ``power`` for \\|m + 1\\| ≤ 0.12, ``second_breakdown`` or
        ``thermal_instability`` for −8 ≤ m < −1.12, ``on_resistance`` for a leading \\|m − 1\\| ≤ 0.15
        (FET, IGBT), else ``unclassified`` (kept as geometry; derated conservatively).
    """
    m = np.asarray(slopes, dtype=float)
    steep = "second_breakdown" if bipolar else "thermal_instability"
    names = np.full(m.shape, "unclassified", dtype=object)
    names[np.abs(m) <= CURRENT_BAND] = "current"
    names[np.abs(m + 1) <= THERMAL_BAND] = "power"
    names[(m >= STEEPEST_SLOPE) & (m < -1 - THERMAL_BAND)] = steep
    if not bipolar:
        on_res = np.abs(m - 1) <= ON_RESISTANCE_BAND
        leading = np.logical_and.accumulate(on_res) if on_res.size else on_res
        names[leading] = "on_resistance"
    return names.astype(str)


def interp_chunk(
    x: np.ndarray,
    xp: np.ndarray,
    fp: np.ndarray,
    *,
    right: float | None = None,
    bounds: tuple[float, float] | None = None,
    overwrite_x: bool = False,
) -> np.ndarray:
    """``np.interp(x, xp, fp, right=right)`` to the bit, one straight pass where every ``x`` lies in one piece.

    A chunk of a trace usually stays on one piece xp[j] <= x < xp[j+1] of a boundary; the
    least and greatest ``x`` (two quick passes) tell, and the piece is then evaluated as
    slope·(x − xp[j]) + fp[j], the expression ``np.interp`` evaluates, without its search
    per value. Any other case (several pieces, NaN, beyond the ends, a non-finite vertex)
    goes to ``np.interp``. Shapes as ``np.interp``: ``x`` any, ``xp`` increasing ``(k,)``;
    ``bounds``, the least and greatest ``x`` when the caller knows them already;
    ``overwrite_x``, whether ``x`` (a float array the caller no longer needs) may hold the
    result, sparing a fresh array.
    """
    x = np.asarray(x, dtype=float)
    if x.size >= 64 and xp.size >= 2:
        lo, hi = (x.min(), x.max()) if bounds is None else bounds
        j = int(np.searchsorted(xp, lo, side="right")) - 1
        if 0 <= j < xp.size - 1 and hi < xp[j + 1] and np.isfinite(fp[j : j + 2]).all():
            slope = (fp[j + 1] - fp[j]) / (xp[j + 1] - xp[j])
            out = np.subtract(x, xp[j], out=x if overwrite_x and isinstance(x, np.ndarray) else None)
            out *= slope
            out += fp[j]
            return out
    return np.interp(x, xp, fp, right=right)


@dataclass(frozen=True, eq=False)
class MechanismLine:
    """A run of consecutive segments of one mechanism, as a piecewise-linear function on log axes.

    Attributes
    ----------
    mechanism
        What draws this part of the boundary.
    log_v, log_i
        Natural logs of the vertices, shape ``(k + 1,)``, ``log_v`` increasing. Outside
        its vertices the line extends with its end slopes.
    lines
        File lines of the first and last vertex, for messages (0, 0 when implicit).
    derated
        False for a line computed for the operating temperature already (the thermal
        instability cap from a transfer characteristic): case temperature does not scale it.
    """

    mechanism: Mechanism
    log_v: np.ndarray
    log_i: np.ndarray
    lines: tuple[int, int] = (0, 0)
    derated: bool = True

    def __call__(self, log_v: np.ndarray) -> np.ndarray:
        """ln I of the line at ``log_v`` (any shape), extended straight beyond its ends."""
        x = np.asarray(log_v, dtype=float)
        if self.log_v.size == 1:
            return np.full(x.shape, self.log_i[0])
        left = (self.log_i[1] - self.log_i[0]) / (self.log_v[1] - self.log_v[0])
        right = (self.log_i[-1] - self.log_i[-2]) / (self.log_v[-1] - self.log_v[-2])
        lo, hi = (np.min(x), np.max(x)) if x.size else (self.log_v[0], self.log_v[0])
        if lo >= self.log_v[0] and hi <= self.log_v[-1]:  # within the vertices (the common case)
            return interp_chunk(x, self.log_v, self.log_i, bounds=(lo, hi))
        if hi < self.log_v[0]:  # all on the left extension: one straight pass
            return self.log_i[0] + left * (x - self.log_v[0])
        if lo > self.log_v[-1]:
            return self.log_i[-1] + right * (x - self.log_v[-1])
        y = np.interp(x, self.log_v, self.log_i)
        y = np.where(x < self.log_v[0], self.log_i[0] + left * (x - self.log_v[0]), y)
        return np.where(x > self.log_v[-1], self.log_i[-1] + right * (x - self.log_v[-1]), y)


def current_cap_a(part: Part, curve: SoaCurve) -> float:
    """Rated current that caps a curve: ``i_max`` for DC, ``i_pulse_max`` for pulses.

    Never above the highest digitized current of the curve, so that extending the first
    segment below the lowest digitized voltage allows no more than the data supports.
    """
    rated = part.ratings.i_max_a if curve.is_dc else (part.ratings.i_pulse_max_a or math.inf)
    return float(min(rated, curve.current_a.max()))


def mechanism_lines(part: Part, curve: SoaCurve) -> tuple[MechanismLine, ...]:
    """Split a curve into mechanism lines, and add the rated current cap as a line of its own."""
    mechanisms = classify_slopes(segment_slopes(curve.voltage_v, curve.current_a), bipolar=part.is_bipolar)
    lv, li = np.log(curve.voltage_v), np.log(curve.current_a)
    starts = np.flatnonzero(np.r_[True, mechanisms[1:] != mechanisms[:-1]])
    ends = np.r_[starts[1:], mechanisms.size]
    lines = [
        MechanismLine(
            mechanism=str(mechanisms[s]),
            log_v=lv[s : e + 1],
            log_i=li[s : e + 1],
            lines=(int(curve.lines[s]), int(curve.lines[e])) if curve.lines.size else (0, 0),
        )
        for s, e in zip(starts, ends, strict=True)
    ]
    cap = MechanismLine("current", np.array([lv[0]]), np.array([math.log(current_cap_a(part, curve))]))
    return (*lines, cap)
