"""A part's thermal model: Foster terms given in part.toml, or fitted to its zth.csv.

References
----------
- Fitting non-negative Foster terms on a fixed grid of time constants: common practice,
  no source; ``scipy.optimize.nnls`` (Lawson & Hanson, *Solving Least Squares Problems*,
  1974).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from soacheck.thermal import Foster

if TYPE_CHECKING:
    from soacheck.parts import Part


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
    a decade above the longest digitized time (common practice, no source).

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
    import scipy.optimize  # deferred: scipy costs start-up time to commands that never use it

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

    def pulse_zth_start(self, tp_s: np.ndarray | float, duty: np.ndarray | float = 0.0) -> np.ndarray:
        """Zth of a periodic train at the start of a pulse (its minimum). [K/W]

        Below t_min, where the fit is not backed by data, the train's mean D·Σ Rᵢ is used:
        the minimum of a periodic temperature never exceeds its mean (conservative).
        """
        tp = np.asarray(tp_s, dtype=float)
        exact = self.foster.zth_train_start(tp, duty)
        return np.where(tp < self.t_min_s, np.asarray(duty, dtype=float) * self.foster.rth_k_per_w, exact)


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
