"""A trajectory through a stage: waveform relaxation of the electro-thermal fixed point.

Current sharing follows from the V_BE mismatch, the ballast resistors and the temperature
coefficient of V_BE coupled to each device's junction temperature, solved over a whole
trajectory at once by waveform relaxation (alternately: currents for given temperatures,
temperatures for given currents). A stage whose loop gain reaches 1 is thermal runaway,
reported as a failure with the limit ``runaway``.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from soacheck.boundary import allowed_current
from soacheck.derating import BreakdownDerating, policy_note
from soacheck.errors import SoacheckError
from soacheck.fixed_point import anderson
from soacheck.glossary import STATE_LIMITS
from soacheck.instability import instability_notes
from soacheck.parts import Part
from soacheck.points import overload_of
from soacheck.policy import least_margin, policy_of
from soacheck.quantities import check_memory
from soacheck.search import max_safe_setpoint
from soacheck.stage import RUNAWAY_C, SETTLED_K, Stage
from soacheck.steady_state import HOG_START_K, TIP_V, SteadyState, hogging_on_matched_set, stage_gain_peak
from soacheck.thermal import Foster
from soacheck.thermal_model import thermal_model
from soacheck.thermal_response import temperature_rise
from soacheck.units import DC


@dataclass(frozen=True, eq=False)
class StageRun:
    """A trajectory through a stage, device by device, with its check.

    Arrays with a leading ``(n,)`` axis are per device; the time axis is ``(m,)``. ``hogging``
    ``(m,)`` marks the samples where the devices cannot share the current and the state with
    one device taking it is reported and checked (decided on the devices matched:
    :func:`~soacheck.steady_state.hogging_on_matched_set`).
    """

    stage: Stage
    time_s: np.ndarray
    source_v: np.ndarray
    total_a: np.ndarray
    device_a: np.ndarray
    device_v: np.ndarray
    device_w: np.ndarray
    case_c: np.ndarray
    junction_c: np.ndarray
    sink_c: np.ndarray
    allowed_a: np.ndarray
    margin: np.ndarray
    limit: np.ndarray
    gain: np.ndarray
    runaway: bool
    assumptions: tuple[str, ...] = field(default_factory=tuple)
    stage_gain: np.ndarray | None = None
    margin_to_rating: np.ndarray | None = None
    hogging: np.ndarray | None = None

    @property
    def inside(self) -> np.ndarray:
        """(n, m): each device inside at each sample, by :func:`inside_limits`."""
        return inside_limits(self.stage, self.margin, self.limit, self.junction_c)

    @property
    def passed(self) -> bool:
        return bool(self.inside.all()) and not self.runaway

    @property
    def worst_device(self) -> int:
        return int(np.argmin(np.nanmin(np.where(np.isfinite(self.margin), self.margin, -np.inf), axis=1)))

    @property
    def first_violation(self) -> tuple[int, int] | None:
        """(device, sample) of the first violation: the earliest sample where a device is not
        :attr:`inside`, and the first such device there; None when the run passes throughout.
        Its :attr:`limit` says what was passed there: a mechanism of the SOA boundary, the
        junction's ``tj_max`` or ``tj_ceiling`` (the current may be inside), ``runaway`` or ``drive``."""
        return first_outside(self.inside)

    @property
    def failed_device(self) -> int | None:
        """The device (numbered from 1) of the first violation, where the limit the run's summary names was
        passed first; None when the run passes."""
        found = self.first_violation
        return None if found is None else found[0] + 1

    @property
    def time_over_tj_limit_s(self) -> float:
        """How long any junction spent above tj_max (under a policy, its ceiling), each sample over
        it held until the next (zero-order hold, as a trace counts it). [s]"""
        over = (self.junction_c > self.stage.part.tj_limit_c).any(axis=0)
        return float(np.sum(np.diff(self.time_s, append=self.time_s[-1])[over]))

    def summary(self) -> dict[str, object]:
        """The verdict and the figures the CLI and reports print.

        A failing run's ``limit`` and ``first_violation_time`` are its first violation's (see
        :attr:`first_violation`); ``margin`` stays the least margin to the current boundary, so a
        run failing on its junction alone has a margin of 0 or more beside the junction limit.
        """
        found = self.first_violation
        first = None if found is None else float(self.time_s[found[1]])
        limit = None if found is None else str(self.limit[found])
        finite = np.where(np.isfinite(self.margin), self.margin, -np.inf)
        flat = int(np.argmin(finite))
        d, k = np.unravel_index(flat, finite.shape)
        worst = finite[d, k]
        if limit is None:  # nothing failed: what bounds the current where the margin is least
            limit = str(self.limit[d, k])
        energy_wh = float(np.sum(np.diff(self.time_s) * (self.source_v * self.total_a)[:-1]) / 3600.0)
        margin = float(worst) if np.isfinite(worst) else None
        return {
            "verdict": "pass" if self.passed else "fail",
            "first_violation_time": first,
            "limit": limit,
            "margin": float(worst) if np.isfinite(worst) else None,
            "overload": overload_of(float(worst)) if np.isfinite(worst) else None,
            "margin_to_rating": margin if self.margin_to_rating is None else least_margin(self.margin_to_rating),
            "policy": policy_of(self.stage.part.policy).to_dict(),
            "margin_time": float(self.time_s[k]),
            "device": int(d) + 1,
            "tj_peak": float(self.junction_c.max()),
            "tj_peak_time": float(self.time_s[int(np.argmax(self.junction_c.max(axis=0)))]),
            "time_over_tj_max": self.time_over_tj_limit_s,
            "case_peak": float(self.case_c.max()),
            "heatsink_peak": float(self.sink_c.max()),
            "loop_gain_peak": float(np.max(self.gain)),
            "stage_gain_peak": stage_gain_peak(self.stage_gain, self.hogging),
            "drive_current_peak": self.stage.drive_current_peak_a(self.device_a),
            "device_power_peak": float(self.device_w.max()),
            "sense_resistor_power_peak": float((self.total_a**2).max() * self.stage.series_ohm),
            "energy": energy_wh,
            "duration": float(self.time_s[-1] - self.time_s[0]),
        }


def fails_whatever_current(stage: Stage, limit: np.ndarray, junction_c: np.ndarray) -> np.ndarray:
    """(n, m): where a device fails whatever its current: its junction not at or below tj_max (under a policy,
    its ceiling; a junction that is not a number never is), or its ``limit`` one of the stage's state
    (:data:`~soacheck.glossary.STATE_LIMITS`: ``runaway``, ``drive``, ``dropout``)."""
    return ~(junction_c <= stage.part.tj_limit_c) | np.isin(limit, STATE_LIMITS)


def inside_limits(stage: Stage, margin: np.ndarray, limit: np.ndarray, junction_c: np.ndarray) -> np.ndarray:
    """(n, m): whether each device is inside at each point, the one rule every stage check judges by.

    Inside: the current within its boundary (``margin`` 0 or more: on the boundary is inside, a
    margin that is not a number never is), and nothing that fails it whatever its current
    (:func:`fails_whatever_current`: the junction past tj_max or the policy's tj_ceiling, runaway,
    drive, dropout). Stage runs (:attr:`StageRun.inside`), envelope checks
    (:attr:`soacheck.envelope.EnvelopeCheck.inside`) and ``sharing``'s draws
    (:func:`soacheck.sharing_spread.judge_draws`) judge here; a failing point keeps its current's
    margin, and its ``limit`` names what failed (:func:`check_devices`, :func:`judge_steady_state`).

    Parameters
    ----------
    stage
        The stage: its part's junction limit.
    margin, limit, junction_c
        Each device's margin 1 − I/I_allowed [1], limit, and junction temperature [°C] at each point, ``(n, m)``.
    """
    return (margin >= 0) & ~fails_whatever_current(stage, limit, junction_c)


def first_outside(inside: np.ndarray) -> tuple[int, int] | None:
    """(device, point) of the first point along axis 1 of ``inside`` ``(n, m)`` where a device is not inside, and
    the first such device there; None when every device is inside everywhere."""
    bad = ~inside
    if not bad.any():
        return None
    k = int(np.argmax(bad.any(axis=0)))
    return int(np.argmax(bad[:, k])), k


def _junction_network(part: Part) -> tuple[Foster, str]:
    model = thermal_model(part)
    if model is not None:
        return model.foster, f"junction–case from the {model.origin}"
    rth = part.ratings.rth_jc_k_per_w
    return Foster([rth], [1e-6]), "no thermal model: junction at Tc + P·rth_jc at every instant (conservative)"


def run_stage(
    stage: Stage,
    time_s: np.ndarray,
    source_v: np.ndarray,
    total_a: np.ndarray,
    *,
    breakdown: BreakdownDerating = "auto",
    max_iterations: int = 2000,
) -> StageRun:
    """Follow a trajectory (source voltage and total current over time) through the stage.

    Parameters
    ----------
    stage
        The stage.
    time_s
        Sample times, rising, shape ``(m,)``. [s]
    source_v
        Voltage across the load's input terminals (sense resistor, ballasts and devices), shape ``(m,)``. [V]
    total_a
        Total current the load draws, shape ``(m,)``. [A]

    Notes
    -----
    Per device: V_CE = V_source − I_total·R_series − I_k·R_ballast; P_k = V_CE·I_k. The
    heatsink is one lumped node driven by the devices' total power (resistors are assumed
    mounted elsewhere); each case sits P_k·R_cs above it; each junction follows its own
    Foster network on top of its case (quasi-static: conservative, since the sink's time
    constant is minutes and the device's at most about a second; common practice, no source). Each
    device is checked at every sample against its DC boundary derated at its own case
    temperature, and its junction against tj_max.
    """
    part = stage.part
    t = np.asarray(time_s, dtype=float)
    src = np.asarray(source_v, dtype=float)
    total = np.asarray(total_a, dtype=float)
    n, m = stage.count, t.size
    # about 20 arrays of (devices, samples) float64 live at once: currents, voltages, powers, temperatures, checks
    check_memory(20 * 8 * n * m, f"a run of {n} devices over {m} samples", "use fewer samples or fewer devices")
    junction, junction_note = _junction_network(part)
    rth_diff = part.ratings.rth_jc_k_per_w + (stage.cooling.case_sink_k_per_w if stage.cooling else 0.0)
    z_shared = stage.cooling.sink_ambient_k_per_w if stage.cooling else 0.0

    def relax(tj0: np.ndarray, placed: Stage = stage):
        state, converged = _relax(placed, junction, t, src, total, tj0, max_iterations)
        currents, vce, _, _, tj, _ = state
        gain = stage.stability_gain(currents, vce, tj, z_self_k_per_w=rth_diff, z_shared_k_per_w=z_shared)
        return state, converged, gain

    def cannot_hold(converged: bool, gain: np.ndarray) -> np.ndarray:
        """Where the shared state found cannot hold: the whole set's stability gain 1 or more, or unsettled."""
        return ((gain >= 1.0) | (not converged)) if n > 1 else np.zeros(m, dtype=bool)

    start_c = np.full((n, m), stage.cooling.ambient_c if stage.cooling else stage.case_temp_c, dtype=float)
    state, converged, stage_gain = relax(start_c)
    unstable = cannot_hold(converged, stage_gain)
    hogging = np.zeros(m, dtype=bool)
    if unstable.any():  # the shared state cannot hold there: look for Q1 taking the current
        hot = start_c.copy()
        hot[0] += HOG_START_K
        # matched devices stay exactly matched in a computation, though nothing real does: Q1 a microvolt low
        tipped = dataclasses.replace(stage, vbe_spread_v=max(stage.vbe_spread_v, TIP_V))
        other, other_converged, other_gain = relax(hot, tipped)
        if other_converged:  # the transient into that state is what happens: report and check it
            hogging = unstable
            state = tuple(np.where(hogging, b, a) for a, b in zip(state, other, strict=True))
            stage_gain = np.where(hogging, other_gain, stage_gain)
    currents, vce, power, case, tj, sink = state
    runaway_at = unstable & ~hogging
    # with a V_BE spread the run may settle straight into Q1 taking the current: decided on the devices matched
    own_hogging = hogging
    when_matched = hogging_on_matched_set(
        stage, np.zeros(m, dtype=bool), runaway_at, lambda matched: cannot_hold(*relax(start_c, matched)[1:])
    )
    hogging = own_hogging | when_matched
    gain = stage.loop_gain(currents, vce, rth_diff, tj) if n > 1 or part.transfer is not None else np.zeros((n, m))
    allowed_a, margin, limit = check_devices(stage, vce, currents, case, tj, runaway_at, breakdown=breakdown)
    to_rating = None
    if part.policy is not None:  # the same currents and temperatures, judged against the absolute ratings
        to_rating = check_devices(
            stage.with_part(part.rated), vce, currents, case, tj, runaway_at, breakdown=breakdown
        )[1]
    notes = [
        junction_note,
        f"{n} device(s) in parallel; V_BE spread {stage.vbe_spread_v * 1e3:g} mV as a band, worst case: Q1 "
        "at its bottom"
        + (f"; temperature coefficient {stage.vbe_tempco_v_per_k * 1e3:g} mV/K" if part.is_bipolar else ""),
        "heatsink as one lumped node driven by the devices' total power; cases P·R_cs above it; junctions "
        "quasi-static on top (conservative)"
        if stage.cooling
        else f"cases held at {stage.case_temp_c:g} °C",
        "each device checked against its DC boundary at its own case temperature, and its junction against "
        f"{part.tj_limit} = {part.tj_limit_c:g} °C",
    ]
    notes.extend(sharing_notes(stage))
    notes.extend(instability_notes(part))
    notes.extend(_hogging_notes(stage, t, hogging, own_hogging, when_matched))
    if runaway_at.any():
        notes.append(
            f"thermal runaway: stability gain {float(np.max(stage_gain)):.2f} ≥ 1 from "
            f"t = {float(t[np.argmax(runaway_at)]):g} s and no stable state with one device taking the current; "
            "raise the ballast resistors or lower the voltage across the devices"
        )
    return StageRun(
        stage,
        t,
        src,
        total,
        currents,
        vce,
        power,
        case,
        tj,
        sink,
        allowed_a,
        margin,
        limit,
        gain,
        bool(runaway_at.any()),
        (*notes, policy_note(part)),
        stage_gain,
        to_rating,
        hogging,
    )


def _relax(stage: Stage, junction: Foster, t, src, total, tj0: np.ndarray, iterations: int):
    """Waveform relaxation from junction temperatures ``tj0`` ``(n, samples)`` [°C]: (currents, V, P, case, Tj,
    sink) and whether every sample settled (no junction moved SETTLED_K in a step), by the plain relaxation of
    :func:`soacheck.fixed_point.anderson` (``memory=0``); a run past RUNAWAY_C anywhere stops unsettled."""
    last: list[np.ndarray | None] = [None]

    def step(tj: np.ndarray) -> tuple[np.ndarray, tuple[np.ndarray, ...]]:
        currents = stage.share(total, tj, start_a=last[0])  # Newton starts from the last step's sharing
        last[0] = currents
        vce = stage.device_voltage(src[None, :], total[None, :], currents)
        power = np.maximum(vce, 0.0) * currents
        sink, case, tj_new = _temperatures(stage, junction, t, power)
        return tj_new, (currents, vce, power, case, tj_new, sink)

    found = anderson(
        step,
        tj0,
        tol=SETTLED_K,
        max_steps=iterations,
        memory=0,
        give_up=lambda tj: np.full(tj.shape[1], not np.all(tj < RUNAWAY_C)),  # far past any tj_max: it will not settle
    )
    return found.state, bool(found.settled.all())


def _hogging_notes(
    stage: Stage, t: np.ndarray, hogging: np.ndarray, own: np.ndarray, when_matched: np.ndarray
) -> list[str]:
    """The one note on a run's current hogging, from its first hogging sample; none where it does not hog.

    ``hogging`` ``(m,)`` is ``own`` (the run's shared state could not hold and the run into the
    state with Q1 taking the current was found) or ``when_matched`` (the same devices matched
    cannot share there). Junctions start at the case temperature, so a run may hog from its
    first sample; there is no shared state before it then.
    """
    if not hogging.any():
        return []
    first = int(np.argmax(hogging))
    since = f"from t = {float(t[first]):g} s"
    jacobian = "the whole set's electro-thermal Jacobian has an eigenvalue ≥ 1"
    if stage.vbe_spread_v == 0.0:  # matched: the run was tipped into the state with Q1 taking the current
        joined = ", joined sample by sample to the shared state before" if first > 0 else ""
        return [
            f"{since} the shared state is unstable ({jacobian}): the run into the state in which Q1 takes the "
            f"current (matched devices tipped by 1 µV) is reported and checked there{joined}"
        ]
    why = (
        f"matched, their equal split is unstable there ({jacobian})"
        if not (own & ~when_matched).any()
        else f"their shared state, or matched their equal split, is unstable there ({jacobian})"
    )
    return [
        f"{since} the devices cannot share the current: {why}, and with the V_BE spread they settle with Q1, at "
        "the bottom of the band, taking the current (current hogging), the state reported and checked "
        f"({int(hogging.sum())} of {t.size} samples)"
    ]


def sharing_notes(stage: Stage) -> list[str]:
    """How the devices' law was modelled, in words."""
    part = stage.part
    if part.is_bipolar:
        law = "Darlington: V_BE slope 2·V_T per e-fold of current" if part.darlington else "V_BE = V_T ln(I/I_S)"
        notes = [f"bipolar sharing: {law}, temperature coefficient {stage.vbe_tempco_v_per_k * 1e3:g} mV/K"]
        if part.gain is None:
            notes.append("no [gain] table: the base current the driver must supply is not known")
        return notes
    if part.transfer is not None:
        return [
            "FET sharing by the transfer curves (transfer.csv): V_GS(I, T) with its transconductance and "
            "α = ∂I_D/∂T_j in place of a V_BE law and tempco"
        ]
    assumed = stage.sharing_assumption
    return [] if assumed is None else [assumed]


def check_devices(
    stage: Stage,
    vce_v: np.ndarray,
    device_a: np.ndarray,
    case_c: np.ndarray,
    junction_c: np.ndarray,
    runaway_at: np.ndarray,
    *,
    pulse_s: float = DC,
    duty: float = 0.0,
    idle_current_a: np.ndarray | float = 0.0,
    breakdown: BreakdownDerating = "auto",
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Allowed current, margin and limit of every device at every point, each ``(n, m)``.

    Each device is checked against its SOA (for the pulse condition) derated at its own
    case temperature; a junction above tj_max is labelled ``tj_max`` (under a policy with a
    junction ceiling, above the ceiling: ``tj_ceiling``); a case at or above that limit, where nothing
    is allowed, ``case_at_tj_max`` or ``case_at_tj_ceiling``; where the stage runs away, every device
    is labelled ``runaway``: no stable state exists for the set, so none of its devices is inside.
    """
    n, m = device_a.shape
    cooling = stage.cooling
    allowed = allowed_current(
        np.maximum(vce_v, 1e-12),
        stage.part,
        tc_c=case_c,
        pulse_s=pulse_s,
        duty=duty,
        idle_current_a=idle_current_a,
        breakdown=breakdown,
        beyond_case_k_per_w=cooling.case_sink_k_per_w + cooling.sink_ambient_k_per_w if cooling else 0.0,
    )
    allowed_a = allowed.current_a.reshape(n, m)
    limit = allowed.limit.reshape(n, m).astype(object)
    hot = junction_c > stage.part.tj_limit_c
    limit = np.where(hot & (device_a <= allowed_a), stage.part.tj_limit, limit)
    drive = stage.drive_current_a(device_a)
    if drive is not None and stage.drive_limit_a is not None:  # the driver falls short: Q1 is not driven
        short = drive > stage.drive_limit_a
        limit = np.where(short[None, :] & (np.arange(n) == 0)[:, None], "drive", limit)
    limit = np.where(np.asarray(runaway_at)[None, :], "runaway", limit).astype(str)  # the whole set's state
    with np.errstate(divide="ignore", invalid="ignore"):
        margin = np.where(allowed_a > 0, 1.0 - device_a / allowed_a, np.where(device_a > 0, -np.inf, 1.0))
    return allowed_a, margin, limit


def judge_steady_state(
    stage: Stage, state: SteadyState, pulse_s: float = DC, duty: float = 1.0, breakdown: BreakdownDerating = "auto"
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Allowed current [A], margin [1] and limit of every device at every steady-state point, each ``(n, m)``.

    :func:`check_devices` on the settled state, with ``dropout`` (V_CE at or below zero: margin
    −inf) folded in. Every margin is the current's: a point in runaway, short of drive, or with
    its junction past its limit keeps it, and its limit names what fails it (``runaway``,
    ``drive``; ``tj_max`` or ``tj_ceiling`` where its current is inside), as in a stage run;
    :func:`inside_limits` judges it, and :func:`ranked_margin` counts it as just outside where an
    answer needs one number. Envelopes, the largest safe envelope and ``sharing`` judge their
    steady states here.
    """
    allowed, margin, limit = check_devices(
        stage,
        state.device_v,
        state.device_a,
        state.case_c,
        state.junction_c,
        state.runaway_at,
        pulse_s=pulse_s,
        duty=0.0 if math.isinf(pulse_s) else duty,
        idle_current_a=state.idle_a if state.idle_a is not None else 0.0,
        breakdown=breakdown,
    )
    dropout = state.device_v <= 0
    limit = np.where(dropout, "dropout", limit)
    margin = np.where(dropout, -np.inf, margin)
    return allowed, margin, limit


def ranked_margin(stage: Stage, state: SteadyState, margin: np.ndarray, limit: np.ndarray) -> np.ndarray:
    """``margin`` ``(n, m)`` with every point that fails whatever its current (:func:`fails_whatever_current`)
    just below zero (−1e-9 at most): 0 or more exactly where :func:`inside_limits` holds.

    For answers that judge by one number whatever failed: the largest safe envelope's search
    and what limits it. A check that reports its margin keeps the current's margin and names
    the limit that failed instead (:meth:`StageRun.summary`,
    :meth:`soacheck.envelope.EnvelopeCheck.summary`, ``sharing``'s
    :func:`~soacheck.sharing_spread.sharing_monte_carlo`).
    """
    return np.where(fails_whatever_current(stage, limit, state.junction_c), np.minimum(margin, -1e-9), margin)


def _temperatures(stage: Stage, junction: Foster, t: np.ndarray, power: np.ndarray):
    """Sink (m,), case (n, m) and junction (n, m) temperatures for the devices' powers."""
    if stage.cooling is not None:
        c = stage.cooling
        sink_net = Foster([c.sink_ambient_k_per_w], [c.sink_ambient_k_per_w * c.sink_j_per_k])
        sink = c.ambient_c + temperature_rise(t, power.sum(axis=0), sink_net)[0]
        case = sink[None, :] + power * c.case_sink_k_per_w
    else:
        sink = np.full(t.size, stage.case_temp_c)
        case = np.broadcast_to(sink, power.shape).copy()
    junction_c = case + np.stack([temperature_rise(t, p, junction)[0] for p in power])
    return sink, case, junction_c


def passes_at(run_at: Callable[[float], StageRun]) -> Callable[[float], bool]:
    """Whether ``run_at(x)`` passes, for the searches of :mod:`soacheck.search`.

    An x that cannot be run at all (``run_at`` raises :class:`SoacheckError`) counts as not safe.
    """

    def passes(x: float) -> bool:
        try:
            return run_at(x).passed
        except SoacheckError:
            return False

    return passes


def setpoint_limits(
    run_at: Callable[[Stage, float], StageRun],
    stage: Stage,
    setpoint: float,
    mode: str,
    *,
    rel_tol: float = 1e-3,
    progress: Callable[[int, int | None], None] | None = None,
) -> dict[str, float | None]:
    """The most demanding safe setpoint under the stage's policy, and the same at the absolute ratings.

    ``run_at(stage, x)`` runs the test at setpoint ``x`` through ``stage``. Returns
    ``max_safe_setpoint`` (judged under the part's policy, if any) and ``max_setpoint_at_rating``
    (the same search against the ratings; the same value when there is no policy). [A, W or Ω]
    A policy only ever takes margin away, so every setpoint at or below the one found under it
    (for ``cr``: at or above) passes at the ratings too and is not run again.
    ``progress(runs done, None)`` is called after each run (how many a search takes is not
    known beforehand).
    """
    done = 0

    def counted(through: Stage, x: float) -> StageRun:
        nonlocal done
        try:
            return run_at(through, x)
        finally:
            done += 1
            if progress is not None:
                progress(done, None)

    found = max_safe_setpoint(passes_at(lambda x: counted(stage, x)), setpoint, mode, rel_tol=rel_tol)
    at_rating = found
    if stage.part.policy is not None:  # the same search against the absolute ratings, beside it
        rated = stage.with_part(stage.part.rated)
        at_ratings = passes_at(lambda x: counted(rated, x))

        def passes_rated(x: float) -> bool:
            if found is not None and (x >= found if mode == "cr" else x <= found):
                return True
            return at_ratings(x)

        at_rating = max_safe_setpoint(passes_rated, setpoint, mode, rel_tol=rel_tol)
    return {"max_safe_setpoint": found, "max_setpoint_at_rating": at_rating}
