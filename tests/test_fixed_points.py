"""Fast solvers of a stage's electro-thermal state against slow, obvious references written here.

References, all outside soacheck: the bipolar law V_BE = V_T ln(I/I_S) + φ(T − 25 °C) with
φ = −2 mV/K (Sedra & Smith, *Microelectronic Circuits*, from memory); the electro-thermal
Jacobian of parallel devices with a common drive and a held total current, derived by hand in
the docstrings (elementary derivation) and handed whole to ``numpy.linalg.eigvals``; the
steady state's equations written out here and solved by ``scipy.optimize.fsolve``.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.optimize

from soacheck.fixed_point import anderson
from soacheck.partfiles import read_part
from soacheck.search import fewest_guided
from soacheck.sharing import share_current, stability_gain
from soacheck.stage import Cooling, Stage
from soacheck.steady_state import steady_state

from .conftest import write_part

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


# --------------------------------------------------------------------------- the steady state against fsolve

R_E, R_SERIES, SPREAD = 0.1, 0.02, 0.005  # Ω, Ω, V: an invented stage
R_CS, R_SA, AMBIENT = 0.3, 0.8, 25.0  # K/W, K/W, °C
RTH_JC = 1.0  # K/W, the reference part of conftest (constructed)


@pytest.fixture
def pair(tmp_path):
    """Two reference bipolars (rth_jc 1.0 K/W, no thermal model) on one heatsink, Q1 5 mV low."""
    part = read_part(write_part(tmp_path / "bjt"))
    cooling = Cooling(R_CS, R_SA, 500.0, AMBIENT)
    return Stage(
        part, 2, ballast_ohm=R_E, series_ohm=R_SERIES, vbe_spread_v=SPREAD, vbe_tempco_v_per_k=PHI, cooling=cooling
    )


def pair_residual(x, source_v, total_a, sink_c=None):
    """The pair's equations at one point, unknowns (I₁, T₁, T₂); the sink at its own steady state, or given.

    Common drive: V_T ln(I₁/I₂) + (I₁ − I₂)R_E − ΔV + φ(T₁ − T₂) = 0 with I₂ = I − I₁ (Sedra & Smith,
    from memory); V_k = V − I·R_series − I_k R_E, P_k = V_k I_k; sink = T_a + R_sa(P₁ + P₂);
    T_k = sink + P_k(R_cs + rth_jc) (elementary heat flow).
    """
    i1, t1, t2 = x
    i2 = total_a - i1
    p1 = (source_v - total_a * R_SERIES - i1 * R_E) * i1
    p2 = (source_v - total_a * R_SERIES - i2 * R_E) * i2
    sink = AMBIENT + R_SA * (p1 + p2) if sink_c is None else sink_c
    return [
        VT * math.log(i1 / i2) + (i1 - i2) * R_E - SPREAD + PHI * (t1 - t2),
        t1 - (sink + p1 * (R_CS + RTH_JC)),
        t2 - (sink + p2 * (R_CS + RTH_JC)),
    ]


def test_the_settled_pair_solves_its_equations(pair):
    """Three points up to a stage gain above 0.9, where plain relaxation needs a hundred steps: each
    device's current and junction agree with fsolve on the equations written above (1e-7 A, 1e-5 K: the
    solver stops when no junction moves 1e-7 K in a step, and a gain of 0.9 multiplies that by about 10)."""
    source = np.array([10.0, 30.0, 46.0])
    total = np.full(3, 2.0)
    state = steady_state(pair, source, total)
    assert state.stage_gain.max() > 0.9 and not state.runaway_at.any()
    for k in range(3):
        ref = scipy.optimize.fsolve(pair_residual, [1.0, 100.0, 100.0], args=(source[k], total[k]), xtol=1e-13)
        assert state.device_a[:, k] == pytest.approx([ref[0], total[k] - ref[0]], abs=1e-7)
        assert state.junction_c[:, k] == pytest.approx(ref[1:], abs=1e-5)


def test_the_worst_sink_is_the_hottest_points(pair):
    """sink="worst": every point with the heatsink of the point of most power (here 20 V, 3 A). Reference:
    fsolve on both points' equations with the sink an unknown set by the 20 V point's power."""
    source, total = np.array([8.0, 20.0]), np.array([2.0, 3.0])
    state = steady_state(pair, source, total, sink="worst")

    def both(x):
        sink = x[6]
        i1, i2 = x[3], total[1] - x[3]
        p_hot = (source[1] - total[1] * R_SERIES - i1 * R_E) * i1 + (source[1] - total[1] * R_SERIES - i2 * R_E) * i2
        return [
            *pair_residual(x[:3], source[0], total[0], sink),
            *pair_residual(x[3:6], source[1], total[1], sink),
            sink - (AMBIENT + R_SA * p_hot),
        ]

    ref = scipy.optimize.fsolve(both, [1.0, 80.0, 80.0, 1.5, 90.0, 90.0, 70.0], xtol=1e-13)
    assert state.sink_c == pytest.approx([ref[6], ref[6]], abs=1e-5)
    assert state.device_a[0] == pytest.approx([ref[0], ref[3]], abs=1e-7)
    assert state.junction_c[:, 0] == pytest.approx(ref[1:3], abs=1e-5)
    assert state.junction_c[:, 1] == pytest.approx(ref[4:6], abs=1e-5)


def test_anderson_mixing_solves_linear_fixed_points_column_by_column():
    """x = A_k x + b_k in each column, A_k = S_k·D_k with S_k symmetric positive definite and D_k a positive
    diagonal (the shape of the electro-thermal Jacobian, thermal resistances times power slopes: real
    eigenvalues, here scaled to a largest of 0.95): against numpy's direct solve of (1 − A)x = b."""
    rng = np.random.default_rng(3)
    n, m = 3, 5
    root = rng.uniform(-1.0, 1.0, (m, n, n))
    a = (root @ root.transpose(0, 2, 1) + 0.1 * np.eye(n)) * rng.uniform(0.2, 1.0, (m, 1, n))
    a *= 0.95 / np.abs(np.linalg.eigvals(a)).max(axis=1)[:, None, None]
    b = rng.uniform(0.0, 10.0, (n, m))
    found = anderson(lambda x: (np.einsum("mij,jm->im", a, x) + b, None), np.zeros((n, m)), tol=1e-12, max_steps=50)
    expected = np.stack([np.linalg.solve(np.eye(n) - a[k], b[:, k]) for k in range(m)], axis=1)
    assert found.settled.all()
    assert found.steps < 20  # plain relaxation at a gain of 0.95 needs about 500 steps to 1e-12
    np.testing.assert_allclose(found.x, expected, atol=1e-10)


def test_alike_devices_shared_as_counted_rows_match_every_row():
    """Q1 and four alike devices: two rows, the second standing for four (counts), give each device the
    current the five rows give (the same equations; 1e-12 A, Newton's stopping residual)."""
    temps = np.array([[80.0, 120.0], [60.0, 70.0], [60.0, 70.0], [60.0, 70.0], [60.0, 70.0]])
    offsets = np.array([-0.02, 0.0, 0.0, 0.0, 0.0])
    law = {"ballast_ohm": 0.1, "bipolar": True, "tempco_v_per_k": PHI}
    total = np.array([3.0, 8.0])
    every = share_current(total, temps, offsets, **law)
    rows = share_current(total, temps[:2], offsets[:2], counts=np.array([1.0, 4.0]), **law)
    np.testing.assert_allclose(rows, every[:2], atol=1e-12)
    assert rows[0] + 4 * rows[1] == pytest.approx(total, abs=1e-11)


def test_five_devices_settle_where_their_equations_hold(tmp_path):
    """Q1 5 mV low and four alike devices on one heatsink, 6 A at 30 V. Reference: fsolve on Q1's current
    and two junction temperatures, each other device carrying (6 − I₁)/4, with the equations of
    ``pair_residual`` for five devices (1e-7 A, 1e-5 K as above)."""
    part = read_part(write_part(tmp_path / "bjt"))
    cooling = Cooling(R_CS, R_SA, 500.0, AMBIENT)
    stage = Stage(
        part, 5, ballast_ohm=R_E, series_ohm=R_SERIES, vbe_spread_v=SPREAD, vbe_tempco_v_per_k=PHI, cooling=cooling
    )
    source_v, total_a = 30.0, 6.0

    def five(x):
        i1, t1, t2 = x
        i2 = (total_a - i1) / 4
        p1 = (source_v - total_a * R_SERIES - i1 * R_E) * i1
        p2 = (source_v - total_a * R_SERIES - i2 * R_E) * i2
        sink = AMBIENT + R_SA * (p1 + 4 * p2)
        return [
            VT * math.log(i1 / i2) + (i1 - i2) * R_E - SPREAD + PHI * (t1 - t2),
            t1 - (sink + p1 * (R_CS + RTH_JC)),
            t2 - (sink + p2 * (R_CS + RTH_JC)),
        ]

    ref = scipy.optimize.fsolve(five, [1.2, 150.0, 150.0], xtol=1e-13)
    state = steady_state(stage, np.array([source_v]), np.array([total_a]))
    i2 = (total_a - ref[0]) / 4
    assert state.device_a[:, 0] == pytest.approx([ref[0], i2, i2, i2, i2], abs=1e-7)
    assert state.junction_c[:, 0] == pytest.approx([ref[1], *[ref[2]] * 4], abs=1e-5)
    assert not state.runaway_at[0]


@pytest.mark.parametrize("answer", [1, 2, 3, 5, 9, 17, 64, 100, 255, 256, None])
@pytest.mark.parametrize("start", [1, 2, 7])
def test_the_guided_count_search_finds_what_the_plain_one_finds(answer, start):
    """A monotone predicate with a margin 1 − (answer·1.3)/n (a load on n devices with 30 % slack in the
    estimate, so guesses miss): the smallest passing count, as ``fewest`` finds it, or None past 256."""
    asked = []

    def score(n):
        asked.append(n)
        ok = answer is not None and n >= answer
        margin = 1.0 - 1.3 * (answer or 1000) / n
        return ok, margin if (margin >= 0) == ok else None

    assert fewest_guided(score, start) == answer
    assert len(asked) == len(set(asked))  # nothing asked twice
