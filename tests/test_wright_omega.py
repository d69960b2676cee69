"""The real Wright omega function against ``scipy.special.wrightomega``, written independently in
complex arithmetic (Lawrence, Corless and Jeffrey, ACM TOMS Algorithm 917, 2012), and against its
defining equation w + ln w = z."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.special

from soacheck.wright_omega import wright_omega


@pytest.mark.parametrize(
    "z",
    [
        np.linspace(-800.0, 800.0, 20001),
        np.linspace(-3.0, 3.0, 6001),
        np.r_[-np.geomspace(1e-12, 1.0, 200), np.geomspace(1e-12, 1e6, 200)],
    ],
    ids=["wide", "near the series", "near zero and far"],
)
def test_the_real_wright_omega_is_scipys(z):
    """Against ``scipy.special.wrightomega`` (complex arithmetic): 1e-14 relative (a few units of double
    precision); 0 where e^z underflows, as scipy gives."""
    expected = np.real(scipy.special.wrightomega(z))
    got = wright_omega(z)
    assert got.shape == z.shape
    np.testing.assert_allclose(got, expected, rtol=1e-14, atol=0.0)


def test_the_real_wright_omega_takes_scalars_and_arrays_alike():
    """The vectorization contract: a scalar, a list and a 2-D array give the same values (w + ln w = z)."""
    values = [[-5.0, 0.5], [2.0, 40.0]]
    grid = wright_omega(np.array(values))
    assert grid.shape == (2, 2)
    assert float(wright_omega(2.0)) == grid[1, 0]
    np.testing.assert_allclose(grid + np.log(grid), values, rtol=1e-14)
