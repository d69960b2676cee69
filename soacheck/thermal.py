"""Transient thermal impedance: Foster and Cauer networks, pulse trains, Tj along P(t).

Everything here is a plain function over numpy arrays or a small frozen dataclass that
delegates to one. Temperatures are rises in kelvin over a reference (the case, the
heatsink or the ambient) unless a name says ``_c``.

References
----------
- Foster and Cauer networks for thermal impedance, their definitions and the warning that
  a Foster network's inner nodes are not temperatures: JEDEC JESD51-14 (2010), §2 and
  Annex; network synthesis by continued fractions: W. Cauer, "Die Verwirklichung von
  Wechselstromwiderständen vorgeschriebener Frequenzabhängigkeit", Archiv für
  Elektrotechnik 17 (1926); E. A. Guillemin, *Synthesis of Passive Networks*, Wiley 1957
  (from memory).
- Periodic steady state of a first-order section driven by rectangular pulses: the
  geometric series of its step responses (elementary; see methods.md §3).
- The two-pulse superposition approximation for a pulse train: the transient thermal
  resistance method of power-semiconductor application notes (from memory).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np
import scipy.linalg
import scipy.optimize
import scipy.signal

from soacheck.errors import SoacheckError

if TYPE_CHECKING:
    from soacheck.parts import Part

# --------------------------------------------------------------------------- networks


@dataclass(frozen=True, eq=False)
class Foster:
    """A Foster network: Zth(t) = Σ Rᵢ (1 − exp(−t/τᵢ)).

    Attributes
    ----------
    r_k_per_w
        Resistances, shape ``(n,)``. [K/W]
    tau_s
        Time constants, shape ``(n,)``. [s]
    """

    r_k_per_w: np.ndarray
    tau_s: np.ndarray

    def __post_init__(self) -> None:
        r = np.atleast_1d(np.asarray(self.r_k_per_w, dtype=float))
        tau = np.atleast_1d(np.asarray(self.tau_s, dtype=float))
        if r.shape != tau.shape or r.ndim != 1 or r.size == 0:
            raise SoacheckError("a Foster network needs one time constant per resistance")
        if np.any(~np.isfinite(r)) or np.any(~np.isfinite(tau)) or np.any(tau <= 0):
            raise SoacheckError("Foster time constants must be finite and above zero, resistances finite")
        object.__setattr__(self, "r_k_per_w", r)
        object.__setattr__(self, "tau_s", tau)

    @property
    def rth_k_per_w(self) -> float:
        """Steady-state thermal resistance Zth(∞) = Σ Rᵢ. [K/W]"""
        return float(self.r_k_per_w.sum())

    def zth(self, t_s: np.ndarray | float) -> np.ndarray:
        """Single-pulse thermal impedance at time ``t_s`` (any shape). [K/W]"""
        return foster_zth(t_s, self.r_k_per_w, self.tau_s)

    def zth_train(self, tp_s: np.ndarray | float, duty: np.ndarray | float) -> np.ndarray:
        """Peak impedance of a periodic pulse train, exact. See :func:`pulse_train_zth`."""
        return pulse_train_zth(tp_s, duty, self.r_k_per_w, self.tau_s)

    def to_cauer(self) -> Cauer:
        """The equivalent Cauer ladder. See :func:`foster_to_cauer`."""
        return foster_to_cauer(self)


@dataclass(frozen=True, eq=False)
class Cauer:
    """A Cauer ladder: C₁ at the junction node, R₁ to node 2, …, Rₙ to the reference.

    Its nodes approximate temperatures along a one-dimensional heat path, so an interface
    and a heatsink can be appended (:func:`chain`).

    Attributes
    ----------
    c_j_per_k
        Heat capacity at each node, shape ``(n,)``. [J/K]
    r_k_per_w
        Resistance from node k to node k + 1 (the last to the reference), shape ``(n,)``. [K/W]
    """

    c_j_per_k: np.ndarray
    r_k_per_w: np.ndarray

    def __post_init__(self) -> None:
        c = np.atleast_1d(np.asarray(self.c_j_per_k, dtype=float))
        r = np.atleast_1d(np.asarray(self.r_k_per_w, dtype=float))
        if c.shape != r.shape or c.size == 0 or np.any(c <= 0) or np.any(r <= 0):
            raise SoacheckError("a Cauer ladder needs positive capacities and resistances, one of each per node")
        object.__setattr__(self, "c_j_per_k", c)
        object.__setattr__(self, "r_k_per_w", r)

    @property
    def rth_k_per_w(self) -> float:
        return float(self.r_k_per_w.sum())

    def modes(self, weights: np.ndarray | None = None) -> Foster:
        """Sum-of-exponentials response of a weighted sum of node temperatures to power at node 1.

        With ``weights`` None this is the junction (node 1), i.e. the ladder's Foster
        equivalent. Terms for other nodes may have negative resistances.

        Notes
        -----
        Solves G v = λ C v with vᵀ C v = 1 (``scipy.linalg.eigh``); then the transfer
        impedance from node 1 to node i is Σₖ vₖ[i] vₖ[1] / (s + λₖ), so τₖ = 1/λₖ and
        Rₖ = (wᵀvₖ) vₖ[1] / λₖ (methods.md §3, elementary).
        """
        g = 1.0 / self.r_k_per_w
        n = g.size
        conductance = np.diag(g + np.r_[0.0, g[:-1]])
        if n > 1:
            conductance -= np.diag(g[:-1], 1) + np.diag(g[:-1], -1)
        lam, vec = scipy.linalg.eigh(conductance, np.diag(self.c_j_per_k))
        w = np.zeros(n) if weights is None else np.asarray(weights, dtype=float)
        if weights is None:
            w[0] = 1.0
        return Foster((w @ vec) * vec[0] / lam, 1.0 / lam)

    def to_foster(self) -> Foster:
        """The equivalent Foster network of the junction's impedance."""
        return self.modes()


def foster_zth(t_s: np.ndarray | float, r_k_per_w: np.ndarray, tau_s: np.ndarray) -> np.ndarray:
    """Zth(t) = Σ Rᵢ (1 − exp(−t/τᵢ)) for times of any shape. [K/W]

    References
    ----------
    JEDEC JESD51-14, the Foster form of the thermal impedance.
    """
    t = np.asarray(t_s, dtype=float)
    return np.sum(r_k_per_w * -np.expm1(-t[..., None] / tau_s), axis=-1)


def pulse_train_zth(
    tp_s: np.ndarray | float, duty: np.ndarray | float, r_k_per_w: np.ndarray, tau_s: np.ndarray
) -> np.ndarray:
    """Peak thermal impedance of a periodic train of rectangular pulses, exact.

    Power P for ``tp_s`` every T = tp/D; in the periodic steady state the junction rise at
    the end of a pulse is P·Zth(tp, D) with

        Zth(tp, D) = Σ Rᵢ (1 − e^(−tp/τᵢ)) / (1 − e^(−T/τᵢ)).

    D = 0 is a single pulse (Zth(tp)); D = 1 is DC (Σ Rᵢ).

    Parameters
    ----------
    tp_s
        Pulse width, any shape. [s]
    duty
        Duty cycle D = tp/T in [0, 1], broadcast with ``tp_s``. [1]

    References
    ----------
    Elementary: the sum of a geometric series of first-order step responses per Foster
    branch (methods.md §3).
    """
    tp = np.asarray(tp_s, dtype=float)[..., None]
    d = np.asarray(duty, dtype=float)[..., None]
    with np.errstate(divide="ignore"):
        period = np.where(d > 0, tp / np.where(d > 0, d, 1.0), np.inf)
    return np.sum(r_k_per_w * np.expm1(-tp / tau_s) / np.expm1(-period / tau_s), axis=-1)


def pulse_train_zth_superposition(
    tp_s: np.ndarray | float, duty: np.ndarray | float, zth: Callable[[np.ndarray], np.ndarray], rth_k_per_w: float
) -> np.ndarray:
    """The two-pulse superposition approximation of a pulse train's peak impedance.

        Zth ≈ D·Rth + (1 − D)·Z(T + tp) − Z(T) + Z(tp),  T = tp/D.

    Works from any single-pulse curve ``zth`` (a callable of time), e.g. a digitized one.

    References
    ----------
    The transient thermal resistance method of power-semiconductor application notes
    (from memory); methods.md §3.
    """
    tp = np.asarray(tp_s, dtype=float)
    d = np.asarray(duty, dtype=float)
    period = tp / d
    return d * rth_k_per_w + (1 - d) * zth(period + tp) - zth(period) + zth(tp)


# --------------------------------------------------------------------------- Foster <-> Cauer


def _poly_mul(a: list[Fraction], b: list[Fraction]) -> list[Fraction]:
    out = [Fraction(0)] * (len(a) + len(b) - 1)
    for i, x in enumerate(a):
        for j, y in enumerate(b):
            out[i + j] += x * y
    return out


def _poly_add(a: list[Fraction], b: list[Fraction]) -> list[Fraction]:
    n = max(len(a), len(b))
    a = [Fraction(0)] * (n - len(a)) + a
    b = [Fraction(0)] * (n - len(b)) + b
    return [x + y for x, y in zip(a, b, strict=True)]


def _poly_trim(a: list[Fraction]) -> list[Fraction]:
    while len(a) > 1 and a[0] == 0:
        a = a[1:]
    return a


def foster_to_cauer(foster: Foster) -> Cauer:
    """Convert a Foster network to the Cauer ladder with the same junction impedance.

    Z(s) = Σ Rᵢ/(1 + sτᵢ) = N(s)/D(s) is expanded as a continued fraction
    1/(sC₁ + 1/(R₁ + 1/(sC₂ + …))). The expansion is ill-conditioned in floating point past
    about five stages, so it runs in exact rational arithmetic (``fractions.Fraction``).

    References
    ----------
    Cauer 1926; Guillemin 1957 (from memory); JEDEC JESD51-14 Annex. Invariants checked in
    the tests: C₁ = 1/Σ(1/Cᵢ) with Cᵢ = τᵢ/Rᵢ, and Σ R′ = Σ R.
    """
    if np.any(foster.r_k_per_w <= 0):
        raise SoacheckError("Foster resistances must be above zero to form a Cauer ladder")
    # equal time constants are one branch: merge them, or the expansion degenerates
    tau, index = np.unique(foster.tau_s, return_inverse=True)
    r_merged = np.bincount(index, weights=foster.r_k_per_w)
    # Z = N/D as polynomials in s, highest power first, exact
    numerator = [Fraction(0)]
    denominator = [Fraction(1)]
    for r, t in zip(r_merged, tau, strict=True):
        branch = [Fraction(float(t)), Fraction(1)]  # 1 + s·tau
        numerator = _poly_add(_poly_mul(numerator, branch), _poly_mul([Fraction(float(r))], denominator))
        denominator = _poly_mul(denominator, branch)
    # admittance Y = top/bottom with deg top = deg bottom + 1
    top, bottom = _poly_trim(denominator), _poly_trim(numerator)
    capacities, resistances = [], []
    while True:
        c = top[0] / bottom[0]  # Y = s·C + rest/bottom
        rest = _poly_add(top, [-c * x for x in bottom] + [Fraction(0)])[1:]
        r = bottom[0] / rest[0]  # 1/(rest/bottom) = R + rest2/rest
        rest2 = _poly_add(bottom, [-r * x for x in rest])[1:]
        capacities.append(c)
        resistances.append(r)
        if not rest2 or all(x == 0 for x in rest2):
            break
        top, bottom = rest, rest2
    return Cauer(np.array([float(c) for c in capacities]), np.array([float(r) for r in resistances]))


def chain(
    junction_case: Foster | Cauer,
    *,
    case_sink_k_per_w: float,
    sink_ambient_k_per_w: float,
    sink_j_per_k: float,
) -> tuple[Cauer, np.ndarray]:
    """Junction to ambient: the part's ladder, then the interface, then a lumped heatsink.

    Parameters
    ----------
    junction_case
        The part's junction-to-case network; a Foster network is converted to Cauer first,
        since its inner nodes are not temperatures and cannot be extended.
    case_sink_k_per_w
        Interface (case-to-heatsink) resistance. [K/W]
    sink_ambient_k_per_w
        Heatsink-to-ambient resistance. [K/W]
    sink_j_per_k
        Heat capacity of the heatsink, m·c_p. [J/K]

    Returns
    -------
    (Cauer, numpy.ndarray)
        The chained ladder, and node weights whose dot product with the node temperatures
        gives the case temperature (use with :meth:`Cauer.modes`).

    Notes
    -----
    The case node has no heat capacity of its own, so the last resistance of the part's
    ladder and the interface merge into one; the case temperature lies on it, at the
    fraction R_cs/(R′ₙ + R_cs) of the way from the sink node to the last inner node.
    """
    ladder = junction_case.to_cauer() if isinstance(junction_case, Foster) else junction_case
    if not (case_sink_k_per_w >= 0 and sink_ambient_k_per_w > 0 and sink_j_per_k > 0):
        raise SoacheckError("interface resistance must be ≥ 0, heatsink resistance and capacity above zero")
    r_last = ladder.r_k_per_w[-1]
    c = np.r_[ladder.c_j_per_k, sink_j_per_k]
    r = np.r_[ladder.r_k_per_w[:-1], r_last + case_sink_k_per_w, sink_ambient_k_per_w]
    weights = np.zeros(c.size)
    share = case_sink_k_per_w / (r_last + case_sink_k_per_w)
    weights[-2] = share
    weights[-1] = 1.0 - share
    return Cauer(c, r), weights


# --------------------------------------------------------------------------- fitting


@dataclass(frozen=True, eq=False)
class FosterFit:
    """A Foster network fitted to a digitized single-pulse Zth curve.

    Attributes
    ----------
    foster
        The fitted network (terms with zero resistance dropped).
    worst_relative_error
        Largest |Z_fit − Z|/Z over the digitized points. [1]
    t_min_s
        The shortest digitized time; below it the fit is extrapolated. [s]
    """

    foster: Foster
    worst_relative_error: float
    t_min_s: float


def fit_foster(t_s: np.ndarray, zth_k_per_w: np.ndarray, *, per_decade: int = 3) -> FosterFit:
    """Fit non-negative Foster terms to a digitized single-pulse Zth(t) curve.

    Non-negative least squares (``scipy.optimize.nnls``) of the relative error on a fixed
    grid of time constants, ``per_decade`` per decade from a decade below the shortest to
    a decade above the longest digitized time (methods.md §3, common practice).

    Parameters
    ----------
    t_s
        Times, strictly increasing, shape ``(n,)``. [s]
    zth_k_per_w
        Thermal impedance at those times, not falling, shape ``(n,)``. [K/W]
    """
    t = np.asarray(t_s, dtype=float)
    z = np.asarray(zth_k_per_w, dtype=float)
    decades = math.log10(t[-1]) - math.log10(t[0]) + 2
    tau = np.logspace(math.log10(t[0]) - 1, math.log10(t[-1]) + 1, max(2, int(round(decades * per_decade)) + 1))
    design = -np.expm1(-t[:, None] / tau[None, :]) / z[:, None]
    r, _ = scipy.optimize.nnls(design, np.ones_like(z))
    keep = r > 1e-12 * r.sum()
    foster = Foster(r[keep], tau[keep])
    worst = float(np.max(np.abs(foster.zth(t) - z) / z))
    return FosterFit(foster, worst, float(t[0]))


# --------------------------------------------------------------------------- a part's model


@dataclass(frozen=True, eq=False)
class ThermalModel:
    """A part's junction-to-case thermal impedance, with where it came from.

    Attributes
    ----------
    foster
        The network.
    origin
        ``part.toml [thermal]`` or a description of the ``zth.csv`` fit.
    t_min_s
        Below this time the model is not backed by data; pulse limits then use
        Zth(t_min), which overstates Zth and is conservative. 0 for given terms. [s]
    fit_error
        Worst relative error of the fit over the digitized points, or None. [1]
    """

    foster: Foster
    origin: str
    t_min_s: float = 0.0
    fit_error: float | None = None

    def pulse_zth(self, tp_s: np.ndarray | float, duty: np.ndarray | float = 0.0) -> np.ndarray:
        """Peak Zth of a single pulse (``duty`` 0) or a periodic train, conservative below t_min. [K/W]"""
        return self.foster.zth_train(np.maximum(np.asarray(tp_s, dtype=float), self.t_min_s), duty)


@functools.lru_cache(maxsize=128)
def thermal_model(part: Part) -> ThermalModel | None:
    """The part's thermal model: its Foster terms, else a fit to its ``zth.csv``, else None."""
    if part.foster_r_k_per_w.size:
        return ThermalModel(Foster(part.foster_r_k_per_w, part.foster_tau_s), "part.toml [thermal] Foster terms")
    if part.zth_time_s.size:
        fit = fit_foster(part.zth_time_s, part.zth_k_per_w)
        origin = (
            f"Foster fit to zth.csv ({fit.foster.r_k_per_w.size} terms, worst error "
            f"{fit.worst_relative_error:.1%} over {part.zth_time_s.size} points)"
        )
        return ThermalModel(fit.foster, origin, fit.t_min_s, fit.worst_relative_error)
    return None


# --------------------------------------------------------------------------- P(t) -> T(t)


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
    any step (methods.md §3). Uniform steps run through ``scipy.signal.lfilter``, two
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
    dt = np.diff(t)
    # uniform to rounding: a relative spread of 1e-6 in Δt changes aᵢ by far less than 1e-6
    uniform = dt.size == 0 or np.ptp(dt) <= 1e-6 * dt.max()
    if not uniform:
        thetas = [
            _branch_any_step(t, p, r, tau, th)
            for r, tau, th in zip(network.r_k_per_w, network.tau_s, theta0, strict=True)
        ]
        return np.sum(thetas, axis=0), ThermalState(np.array([th[-1] for th in thetas]))
    step = (t[-1] - t[0]) / dt.size if dt.size else 0.0
    a = np.exp(-step / network.tau_s)
    b = network.r_k_per_w * (1.0 - a)
    out = np.zeros(t.size)
    last = np.empty_like(theta0)
    for group in _pairs(a, t.size):
        if len(group) == 2:
            i, j = group
            y, last[i], last[j] = _pair_uniform(p, a[i], b[i], theta0[i], a[j], b[j], theta0[j])
        else:
            (i,) = group
            y = _branch_uniform(p, a[i], b[i], theta0[i])
            last[i] = y[-1]
        out += y
    return out, ThermalState(last)


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
    zi = scipy.signal.lfiltic(num, den, [th_i / a_i + th_j / a_j, th_i / a_i**2 + th_j / a_j**2], [0.0, 0.0])
    y, _ = scipy.signal.lfilter(num, den, p, zi=zi)
    prev_i = (y[-1] - (b_i + b_j) * p[-2] - a_j * y[-2]) / (a_i - a_j)
    prev_j = y[-2] - prev_i
    return y, a_i * prev_i + b_i * p[-2], a_j * prev_j + b_j * p[-2]


def _branch_uniform(p: np.ndarray, a: float, b: float, theta0: float) -> np.ndarray:
    """θ[0] = θ0, θ[k+1] = a θ[k] + b p[k] with constant a, via lfilter."""
    # y[k] = a y[k-1] + b x[k-1]  <=>  lfilter([0, b], [1, -a])
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
    marks = np.arange(_BLOCK_EXPONENT, s[-1] + _BLOCK_EXPONENT, _BLOCK_EXPONENT)
    bounds = np.unique(np.r_[0, np.searchsorted(s, marks), t.size])
    carry = theta0
    for start, stop in zip(bounds[:-1].tolist(), bounds[1:].tolist(), strict=True):
        if start > 0:
            carry = out[start - 1] * math.exp(-(s[start] - s[start - 1])) + drive[start - 1]
        local = s[start:stop] - s[start]
        summed = np.cumsum(drive[start : stop - 1] * np.exp(local[1:]))
        out[start:stop] = np.exp(-local) * (carry + np.r_[0.0, summed])
    return out
