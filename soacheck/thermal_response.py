"""Temperature along a power waveform P(t) through a Foster network, in chunks.

References
----------
- Exact response of a first-order section to power held between samples (zero-order
  hold): elementary; Foster networks as in JEDEC JESD51-14 (2010).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from soacheck.thermal import Foster


@dataclass(frozen=True, eq=False)
class ThermalState:
    """Branch temperatures of a Foster response, carried across chunks of a waveform. [K]"""

    theta_k: np.ndarray


def temperature_rise(
    t_s: np.ndarray,
    p_w: np.ndarray,
    network: Foster,
    *,
    state: ThermalState | None = None,
    p_before_w: float = 0.0,
    t_before_s: float | None = None,
) -> tuple[np.ndarray, ThermalState]:
    """Temperature rise along a power waveform, exact for power held between samples.

    Parameters
    ----------
    t_s
        Sample times, strictly increasing, shape ``(n,)``; steps need not be uniform. [s]
    p_w
        Power at each sample, held until the next sample (zero-order hold), shape ``(n,)``. [W]
    network
        The Foster network (or the modes of a Cauer node) from the power to the output.
    state
        Branch rises at ``t_before_s`` (the previous chunk's last sample); zero when None.
    p_before_w, t_before_s
        Power held from ``t_before_s`` to ``t_s[0]``: lets a waveform be processed in
        chunks with the same answer as one pass.

    Returns
    -------
    (numpy.ndarray, ThermalState)
        The rise at each sample, shape ``(n,)`` [K], and the state at the last sample.

    Notes
    -----
    Per branch, with aᵢ = exp(−Δt/τᵢ): θᵢ[k+1] = aᵢ θᵢ[k] + Rᵢ (1 − aᵢ) P[k], exact for
    any step (elementary derivation: each branch's first-order step response, the power
    held over the step). Uniform steps run through ``scipy.signal.lfilter``, two
    branches at a time as one second-order section where that is accurate; other steps
    through a blocked prefix sum in which every exponent stays below e^600.
    """
    t = np.asarray(t_s, dtype=float)
    p = np.asarray(p_w, dtype=float)
    theta0 = np.zeros(network.tau_s.size) if state is None else state.theta_k
    if t_before_s is not None:
        # one held step from the previous chunk's last sample to this chunk's first
        a = np.exp(-(t[0] - t_before_s) / network.tau_s)
        theta0 = a * theta0 + network.r_k_per_w * (1 - a) * p_before_w
    # uniform to rounding: a relative spread of 1e-6 in Δt changes aᵢ by far less than 1e-6
    dt_min, dt_max = step_range(t)
    if not dt_max - dt_min <= 1e-6 * dt_max:  # NaN: not uniform
        thetas = [
            _branch_any_step(t, p, r, tau, th)
            for r, tau, th in zip(network.r_k_per_w, network.tau_s, theta0, strict=True)
        ]
        return np.sum(thetas, axis=0), ThermalState(np.array([th[-1] for th in thetas]))
    step = (t[-1] - t[0]) / (t.size - 1) if t.size > 1 else 0.0
    a = np.exp(-step / network.tau_s)
    b = network.r_k_per_w * (1.0 - a)
    out = None
    last = np.empty_like(theta0)
    for group in _pairs(a, t.size):
        if len(group) == 2:
            i, j = group
            y, last[i], last[j] = _pair_uniform(p, a[i], b[i], theta0[i], a[j], b[j], theta0[j])
        else:
            (i,) = group
            y = _branch_uniform(p, a[i], b[i], theta0[i])
            last[i] = y[-1]
        if out is None:
            out = y
        else:
            out += y
    return (np.zeros(t.size) if out is None else out), ThermalState(last)


_STEP_BLOCK = 1 << 15


def step_range(t: np.ndarray) -> tuple[float, float]:
    """Least and greatest step of ``t`` [s], ``(0, 0)`` for fewer than two samples: ``np.diff(t)``'s
    extremes, found a cache-sized block at a time instead of through a fresh array of every step."""
    if t.size < 2:
        return 0.0, 0.0
    steps = np.empty(min(t.size - 1, _STEP_BLOCK))
    lo, hi = np.inf, -np.inf
    for start in range(0, t.size - 1, _STEP_BLOCK):
        stop = min(start + _STEP_BLOCK, t.size - 1)
        block = np.subtract(t[start + 1 : stop + 1], t[start:stop], out=steps[: stop - start])
        lo, hi = np.minimum(lo, block.min()), np.maximum(hi, block.max())  # a NaN step stays NaN
    return float(lo), float(hi)


def _pairs(a: np.ndarray, n: int) -> list[tuple[int, ...]]:
    """Branches to run together as one second-order filter: the fastest with the slowest, and so on.

    Pairing halves the passes over the samples. A pair is formed only when its poles are
    distinct enough (|aᵢ − aⱼ| ≥ 1e-3) and not vanishingly small (a ≥ 1e-3), so that the
    second-order form stays accurate and the branch states can be told apart again.
    """
    order = [int(k) for k in np.argsort(a)]
    groups: list[tuple[int, ...]] = []
    while order:
        i = order.pop(0)
        if order and n >= 2:
            j = order[-1]
            if abs(a[i] - a[j]) >= 1e-3 and min(a[i], a[j]) >= 1e-3:
                order.pop()
                groups.append((i, j))
                continue
        groups.append((i,))
    return groups


def _pair_uniform(p, a_i, b_i, th_i, a_j, b_j, th_j) -> tuple[np.ndarray, float, float]:
    """Two first-order branches as one second-order filter; their sum, and each final state.

    H(z) = z⁻¹·[bᵢ/(1 − aᵢz⁻¹) + bⱼ/(1 − aⱼz⁻¹)]. The starting states enter as past outputs
    of the free response, θ/a and θ/a² (``scipy.signal.lfiltic``); the final states come back
    from the last two outputs and the last held input.
    """
    num = [0.0, b_i + b_j, -(b_i * a_j + b_j * a_i)]
    den = [1.0, -(a_i + a_j), a_i * a_j]
    import scipy.signal  # deferred: scipy costs start-up time to commands that never use it

    zi = scipy.signal.lfiltic(num, den, [th_i / a_i + th_j / a_j, th_i / a_i**2 + th_j / a_j**2], [0.0, 0.0])
    y, _ = scipy.signal.lfilter(num, den, p, zi=zi)
    prev_i = (y[-1] - (b_i + b_j) * p[-2] - a_j * y[-2]) / (a_i - a_j)
    prev_j = y[-2] - prev_i
    return y, a_i * prev_i + b_i * p[-2], a_j * prev_j + b_j * p[-2]


def _branch_uniform(p: np.ndarray, a: float, b: float, theta0: float) -> np.ndarray:
    """θ[0] = θ0, θ[k+1] = a θ[k] + b p[k] with constant a, via lfilter."""
    # y[k] = a y[k-1] + b x[k-1]  <=>  lfilter([0, b], [1, -a])
    import scipy.signal  # deferred: scipy costs start-up time to commands that never use it

    y, _ = scipy.signal.lfilter([0.0, b], [1.0, -a], p, zi=[theta0])
    return y


_BLOCK_EXPONENT = 600.0


def _branch_any_step(t: np.ndarray, p: np.ndarray, r: float, tau: float, theta0: float) -> np.ndarray:
    """The same recursion with per-step aₖ, vectorized as a blocked prefix sum.

    With s = (t − t₀)/τ and dⱼ = r(1 − aⱼ)pⱼ: θ[k] = e^(−sₖ)(θ₀ + Σ_{j<k} dⱼ e^(s_{j+1})). Blocks
    span less than 600 time constants, so no exponential overflows; the state is carried
    from block to block by one step of the recursion. Work is O(n), plus one Python step
    per 600 τ of waveform.
    """
    s = (t - t[0]) / tau
    drive = r * -np.expm1(-np.diff(s)) * p[:-1]  # enters at sample j + 1
    out = np.empty(t.size)
    # blocks: the samples sharing floor(s / 600), found per sample, so a waveform spanning
    # many more time constants than it has samples needs no more blocks than samples
    block = np.floor(s / _BLOCK_EXPONENT)
    bounds = np.r_[0, np.flatnonzero(np.diff(block)) + 1, t.size]
    carry = theta0
    for start, stop in zip(bounds[:-1].tolist(), bounds[1:].tolist(), strict=True):
        if start > 0:
            carry = out[start - 1] * math.exp(-(s[start] - s[start - 1])) + drive[start - 1]
        local = s[start:stop] - s[start]
        summed = np.cumsum(drive[start : stop - 1] * np.exp(local[1:]))
        out[start:stop] = np.exp(-local) * (carry + np.r_[0.0, summed])
    return out
