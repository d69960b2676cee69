"""The Wright omega function on the real axis, vectorized: the w > 0 with w + ln w = z.

General mathematics, kept apart from any device: bipolar current sharing
(:func:`soacheck.sharing.share_current`) solves x = V_T ln I + R·I for I with it. The method
(starting values, then the Fritsch-Shafer-Crowley iteration) follows Lawrence, Corless and
Jeffrey, ACM TOMS Algorithm 917 (2012); the function's docstring gives the details and sources.
"""

from __future__ import annotations

import numpy as np


def wright_omega(z: np.ndarray | float) -> np.ndarray:
    """The Wright omega function on the real axis: the w > 0 with w + ln w = z, elementwise.

    Parameters
    ----------
    z
        Any real values, any shape.

    Returns
    -------
    numpy.ndarray
        ω(z), the shape of ``z``; 0 where e^z underflows (z below about −745).

    Notes
    -----
    Starting values: e^z for z ≤ −2, the series 1 + s/2 + s²/16 − s³/192 − s⁴/3072 + 13s⁵/61440
    (s = z − 1) up to 1, z − ln z + ln z / z above; then two steps of the Fritsch–Shafer–Crowley
    iteration, r = z − w − ln w, w ← w·[1 + r/(1 + w)·(q − r/2)/(q − r)], q = (1 + w)(1 + w + 2r/3),
    each of fourth order: within a few units of double precision of
    ``scipy.special.wrightomega`` (which works in complex arithmetic, about three times slower).

    References
    ----------
    P. W. Lawrence, R. M. Corless and D. J. Jeffrey, "Algorithm 917: Complex double-precision
    evaluation of the Wright ω function", ACM Transactions on Mathematical Software 38(3), 20 (2012).
    F. N. Fritsch, R. E. Shafer and W. P. Crowley, "Algorithm 443: Solution of the transcendental
    equation we^w = x", Communications of the ACM 16(2), 123-124 (1973): the iteration.
    """
    z = np.asarray(z, dtype=float)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        lz = np.log(z)
        w = np.asarray(z - lz + lz / z)
        low = ~(z > 1.0)
        if low.any():
            w = np.array(w, copy=True)
            zl = z[low]
            s = zl - 1.0
            series = 1.0 + s * (1 / 2 + s * (1 / 16 + s * (-1 / 192 + s * (-1 / 3072 + s * 13 / 61440))))
            w[low] = np.where(zl <= -2.0, np.exp(zl), series)
        for _ in range(2):
            r = z - w - np.log(w)
            wp = 1.0 + w
            q = wp * (wp + (2.0 / 3.0) * r)
            w = w * (1.0 + r / wp * (q - 0.5 * r) / (q - r))
        return np.where(np.isfinite(w), w, 0.0) if low.any() else w
