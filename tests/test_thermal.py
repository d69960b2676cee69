"""The thermal model against analytic cases, scipy's ODE solver and constructed values.

Sources: the Foster and Cauer forms of thermal impedance (JEDEC JESD51-14, §2 and the
annex on network models); the first-order RC step response (any circuits textbook, e.g.
Sedra & Smith, *Microelectronic Circuits*, the RC step response, from memory); the
constructed networks (invented numbers), recomputed here by independent means
(``scipy.integrate.solve_ivp`` and ``scipy.optimize.brentq``) rather than pasted.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.integrate
import scipy.optimize

from soacheck.thermal import Cauer, Foster, chain, foster_zth, pulse_train_zth_superposition
from soacheck.thermal_model import fit_foster
from soacheck.thermal_response import temperature_rise

from .conftest import FOUR  # constructed: a four-term junction-to-case network
from .helpers import zth_closed_form


def ladder_rhs(cauer: Cauer, power):
    """dT/dt of a Cauer ladder with power(t) into node 1: the obvious, slow reference."""
    c, r = cauer.c_j_per_k, cauer.r_k_per_w

    def rhs(t, temp):
        flow = np.empty_like(temp)  # heat leaving node k towards k+1 (reference after the last)
        flow[:-1] = (temp[:-1] - temp[1:]) / r[:-1]
        flow[-1] = temp[-1] / r[-1]
        into = np.r_[power(t), flow[:-1]]
        return (into - flow) / c

    return rhs


def foster_rhs(foster: Foster, power):
    def rhs(t, theta):
        return (foster.r_k_per_w * power(t) - theta) / foster.tau_s

    return rhs


# --------------------------------------------------------------------------- Zth


def test_one_rc_step_response():
    # textbook RC step: Z(t) = R (1 - e^(-t/tau)); at t = tau, 63.2 % of R
    assert foster_zth(2.0, np.array([1.5]), np.array([2.0])) == pytest.approx(1.5 * (1 - math.exp(-1)))


def test_zth_tends_to_rth():
    # Zth(inf) = sum R = Rth (JESD51-14: the Foster model's steady state)
    assert FOUR.zth(1e6) == pytest.approx(FOUR.rth_k_per_w) == pytest.approx(1.0)


def test_four_term_values():
    # by hand from Zth(t) = Σ Ri (1 - e^(-t/τi)): Zth(1 ms) = 0.178340, Zth(10 ms) = 0.437211 K/W
    assert FOUR.zth([1e-3, 1e-2]) == pytest.approx([0.178340, 0.437211], abs=5e-7)


# --------------------------------------------------------------------------- Foster <-> Cauer


def test_foster_to_cauer_constructed_case():
    # constructed, continued fraction of Z(s) in exact fractions by hand (Cauer 1926; Guillemin 1957, from memory): C'1 = 1/46, R'1 = 529/1015, C'2 = 41209/223560, R'2 = 486/1015
    cauer = Foster([0.4, 0.6], [0.01, 0.1]).to_cauer()
    assert cauer.c_j_per_k == pytest.approx([1 / 46, 41209 / 223560], rel=1e-12)
    assert cauer.r_k_per_w == pytest.approx([529 / 1015, 486 / 1015], rel=1e-12)
    # both give Zth(0.05 s) = 0.6333864 K/W
    assert cauer.to_foster().zth(0.05) == pytest.approx(0.6333864, abs=1e-7)


def test_foster_to_cauer_invariants_and_round_trip_for_six_stages():
    """Past about five stages the float expansion breaks down; exact fractions do not."""
    foster = Foster([0.01, 0.03, 0.08, 0.2, 0.3, 0.45], [2e-5, 2e-4, 2e-3, 2e-2, 0.2, 2.0])
    cauer = foster.to_cauer()
    capacities = foster.tau_s / foster.r_k_per_w
    # C'1 = 1/sum(1/Ci): at s -> inf the Foster capacities are in series (elementary)
    assert cauer.c_j_per_k[0] == pytest.approx(1 / np.sum(1 / capacities), rel=1e-12)
    assert cauer.rth_k_per_w == pytest.approx(foster.rth_k_per_w, rel=1e-12)
    back = cauer.to_foster()
    order = np.argsort(back.tau_s)
    assert back.tau_s[order] == pytest.approx(foster.tau_s, rel=1e-6)
    assert back.r_k_per_w[order] == pytest.approx(foster.r_k_per_w, rel=1e-6)


def test_cauer_ladder_against_solve_ivp():
    cauer = FOUR.to_cauer()
    t_end = 0.05
    sol = scipy.integrate.solve_ivp(
        ladder_rhs(cauer, lambda t: 100.0), (0, t_end), np.zeros(4), method="Radau", rtol=1e-10, atol=1e-12
    )
    assert sol.y[0, -1] == pytest.approx(100.0 * FOUR.zth(t_end), rel=1e-7)


# --------------------------------------------------------------------------- pulse trains


def test_pulse_train_exact_against_a_long_simulated_train():
    """tp = 1 ms, D = 0.1 (constructed: exact 0.242263, 100 periods of solve_ivp 0.2422611)."""
    tp, duty = 1e-3, 0.1
    period = tp / duty
    exact = FOUR.zth_train(tp, duty)
    assert exact == pytest.approx(0.242263, abs=1e-6)
    # simulate 100 periods of 1 W and read the rise at the end of the last pulse
    theta = np.zeros(4)
    for _ in range(100):
        for p, span in ((1.0, tp), (0.0, period - tp)):
            sol = scipy.integrate.solve_ivp(
                foster_rhs(FOUR, lambda t, p=p: p), (0, span), theta, method="LSODA", rtol=1e-10, atol=1e-13
            )
            theta = sol.y[:, -1]
            if p:
                peak = theta.sum()
    # 100 periods = 1 s = 10 tau of the slowest branch: within e^-10 of the steady state
    assert peak == pytest.approx(exact, rel=1e-4)


def test_pulse_train_approximations_and_why_single_pulse_is_not_safe():
    tp, duty = 1e-3, 0.1
    superposition = pulse_train_zth_superposition(tp, duty, FOUR.zth, FOUR.rth_k_per_w)
    simple = duty * FOUR.rth_k_per_w + (1 - duty) * FOUR.zth(tp)
    # constructed, from the closed forms below: two-pulse 0.248126, simple 0.260506; both above the exact 0.242263
    assert superposition == pytest.approx(0.248126, abs=1e-6)
    assert simple == pytest.approx(0.260506, abs=1e-6)
    exact = FOUR.zth_train(tp, duty)
    assert FOUR.zth(tp) < exact < superposition < simple
    # so P_max at Tc 25 °C, tj_max 150 °C is 515.97 W, not the single-pulse 700.91 W
    assert 125 / exact == pytest.approx(515.97, abs=0.01)
    assert 125 / FOUR.zth(tp) == pytest.approx(700.91, abs=0.01)


def test_pulse_train_limits():
    assert FOUR.zth_train(1e-3, 0.0) == pytest.approx(FOUR.zth(1e-3))  # D = 0: a single pulse
    assert FOUR.zth_train(1e-3, 1.0) == pytest.approx(FOUR.rth_k_per_w)  # D = 1: DC


# --------------------------------------------------------------------------- Tj along P(t)

WAVE_T = (0.0, 0.2, 0.3, 0.5)


def wave(t):
    return np.where(t < 0.2, 100.0, np.where(t < 0.3, 50.0, 0.0))


@pytest.mark.parametrize("dt", [1e-4, 0.1])
def test_tj_along_a_stepped_waveform_is_exact_for_any_step(dt):
    # constructed, sums of first-order step responses by hand: 100 W for 0-0.2 s, 50 W to 0.3 s, then 0: 93.233236, 56.708314, 4.291161 K
    t = np.round(np.arange(0, 0.5 + dt / 2, dt), 12)
    rise, _ = temperature_rise(t, wave(t), FOUR)
    at = [int(round(x / dt)) for x in WAVE_T[1:]]
    assert rise[at] == pytest.approx([93.233236, 56.708314, 4.291161], abs=2e-6)


def test_tj_against_solve_ivp_on_an_arbitrary_waveform():
    rng = np.random.default_rng(7)
    t = np.unique(np.r_[0.0, np.sort(rng.uniform(0, 0.4, 400)), 0.4])
    p = rng.uniform(0, 200, t.size)

    def held(tq):
        return p[min(np.searchsorted(t, tq, side="right") - 1, t.size - 1)]

    rise, _ = temperature_rise(t, p, FOUR)
    theta = np.zeros(4)
    reference = [0.0]
    for k in range(t.size - 1):
        sol = scipy.integrate.solve_ivp(
            foster_rhs(FOUR, lambda _t, k=k: p[k]), (t[k], t[k + 1]), theta, method="LSODA", rtol=1e-10, atol=1e-12
        )
        theta = sol.y[:, -1]
        reference.append(theta.sum())
    assert held(0.0) == p[0]
    assert rise == pytest.approx(np.array(reference), rel=1e-6, abs=1e-8)


def test_constant_power_settles_at_p_times_rth():
    # steady state Tj = Tc + P * Rth (JESD51-1 definition of Rth_jc)
    t = np.linspace(0, 5.0, 5001)
    rise, _ = temperature_rise(t, np.full(t.size, 80.0), FOUR)
    assert rise[-1] == pytest.approx(80.0 * FOUR.rth_k_per_w, rel=1e-12)


def test_time_to_tj_max_at_constant_power():
    # constructed: from 25 °C to 150 °C at 300 W takes 8.7417 ms
    t_hit = scipy.optimize.brentq(lambda t: 300 * zth_closed_form(t) - 125, 1e-6, 1.0, xtol=1e-12)
    assert t_hit == pytest.approx(8.7417e-3, abs=1e-7)
    t = np.linspace(0, 0.02, 20001)
    rise, _ = temperature_rise(t, np.full(t.size, 300.0), FOUR)
    assert t[np.argmax(rise >= 125)] == pytest.approx(t_hit, abs=1e-6)


def test_uneven_steps_match_even_steps():
    t_even = np.linspace(0, 0.5, 5001)
    rng = np.random.default_rng(3)
    t_uneven = np.unique(np.r_[t_even, rng.uniform(0, 0.5, 2000)])
    even, _ = temperature_rise(t_even, wave(t_even), FOUR)
    uneven, _ = temperature_rise(t_uneven, wave(t_uneven), FOUR)
    assert np.interp(t_even, t_uneven, uneven)[::500] == pytest.approx(even[::500], abs=1e-9)


def test_long_uneven_waveform_with_tiny_time_constants_does_not_overflow():
    # 20 s against a 100 µs branch: 200 000 time constants, far past e^709
    t = np.unique(np.r_[np.linspace(0, 20, 40001), np.random.default_rng(1).uniform(0, 20, 500)])
    rise, _ = temperature_rise(t, np.full(t.size, 10.0), FOUR)
    assert np.all(np.isfinite(rise)) and rise[-1] == pytest.approx(10.0, rel=1e-9)


@pytest.mark.parametrize("uneven", [False, True])
def test_chunked_waveform_equals_one_pass(uneven):
    t = np.linspace(0, 0.5, 5001)
    if uneven:
        t = np.unique(np.r_[t, np.random.default_rng(5).uniform(0, 0.5, 777)])
    p = wave(t) * (1 + 0.3 * np.sin(t * 200))
    whole, _ = temperature_rise(t, p, FOUR)
    parts, state, edge = [], None, None
    for chunk in np.array_split(np.arange(t.size), 7):
        kwargs = {} if edge is None else {"state": state, "p_before_w": p[edge], "t_before_s": t[edge]}
        rise, state = temperature_rise(t[chunk], p[chunk], FOUR, **kwargs)
        parts.append(rise)
        edge = chunk[-1]
    assert np.concatenate(parts) == pytest.approx(whole, rel=1e-12, abs=1e-12)


# --------------------------------------------------------------------------- heatsink chain


def test_heatsink_warm_up_matches_the_lumped_sink():
    """Constructed: 0.4 kg aluminium (c_p 897 J/(kg K), from memory) = 358.8 J/K,
    Rth_sa 0.6, Rth_cs 0.3 K/W, Ta 25 °C, 60 W: Tc(60 s) = 51.757 °C, Tc(600 s) = 76.782 °C,
    Tc(inf) = 79.0 °C for a lumped sink with tau = Rth_sa C. The chain also carries the
    part's own (tiny) heat capacity, which delays the case by about 0.04 K at 60 s."""
    ladder, case = chain(FOUR, case_sink_k_per_w=0.3, sink_ambient_k_per_w=0.6, sink_j_per_k=0.4 * 897)
    tc = 25 + 60 * ladder.modes(case).zth(np.array([60.0, 600.0, 1e9]))
    assert tc == pytest.approx([51.757, 76.782, 79.0], abs=0.05)
    assert tc[2] == pytest.approx(79.0, abs=1e-9)
    # junction at 0.1 s: chain 76.077 °C, where the quasi-static sum would say 91.980 °C
    tj = 25 + 60 * ladder.to_foster().zth(0.1)
    assert tj == pytest.approx(76.077, abs=1e-3)
    tau_sink = 0.6 * 0.4 * 897
    quasi = 25 + 60 * (0.6 * (1 - math.exp(-0.1 / tau_sink)) + 0.3 + FOUR.zth(0.1))
    assert quasi == pytest.approx(91.980, abs=1e-3) and tj < quasi


def test_chain_against_solve_ivp():
    ladder, case = chain(FOUR, case_sink_k_per_w=0.3, sink_ambient_k_per_w=0.6, sink_j_per_k=50.0)
    sol = scipy.integrate.solve_ivp(
        ladder_rhs(ladder, lambda t: 40.0),
        (0, 30.0),
        np.zeros(ladder.c_j_per_k.size),
        method="Radau",
        rtol=1e-10,
        atol=1e-12,
    )
    assert sol.y[0, -1] == pytest.approx(40 * ladder.to_foster().zth(30.0), rel=1e-6)
    assert case @ sol.y[:, -1] == pytest.approx(40 * ladder.modes(case).zth(30.0), rel=1e-6)


# --------------------------------------------------------------------------- fitting a digitized Zth


def test_fit_recovers_a_known_curve_with_non_negative_terms():
    t = np.geomspace(1e-5, 1.0, 25)
    z = np.round(FOUR.zth(t), 4)  # digitized to four decimals
    fit = fit_foster(t, z)
    assert np.all(fit.foster.r_k_per_w > 0) and np.all(fit.foster.tau_s > 0)
    assert fit.worst_relative_error < 0.02  # digitizing-level agreement
    assert fit.foster.rth_k_per_w == pytest.approx(1.0, rel=0.02)


@pytest.mark.parametrize(
    ("r", "tau", "dt"),
    [
        ([0.05, 0.15, 0.30, 0.50], [1e-4, 1e-3, 1e-2, 1e-1], 1e-5),  # constructed, paired
        ([0.02, 0.3, 0.6, 0.4], [1e-4, 2e-3, 5.0, 300.0], 1e-4),  # with a heatsink's minutes: stiff
        ([0.1, 0.5, 0.4], [1e-6, 1e-2, 1.0], 1e-3),  # a branch far faster than the step: not paired
    ],
)
def test_paired_filters_match_the_exact_branch_recursion(r, tau, dt):
    """The second-order pairing against the per-branch exact recursion (the prefix-sum path)."""
    from soacheck.thermal_response import _branch_any_step

    net = Foster(r, tau)
    t = np.arange(20001) * dt
    p = 100 + 80 * np.sin(t * 37.0 / (dt * 1000)) * (np.arange(t.size) % 7 < 4)
    fast, state = temperature_rise(t, p, net)
    slow = sum(_branch_any_step(t, p, ri, ti, 0.0) for ri, ti in zip(r, tau, strict=True))
    assert fast == pytest.approx(slow, rel=1e-8, abs=1e-10)
    exact_last = [_branch_any_step(t, p, ri, ti, 0.0)[-1] for ri, ti in zip(r, tau, strict=True)]
    assert state.theta_k == pytest.approx(exact_last, rel=1e-7, abs=1e-10)
