"""A stage in thermal steady state at each operating point (envelopes, sweeps).

A settled state T* = f(T*) of the junction temperatures (f: the temperatures the dissipation
at T settles to) is physically stable where every eigenvalue λ of the loop's Jacobian
J = ∂f/∂T has a real part below 1: the junctions relax as C·dT/dt = (f(T) − T)/Z, whose
linearisation C·dδT/dt = (J − 1)·δT/Z decays exactly then (Lyapunov's indirect method: H. K.
Khalil, *Nonlinear Systems*, 3rd ed., Prentice Hall 2002, Theorem 4.7, from memory). For one
device this is the classic electro-thermal stability factor S = Rth·V·∂I/∂Tj = Rth·∂P/∂Tj < 1
(Spirito, Breglio, d'Alessandro, Rinaldi, MIEL 2002); for paralleled bipolars with emitter
ballast, Arnold & Zoroglu, IEEE Trans. Electron Devices ED-21, 1974 (from memory). That is not
whether the plain iteration T ← f(T) converges, which needs every |λ| < 1: at an eigenvalue
≤ −1 (FETs above their zero-temperature-coefficient point, whose current falls steeply as
they warm) the iteration oscillates about a stable state. Such states are found by Anderson
mixing or damped relaxation (:func:`_settle_damped`) and judged by Re(λ) < 1 alone.

Where the devices' shared state is unstable (the electro-thermal Jacobian of the whole set
has an eigenvalue at or above 1), the state that exists physically is sought instead: one
device, Q1 (the one with the lowest V_BE), taking the current. It is reported and checked
when it is itself stable; otherwise the point is runaway.

Whether devices with a V_BE spread hog is decided on the same devices matched
(:func:`hogging_on_matched_set`): with offsets they may settle straight into the state where
one device takes the current, and no shared state is ever refused.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal

import numpy as np

from soacheck.fixed_point import MEMORY, anderson
from soacheck.stage import RUNAWAY_C, SETTLED_K, Stage
from soacheck.thermal_model import thermal_model
from soacheck.units import DC

HOG_START_K = 200.0
"""How much hotter than the others Q1 starts when the state where it takes the current is sought. [K]"""

TIP_V = 1e-6
"""V_BE offset that breaks the exact symmetry of matched devices in that search (nothing real is matched closer). [V]"""


@dataclass(frozen=True, eq=False)
class SteadyState:
    """Operating points of a stage in thermal steady state, each device: arrays ``(n, m)``; sink ``(m,)``.

    ``gain`` is each device's loop gain, ``stage_gain`` the whole set's stability gain (the
    largest real eigenvalue of the electro-thermal Jacobian), ``hogging`` where the shared
    state was unstable and the stable state with Q1 taking the current is reported instead,
    ``runaway_at`` where no stable state was found.
    """

    device_a: np.ndarray
    device_v: np.ndarray
    device_w: np.ndarray
    case_c: np.ndarray
    junction_c: np.ndarray
    sink_c: np.ndarray
    gain: np.ndarray
    runaway_at: np.ndarray
    stage_gain: np.ndarray | None = None
    hogging: np.ndarray | None = None
    idle_a: np.ndarray | None = None


def steady_state(
    stage: Stage,
    source_v: np.ndarray,
    total_a: np.ndarray,
    *,
    pulse_s: float = DC,
    duty: float = 1.0,
    idle_a: np.ndarray | float = 0.0,
    sink: Literal["each", "worst"] = "each",
    offsets_v: np.ndarray | None = None,
    max_iterations: int = 2000,
    hog_search: bool = True,
) -> SteadyState:
    """Each device at each operating point once the temperatures have settled.

    Parameters
    ----------
    source_v, total_a
        Operating points of the load, shape ``(m,)``. [V], [A]
    pulse_s, duty
        DC, or pulses of width ``pulse_s`` at duty ``duty``: the junction then sits
        P·Zth(tp, D) above its case (the part's model; rth_jc without one, conservative) and
        the heatsink sees the average power D·P.
    idle_a
        Total current standing between pulses at each point, at the same source voltage,
        shared like the pulse current; ignored for DC. [A]
    sink
        ``each``: every point with the heatsink at its own steady state; ``worst``: every point
        with the heatsink at the steady state of the hottest point (an envelope's worst power).
    offsets_v
        V_BE (V_GS) offset of each device at each point, shape ``(n, m)`` (random draws); None:
        the stage's worst case, Q1 at the bottom of the spread band and the others at its top. [V]
    hog_search
        False: the shared state alone, with ``runaway_at`` wherever it cannot hold and no state
        with one device taking the current sought (:func:`equal_split_unstable` asks this of a
        matched set).

    Notes
    -----
    With P̄_k = D·P_k + (1 − D)·P_idle,k: Tc_k = T_sink + P̄_k·R_cs, T_sink = T_a + R_sa·Σ P̄_k (or
    the fixed case temperature), Tj_k = Tc_k + P_idle,k·Rth + (P_k − P_idle,k)·Z (superposition),
    solved together with the sharing as a fixed point, first from equal
    temperatures; where that state is unstable (:meth:`Stage.stability_gain` ≥ 1), again
    with the device of the lowest offset hot (Q1 in the worst case), and that state is taken
    where it settles and is stable.
    """
    part = stage.part
    src = np.asarray(source_v, dtype=float)
    total = np.asarray(total_a, dtype=float)
    n, m = stage.count, src.size
    continuous = math.isinf(pulse_s) or duty >= 1.0
    average = 1.0 if continuous else duty
    model = thermal_model(part)
    z = part.ratings.rth_jc_k_per_w if continuous or model is None else float(model.pulse_zth(pulse_s, duty))
    rth = model.foster.rth_k_per_w if model is not None and not continuous else z
    idle_total = np.zeros(m) if continuous else np.broadcast_to(np.asarray(idle_a, dtype=float), (m,))
    cooling = stage.cooling
    z_self = z + (cooling.case_sink_k_per_w * average if cooling else 0.0)
    z_shared = cooling.sink_ambient_k_per_w * average if cooling and sink == "each" else 0.0
    # Q1 and the others alike: two rows, the second standing for n − 1 devices (the same
    # equations, solved once); not where a FET without ballast or curves hands one device everything
    alike = offsets_v is None and n > 2 and (part.is_bipolar or stage.ballast_ohm > 0 or part.transfer is not None)
    which = np.minimum(np.arange(n), 1) if alike else np.arange(n)
    counts = np.bincount(which).astype(float)
    given = stage.offsets_v[: counts.size, None] if offsets_v is None else np.asarray(offsets_v, dtype=float)
    offsets = np.broadcast_to(given, (counts.size, m))
    lowest = np.argmin(offsets, axis=0)  # the device that takes the current where the shared state cannot hold
    start_c = np.full((counts.size, m), cooling.ambient_c if cooling else stage.case_temp_c, dtype=float)

    coupled = sink == "worst" and cooling is not None
    law = {"z": z, "rth": rth, "average": average, "sink": sink, "counts": counts}
    gains = {"z_self_k_per_w": z_self, "z_shared_k_per_w": z_shared, "counts": counts}

    def step_for(cols: np.ndarray) -> Callable[[np.ndarray], tuple[np.ndarray, tuple[np.ndarray, ...]]]:
        return _relaxation_step(stage, src[cols], total[cols], idle_total[cols], offsets=offsets[:, cols], **law)

    def fast(tj0: np.ndarray, cols: np.ndarray) -> tuple[tuple[np.ndarray, ...], np.ndarray, np.ndarray]:
        """Accelerated, then damped where that did not settle; the state is judged by its eigenvalues alone."""
        state, ok = _settle_damped(
            step_for, tj0, cols, tol_k=1e-3 * SETTLED_K, max_steps=FAST_STEPS, memory=MEMORY, coupled=coupled
        )
        currents, vce, _, _, tj, _ = state
        return state, ok, stage.stability_gain(currents, vce, tj, **gains)

    def slow(tj0: np.ndarray, cols: np.ndarray) -> tuple[tuple[np.ndarray, ...], np.ndarray, np.ndarray]:
        state, ok = _settle_damped(
            step_for, tj0, cols, tol_k=SETTLED_K, max_steps=max_iterations, memory=0, coupled=coupled
        )
        currents, vce, _, _, tj, _ = state
        return state, ok, stage.stability_gain(currents, vce, tj, **gains)

    def shared_or_hog(solve, cols: np.ndarray):
        """The shared state from equal temperatures; where unstable, the state with Q1 taking the current."""
        start = start_c[:, cols]
        state, settled, stage_gain = solve(start, cols)
        unstable = (stage_gain >= 1.0) | ~settled if n > 1 else np.zeros(start.shape[1], dtype=bool)
        hogging = np.zeros(start.shape[1], dtype=bool)
        if unstable.any() and hog_search:
            hot = start.copy()
            hot[lowest[cols], np.arange(hot.shape[1])] += HOG_START_K
            other, other_settled, other_gain = solve(hot, cols)
            hogging = unstable & other_settled & (other_gain < 1.0)
            state = tuple(np.where(hogging, b, a) for a, b in zip(state, other, strict=True))
            stage_gain = np.where(hogging, other_gain, stage_gain)
        return (*state, stage_gain, unstable, hogging)

    every = np.ones(m, dtype=bool)
    found = shared_or_hog(fast, every)
    left = found[-2] & ~found[-1]  # neither state found stable by the fast path: relax plainly, as always
    if left.any():
        if sink == "worst":  # one heatsink for all points: every point again
            left = every
        found = tuple(_put(a, b, left) for a, b in zip(found, shared_or_hog(slow, left), strict=True))
    *state, stage_gain, unstable, hogging = found
    currents, vce, power, case, tj, sink_c = (*(row[which] for row in state[:5]), state[5])
    gain = stage.loop_gain(currents, vce, z_self, tj) if n > 1 or part.transfer is not None else np.zeros((n, m))
    idle = _idle_share(idle_total, currents, total, n)
    return SteadyState(currents, vce, power, case, tj, sink_c, gain, unstable & ~hogging, stage_gain, hogging, idle)


def equal_split_unstable(
    stage: Stage,
    source_v: np.ndarray,
    total_a: np.ndarray,
    *,
    pulse_s: float = DC,
    duty: float = 1.0,
    idle_a: np.ndarray | float = 0.0,
    sink: Literal["each", "worst"] = "each",
) -> np.ndarray:
    """Where a stage's devices, matched, cannot share in steady state: the equal split is unstable, ``(m,)``.

    ``stage`` is the matched set (without its V_BE spread, as :func:`hogging_on_matched_set`
    hands it over), settled from equal temperatures by :func:`steady_state` under the
    conditions of the check (``pulse_s``, ``duty``, ``idle_a``, ``sink``) and no further: its
    shared state is the equal split, which cannot hold where the whole set's stability gain
    there (:meth:`Stage.stability_gain`) is 1 or more, or where it does not settle below RUNAWAY_C.

    Notes
    -----
    For identical devices at an equal split the gain is each device's loop gain
    G = Rth·(V_CE − I·R_E)·|φ|/(R_E + r_e), r_e = V_T/I: the classic electro-thermal stability
    condition Rth·∂P/∂Tj < 1 (Spirito, Breglio, d'Alessandro, Rinaldi, MIEL 2002, for any device;
    for paralleled bipolars with emitter ballast, Arnold & Zoroglu, IEEE Trans. Electron Devices
    ED-21, 1974, from memory).
    """
    found = steady_state(
        stage, source_v, total_a, pulse_s=pulse_s, duty=duty, idle_a=idle_a, sink=sink, hog_search=False
    )
    return found.runaway_at


def hogging_on_matched_set(
    stage: Stage,
    hogging: np.ndarray,
    runaway_at: np.ndarray,
    unstable_when_matched: Callable[[Stage], np.ndarray],
) -> np.ndarray:
    """Where the devices of ``stage`` hog (one device takes the current), decided on the matched set, ``(m,)``.

    ``hogging`` where the stage's own shared state could not hold and the state with one
    device taking the current was found instead, and every point that settled (not
    ``runaway_at``) where the same devices matched cannot share: their equal split is unstable.
    With a V_BE spread the devices may settle straight into the state where the device of the
    lowest V_BE takes the current, never passing a shared state the stability test could refuse;
    where the equal split is unstable no shared state holds, so every state that settles is
    that one. ``unstable_when_matched(matched)`` says where, for the stage without its V_BE
    spread, by the caller's own solver (:func:`equal_split_unstable` for steady states; a stage
    run's relaxation for runs), so a run and a steady state each judge the matched set as they
    judge the stage. A stage without spread is its own matched set: ``hogging`` as it is.
    Stage runs, envelope checks and ``sharing`` (each draw's offsets) decide hogging here.
    """
    if stage.vbe_spread_v == 0.0:
        return hogging
    matched = dataclasses.replace(stage, vbe_spread_v=0.0)
    return hogging | (unstable_when_matched(matched) & ~runaway_at)


def stage_gain_peak(stage_gain: np.ndarray | None, hogging: np.ndarray | None) -> float:
    """The whole set's stability gain a stage job reports: the highest at the states that hold. [1]

    ``stage_gain`` ``(m,)`` is the largest real part of the eigenvalues of the electro-thermal
    Jacobian at each state reported (:meth:`Stage.stability_gain`), ``hogging`` ``(m,)`` where the
    devices cannot share and the state with one device taking the current is reported. A state
    where the devices hog counts once it has settled there (its own gain below 1): a run's
    samples still on their way into it (their gain 1 or more, a transient near the shared state
    that could not hold) are left out, so a run and an envelope check of the same hogging stage
    report the same state's gain; runaway keeps its gain of 1 or more. A run every sample of
    which is on its way: the least of them. No gain known (one device): 0.
    """
    if stage_gain is None:
        return 0.0
    gain = np.asarray(stage_gain, dtype=float)
    held = ~(np.asarray(hogging, dtype=bool) & (gain >= 1.0)) if hogging is not None else np.ones(gain.shape, bool)
    return float(np.max(gain[held])) if held.any() else float(np.min(gain))


def _idle_share(idle_total: np.ndarray, currents: np.ndarray, total: np.ndarray, count: int) -> np.ndarray:
    """Each device's standing current: the total shared like the pulse current among ``count``, ``(n, m)``. [A]"""
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction = np.where(total > 0, currents / total, 1.0 / count)
    return idle_total[None, :] * fraction


def _put(whole: np.ndarray, part: np.ndarray, columns: np.ndarray) -> np.ndarray:
    """``whole`` with its last axis' ``columns`` replaced by ``part``."""
    out = np.array(whole, copy=True)
    out[..., columns] = part
    return out


def _relaxation_step(
    stage: Stage,
    src: np.ndarray,
    total: np.ndarray,
    idle_total: np.ndarray,
    *,
    z: float,
    rth: float,
    average: float,
    sink: str,
    offsets: np.ndarray,
    counts: np.ndarray,
) -> Callable[[np.ndarray], tuple[np.ndarray, tuple[np.ndarray, ...]]]:
    """One step of the fixed point: junction temperatures ``(rows, m)`` [°C] to new ones, and (currents [A],
    V [V], P [W], case [°C], Tj [°C], sink [°C]); row k has V_BE offset ``offsets[k]`` [V] and stands for
    ``counts[k]`` alike devices.

    ``src``, ``total`` and ``idle_total`` are the source voltage [V], the total pulse current [A]
    and the total standing current [A] at each point ``(m,)``, ``offsets`` each row's offset at
    each point ``(rows, m)`` [V]; ``z`` is the junction's rise per watt
    of the pulse, ``rth`` per watt standing [K/W]; ``average`` the duty the heatsink averages over [1].
    Each step's sharing starts Newton from the previous step's currents.
    """
    cooling = stage.cooling
    rows, m = counts.size, src.size
    n = stage.count
    last: list[np.ndarray | None] = [None]

    def step(tj: np.ndarray) -> tuple[np.ndarray, tuple[np.ndarray, ...]]:
        currents = stage.share(total, tj, offsets, start_a=last[0], counts=counts)
        last[0] = currents
        vce = stage.device_voltage(src[None, :], total[None, :], currents)
        power = np.maximum(vce, 0.0) * currents
        idle = _idle_share(idle_total, currents, total, n)
        idle_w = np.maximum(stage.device_voltage(src[None, :], idle_total[None, :], idle), 0.0) * idle
        mean_w = average * power + (1.0 - average) * idle_w
        if cooling is not None:
            sink_w = (counts[:, None] * mean_w).sum(axis=0)
            if sink == "worst":
                sink_w = np.full(m, sink_w.max())
            sink_c = cooling.ambient_c + cooling.sink_ambient_k_per_w * sink_w
            case = sink_c[None, :] + mean_w * cooling.case_sink_k_per_w
        else:
            sink_c = np.full(m, stage.case_temp_c)
            case = np.broadcast_to(sink_c, (rows, m)).copy()
        peak = case + idle_w * rth + (power - idle_w) * z
        tj_new = np.minimum(peak, 2 * RUNAWAY_C)  # a point that runs away stops here
        return tj_new, (currents, vce, power, case, tj_new, sink_c)

    return step


FAST_STEPS = 30
"""Steps the accelerated fixed point takes at most before the plain relaxation takes over."""

DAMPING = 0.25
"""The fraction of each relaxation step taken where the undamped iteration did not settle, T ← T + ω·(f(T) − T):
every real eigenvalue λ of the loop's Jacobian between 1 − 2/ω = −7 and 1 then contracts (by 1 − ω·(1 − λ)). [1]"""


def _settle_damped(
    step_for: Callable[[np.ndarray], Callable[[np.ndarray], tuple[np.ndarray, tuple[np.ndarray, ...]]]],
    tj0: np.ndarray,
    cols: np.ndarray,
    *,
    tol_k: float,
    max_steps: int,
    memory: int,
    coupled: bool,
) -> tuple[tuple[np.ndarray, ...], np.ndarray]:
    """:func:`_settle` on the points ``cols`` (a mask, ``(m,)``) of ``step_for(cols)``, again damped by DAMPING
    where it neither settled nor ran away; ``coupled`` (one heatsink for all points): every point again.

    The iteration T ← f(T) settles only where every eigenvalue of the Jacobian ∂f/∂T lies inside
    the unit circle; the state is physically stable where their real parts are below 1
    (:func:`soacheck.sharing.stability_gain`). Between the two, at an eigenvalue ≤ −1 (a FET above
    its zero-temperature-coefficient point, whose current falls steeply as it warms), plain
    relaxation oscillates about a stable state, and Anderson mixing far from it can too; the
    damped step follows the physical relaxation C·dT/dt ∝ f(T) − T (an explicit Euler step of it)
    and settles there. Where the undamped iteration settled, its answer stands unchanged.
    """
    state, settled, gone = _settle(step_for(cols), tj0, tol_k=tol_k, max_steps=max_steps, memory=memory)
    retry = ~settled & ~gone
    if not retry.any():
        return state, settled
    if coupled:
        retry = np.ones_like(retry)
    where = np.zeros_like(cols)
    where[np.flatnonzero(cols)[retry]] = True
    again, again_settled, _ = _settle(
        step_for(where), tj0[:, retry], tol_k=tol_k, max_steps=max_steps, memory=memory, damping=DAMPING
    )
    state = tuple(_put(a, b, retry) for a, b in zip(state, again, strict=True))
    return state, _put(settled, again_settled, retry)


def _settle(
    step: Callable[[np.ndarray], tuple[np.ndarray, tuple[np.ndarray, ...]]],
    tj0: np.ndarray,
    *,
    tol_k: float,
    max_steps: int,
    memory: int,
    damping: float = 1.0,
) -> tuple[tuple[np.ndarray, ...], np.ndarray, np.ndarray]:
    """The fixed point of ``step`` from junction temperatures ``tj0`` ``(rows, m)``; the state, where it settled
    and where it ran away.

    By Anderson mixing of the last ``memory`` steps (:func:`soacheck.fixed_point.anderson`),
    or, with ``memory=0``, by plain relaxation: each step moves every junction by the loop
    gain times its last move, hundreds of steps near runaway; the reference the mixed path
    is checked against, and its fallback where that path might not reach the state this
    one does. ``damping`` ω < 1 iterates T ← T + ω·(f(T) − T) instead (the same fixed points). A
    point settles when no junction moves more than ``tol_k`` [K] in a step of f; one
    that runs away (past RUNAWAY_C) is given up and reported as not settled.
    """
    if damping < 1.0:
        plain = step

        def step(tj: np.ndarray) -> tuple[np.ndarray, tuple[np.ndarray, ...]]:
            new, state = plain(tj)
            return tj + damping * (new - tj), state

    found = anderson(
        step,
        tj0,
        tol=tol_k * damping,
        max_steps=max_steps,
        lower=float(np.min(tj0)),
        upper=2 * RUNAWAY_C,
        give_up=lambda tj: (tj >= RUNAWAY_C).any(axis=0),
        memory=memory,
    )
    gone = (found.x >= RUNAWAY_C).any(axis=0)  # far past any tj_max: it will not settle
    return found.state, found.settled & ~gone, gone
