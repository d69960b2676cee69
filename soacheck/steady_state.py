"""A stage in thermal steady state at each operating point (envelopes, sweeps).

Where the devices' shared state is unstable (the electro-thermal Jacobian of the whole set
has an eigenvalue at or above 1), the state that exists physically is sought instead: one
device, Q1 (the one with the lowest V_BE), taking the current. It is reported and checked
when it is itself stable; otherwise the point is runaway.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np

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
    max_iterations: int = 2000,
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

    Notes
    -----
    With P̄_k = D·P_k + (1 − D)·P_idle,k: Tc_k = T_sink + P̄_k·R_cs, T_sink = T_a + R_sa·Σ P̄_k (or
    the fixed case temperature), Tj_k = Tc_k + P_idle,k·Rth + (P_k − P_idle,k)·Z (superposition),
    solved together with the sharing as a fixed point, first from equal
    temperatures; where that state is unstable (:meth:`Stage.stability_gain` ≥ 1), again
    from Q1 hot, and that state is taken where it settles and is stable.
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
    start_c = np.full((n, m), cooling.ambient_c if cooling else stage.case_temp_c)

    def solve(tj0: np.ndarray) -> tuple[tuple[np.ndarray, ...], np.ndarray, np.ndarray]:
        state, ok = _settle(
            stage, src, total, idle_total, tj0, z=z, rth=rth, average=average, sink=sink, iterations=max_iterations
        )
        currents, vce, _, _, tj, _ = state
        return state, ok, stage.stability_gain(currents, vce, tj, z_self_k_per_w=z_self, z_shared_k_per_w=z_shared)

    state, settled, stage_gain = solve(start_c)
    unstable = (stage_gain >= 1.0) | ~settled if n > 1 else np.zeros(m, dtype=bool)
    hogging = np.zeros(m, dtype=bool)
    if unstable.any():
        hot = start_c.copy()
        hot[0] += HOG_START_K
        other, other_settled, other_gain = solve(hot)
        hogging = unstable & other_settled & (other_gain < 1.0)
        state = tuple(np.where(hogging, b, a) for a, b in zip(state, other, strict=True))
        stage_gain = np.where(hogging, other_gain, stage_gain)
    currents, vce, power, case, tj, sink_c = state
    gain = stage.loop_gain(currents, vce, z_self, tj) if n > 1 or part.transfer is not None else np.zeros((n, m))
    idle = _idle_share(idle_total, currents, total)
    return SteadyState(currents, vce, power, case, tj, sink_c, gain, unstable & ~hogging, stage_gain, hogging, idle)


def _idle_share(idle_total: np.ndarray, currents: np.ndarray, total: np.ndarray) -> np.ndarray:
    """Each device's standing current: the total shared like the pulse current, ``(n, m)``. [A]"""
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction = np.where(total > 0, currents / total, 1.0 / currents.shape[0])
    return idle_total[None, :] * fraction


def _settle(
    stage: Stage,
    src: np.ndarray,
    total: np.ndarray,
    idle_total: np.ndarray,
    tj0: np.ndarray,
    *,
    z: float,
    rth: float,
    average: float,
    sink: str,
    iterations: int,
) -> tuple[tuple[np.ndarray, ...], np.ndarray]:
    """The fixed point from junction temperatures ``tj0``: (currents, V, P, case, Tj, sink) and where it settled."""
    cooling = stage.cooling
    n, m = tj0.shape
    tj = tj0
    settled = np.zeros(m, dtype=bool)
    gone = np.zeros(m, dtype=bool)
    currents = None
    for _ in range(iterations):
        currents = stage.share(total, tj, start_a=currents)  # Newton starts from the last step's sharing
        vce = stage.device_voltage(src[None, :], total[None, :], currents)
        power = np.maximum(vce, 0.0) * currents
        idle = _idle_share(idle_total, currents, total)
        idle_w = np.maximum(stage.device_voltage(src[None, :], idle_total[None, :], idle), 0.0) * idle
        mean_w = average * power + (1.0 - average) * idle_w
        if cooling is not None:
            sink_w = mean_w.sum(axis=0)
            if sink == "worst":
                sink_w = np.full(m, sink_w.max())
            sink_c = cooling.ambient_c + cooling.sink_ambient_k_per_w * sink_w
            case = sink_c[None, :] + mean_w * cooling.case_sink_k_per_w
        else:
            sink_c = np.full(m, stage.case_temp_c)
            case = np.broadcast_to(sink_c, (n, m)).copy()
        peak = case + idle_w * rth + (power - idle_w) * z
        tj_new = np.minimum(peak, 2 * RUNAWAY_C)  # a point that runs away stops here
        settled = np.max(np.abs(tj_new - tj), axis=0) < SETTLED_K
        tj = tj_new
        gone = (tj >= RUNAWAY_C).any(axis=0)  # far past any tj_max: it will not settle
        if np.all(settled | gone):
            break
    return (currents, vce, power, case, tj, sink_c), settled & ~gone
