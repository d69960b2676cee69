"""Current sharing between parallel devices, the electro-thermal loop gain, and its spread.

References
----------
- V_BE = V_T ln(I_C/I_S), V_T = kT/q ≈ 25.7 mV at 25 °C: Sedra & Smith, *Microelectronic
  Circuits*, the diode and BJT chapters (from memory).
- Imbalance ΔI ≈ ΔV/(R_E + r_e) and the electro-thermal loop gain
  G = Rth·V_CE·|φ|/(R_E + r_e): elementary derivation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from soacheck.errors import SoacheckError
from soacheck.quantities import DRAWS, MAX_DEVICE_DRAWS, check_memory

if TYPE_CHECKING:
    from soacheck.stage import Stage


THERMAL_VOLTAGE_V = 0.02569
"""kT/q at 25 °C. [V]"""

VBE_TEMPCO_V_PER_K = -0.002
"""dV_BE/dT at constant current, about −2 mV/K (Sedra & Smith, from memory). [V/K]"""


def share_current(
    total_a: np.ndarray,
    tj_c: np.ndarray,
    offsets_v: np.ndarray,
    *,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
    start_a: np.ndarray | None = None,
) -> np.ndarray:
    """Split a total current between parallel devices with a common base (gate) drive.

    Each device k obeys V_B = u_k(I_k) + I_k·R_E + ΔV_k + φ·(Tj_k − 25 °C) with a common
    V_B, and Σ I_k = I_total. For a bipolar part u(I) = V_T ln(I / 1 A), so
    I_k = (V_T/R_E)·ω(ln(R_E/V_T) + x_k/V_T) with ω the Wright omega function; for a FET or
    IGBT u = 0 (1/g_m neglected, conservative), so I_k = x_k/R_E. V_B is found by Newton's
    method, vectorized over all samples. Devices with the same offset and temperature
    everywhere (all but one in a worst-case stage) are solved once and weighted by their
    number; ``start_a``, the currents of a nearby solution (the previous step of a fixed
    point), starts Newton from the base voltage they imply.

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
    start_a
        Currents of a nearby solution, shape ``(n, m)``, to start from; equal sharing when None. [A]

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

    import scipy.special  # deferred: scipy costs start-up time to commands that never use it

    # identical devices (same offset and temperature at every sample) are one unknown, counted;
    # a loop over devices (at most a few hundred), not samples
    seen: dict[bytes, int] = {}
    which = np.array([seen.setdefault(row.tobytes(), len(seen)) for row in shift])
    keep = np.unique(which, return_index=True)[1]
    shift = shift[keep]
    weight = np.bincount(which).astype(float)[:, None]

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

    if start_a is None:  # equal sharing
        each = np.maximum(total / n, 1e-12)
        vb = (each * r + (vt * np.log(each) if bipolar else 0.0)) + (weight * shift).sum(axis=0) / n
    else:  # the base voltage of the device that carried the most, at its current and the new temperature
        k = np.argmax(np.asarray(start_a, dtype=float), axis=0)
        each = np.maximum(np.asarray(start_a, dtype=float)[k, np.arange(k.size)], 1e-12)
        vb = each * r + (vt * np.log(each) if bipolar else 0.0) + shift[which[k], np.arange(k.size)]
    for _ in range(100):
        i, slope = currents(vb)
        residual = (weight * i).sum(axis=0) - total
        if np.all(np.abs(residual) <= 1e-12 * np.maximum(total, 1.0)):
            break
        step = residual / np.maximum((weight * slope).sum(axis=0), 1e-300)
        vb = vb - np.clip(step, -0.5, 0.5)
    return currents(vb)[0][which]


def loop_gain(
    current_a: np.ndarray,
    vce_v: np.ndarray,
    rth_k_per_w: float,
    *,
    ballast_ohm: float,
    bipolar: bool,
    tempco_v_per_k: float = VBE_TEMPCO_V_PER_K,
) -> np.ndarray:
    """Electro-thermal loop gain G = Rth·V_CE·|φ|/(R_E + r_e) of each device (elementary derivation).

    G ≥ 1 means a device that warms takes more current faster than its ballast pushes it
    back: current hogging, thermal runaway. r_e = V_T/I for a bipolar part, 0 for a FET.
    """
    re = THERMAL_VOLTAGE_V / np.maximum(current_a, 1e-12) if bipolar else 0.0
    with np.errstate(divide="ignore"):
        return rth_k_per_w * np.maximum(vce_v, 0.0) * abs(tempco_v_per_k) / (ballast_ohm + re)


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
    DRAWS.check(draws, "draws")
    # about 8 arrays of (devices, batch) float64 per batch; the work grows with devices x draws
    check_memory(
        8 * 8 * n * min(batch, draws),
        f"Monte Carlo batches of {min(batch, draws)} draws of {n} devices",
        "use fewer devices",
    )
    if n * draws > MAX_DEVICE_DRAWS:
        raise SoacheckError(
            f"{draws} draws of {n} devices is {n * draws:.3g} device solutions, more than the "
            f"{MAX_DEVICE_DRAWS:.0e} soacheck does in one run (minutes of work); use fewer draws"
        )
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
        cur = None
        for _ in range(200):
            cur = stage.share(total, tj, offsets, start_a=cur)  # Newton starts from the last step's sharing
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
