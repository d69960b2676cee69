"""Electro-thermal stability of paralleled devices: the physical criterion, not the iteration's.

A settled state T* = f(T*) of the junction temperatures is stable where every eigenvalue λ of the
Jacobian J = ∂f/∂T has a real part below 1: the linearised junctions C·dδT/dt = (J − 1)·δT/Z decay
(Lyapunov's indirect method, H. K. Khalil, *Nonlinear Systems*, 3rd ed., Theorem 4.7, from memory; for
one device the classic electro-thermal condition Rth·∂P/∂Tj < 1, Spirito, Breglio, d'Alessandro,
Rinaldi, MIEL 2002). The plain iteration T ← f(T) converges only where every |λ| < 1: at λ ≤ −1 it
oscillates about a stable state.

The FET pair: two nmos devices of the constructed reference part (rth_jc 1 K/W, tj_max 150 °C, no
thermal model, cases held at 25 °C), no source resistors, V_GS 20 mV apart, whose invented transfer
curves are square laws I = K(T)·(V_GS − 3.5 V)² with K = 8 A/V² at 25 °C and 0.5 A/V² at 125 °C (the
textbook saturation law, Sedra & Smith, from memory; the same threshold at both temperatures, so the
zero-temperature-coefficient point lies at the threshold and every current is above it: the current
falls steeply as a device warms). Between the curves V_GS(I, T) is straight in T at fixed I (the model
the part format states). 10 A at 24 V: each device near 5 A, 120 W, T_j ≈ 145 °C.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.optimize

from soacheck.envelope import Envelope, check_envelope
from soacheck.partfiles import read_part
from soacheck.stage import Stage
from soacheck.stage_run import run_stage
from soacheck.steady_state import steady_state

from .conftest import write_part
from .helpers import invoke
from .test_hogging import hog_split
from .test_mosfet import FET_SOA

VTH = 3.5  # V, both curves (invented)
K_COOL, K_HOT = 8.0, 0.5  # A/V² at 25 °C and 125 °C (invented: a steep fall with temperature)
OFFSET = 0.02  # V, the pair's V_GS spread
TOTAL, VOLTS = 10.0, 24.0  # A, V
CASE = 25.0  # °C
RTH = 1.0  # K/W, the reference part's rth_jc (constructed)


@pytest.fixture
def falling_fet(tmp_path):
    folder = write_part(tmp_path / "falling", soa=FET_SOA, kind="nmos")
    rows = ["temp,vgs,current"]
    for temp, k in ((25.0, K_COOL), (125.0, K_HOT)):
        for current in np.geomspace(0.01, 100.0, 12):
            rows.append(f"{temp:g},{float(VTH + math.sqrt(current / k))!r},{float(current)!r}")
    (folder / "transfer.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    return read_part(folder)


def vgs(i_a: float, t_c: float) -> float:
    """V_GS at current and junction temperature: the square-law curves, straight in T between them. [V]"""
    w = (t_c - 25.0) / 100.0
    return VTH + math.sqrt(i_a) * ((1 - w) / math.sqrt(K_COOL) + w / math.sqrt(K_HOT))


def split_at(t1: float, t2: float, volts: float = VOLTS) -> float:
    """Q1's current (20 mV lower V_GS) for given junction temperatures, a common gate: brentq. [A]"""
    return scipy.optimize.brentq(
        lambda i1: vgs(i1, t1) - OFFSET - vgs(TOTAL - i1, t2), 1e-9, TOTAL - 1e-9, xtol=1e-14, rtol=1e-15
    )


def settled_temperatures(tj: np.ndarray, volts: float = VOLTS) -> np.ndarray:
    """f(T): the junction temperatures the dissipation at ``tj`` settles to, T_k = 25 °C + Rth·V·I_k. [°C]"""
    i1 = split_at(tj[0], tj[1], volts)
    return CASE + RTH * volts * np.array([i1, TOTAL - i1])


def reference_state(volts: float = VOLTS) -> np.ndarray:
    """(I₁, T₁, T₂) by scipy.optimize.fsolve on the stage's equations written out."""

    def equations(x):
        i1, t1, t2 = x
        return [
            vgs(i1, t1) - OFFSET - vgs(TOTAL - i1, t2),
            t1 - CASE - RTH * volts * i1,
            t2 - CASE - RTH * volts * (TOTAL - i1),
        ]

    guess = CASE + RTH * volts * TOTAL / 2
    return scipy.optimize.fsolve(equations, [TOTAL / 2, guess, guess], xtol=1e-12)


def finite_difference_eigenvalues(tj: np.ndarray, volts: float = VOLTS, step_k: float = 1e-3) -> np.ndarray:
    """Eigenvalues of ∂f/∂T at ``tj`` by central differences, numpy.linalg.eigvals."""
    jacobian = np.empty((2, 2))
    for j in range(2):
        up, down = tj.copy(), tj.copy()
        up[j] += step_k
        down[j] -= step_k
        jacobian[:, j] = (settled_temperatures(up, volts) - settled_temperatures(down, volts)) / (2 * step_k)
    return np.linalg.eigvals(jacobian)


@pytest.fixture
def pair(falling_fet):
    return Stage(falling_fet, 2, vbe_spread_v=OFFSET, case_temp_c=CASE)


def test_the_state_is_stable_though_plain_iteration_would_oscillate():
    """At the fsolve state one eigenvalue of the finite-difference Jacobian is below −1 (the difference mode:
    a warmer device takes less current) and none reaches a real part of 1: stable, and T ← f(T) diverges."""
    _, t1, t2 = reference_state()
    eigenvalues = finite_difference_eigenvalues(np.array([t1, t2]))
    assert eigenvalues.real.min() <= -1.05
    assert eigenvalues.real.max() < 1.0


def test_steady_state_finds_the_stable_state_past_an_eigenvalue_of_minus_one(pair):
    """Before, the state was refused for its eigenvalue ≤ −1 and the plain relaxation that followed oscillated:
    reported as runaway. Now: fsolve's state, neither runaway nor hogging, its stage gain below 1."""
    i1, t1, t2 = reference_state()
    state = steady_state(pair, np.array([VOLTS]), np.array([TOTAL]))
    assert not state.runaway_at[0] and not state.hogging[0]
    assert state.device_a[:, 0] == pytest.approx([i1, TOTAL - i1], rel=1e-7)
    assert state.junction_c[:, 0] == pytest.approx([t1, t2], abs=1e-4)
    eigenvalues = finite_difference_eigenvalues(np.array([t1, t2]))
    assert state.stage_gain[0] == pytest.approx(eigenvalues.real.max(), abs=1e-5)


@pytest.mark.parametrize("volts", [20.0, 30.0])
def test_steady_states_on_either_side_of_minus_one_agree_with_fsolve(pair, volts):
    """20 V (λ ≈ −0.94, where Anderson mixing from equal temperatures fell into an oscillation and the state
    was reported as hogging) and 30 V (λ ≈ −1.4, junctions past tj_max but no runaway)."""
    i1, t1, t2 = reference_state(volts)
    state = steady_state(pair, np.array([volts]), np.array([TOTAL]))
    assert not state.runaway_at[0] and not state.hogging[0]
    assert state.device_a[:, 0] == pytest.approx([i1, TOTAL - i1], rel=1e-7)
    assert state.junction_c[:, 0] == pytest.approx([t1, t2], abs=1e-4)


def test_envelope_check_passes_the_pair_without_runaway_or_hogging(pair, tmp_path):
    """10 A from 20 to 24 V, cases held at 25 °C: each device inside its DC line (from (8.3333 V, 15 A) to
    (100 V, 1.25 A) straight in log-log: 5.21 A at 24 V against fsolve's 5.01 A), junctions below 150 °C, no thermal-instability cap (no positive α): it passes,
    with no runaway or hogging note."""
    check = check_envelope(pair, Envelope(20.0, VOLTS, TOTAL, 1000.0, ambient_c=None, case_temp_c=CASE))
    summary = check.summary()
    assert summary["verdict"] == "pass", summary
    assert not check.state.runaway_at.any() and not check.state.hogging.any()
    assert summary["stage_gain_peak"] < 1.0
    assert not [note for note in check.assumptions if "hogging" in note or "runaway" in note]
    i1, _, _ = reference_state()
    slope = math.log(1.25 / 15.0) / math.log(100.0 / 8.3333)  # FET_SOA's DC line, straight in log-log
    allowed = 15.0 * (VOLTS / 8.3333) ** slope
    assert summary["margin"] == pytest.approx(1 - i1 / allowed, abs=1e-7)


def matched_pair(bjt) -> Stage:
    """Two matched bipolars, no emitter resistors, cases held at 25 °C (test_hogging's pair)."""
    return Stage(bjt, 2, case_temp_c=25.0)


def test_a_hogging_run_and_an_envelope_check_report_the_same_stage_gain(bjt):
    """3 A held at 60 V through the matched pair: the equal split's gain is 7.0, so Q1 takes the current.

    The state it takes: I₁, I₂ by brentq (test_hogging.hog_split), its eigenvalue by hand
    |φ|·Rth·2V/(V_T/I₁ + V_T/I₂) (test_hogging's pair Jacobian, no emitter resistors), far below 1. The run's
    first samples are on their way into that state (junctions start at the case, near the equal split, gain
    about 7) and gave the run's stage_gain_peak before, 1 or more as though the state could not hold; now
    both report a gain below 1 (the states that hold), the envelope check that state's own.
    """
    vt, phi = 0.02569, 0.002  # V, V/K (Sedra & Smith, from memory)
    i1, i2 = hog_split(60.0)
    expected = phi * 1.0 * 2 * 60.0 / (vt / i1 + vt / i2)
    stage = matched_pair(bjt)
    t = np.linspace(0.0, 10.0, 40)
    run = run_stage(stage, t, np.full(t.size, 60.0), np.full(t.size, 3.0))
    check = check_envelope(stage, Envelope(60.0, 61.0, 3.0, 1000.0, ambient_c=None, case_temp_c=25.0)).summary()
    assert expected < 0.01
    assert run.hogging.all() and not run.runaway
    assert run.stage_gain.max() > 6.0  # the first samples, near the equal split
    assert expected * (1 - 2e-3) <= run.summary()["stage_gain_peak"] < 1.0
    assert check["stage_gain_peak"] == pytest.approx(expected, rel=2e-3)


def hogging_notes(notes) -> list[str]:
    return [note for note in notes if "Q1 takes the current" in note or "current hogging" in note]


def test_a_matched_run_hogging_from_its_first_sample_says_so_once(bjt):
    """From t = 0 there is no shared state before the hogging to join."""
    t = np.linspace(0.0, 10.0, 40)
    run = run_stage(matched_pair(bjt), t, np.full(t.size, 60.0), np.full(t.size, 3.0))
    (note,) = hogging_notes(run.assumptions)
    assert note.startswith("from t = 0 s ")
    assert "before" not in note


def test_a_spread_run_hogging_from_its_first_sample_says_so_once(bjt, tmp_path):
    """A pair 2 mV apart, 3 A held at 20 V (the matched split's gain Rth·V·|φ|·(I/2)/V_T = 2.34): junctions start
    at the case, so the offset split of the first sample is itself unstable, and the matched set decides the
    rest. One note, from t = 0 s, naming the spread and every sample; no 1 µV tip (the spread tips it)."""
    stage_path = tmp_path / "stage.toml"
    stage_path.write_text('part = "bjt"\ncount = 2\ncase_temp = 25\nvbe_spread = 0.002\n', encoding="utf-8")
    result = invoke("sweep", stage_path, "--ramp", "current", "--from", "3", "--to", "3", "--at", "20", "--json")
    payload = json.loads(result.stdout)
    (note,) = hogging_notes(payload["assumptions"])
    assert note.startswith("from t = 0 s the devices cannot share the current")
    assert "1 µV" not in note
    samples = len(payload["samples"]) if "samples" in payload else None
    assert f"of {samples} samples" in note if samples else "samples)" in note
