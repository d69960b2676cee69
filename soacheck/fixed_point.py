"""Anderson-accelerated fixed-point iteration x = F(x), vectorized over independent columns.

The electro-thermal state of a stage is the fixed point of one relaxation step (currents
for given junction temperatures, temperatures for those currents). Plain relaxation
converges linearly, at the rate of the loop's gain: hundreds of steps near runaway.
Anderson mixing combines the last few steps so that, near the fixed point, a system of
k unknowns per column settles in about k + 1 steps.

References
----------
- D. G. Anderson, "Iterative procedures for nonlinear integral equations", Journal of the
  ACM 12(4), 547–560 (1965).
- H. F. Walker and P. Ni, "Anderson acceleration for fixed-point iterations", SIAM Journal
  on Numerical Analysis 49(4), 1715–1735 (2011): the least-squares form used here.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

MEMORY = 4
"""Previous steps Anderson mixing combines."""


@dataclass(frozen=True, eq=False)
class FixedPoint:
    """Where an accelerated iteration ended.

    ``x`` is F of the last iterate (as plain relaxation returns it), ``state`` what F returned
    beside it, ``settled`` ``(m,)`` the columns whose last step moved less than the tolerance,
    ``steps`` the evaluations of F.
    """

    x: np.ndarray
    state: Any
    settled: np.ndarray
    steps: int


def anderson(
    step: Callable[[np.ndarray], tuple[np.ndarray, Any]],
    x0: np.ndarray,
    *,
    tol: float,
    max_steps: int,
    lower: np.ndarray | float = -np.inf,
    upper: float = np.inf,
    give_up: Callable[[np.ndarray], np.ndarray] | None = None,
    memory: int = MEMORY,
) -> FixedPoint:
    """The fixed point of ``x = step(x)[0]`` by Anderson mixing (type II, least squares).

    Parameters
    ----------
    step
        One relaxation step: ``x (n, m) -> (F(x) (n, m), state)``.
    x0
        Start, shape ``(n, m)``.
    tol
        A column has settled when no element of it moves more than this in one step.
    max_steps
        Evaluations of ``step`` at most.
    lower, upper
        Bounds the mixed iterate is clipped to (F's own range), so an extrapolation never
        leaves the domain F is meant for.
    give_up
        ``give_up(F(x))`` gives the columns ``(m,)`` not worth iterating further (a
        runaway); the iteration stops once every column has settled or been given up.
    memory
        Previous steps mixed; 0 is plain relaxation, x_{k+1} = F(x_k).

    Notes
    -----
    With g_k = F(x_k), f_k = g_k − x_k and the differences ΔF, ΔG of the last ``memory``
    steps: γ = argmin ‖f_k − ΔF γ‖, x_{k+1} = g_k − ΔG γ (Walker & Ni 2011, eq. 2.2). The
    normal equations are solved per column with a relative Tikhonov term of 1e-12; a
    column whose coefficients are not finite takes the plain step g_k, and one whose step
    grew forgets its history and takes the plain step (a restart, Walker & Ni 2011, §5).
    """
    x = np.asarray(x0, dtype=float)
    shape = x.shape
    d_f: list[np.ndarray] = []
    d_g: list[np.ndarray] = []
    last_f = last_g = None
    last_size = np.full(shape[1], np.inf)
    settled = np.zeros(shape[1], dtype=bool)
    g, state = x, None
    steps = 0
    for steps in range(1, max_steps + 1):  # noqa: B007 - steps is reported
        g, state = step(x)
        f = g - x
        size = np.max(np.abs(f), axis=0)
        settled = size < tol
        if np.all(settled | (give_up(g) if give_up is not None else False)):
            break
        if last_f is not None:
            d_f.append(f - last_f)
            d_g.append(g - last_g)
            if len(d_f) > memory:
                d_f.pop(0)
                d_g.pop(0)
        # a column whose step grew forgets its history and takes the plain step (a restart)
        grew = size > last_size
        last_f, last_g, last_size = f, g, size
        if grew.any():
            d_f = [np.where(grew, 0.0, h) for h in d_f]
            d_g = [np.where(grew, 0.0, h) for h in d_g]
        if not d_f:
            x = g
            continue
        big_f = np.stack(d_f)  # (p, n, m)
        big_g = np.stack(d_g)
        normal = np.einsum("inm,jnm->mij", big_f, big_f)  # (m, p, p)
        rhs = np.einsum("inm,nm->mi", big_f, f)  # (m, p)
        scale = np.trace(normal, axis1=1, axis2=2)[:, None, None]
        normal = normal + 1e-12 * np.maximum(scale, 1e-300) * np.eye(len(d_f))
        with np.errstate(all="ignore"):
            try:
                gamma = np.linalg.solve(normal, rhs[..., None])[..., 0]  # (m, p)
            except np.linalg.LinAlgError:
                gamma = np.zeros_like(rhs)
        gamma = np.where(np.isfinite(gamma).all(axis=1, keepdims=True), gamma, 0.0)
        mixed = g - np.einsum("inm,mi->nm", big_g, gamma)
        x = np.clip(np.where(np.isfinite(mixed), mixed, g), lower, upper)
        x = np.where(settled[None, :], g, x)
    return FixedPoint(g, state, settled, steps)
