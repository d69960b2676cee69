"""The power stage: parallel pass devices with ballast resistors on a shared heatsink.

Current sharing follows from the base-emitter (gate-source) voltage mismatch, the ballast
resistors and the temperature coefficient of V_BE coupled to each device's junction
temperature: an electro-thermal fixed point, solved over a whole trajectory at once by
waveform relaxation (alternately: currents for given temperatures, temperatures for given
currents). A stage whose loop gain reaches 1 is thermal runaway: current hogging, reported
as a failure with the limit ``runaway``.

References
----------
- V_BE = V_T ln(I_C/I_S), V_T = kT/q ≈ 25.7 mV at 25 °C, and dV_BE/dT ≈ −2 mV/K at
  constant current: Sedra & Smith, *Microelectronic Circuits*, the diode and BJT chapters
  (from memory).
- Imbalance ΔI ≈ ΔV/(R_E + r_e) and the electro-thermal loop gain
  G = Rth·V_CE·|φ|/(R_E + r_e): methods.md §6, elementary derivation.
- A MOSFET's 1/g_m is neglected (the part format has no transconductance): the imbalance
  is then overstated, which is conservative.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
import scipy.special

from soacheck.derating import BreakdownDerating
from soacheck.errors import SoacheckError
from soacheck.parts import Part
from soacheck.soa import allowed_current
from soacheck.thermal import Foster, temperature_rise, thermal_model
from soacheck.trace import Cooling
from soacheck.units import DC

SETTLED_K = 1e-4
"""The electro-thermal fixed point counts as settled when no junction moves more than this. [K]"""

RUNAWAY_C = 1000.0
"""A junction temperature no iteration needs to pass: beyond it the fixed point is abandoned. [°C]"""

THERMAL_VOLTAGE_V = 0.02569
"""kT/q at 25 °C. [V]"""

VBE_TEMPCO_V_PER_K = -0.002
"""dV_BE/dT at constant current, about −2 mV/K (Sedra & Smith, from memory). [V/K]"""


@dataclass(frozen=True, eq=False)
class Stage:
    """Parallel pass devices of one part type.

    Attributes
    ----------
    part
        The pass device.
    count
        Devices in parallel.
    ballast_ohm
        Emitter (source) resistor of each device. [Ω]
    series_ohm
        Shared sense and wiring resistance in the current path. [Ω]
    vbe_spread_v
        Spread of V_BE (V_GS) between devices at equal current and temperature, as a
        tolerance band: the worst case puts one device at the bottom of the band and the
        others at the top. [V]
    vbe_tempco_v_per_k
        Temperature coefficient of V_BE (V_GS). [V/K]
    cooling
        Heatsink shared by all devices (each with its own interface), or None.
    case_temp_c
        A fixed case temperature instead of a heatsink. [°C]
    """

    part: Part
    count: int
    ballast_ohm: float = 0.0
    series_ohm: float = 0.0
    vbe_spread_v: float = 0.0
    vbe_tempco_v_per_k: float = VBE_TEMPCO_V_PER_K
    cooling: Cooling | None = None
    case_temp_c: float | None = None
    name: str = "stage"

    def __post_init__(self) -> None:
        if self.count < 1:
            raise SoacheckError(f"{self.name}: count is {self.count}; a stage needs at least one device")
        for key, value in (
            ("ballast", self.ballast_ohm),
            ("series_resistance", self.series_ohm),
            ("vbe_spread", self.vbe_spread_v),
        ):
            if not (math.isfinite(value) and value >= 0):
                raise SoacheckError(f"{self.name}: {key} is {value:g}; it must be zero or more")
        if (self.cooling is None) == (self.case_temp_c is None):
            raise SoacheckError(f"{self.name}: give either [cooling] or case_temp")

    @property
    def offsets_v(self) -> np.ndarray:
        """Worst-case V_BE offsets, shape ``(count,)``: device 0 at the bottom of the band. [V]"""
        offsets = np.zeros(self.count)
        offsets[0] = -self.vbe_spread_v
        return offsets

    def rated_current_a(self) -> float:
        """Sum of the devices' continuous current ratings; the load should stay well below it. [A]"""
        return self.count * self.part.ratings.i_max_a

    def share(self, total_a: np.ndarray, tj_c: np.ndarray, offsets_v: np.ndarray | None = None) -> np.ndarray:
        """Each device's current, shape ``(n, m)``; see :func:`share_current`. [A]"""
        return share_current(
            total_a,
            tj_c,
            self.offsets_v if offsets_v is None else offsets_v,
            ballast_ohm=self.ballast_ohm,
            bipolar=self.part.is_bipolar,
            tempco_v_per_k=self.vbe_tempco_v_per_k,
        )

    def device_voltage(self, source_v: np.ndarray, total_a: np.ndarray, device_a: np.ndarray) -> np.ndarray:
        """V_CE of each device: the source less the sense-resistor and ballast drops. [V]"""
        return source_v - total_a * self.series_ohm - device_a * self.ballast_ohm

    def loop_gain(self, device_a: np.ndarray, vce_v: np.ndarray, rth_k_per_w: float) -> np.ndarray:
        """Electro-thermal loop gain of each device; see :func:`loop_gain`."""
        return loop_gain(
            device_a,
            vce_v,
            rth_k_per_w,
            ballast_ohm=self.ballast_ohm,
            bipolar=self.part.is_bipolar,
            tempco_v_per_k=self.vbe_tempco_v_per_k,
        )

    def with_part(self, part: Part) -> Stage:
        """The same stage with another pass device in place."""
        return Stage(
            part,
            self.count,
            self.ballast_ohm,
            self.series_ohm,
            self.vbe_spread_v,
            self.vbe_tempco_v_per_k,
            self.cooling,
            self.case_temp_c,
            self.name,
        )


# --------------------------------------------------------------------------- sharing


def share_current(
    total_a: np.ndarray,
    tj_c: np.ndarray,
    offsets_v: np.ndarray,
    *,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
) -> np.ndarray:
    """Split a total current between parallel devices with a common base (gate) drive.

    Each device k obeys V_B = u_k(I_k) + I_k·R_E + ΔV_k + φ·(Tj_k − 25 °C) with a common
    V_B, and Σ I_k = I_total. For a bipolar part u(I) = V_T ln(I / 1 A), so
    I_k = (V_T/R_E)·ω(ln(R_E/V_T) + x_k/V_T) with ω the Wright omega function; for a FET or
    IGBT u = 0 (1/g_m neglected, conservative), so I_k = x_k/R_E. V_B is found by Newton's
    method, vectorized over all samples.

    Parameters
    ----------
    total_a
        Total current, shape ``(m,)``. [A]
    tj_c
        Junction temperature of each device, shape ``(n, m)``. [°C]
    offsets_v
        V_BE offset of each device, shape ``(n,)`` or ``(n, m)``. [V]
    ballast_ohm
        Emitter resistor of each device. [Ω]
    bipolar
        The device law, see above.

    Returns
    -------
    numpy.ndarray, shape ``(n, m)``
        Current of each device. [A]
    """
    total = np.asarray(total_a, dtype=float)
    n = tj_c.shape[0]
    if n == 1:
        return total[None, :].copy()
    shift = np.asarray(offsets_v, dtype=float).reshape(n, -1) + tempco_v_per_k * (tj_c - 25.0)  # (n, m)
    vt, r = THERMAL_VOLTAGE_V, ballast_ohm
    if not bipolar and r == 0:
        # no ballast and no modelled 1/g_m: the device with the lowest threshold takes it all
        out = np.zeros_like(shift)
        out[np.argmin(shift, axis=0), np.arange(shift.shape[1])] = total
        return out

    def currents(vb: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        x = vb[None, :] - shift
        if not bipolar:
            i = np.maximum(x, 0.0) / r
            return i, np.where(x > 0, 1.0 / r, 0.0)
        if r > 0:
            i = (vt / r) * np.real(scipy.special.wrightomega(math.log(r / vt) + x / vt))
        else:
            i = np.exp(x / vt)
        return i, 1.0 / (r + vt / np.maximum(i, 1e-300))

    # start from equal sharing
    each = np.maximum(total / n, 1e-12)
    vb = (each * r + (vt * np.log(each) if bipolar else 0.0)) + shift.mean(axis=0)
    for _ in range(100):
        i, slope = currents(vb)
        residual = i.sum(axis=0) - total
        if np.all(np.abs(residual) <= 1e-12 * np.maximum(total, 1.0)):
            break
        step = residual / np.maximum(slope.sum(axis=0), 1e-300)
        vb = vb - np.clip(step, -0.5, 0.5)
    return currents(vb)[0]


def loop_gain(
    current_a: np.ndarray,
    vce_v: np.ndarray,
    rth_k_per_w: float,
    *,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
) -> np.ndarray:
    """Electro-thermal loop gain G = Rth·V_CE·|φ|/(R_E + r_e) of each device (methods.md §6).

    G ≥ 1 means a device that warms takes more current faster than its ballast pushes it
    back: current hogging, thermal runaway. r_e = V_T/I for a bipolar part, 0 for a FET.
    """
    re = THERMAL_VOLTAGE_V / np.maximum(current_a, 1e-12) if bipolar else 0.0
    with np.errstate(divide="ignore"):
        return rth_k_per_w * np.maximum(vce_v, 0.0) * abs(tempco_v_per_k) / (ballast_ohm + re)


# --------------------------------------------------------------------------- a trajectory through the stage


@dataclass(frozen=True, eq=False)
class StageRun:
    """A trajectory through a stage, device by device, with its check.

    Arrays with a leading ``(n,)`` axis are per device; the time axis is ``(m,)``.
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

    @property
    def inside(self) -> np.ndarray:
        """(n, m): inside the SOA and below tj_max, and not in runaway."""
        ok = (self.device_a <= self.allowed_a) & (self.junction_c <= self.stage.part.ratings.tj_max_c)
        return ok & ~(self.limit == "runaway")

    @property
    def passed(self) -> bool:
        return bool(self.inside.all()) and not self.runaway

    @property
    def worst_device(self) -> int:
        return int(np.argmin(np.nanmin(np.where(np.isfinite(self.margin), self.margin, -np.inf), axis=1)))

    def summary(self) -> dict[str, object]:
        """The verdict and the figures the CLI and reports print."""
        bad = ~self.inside
        first = None
        limit = None
        if bad.any():
            k = int(np.argmax(bad.any(axis=0)))
            first = float(self.time_s[k])
            device = int(np.argmax(bad[:, k]))
            limit = str(self.limit[device, k])
        finite = np.where(np.isfinite(self.margin), self.margin, -np.inf)
        flat = int(np.argmin(finite))
        d, k = np.unravel_index(flat, finite.shape)
        worst = finite[d, k]
        energy_wh = float(np.sum(np.diff(self.time_s) * (self.source_v * self.total_a)[:-1]) / 3600.0)
        return {
            "verdict": "pass" if self.passed else "fail",
            "first_violation_time": first,
            "limit": limit,
            "worst_margin": float(worst) if np.isfinite(worst) else None,
            "worst_margin_time": float(self.time_s[k]),
            "worst_device": int(d),
            "tj_peak": float(self.junction_c.max()),
            "case_peak": float(self.case_c.max()),
            "heatsink_peak": float(self.sink_c.max()),
            "loop_gain_peak": float(np.max(self.gain)),
            "device_power_peak": float(self.device_w.max()),
            "sense_resistor_power_peak": float((self.total_a**2).max() * self.stage.series_ohm),
            "energy_wh": energy_wh,
            "duration": float(self.time_s[-1] - self.time_s[0]),
        }


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
    policy: BreakdownDerating = "auto",
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
    constant is minutes and the device's at most about a second; methods.md §5). Each
    device is checked at every sample against its DC boundary derated at its own case
    temperature, and its junction against tj_max.
    """
    part = stage.part
    t = np.asarray(time_s, dtype=float)
    src = np.asarray(source_v, dtype=float)
    total = np.asarray(total_a, dtype=float)
    n, m = stage.count, t.size
    junction, junction_note = _junction_network(part)
    rth_diff = part.ratings.rth_jc_k_per_w + (stage.cooling.case_sink_k_per_w if stage.cooling else 0.0)
    bipolar = part.is_bipolar

    tj = np.full((n, m), stage.cooling.ambient_c if stage.cooling else stage.case_temp_c)
    converged = False
    for _ in range(max_iterations):
        currents = stage.share(total, tj)
        vce = stage.device_voltage(src[None, :], total[None, :], currents)
        power = np.maximum(vce, 0.0) * currents
        sink, case, tj_new = _temperatures(stage, junction, t, power)
        change = np.max(np.abs(tj_new - tj))
        tj = tj_new
        if change < SETTLED_K:
            converged = True
            break
        if not np.all(tj < RUNAWAY_C):  # far past any tj_max: it will not settle
            break
    gain = stage.loop_gain(currents, vce, rth_diff) if n > 1 else np.zeros((n, m))
    runaway_at = (gain >= 1.0).any(axis=0) | (not converged and n > 1)
    allowed_a, margin, limit = check_devices(stage, vce, currents, case, tj, runaway_at, policy=policy)
    notes = [
        junction_note,
        f"{n} device(s) in parallel; V_BE spread {stage.vbe_spread_v * 1e3:g} mV as a band, worst case: device 0 "
        f"at its bottom; temperature coefficient {stage.vbe_tempco_v_per_k * 1e3:g} mV/K",
        "heatsink as one lumped node driven by the devices' total power; cases P·R_cs above it; junctions "
        "quasi-static on top (conservative)"
        if stage.cooling
        else f"cases held at {stage.case_temp_c:g} °C",
        "each device checked against its DC boundary at its own case temperature, and its junction against tj_max",
    ]
    if not bipolar and n > 1:
        notes.append("FET sharing: 1/g_m neglected, only the source resistors balance the devices (conservative)")
    if runaway_at.any():
        notes.append(
            f"thermal runaway: loop gain {float(gain.max()):.2f} ≥ 1 from t = {float(t[np.argmax(runaway_at)]):g} s; "
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
        tuple(notes),
    )


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
    policy: BreakdownDerating = "auto",
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Allowed current, margin and limit of every device at every point, each ``(n, m)``.

    Each device is checked against its SOA (for the pulse condition) derated at its own
    case temperature; a junction above tj_max is labelled ``thermal``; where the stage runs
    away the hog (device 0) is labelled ``runaway``.
    """
    n, m = device_a.shape
    allowed = allowed_current(
        np.maximum(vce_v, 1e-12), stage.part, tc_c=case_c, pulse_s=pulse_s, duty=duty, policy=policy
    )
    allowed_a = allowed.current_a.reshape(n, m)
    limit = allowed.limit.reshape(n, m).astype(object)
    hot = junction_c > stage.part.ratings.tj_max_c
    limit = np.where(hot & (device_a <= allowed_a), "thermal", limit)
    limit = np.where(np.asarray(runaway_at)[None, :] & (np.arange(n) == 0)[:, None], "runaway", limit).astype(str)
    with np.errstate(divide="ignore", invalid="ignore"):
        margin = np.where(allowed_a > 0, 1.0 - device_a / allowed_a, np.where(device_a > 0, -np.inf, 1.0))
    return allowed_a, margin, limit


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


# --------------------------------------------------------------------------- Monte Carlo


@dataclass(frozen=True)
class SharingSpread:
    """The worst device's share of the total current over random V_BE offsets."""

    percentile: float
    worst_share: float
    mean_share: float
    equal_share: float
    draws: int
    runaway_fraction: float


def sharing_monte_carlo(
    stage: Stage,
    total_a: float,
    source_v: float,
    *,
    draws: int = 10000,
    percentile: float = 99.0,
    seed: int = 0,
    sink_c: float | None = None,
    batch: int = 2000,
    progress=None,
) -> SharingSpread:
    """Steady-state sharing over random V_BE offsets, uniform in the spread band.

    Each draw is solved to its electro-thermal fixed point with the junctions at
    sink + P·(rth_jc + R_cs) (the sink at ``sink_c``, or the stage's steady state at the
    equal-sharing power). Vectorized over draws, in batches; ``progress(done, total)``
    is called after each batch.
    """
    n = stage.count
    rng = np.random.default_rng(seed)
    part = stage.part
    r_cs = stage.cooling.case_sink_k_per_w if stage.cooling else 0.0
    if sink_c is None:
        if stage.cooling is not None:
            c = stage.cooling
            p_total = max(source_v - total_a * stage.series_ohm, 0.0) * total_a
            sink_c = c.ambient_c + p_total * c.sink_ambient_k_per_w
        else:
            sink_c = stage.case_temp_c
    rth = part.ratings.rth_jc_k_per_w + r_cs
    shares, runaway = [], 0
    done = 0
    while done < draws:
        size = min(batch, draws - done)
        offsets = rng.uniform(0.0, stage.vbe_spread_v, (n, size))
        total = np.full(size, float(total_a))
        tj = np.full((n, size), float(sink_c))
        for _ in range(200):
            cur = stage.share(total, tj, offsets)
            vce = stage.device_voltage(source_v, total_a, cur)
            tj_new = sink_c + rth * np.maximum(vce, 0) * cur
            if np.max(np.abs(tj_new - tj)) < 1e-6:
                break
            tj = tj_new
        gain = stage.loop_gain(cur, vce, rth)
        runaway += int((gain >= 1).any(axis=0).sum())
        shares.append(cur.max(axis=0) / total_a)
        done += size
        if progress is not None:
            progress(done, draws)
    share = np.concatenate(shares)
    return SharingSpread(
        percentile, float(np.percentile(share, percentile)), float(share.mean()), 1.0 / n, draws, runaway / draws
    )


def most_demanding_safe(run_at, start: float, *, rel_tol: float = 1e-3, max_runs: int = 60) -> float | None:
    """The largest x for which ``run_at(x)`` passes, by expanding then bisecting on a log scale.

    ``run_at(x)`` returns a :class:`StageRun` or raises :class:`SoacheckError` when x cannot
    be run at all (counted as not safe). Assumes that a larger x is never safer, which
    holds for current, power and conductance setpoints of a load. None when even
    ``start / 2**20`` fails.
    """
    runs = 0

    def safe(x: float) -> bool:
        nonlocal runs
        runs += 1
        try:
            return run_at(x).passed
        except SoacheckError:
            return False

    lo, hi = None, None
    x = start
    if safe(x):
        lo = x
        for _ in range(20):
            x *= 2
            if not safe(x):
                hi = x
                break
            lo = x
        if hi is None:
            return lo
    else:
        hi = x
        for _ in range(20):
            x /= 2
            if safe(x):
                lo = x
                break
            hi = x
        if lo is None:
            return None
    while hi / lo > 1 + rel_tol and runs < max_runs:
        mid = math.sqrt(lo * hi)
        if safe(mid):
            lo = mid
        else:
            hi = mid
    return lo


# --------------------------------------------------------------------------- steady state


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
    for _ in range(max_iterations):
        currents = stage.share(total, tj)
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


def max_safe_setpoint(run_at, setpoint: float, mode: str, *, rel_tol: float = 1e-3) -> float | None:
    """The most demanding load setpoint that stays safe, from ``run_at(setpoint) -> StageRun``.

    For ``cc`` (A) and ``cp`` (W) that is the highest setpoint; for ``cr`` (Ω) the lowest
    resistance, found by searching the conductance 1/R, which grows with the load. None when
    no setpoint searched is safe.
    """
    if mode != "cr":
        return most_demanding_safe(run_at, setpoint, rel_tol=rel_tol)
    best = most_demanding_safe(lambda g: run_at(1.0 / g), 1.0 / setpoint, rel_tol=rel_tol)
    return None if best is None else 1.0 / best
