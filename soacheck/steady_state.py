"""A stage in thermal steady state at each operating point (envelopes, sweeps)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np

from soacheck.stage import RUNAWAY_C, SETTLED_K, Stage
from soacheck.thermal_model import thermal_model
from soacheck.units import DC


@dataclass(frozen=True, eq=False)
class SteadyState:
    """Operating points of a stage in thermal steady state, each device: arrays ``(n, m)``; sink ``(m,)``."""

    device_a: np.ndarray
    device_v: np.ndarray
    device_w: np.ndarray
    case_c: np.ndarray
    junction_c: np.ndarray
    sink_c: np.ndarray
    gain: np.ndarray
    runaway_at: np.ndarray


def steady_state(
    stage: Stage,
    source_v: np.ndarray,
    total_a: np.ndarray,
    *,
    pulse_s: float = DC,
    duty: float = 1.0,
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
    sink
        ``each``: every point with the heatsink at its own steady state; ``worst``: every point
        with the heatsink at the steady state of the hottest point (an envelope's worst power).

    Notes
    -----
    Tc_k = T_sink + D·P_k·R_cs, T_sink = T_a + R_sa·Σ D·P_k (or the fixed case temperature),
    Tj_k = Tc_k + P_k·Z, solved together with the sharing as a fixed point.
    """
    part = stage.part
    src = np.asarray(source_v, dtype=float)
    total = np.asarray(total_a, dtype=float)
    n, m = stage.count, src.size
    continuous = math.isinf(pulse_s) or duty >= 1.0
    average = 1.0 if continuous else duty
    model = thermal_model(part)
    if continuous or model is None:
        z = part.ratings.rth_jc_k_per_w
    else:
        z = float(model.pulse_zth(pulse_s, duty))
    cooling = stage.cooling
    tj = np.full((n, m), cooling.ambient_c if cooling else stage.case_temp_c)
    settled = np.zeros(m, dtype=bool)
    gone = np.zeros(m, dtype=bool)
    currents = None
    for _ in range(max_iterations):
        currents = stage.share(total, tj, start_a=currents)  # Newton starts from the last step's sharing
        vce = stage.device_voltage(src[None, :], total[None, :], currents)
        power = np.maximum(vce, 0.0) * currents
        if cooling is not None:
            sink_w = average * power.sum(axis=0)
            if sink == "worst":
                sink_w = np.full(m, sink_w.max())
            sink_c = cooling.ambient_c + cooling.sink_ambient_k_per_w * sink_w
            case = sink_c[None, :] + average * power * cooling.case_sink_k_per_w
        else:
            sink_c = np.full(m, stage.case_temp_c)
            case = np.broadcast_to(sink_c, (n, m)).copy()
        tj_new = np.minimum(case + power * z, 2 * RUNAWAY_C)  # a point that runs away stops here
        settled = np.max(np.abs(tj_new - tj), axis=0) < SETTLED_K
        tj = tj_new
        gone = (tj >= RUNAWAY_C).any(axis=0)  # far past any tj_max: it will not settle
        if np.all(settled | gone):
            break
    rth_diff = z + (cooling.case_sink_k_per_w * average if cooling else 0.0)
    gain = stage.loop_gain(currents, vce, rth_diff) if n > 1 else np.zeros((n, m))
    runaway_at = (gain >= 1.0).any(axis=0) | ((gone | ~settled) & (n > 1))
    return SteadyState(currents, vce, power, case, tj, sink_c, gain, runaway_at)
