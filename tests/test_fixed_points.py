"""Fast solvers of a stage's electro-thermal state against slow, obvious references written here.

References, all outside soacheck: the bipolar law V_BE = V_T ln(I/I_S) + φ(T − 25 °C) with
φ = −2 mV/K (Sedra & Smith, *Microelectronic Circuits*, from memory); the electro-thermal
Jacobian of parallel devices with a common drive and a held total current, derived by hand in
the docstrings (elementary derivation) and handed whole to ``numpy.linalg.eigvals``.
"""

from __future__ import annotations

import numpy as np
import pytest

from soacheck.sharing import stability_gain

VT = 0.02569  # V, kT/q at 25 °C (Sedra & Smith, from memory)
PHI = -0.002  # V/K, dV_BE/dT at constant current (Sedra & Smith, from memory)


def full_jacobian_gain(current_a, vce_v, r_e, z_self, z_shared):
    """The largest real eigenvalue of the whole n × n Jacobian at each point, built element by element.

    With a common drive V_B and Σ δI = 0: δI_l = (δV_B − φ δT_l)/r_l, r_l = R_E + V_T/I_l, so
    δV_B = φ Σ_j (δT_j/r_j) / Σ_j (1/r_j) and ∂I_l/∂T_j = (φ/r_l)[(1/r_j)/Σ(1/r) − δ_lj]. Each
    junction rises z_self per watt of its own power and z_shared per watt of the total;
    ∂P_l/∂I_l = V_l − I_l R_E (V_l = V_CE, which falls by R_E per ampere).
    """
    n, m = current_a.shape
    out = np.empty(m)
    for k in range(m):
        g = 1.0 / (r_e + VT / current_a[:, k])
        moves = np.empty((n, n))
        for l_ in range(n):
            for j in range(n):
                moves[l_, j] = PHI * g[l_] * (g[j] / g.sum() - (1.0 if l_ == j else 0.0))
        dp = vce_v[:, k] - current_a[:, k] * r_e
        z = z_self * np.eye(n) + z_shared * np.ones((n, n))
        out[k] = np.linalg.eigvals(z @ np.diag(dp) @ moves).real.max()
    return out


@pytest.mark.parametrize("count", [2, 3, 5, 12])
@pytest.mark.parametrize(("z_self", "z_shared"), [(1.5, 0.0), (1.5, 0.4), (0.2, 3.0)])
def test_the_stage_gain_of_alike_devices_is_the_whole_jacobians(count, z_self, z_shared):
    """Q1 carries more current at a lower voltage; the others are alike (one group): the gain from the
    groups' reduced matrix equals the whole Jacobian's, to rounding (1e-12: eigvals of small matrices)."""
    rng = np.random.default_rng(count)
    m = 9
    current = np.repeat(rng.uniform(0.2, 3.0, (1, m)), count, axis=0)
    current[0] *= 1.4
    vce = np.repeat(rng.uniform(5.0, 40.0, (1, m)), count, axis=0)
    vce[0] -= 0.3
    law = {"ballast_ohm": 0.1, "bipolar": True, "tempco_v_per_k": PHI, "junctions": 1}
    got = stability_gain(
        current, vce, np.full((count, m), 60.0), z_self_k_per_w=z_self, z_shared_k_per_w=z_shared, **law
    )
    expected = full_jacobian_gain(current, vce, 0.1, z_self, z_shared)
    np.testing.assert_allclose(got, expected, rtol=1e-12, atol=1e-12)


def test_the_stage_gain_of_all_different_devices_is_the_whole_jacobians():
    """Five devices, no two alike (no groups to merge): the same reference."""
    rng = np.random.default_rng(7)
    current = rng.uniform(0.2, 3.0, (5, 4))
    vce = rng.uniform(5.0, 40.0, (5, 4))
    law = {"ballast_ohm": 0.05, "bipolar": True, "tempco_v_per_k": PHI, "junctions": 1}
    got = stability_gain(current, vce, np.full((5, 4), 60.0), z_self_k_per_w=1.2, z_shared_k_per_w=0.5, **law)
    np.testing.assert_allclose(got, full_jacobian_gain(current, vce, 0.05, 1.2, 0.5), rtol=1e-12, atol=1e-12)
