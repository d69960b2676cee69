"""Thermal networks: Foster and Cauer, Zth, pulse trains, Foster→Cauer, heatsink chains.

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
  geometric series of its step responses (elementary derivation).
- The two-pulse superposition approximation for a pulse train: the transient thermal
  resistance method of power-semiconductor application notes (from memory).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from soacheck.errors import SoacheckError

if TYPE_CHECKING:
    pass

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

    def zth_train_start(self, tp_s: np.ndarray | float, duty: np.ndarray | float) -> np.ndarray:
        """Impedance of a periodic pulse train at the start of a pulse. See :func:`pulse_train_zth_start`."""
        return pulse_train_zth_start(tp_s, duty, self.r_k_per_w, self.tau_s)

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
        Rₖ = (wᵀvₖ) vₖ[1] / λₖ (elementary derivation).
        """
        g = 1.0 / self.r_k_per_w
        n = g.size
        conductance = np.diag(g + np.r_[0.0, g[:-1]])
        if n > 1:
            conductance -= np.diag(g[:-1], 1) + np.diag(g[:-1], -1)
        import scipy.linalg  # deferred: scipy costs start-up time to commands that never use it

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
    branch.
    """
    tp = np.asarray(tp_s, dtype=float)[..., None]
    d = np.asarray(duty, dtype=float)[..., None]
    with np.errstate(divide="ignore"):
        period = np.where(d > 0, tp / np.where(d > 0, d, 1.0), np.inf)
    return np.sum(r_k_per_w * np.expm1(-tp / tau_s) / np.expm1(-period / tau_s), axis=-1)


def pulse_train_zth_start(
    tp_s: np.ndarray | float, duty: np.ndarray | float, r_k_per_w: np.ndarray, tau_s: np.ndarray
) -> np.ndarray:
    """Thermal impedance of a periodic pulse train at the start of each pulse (its minimum), exact.

    In the periodic steady state of :func:`pulse_train_zth` the junction rise just before
    a pulse starts is P·Z_start(tp, D) with

        Z_start(tp, D) = Σ Rᵢ (1 − e^(−tp/τᵢ)) e^(−(T − tp)/τᵢ) / (1 − e^(−T/τᵢ)),  T = tp/D.

    D = 0 (a single pulse) gives 0; D = 1 gives Σ Rᵢ. With a standing power P_idle between
    pulses, superposition (the thermal network is linear) gives the junction at
    Tc + P_idle·Σ Rᵢ + (P − P_idle)·Z_start at the start and
    Tc + P_idle·Σ Rᵢ + (P − P_idle)·Zth(tp, D) at the end of each pulse.

    References
    ----------
    Elementary: the same geometric series as :func:`pulse_train_zth`, followed by the
    free decay of each Foster branch over the pause T − tp.
    """
    tp = np.asarray(tp_s, dtype=float)[..., None]
    d = np.asarray(duty, dtype=float)[..., None]
    with np.errstate(divide="ignore"):
        period = np.where(d > 0, tp / np.where(d > 0, d, 1.0), np.inf)
        decay = np.exp(-(period - tp) / tau_s)
    return np.sum(r_k_per_w * np.expm1(-tp / tau_s) * decay / np.expm1(-period / tau_s), axis=-1)


def pulse_train_zth_superposition(
    tp_s: np.ndarray | float, duty: np.ndarray | float, zth: Callable[[np.ndarray], np.ndarray], rth_k_per_w: float
) -> np.ndarray:
    """The two-pulse superposition approximation of a pulse train's peak impedance.

        Zth ≈ D·Rth + (1 − D)·Z(T + tp) − Z(T) + Z(tp),  T = tp/D.

    Works from any single-pulse curve ``zth`` (a callable of time), e.g. a digitized one.

    References
    ----------
    The transient thermal resistance method of power-semiconductor application notes
    (from memory).
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


MERGE_REL_TOL = 1e-3
"""Foster time constants closer than this, relatively, are merged into one term."""


def merge_close_time_constants(foster: Foster, *, rel_tol: float = MERGE_REL_TOL) -> Foster:
    """Merge Foster terms whose time constants differ by at most ``rel_tol`` (relative) into one.

    The rule: sort the terms by τ; a term joins the group of the term that opened it
    while τ ≤ τ_open·(1 + rel_tol); each group becomes one term with R = ΣRᵢ and
    τ = ΣRᵢτᵢ/ΣRᵢ, which keeps Zth(∞) = ΣR and the area ∫(Zth(∞) − Zth(t))dt = ΣRτ
    exactly; Zth(t) itself changes by less than ΣRᵢ·rel_tol/e (common practice, no source;
    the bound from |∂Zth/∂τ| = (R t/τ²)e^(−t/τ) ≤ R/(eτ)). Two such terms are one pole to
    any measurement, and left apart they make the Cauer ladder degenerate (capacities
    near zero, time constants of its modes near zero or negative).

    Parameters
    ----------
    foster
        The network.
    rel_tol
        Largest relative difference of time constants that are merged. [1]

    Returns
    -------
    Foster
        The network with close terms merged, time constants rising; the same network
        (sorted) when no two are close.
    """
    order = np.argsort(foster.tau_s, kind="stable")
    tau = foster.tau_s[order]
    r = foster.r_k_per_w[order]
    group = np.zeros(tau.size, dtype=int)
    opened = tau[0]
    for k in range(1, tau.size):  # a handful of terms: a loop reads best
        if tau[k] <= opened * (1.0 + rel_tol):
            group[k] = group[k - 1]
        else:
            group[k] = group[k - 1] + 1
            opened = tau[k]
    r_sum = np.bincount(group, weights=r)
    tau_mean = np.bincount(group, weights=r * tau) / np.where(r_sum != 0, r_sum, 1.0)
    tau_mean = np.where(r_sum != 0, tau_mean, np.bincount(group, weights=tau) / np.bincount(group))
    return Foster(r_sum, tau_mean)


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
    # nearly equal time constants are one branch: merge them, or the ladder degenerates
    merged = merge_close_time_constants(foster)
    tau, r_merged = merged.tau_s, merged.r_k_per_w
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
