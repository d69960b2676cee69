"""Test envelopes: what a load must cover, whether a stage covers it, and what a stage can promise.

An envelope is a range of source voltages, a largest total current and a largest total
power, continuous or pulsed, at an ambient (the stage's heatsink then settles at the
envelope's worst power) or at a fixed case temperature. Device stress rises with both
voltage and current, so the envelope's upper edge, I(V) = min(I_max, P_max/V), decides:
it is mapped through the current sharing and the resistor drops to each device.

The largest safe envelope is the opposite question: at each source voltage, the highest
total current for which every device stays inside, found by bisection vectorized over
voltages. Its limit table is what a load's controller should enforce.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace

import numpy as np

from soacheck.derating import BreakdownDerating, policy_note
from soacheck.errors import SoacheckError
from soacheck.instability import instability_notes
from soacheck.points import overload_of
from soacheck.policy import least_margin, policy_of
from soacheck.stage import Stage
from soacheck.stage_run import first_outside, inside_limits, judge_steady_state, ranked_margin
from soacheck.steady_state import (
    SteadyState,
    equal_split_unstable,
    hogging_on_matched_set,
    stage_gain_peak,
    steady_state,
)
from soacheck.thermal_model import thermal_model
from soacheck.units import DC, format_duration


@dataclass(frozen=True)
class Envelope:
    """What a load must cover.

    Attributes
    ----------
    v_min_v, v_max_v
        Range of the source under test. [V]
    current_a
        Largest total current. [A]
    power_w
        Largest total power into the load. [W]
    pulse_s, duty
        DC (``inf``, duty 1), or pulses of a width at a duty cycle in (0, 1], or a single
        pulse (duty 0). [s], [1]
    ambient_c, case_temp_c
        The stage's heatsink settles in this ambient; or the cases are held at this
        temperature. [°C]
    idle_current_a
        Total current standing between pulses, at the same source voltage; 0 for none. [A]
    """

    v_min_v: float
    v_max_v: float
    current_a: float
    power_w: float
    pulse_s: float = DC
    duty: float = 1.0
    ambient_c: float | None = 25.0
    case_temp_c: float | None = None
    idle_current_a: float = 0.0

    def __post_init__(self) -> None:
        if self.v_min_v <= 0 < self.v_max_v:
            raise SoacheckError(
                f"envelope: voltage starts at {self.v_min_v:g} V; start it at the lowest source voltage the load "
                f"must work at, above 0 V, such as [1, {self.v_max_v:g}] (SOA curves are drawn on log axes from a "
                "few volts, and the stage's resistors take the last volts)"
            )
        if not (0 < self.v_min_v < self.v_max_v and math.isfinite(self.v_max_v)):
            raise SoacheckError(
                f"envelope: voltage range [{self.v_min_v:g}, {self.v_max_v:g}] V is empty; give [low, high] with "
                "0 < low < high"
            )
        if not (self.current_a > 0 and self.power_w > 0):
            raise SoacheckError("envelope: current and power must be above zero")
        if not (0 <= self.duty <= 1) or (self.duty == 0 and math.isinf(self.pulse_s)):
            raise SoacheckError(f"envelope: duty {self.duty:g} is outside (0, 1]; give tp/T, such as 0.1")
        if not (math.isfinite(self.idle_current_a) and self.idle_current_a >= 0):
            raise SoacheckError(f"envelope: idle_current is {self.idle_current_a:g}; give 0 A or more")
        if self.idle_current_a > 0 and (math.isinf(self.pulse_s) or self.duty >= 1):
            raise SoacheckError('envelope: idle_current flows between pulses; give a pulse, such as pulse = "3ms"')

    @property
    def label(self) -> str:
        if math.isinf(self.pulse_s):
            timing = "dc"
        elif self.duty == 0:
            timing = f"single {format_duration(self.pulse_s)} pulse"
        else:
            timing = f"{format_duration(self.pulse_s)} pulses at duty {self.duty:g}"
        if self.idle_current_a > 0:
            timing += f" on {self.idle_current_a:g} A between pulses"
        return f"{self.v_min_v:g}–{self.v_max_v:g} V, {self.current_a:g} A, {self.power_w:g} W, {timing}"

    def edge(self, points: int = 400) -> tuple[np.ndarray, np.ndarray]:
        """The upper edge I(V) = min(I_max, P_max/V), log-spaced, with its corner. [V], [A]"""
        v = np.geomspace(self.v_min_v, self.v_max_v, max(points, 2))
        corner = self.power_w / self.current_a
        if self.v_min_v < corner < self.v_max_v:
            v = np.unique(np.r_[v, corner])
        return v, np.minimum(self.current_a, self.power_w / v)


def stage_for(stage: Stage, envelope: Envelope) -> tuple[Stage, list[str]]:
    """The stage in the envelope's surroundings: its ambient, or its fixed case temperature."""
    if envelope.case_temp_c is not None:
        return replace(stage, cooling=None, case_temp_c=envelope.case_temp_c), [
            f"cases held at {envelope.case_temp_c:g} °C (the envelope's case_temp)"
        ]
    if stage.cooling is not None:
        cooling = replace(stage.cooling, ambient_c=envelope.ambient_c)
        return replace(stage, cooling=cooling), [
            f"heatsink at the steady state of the envelope's worst power, ambient {envelope.ambient_c:g} °C"
        ]
    return stage, [f"the stage holds its cases at {stage.case_temp_c:g} °C; the envelope's ambient is not used"]


@dataclass(frozen=True, eq=False)
class EnvelopeCheck:
    """A stage checked against an envelope, along the envelope's upper edge.

    ``margin`` and ``limit`` are per device and edge point, ``(n, m)``: the margin is the
    current's (1 − I/I_allowed; −inf at a dropout), so a point in runaway, short of drive, or
    with its junction past tj_max (under a policy, its ceiling) keeps its current's margin, which
    may be 0 or more, and its limit names what fails it (``runaway``, ``drive``, the junction's
    limit), as in a stage run. ``outside`` lists the stretches of source voltage where the edge
    is not covered (some device not :attr:`inside`): dicts with ``from_voltage``, ``to_voltage``,
    ``limit`` and ``margin`` (the least in that stretch; the limit is where it is least, or, when
    every current there is inside its boundary, the limit of the stretch's first point that fails).
    ``state.hogging`` marks the edge points where the devices cannot share the current, decided
    on them matched (:func:`~soacheck.steady_state.hogging_on_matched_set`): the state with one
    device taking it is reported and checked there.
    """

    envelope: Envelope
    stage: Stage
    source_v: np.ndarray
    total_a: np.ndarray
    state: SteadyState
    allowed_a: np.ndarray
    margin: np.ndarray
    limit: np.ndarray
    outside: list[dict]
    assumptions: tuple[str, ...] = field(default_factory=tuple)
    margin_to_rating: np.ndarray | None = None

    @property
    def inside(self) -> np.ndarray:
        """(n, m): each device inside at each edge point, by :func:`~soacheck.stage_run.inside_limits`."""
        return inside_limits(self.stage, self.margin, self.limit, self.state.junction_c)

    @property
    def passed(self) -> bool:
        return not self.outside

    @property
    def first_violation(self) -> tuple[int, int] | None:
        """(device, point) of the first violation along the edge: the lowest source voltage where a device is
        not :attr:`inside`, and the first such device there; None when the stage covers the envelope."""
        return first_outside(self.inside)

    @property
    def failed_limit(self) -> str:
        """The limit the answer names: where the margin is least, or, for a check that fails with every current
        inside its boundary (a least margin of 0 or more), the limit its first violation passed (a junction
        limit, ``runaway`` or ``drive``)."""
        found = self.first_violation
        if found is not None and self.min_margin >= 0:
            return str(self.limit[found])
        return str(self.limit[self.worst])

    @property
    def failed_device(self) -> int | None:
        """The device (numbered from 1) of the limit the answer names (:attr:`failed_limit`): where the margin is
        least, or, for a check that fails with every current inside, its first violation's; None when it passes."""
        found = self.first_violation
        if found is None:
            return None
        return (found[0] if self.min_margin >= 0 else self.worst[0]) + 1

    @property
    def min_margin(self) -> float:
        return float(np.min(self.margin))

    @property
    def worst(self) -> tuple[int, int]:
        """(device, point) of the least margin."""
        d, k = np.unravel_index(int(np.argmin(self.margin)), self.margin.shape)
        return int(d), int(k)

    def summary(self) -> dict[str, object]:
        d, k = self.worst
        return {
            "envelope": self.envelope.label,
            "part": self.stage.part.id,
            "count": self.stage.count,
            "verdict": "pass" if self.passed else "fail",
            "margin": self.min_margin if np.isfinite(self.min_margin) else None,
            "overload": overload_of(float(self.min_margin)) if np.isfinite(self.min_margin) else None,
            "margin_to_rating": least_margin(self.margin if self.margin_to_rating is None else self.margin_to_rating),
            "policy": policy_of(self.stage.part.policy).to_dict(),
            "limit": self.failed_limit,
            "device": d + 1,
            "worst_voltage": float(self.source_v[k]),
            "worst_current": float(self.total_a[k]),
            "heatsink_temp": float(self.state.sink_c.max()),
            "tj_peak": float(self.state.junction_c.max()),
            "loop_gain_peak": float(np.max(self.state.gain)),
            "stage_gain_peak": stage_gain_peak(self.state.stage_gain, self.state.hogging),
            "drive_current_peak": self.stage.drive_current_peak_a(self.state.device_a),
            "outside": self.outside,
            "assumptions": list(self.assumptions),
        }


def check_envelope(
    stage: Stage,
    envelope: Envelope,
    *,
    breakdown: BreakdownDerating = "auto",
    points: int = 400,
    verdict_only: bool = False,
) -> EnvelopeCheck:
    """Check a stage against an envelope along its upper edge, every device.

    A point fails where a device leaves its SOA (derated at its own case temperature, for
    the envelope's pulse condition), where a junction passes tj_max, where the stage runs
    away, where the driver falls short, or where the devices would need a negative V_CE
    (``dropout``: the resistors alone drop more than the source gives, so the load cannot draw
    that current): :func:`~soacheck.stage_run.inside_limits`.

    ``verdict_only`` (for searches that want only the verdict and the margins): where the
    devices, matched, could not share is not worked out; it changes the notes and
    ``stage_gain_peak``, never a verdict, margin or limit.
    """
    if envelope.v_min_v > stage.part.ratings.v_max_v:
        raise SoacheckError(
            f"envelope: its voltage range starts at {envelope.v_min_v:g} V, above {stage.part.id}'s v_max "
            f"{stage.part.ratings.v_max_v:g} V"
        )
    placed, notes = stage_for(stage, envelope)
    v, i = envelope.edge(points)
    conditions = {"pulse_s": envelope.pulse_s, "duty": envelope.duty, "idle_a": envelope.idle_current_a}
    state = steady_state(placed, v, i, **conditions, sink="worst")
    hogging = (
        state.hogging
        if verdict_only
        else hogging_on_matched_set(
            placed,
            state.hogging,
            state.runaway_at,
            lambda matched: equal_split_unstable(matched, v, i, **conditions, sink="worst"),
        )
    )
    state = replace(state, hogging=hogging)
    if 0 < envelope.duty < 1 and not math.isinf(envelope.pulse_s) and thermal_model(stage.part) is not None:
        notes.append(
            "repeated pulses: second-breakdown and instability lines derated at the junction temperature where each "
            "pulse starts (the periodic minimum above each device's case), not at the case temperature"
        )
    if placed.sharing_assumption is not None:
        notes.append(placed.sharing_assumption)
    notes.extend(instability_notes(stage.part))
    if envelope.idle_current_a > 0:
        notes.append(
            f"{envelope.idle_current_a:g} A between pulses, shared like the pulse current: each junction peaks at "
            "Tc + P_idle·Rth + (P − P_idle)·Zth(tp, D) (superposition; without a thermal model as DC), the heatsink "
            "sees D·P + (1 − D)·P_idle, and repeated pulses are judged where the junction starts them"
        )
    if hogging.any():
        notes.append(
            f"from {float(v[np.argmax(hogging)]):g} V the devices cannot share the current (matched, their equal split "
            "is unstable: the whole set's electro-thermal Jacobian has an eigenvalue ≥ 1): the state in which Q1 takes "
            f"the current (current hogging) is reported and checked there ({int(hogging.sum())} of {v.size} points)"
        )
    allowed, margin, limit = judge_steady_state(placed, state, envelope.pulse_s, envelope.duty, breakdown)
    to_rating = None
    if placed.part.policy is not None:  # the same steady states, judged against the absolute ratings
        rated = placed.with_part(placed.part.rated)
        to_rating = judge_steady_state(rated, state, envelope.pulse_s, envelope.duty, breakdown)[1]
    inside = inside_limits(placed, margin, limit, state.junction_c)
    bad = (~inside).any(axis=0)
    outside = []
    if bad.any():
        edges = np.diff(bad.astype(np.int8), prepend=np.int8(0), append=np.int8(0))
        for start, stop in zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1), strict=True):
            block = margin[:, start:stop]
            d, k = np.unravel_index(int(np.argmin(block)), block.shape)
            worst = float(block[d, k])
            if worst >= 0:  # every current inside: the stretch fails on another limit, named at its first point
                d, k = int(np.argmax(~inside[:, start])), 0
            outside.append(
                {
                    "from_voltage": float(v[start]),
                    "to_voltage": float(v[stop - 1]),
                    "limit": str(limit[d, start + k]),
                    "margin": worst if np.isfinite(worst) else None,
                }
            )
    notes += [
        f"the envelope's upper edge, {v.size} points, mapped through the current sharing and the resistor drops",
        f"worst case of the V_BE band ({stage.vbe_spread_v * 1e3:g} mV): Q1 at its bottom",
        policy_note(placed.part),
    ]
    return EnvelopeCheck(envelope, placed, v, i, state, allowed, margin, limit, outside, tuple(notes), to_rating)


# --------------------------------------------------------------------------- the largest safe envelope


@dataclass(frozen=True, eq=False)
class SafeEnvelope:
    """The highest total current a stage takes at each source voltage, and what limits it."""

    stage: Stage
    voltage_v: np.ndarray
    max_current_a: np.ndarray
    limit: np.ndarray
    pulse_s: float
    duty: float
    assumptions: tuple[str, ...]

    def points(self) -> list[dict]:
        return [
            {"voltage": float(v), "max_current": float(i), "limit": str(lim)}
            for v, i, lim in zip(self.voltage_v, self.max_current_a, self.limit, strict=True)
        ]


def largest_safe_envelope(
    stage: Stage,
    voltages_v: np.ndarray,
    *,
    pulse_s: float = DC,
    duty: float = 1.0,
    idle_current_a: float = 0.0,
    breakdown: BreakdownDerating = "auto",
    iterations: int = 48,
    progress: Callable[[int, int], None] | None = None,
) -> SafeEnvelope:
    """Bisect, at every source voltage at once, for the highest safe total current.

    The stage's own surroundings apply: its heatsink settles at each point's own power
    (steady state), or its cases sit at the fixed temperature. The returned currents are
    on the safe side of the bisection (relative width 2^-48). ``progress(done, total)`` is
    called after each bisection step.
    """
    v = np.asarray(voltages_v, dtype=float)
    if v.size == 0 or np.any(~np.isfinite(v)) or np.any(v <= 0):
        raise SoacheckError("--voltages: give source voltages above zero, such as 10,20,40")
    ratings = stage.part.ratings
    cap = max(ratings.i_max_a, ratings.i_pulse_max_a or 0.0) * stage.count * 2.0
    lo = np.zeros(v.size)
    hi = np.full(v.size, cap)

    def safe(current: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        state = steady_state(stage, v, current, pulse_s=pulse_s, duty=duty, idle_a=idle_current_a, sink="each")
        _, margin, limit = judge_steady_state(stage, state, pulse_s, duty, breakdown)
        ranked = ranked_margin(stage, state, margin, limit)  # unsafe, and what limits as a current just outside
        d = np.argmin(ranked, axis=0)
        return (ranked >= 0).all(axis=0), limit[d, np.arange(v.size)]

    for step in range(iterations):
        mid = 0.5 * (lo + hi)
        ok, _ = safe(mid)
        lo = np.where(ok, mid, lo)
        hi = np.where(ok, hi, mid)
        if progress is not None:
            progress(step + 1, iterations)
    _, limit = safe(hi)
    timing_note = "dc" if math.isinf(pulse_s) else f"{format_duration(pulse_s)} pulses at duty {duty:g}"
    if idle_current_a > 0 and not math.isinf(pulse_s):
        timing_note += f" on {idle_current_a:g} A between pulses"
    surroundings = (
        f"heatsink at each point's own steady state, ambient {stage.cooling.ambient_c:g} °C"
        if stage.cooling
        else f"cases held at {stage.case_temp_c:g} °C"
    )
    notes = (
        f"{stage.count} × {stage.part.id}, {timing_note}; {surroundings}",
        f"ballast {stage.ballast_ohm:g} Ω each, series {stage.series_ohm:g} Ω, V_BE band {stage.vbe_spread_v * 1e3:g} "
        "mV with Q1 at its bottom",
        f"each current is the highest at which every device stays inside its derated SOA and below "
        f"{stage.part.tj_limit} = {stage.part.tj_limit_c:g} °C, "
        "without runaway and with V_CE above zero",
        *(() if stage.sharing_assumption is None else (stage.sharing_assumption,)),
        policy_note(stage.part),
    )
    return SafeEnvelope(stage, v, lo, limit, pulse_s, duty, notes)
