"""Operating points checked against a part's derated SOA.

Each point gets the allowed current at its voltage, case temperature and pulse
condition, its margin 1 − I/I_allowed (:func:`margin`), the limit that bounds it, and the
assumptions made, in words.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields, replace
from typing import TYPE_CHECKING, Literal

import numpy as np

from soacheck.boundary import Allowed, allowed_current, distinct_rows, few_values, model_consistency
from soacheck.derating import BreakdownDerating, breakdown_note, policy_note
from soacheck.instability import instability_notes
from soacheck.mechanisms import mechanism_lines
from soacheck.parts import REFERENCE_CASE_C, Part
from soacheck.thermal_model import thermal_model
from soacheck.units import DC, format_duration

if TYPE_CHECKING:
    import pandas as pd

    from soacheck.policy import Policy


@dataclass(frozen=True, eq=False)
class PointCheck:
    """The result of checking operating points against a part's derated SOA.

    Arrays have shape ``(n,)``. ``margin`` = 1 − current/allowed_current, NaN where
    nothing is allowed or the point cannot be evaluated; ``inside`` is True only where
    the point was evaluated and its current is at most the allowed current (a point on
    the boundary is inside). Under a design-margin ``policy`` the allowed current, margin,
    limit and verdict are the policy's, and ``margin_to_rating`` is the margin against the
    absolute ratings (the margin itself without a policy).
    """

    part_id: str
    voltage_v: np.ndarray
    current_a: np.ndarray
    tc_c: np.ndarray
    pulse_s: np.ndarray
    duty: np.ndarray
    idle_current_a: np.ndarray
    allowed_current_a: np.ndarray
    margin: np.ndarray
    inside: np.ndarray
    limit: np.ndarray
    curve_pulse_s: np.ndarray
    extrapolated: np.ndarray
    assumptions: tuple[str, ...] = field(default_factory=tuple)
    policy: Policy | None = None
    margin_to_rating: np.ndarray | None = None

    @property
    def passed(self) -> bool:
        return bool(np.all(self.inside))

    @property
    def verdict(self) -> Literal["pass", "fail"]:
        return "pass" if self.passed else "fail"

    def to_frame(self, rows: np.ndarray | None = None) -> pd.DataFrame:
        """One row per point, columns named as in the JSON output; ``duty`` None for DC and single pulses.

        ``rows``: indices of the points to include, in that order (all when None).
        """
        import pandas as pd  # deferred: a command that prints no table starts without it

        columns = self.columns(rows)
        # None for DC and single pulses: a duty only means something for a pulse train
        duty = columns["duty"]
        columns["duty"] = pd.Series(np.where(np.isnan(duty), None, duty), dtype=object)
        return pd.DataFrame(columns)

    def columns(self, rows: np.ndarray | None = None) -> dict[str, np.ndarray]:
        """The columns of :meth:`to_frame` as arrays ``(n,)``, in order; ``duty`` NaN where the frame has None.

        What ``--json`` writes row by row (:func:`soacheck.jsonrows.json_rows`), without pandas.
        """
        if rows is not None:
            arrays = {
                f.name: getattr(self, f.name)[rows]
                for f in fields(self)
                if isinstance(getattr(self, f.name), np.ndarray)
            }
            return replace(self, **arrays).columns()
        train = (self.duty > 0) & np.isfinite(self.pulse_s)
        return {
            "voltage": self.voltage_v,
            "current": self.current_a,
            "case_temp": self.tc_c,
            "pulse": _durations(self.pulse_s),
            "duty": np.where(train, self.duty, np.nan),
            "idle_current": self.idle_current_a,
            "inside": self.inside,
            "allowed_current": self.allowed_current_a,
            "margin": self.margin,
            "margin_to_rating": self.margin if self.margin_to_rating is None else self.margin_to_rating,
            "overload": overload(self.margin),
            "limit": self.limit,
            "curve": _durations(self.curve_pulse_s),
            "extrapolated": self.extrapolated,
        }


def _durations(seconds: np.ndarray) -> np.ndarray:
    """Each duration as written (``dc``, ``1ms``), "" for NaN; each distinct value formatted once. [s]"""
    if seconds.size and np.all(seconds == seconds[0]):  # the common case: one condition for every point
        distinct, which = seconds[:1], np.zeros(seconds.size, dtype=np.intp)
    elif (few := few_values(seconds) if seconds.size else None) is not None:  # a few widths: no sort
        distinct, which = few
    else:
        distinct, which = np.unique(seconds, return_inverse=True)
    text = np.array([format_duration(t) if not math.isnan(t) else "" for t in distinct.tolist()], dtype=str)
    return text[np.ravel(which)]


def margin(current_a: np.ndarray, allowed_a: np.ndarray, evaluated: np.ndarray) -> np.ndarray:
    """Margin of each point, 1 − I/I_allowed. [1]

    Edge rule: NaN where nothing is allowed (``allowed_a`` 0) or the point was not
    ``evaluated``; a point on the boundary has margin 0.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(evaluated & (allowed_a > 0), 1.0 - current_a / allowed_a, np.nan)


def overload(margin_: np.ndarray | float) -> np.ndarray:
    """Overload I/I_allowed = 1 − margin where a point is outside; NaN where it is inside. [1]

    Beside a negative margin it says how far outside a point is (14.1: fourteen times the
    allowed current). NaN also where the margin is NaN or −inf (nothing allowed, or not
    evaluated): the ``limit`` says why.
    """
    m = np.asarray(margin_, dtype=float)
    with np.errstate(invalid="ignore"):
        return np.where(np.isfinite(m) & (m < 0), 1.0 - m, np.nan)


def overload_of(margin_: float | None) -> float | None:
    """:func:`overload` of one result's least margin, None where the margin is None or not negative."""
    if margin_ is None:
        return None
    value = float(overload(margin_))
    return value if np.isfinite(value) else None


def check_points(
    voltage_v: np.ndarray | float,
    current_a: np.ndarray | float,
    part: Part,
    *,
    tc_c: np.ndarray | float = REFERENCE_CASE_C,
    pulse_s: np.ndarray | float = DC,
    duty: np.ndarray | float = 0.0,
    idle_current_a: np.ndarray | float = 0.0,
    breakdown: BreakdownDerating = "auto",
) -> PointCheck:
    """Check operating points against the part's SOA derated at their case temperatures.

    Parameters
    ----------
    voltage_v, current_a
        Operating points, broadcast together. [V], [A]
    part
        The part.
    tc_c
        Case temperature of each point. [°C]
    pulse_s
        Pulse width of each point, ``inf`` for DC. [s]
    duty
        Duty cycle of each point's pulse train, 0 for a single pulse. [1]
    idle_current_a
        Current standing between the pulses of each point, at the same voltage; 0 for none. [A]
    breakdown
        Derating of second breakdown or instability.

    Returns
    -------
    PointCheck
        Per-point verdicts with the assumptions made, in words; under the part's policy
        (:meth:`~soacheck.parts.Part.under`) judged against the policy, with the margin to
        the absolute ratings beside.
    """
    v, i, tc, tp, d, idle = (
        np.ravel(a).astype(float)
        for a in np.broadcast_arrays(voltage_v, current_a, tc_c, pulse_s, duty, idle_current_a)
    )
    result = allowed_current(v, part, tc_c=tc, pulse_s=tp, duty=d, idle_current_a=idle, breakdown=breakdown)
    evaluated = np.isfinite(result.current_a) & np.isfinite(i) & (i >= 0)
    inside = evaluated & (i <= result.current_a)
    measured = np.isfinite(i) & (i >= 0)
    limit = result.limit if measured.all() else np.where(measured, result.limit, "invalid")
    to_rating = None
    if part.policy is not None:
        rated = allowed_current(
            v, part.rated, tc_c=tc, pulse_s=tp, duty=d, idle_current_a=idle, breakdown=breakdown
        ).current_a
        to_rating = margin(i, rated, np.isfinite(rated) & np.isfinite(i) & (i >= 0))
    return PointCheck(
        part_id=part.id,
        voltage_v=v,
        current_a=i,
        tc_c=tc,
        pulse_s=tp,
        duty=d,
        idle_current_a=idle,
        allowed_current_a=result.current_a,
        margin=margin(i, result.current_a, evaluated),
        inside=inside,
        limit=limit,
        curve_pulse_s=result.curve_pulse_s,
        extrapolated=result.extrapolated,
        assumptions=_assumptions(part, v, i, tc, tp, d, idle, result, breakdown),
        policy=part.policy,
        margin_to_rating=to_rating,
    )


def _assumptions(
    part: Part,
    v: np.ndarray,
    i: np.ndarray,
    tc: np.ndarray,
    tp: np.ndarray,
    d: np.ndarray,
    idle: np.ndarray,
    result: Allowed,
    breakdown: BreakdownDerating,
) -> tuple[str, ...]:
    notes = [
        f"curves digitized at {REFERENCE_CASE_C:g} °C case; thermal limit derated as "
        f"(tj_max − Tc)/(tj_max − 25 °C) with tj_max = {part.ratings.tj_max_c:g} °C",
        "current limit and voltage limit not derated",
        breakdown_note(part, breakdown),
        policy_note(part),
    ]
    shortest = part.pulse_widths_s[0]
    standing = (idle > 0) & np.isfinite(tp) & (d < 1)
    used_any = ~np.isnan(result.curve_pulse_s)  # the points not evaluated get no note here
    columns = [tp, d, standing, result.curve_pulse_s, result.modelled]
    if used_any.size and not used_any.all():
        columns = [c[used_any] for c in columns]
    conditions = distinct_rows(columns)[0].tolist() if used_any.any() else []
    for asked, duty, on_idle, used, modelled in conditions:
        if math.isinf(asked) and duty == 0:
            continue
        label = format_duration(asked) + (f" pulses at duty {duty:g}" if duty > 0 else " pulse")
        label += " on a standing current" if on_idle else ""
        if modelled:
            model = thermal_model(part)
            form = "Zth(tp, D), exact periodic steady state" if duty > 0 else "Zth(tp), single pulse"
            notes.append(
                f"{label}: thermal limit (tj_max − Tc)/{form}, from the {model.origin}; other limits from the "
                f"{format_duration(used)} curve (the next longer digitized width; conservative)"
            )
            same = (tp == asked) & (d == duty) & (standing == on_idle) & result.modelled
            notes.extend(_repeated_pulse_notes(part, label, v[same], i[same], tc[same], idle[same], asked, duty))
            continue
        if on_idle:
            notes.append(
                f"{label}: no thermal model (add [thermal] terms or zth.csv), so the pulse is judged as DC "
                "(conservative)"
            )
            continue
        if asked == used:
            continue
        if duty > 0:
            why = "a repetitive train without a thermal model; single-pulse curves would not be safe"
        elif asked < shortest:
            why = "shorter than every digitized curve, so the shortest is used"
        elif math.isinf(used):
            why = "longer than every pulse curve, so DC is used"
        else:
            why = "between digitized widths, so the next longer is used"
        notes.append(f"{label} checked against the {format_duration(used)} curve ({why}; conservative)")
    if result.modelled.any():
        notes.extend(f"warning: {finding}" for finding in model_consistency(part))
    low = result.below_data
    if low.any():
        notes.append(
            f"{int(low.sum())} point(s) below the lowest digitized voltage: the first segment was extended "
            "(capped by the rated current)"
        )
    high = result.above_data
    if high.any():
        notes.append(
            f"{int(high.sum())} point(s) between the last digitized voltage and v_max: the last segment was extended"
        )
    notes.extend(instability_notes(part))
    if np.any(tc < REFERENCE_CASE_C):
        notes.append("case temperatures below 25 °C get no more than the 25 °C limits")
    used = np.unique(result.curve_pulse_s[~np.isnan(result.curve_pulse_s)])
    for curve in (part.curve_for(width) for width in used):
        for line in mechanism_lines(part, curve):
            if line.mechanism == "unclassified":
                notes.append(
                    f"curve '{curve.label}' lines {line.lines[0]}–{line.lines[1]}: slope fits no mechanism; "
                    "derated by the smaller of the thermal and breakdown factors"
                )
    return tuple(notes)


def _repeated_pulse_notes(
    part: Part, label: str, v: np.ndarray, i: np.ndarray, tc: np.ndarray, idle: np.ndarray, pulse_s: float, duty: float
) -> list[str]:
    """What a repeated pulse or a pulse on a standing current was judged at, with the temperatures used."""
    if duty == 0 and not np.any(idle > 0):
        return []
    model = thermal_model(part)
    rth = model.foster.rth_k_per_w
    z_start = float(model.pulse_zth_start(pulse_s, duty))
    notes = []
    if np.any(idle > 0):
        notes.append(
            f"{label}: junction peak Tc + P_idle·Rth + (P − P_idle)·Zth(tp, D) with P_idle = V·I_idle between pulses "
            "(superposition in the linear thermal network; the exact periodic steady state); the standing current is "
            "also checked as DC"
        )
    start_c = tc + v * idle * (rth - z_start) + v * i * z_start
    low, high = float(np.nanmin(start_c)), float(np.nanmax(start_c))
    at = f"{high:.1f} °C" if f"{low:.1f}" == f"{high:.1f}" else f"{low:.1f} to {high:.1f} °C"
    steep = part.steep_mechanism.replace("_", " ")
    notes.append(
        f"{label}: {steep} and unclassified lines derated at the junction temperature where each pulse starts "
        f"(the periodic minimum Tc + P_idle·Rth + (P − P_idle)·Z_start: {at} at the checked current), not at the "
        "case temperature"
    )
    return notes
