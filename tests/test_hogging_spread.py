"""Hogging of paralleled bipolars with a V_BE spread, decided on the same devices matched.

The pair: two npn devices of the constructed reference part (rth_jc 1 K/W, no thermal model, cases
held at 25 °C), no emitter resistors, V_BE 5 mV apart, 3 A in all, common base drive. Each obeys
V_BE = V_T ln(I/I_S) + φ(T_j − 25 °C), V_T = kT/q = 25.69 mV at 25 °C, φ = −2 mV/K at constant current
(Sedra & Smith, *Microelectronic Circuits*, from memory), and T_j = 25 °C + Rth·V·I.

Stability (the classic electro-thermal criterion: a device warming by δT draws δI = (∂I/∂T)·δT more,
which heats it by Rth·V·δI; the loop holds while Rth·V·∂I/∂T < 1; Spirito, Breglio, d'Alessandro,
Rinaldi, MIEL 2002, for any device; for paralleled bipolars Arnold & Zoroglu, IEEE Trans. Electron
Devices ED-21, 1974, from memory). At a fixed base voltage ∂I/∂T = I·|φ|/V_T, so the matched pair's
equal split, I/2 each, has the stage gain G = Rth·V·|φ|·(I/2)/V_T, reaching 1 at V* = V_T/(Rth·|φ|·I/2)
= 8.563 V for 3 A and at I* = 2·V_T/(Rth·|φ|·V) = 1.2845 A for 20 V.

Above that, the pair with its spread settles straight into the state where the device of the lower
V_BE takes the current (the one root of V_T ln(I₁/I₂) = Δ + |φ|·Rth·V·(I₁ − I₂) with I₁ > I/2, by
brentq), whose own eigenvalue |φ|·Rth·2V/(V_T/I₁ + V_T/I₂) is below 1: judged on the state it settles
in, nothing would be flagged. It is current hogging, and is reported as such; like hogging of matched
devices it is reported and checked, not failed in itself.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.optimize

from soacheck.envelope import Envelope, check_envelope
from soacheck.stage import Stage
from soacheck.stage_run import run_stage

from .helpers import exit_code_for, invoke

VT = 0.02569  # V, kT/q at 25 °C (Sedra & Smith, from memory)
PHI = -0.002  # V/K, dV_BE/dT at constant current (Sedra & Smith, from memory)
RTH = 1.0  # K/W, the reference part's rth_jc (constructed)
DELTA = 0.005  # V, the pair's V_BE spread
TOTAL = 3.0  # A


def equal_split_gain(volts, total_a=TOTAL):
    """G = Rth·V·∂I/∂T of each device at the matched pair's equal split, ∂I/∂T = (I/2)·|φ|/V_T. [1]"""
    return RTH * np.asarray(volts) * abs(PHI) * (np.asarray(total_a) / 2) / VT


V_STAR = VT / (RTH * abs(PHI) * TOTAL / 2)  # V: G = 1 at 3 A


def spread_split(volts: float, total_a: float = TOTAL) -> tuple[float, float]:
    """The pair's settled currents, the lower-V_BE device first: V_T ln(I₁/I₂) = Δ + |φ|·Rth·V·(I₁ − I₂),
    I₂ = I − I₁, equal base voltage; the residual is −Δ at I₁ = I/2 and +∞ as I₁ → I, falling in between
    (its slope 4V_T/I − 2|φ|·Rth·V < 0 past threshold) before the logarithm turns it, so one root
    lies in (I/2, I): brentq. [A]"""

    def residual(i1):
        i2 = total_a - i1
        return VT * math.log(i1 / i2) - DELTA - abs(PHI) * RTH * volts * (i1 - i2)

    assert residual(total_a / 2) < 0 < residual(total_a * (1 - 1e-12))
    i1 = scipy.optimize.brentq(residual, total_a / 2, total_a * (1 - 1e-12), xtol=1e-15, rtol=1e-14)
    return i1, total_a - i1


def pair_eigenvalue(i1: float, i2: float, volts: float) -> float:
    """The pair's eigenvalue at an unequal split, no emitter resistors: |φ|·Rth·(V + V)/(V_T/I₁ + V_T/I₂)
    (by hand in test_hogging's pair test). [1]"""
    return abs(PHI) * RTH * 2 * volts / (VT / i1 + VT / i2)


@pytest.fixture
def pair(bjt):
    return Stage(bjt, 2, case_temp_c=25.0, vbe_spread_v=DELTA)


def stage_file(tmp_path) -> str:
    """The pair as a stage file beside the ``bjt`` part folder."""
    path = tmp_path / "stage.toml"
    path.write_text(f'part = "bjt"\ncount = 2\ncase_temp = 25\nvbe_spread = {DELTA}\n')
    return str(path)


def ramp_and_hold(samples: int) -> tuple[np.ndarray, np.ndarray]:
    """0.5 → 3 A over 8 s, then 3 A held to 10 s: times [s] and total currents [A], ``(samples,)``. Each junction
    follows the power of the sample before (zero-order hold), so the steady split shows only where it is held."""
    t = np.linspace(0.0, 10.0, samples)
    return t, np.minimum(0.5 + (TOTAL - 0.5) * t / 8.0, TOTAL)


def hogging_notes(payload: dict) -> list[str]:
    return [note for note in payload["assumptions"] if "current hogging" in note]


def test_the_reference_split_past_threshold_looks_stable_on_its_own():
    """The case the old rule missed: 3 A at 20 V, G = 2.34 at the equal split, yet the state the spread pair
    settles in has an eigenvalue well below 1."""
    assert equal_split_gain(20.0) == pytest.approx(2.335, abs=1e-3)
    i1, i2 = spread_split(20.0)
    assert i1 > 2.9 and pair_eigenvalue(i1, i2, 20.0) < 0.2


def test_a_run_past_the_matched_threshold_reports_hogging(pair, bjt, tmp_path):
    """A current ramp 0.5 → 3 A at 20 V: hogging from I* = 1.2845 A on, where the matched split's gain reaches 1.

    The run settles into the lower-V_BE device taking the current (the brentq split at 3 A), every state's own
    stage gain below 1; it passes (Q1 at 20 V, about 2.97 A: under the 125 W line's 6.25 A, junction about
    85 °C), so hogging is reported, not failed: exit 0.
    """
    samples = 201
    t, total = ramp_and_hold(samples)
    run = run_stage(pair, t, np.full(samples, 20.0), total)
    gain = equal_split_gain(20.0, total)
    clear = np.abs(gain - 1.0) > 0.01  # the threshold sample itself is either side
    assert np.array_equal(run.hogging[clear], (gain >= 1.0)[clear])
    assert run.passed and float(np.max(run.stage_gain)) < 1.0  # each state reported looks stable on its own
    i1, i2 = spread_split(20.0)
    # as below threshold, the relaxation's stop leaves about 1e-4 K a junction; at the hog's eigenvalue 0.07
    # that moves I₂ (0.025 A) by |φ|·1e-4 K/(V_T/I₂) ≈ 2e-7 A, 1e-5 of it
    assert run.device_a[:, -1] == pytest.approx([i1, i2], rel=1e-5)

    t, total = np.linspace(0.0, 10.0, samples), np.linspace(0.5, TOTAL, samples)  # the sweep's ramp
    gain = equal_split_gain(20.0, total)
    args = ["sweep", stage_file(tmp_path), "--ramp", "current", "--from", "0.5", "--to", "3", "--at", "20"]
    result = invoke(*args, "--time", "10s", "--samples", str(samples), "--json")
    payload = json.loads(result.stdout)
    assert result.exit_code == exit_code_for(payload) == 0, result.output
    (note,) = hogging_notes(payload)
    first = float(t[np.argmax(gain >= 1.0)])  # the first sample past I*: t = 10 s·(I* − 0.5)/2.5
    assert note.startswith(f"from t = {first:g} s the devices cannot share the current")
    text = invoke(*args, "--time", "10s", "--samples", str(samples)).stdout
    assert "current hogging" in text


def test_the_same_pair_below_threshold_does_not_hog(pair, tmp_path):
    """3 A at 6 V: G = 0.70 at the equal split; the pair shares unevenly (brentq), no hogging."""
    assert equal_split_gain(6.0) == pytest.approx(0.70, abs=0.01)
    t, total = ramp_and_hold(101)
    run = run_stage(pair, t, np.full(t.size, 6.0), total)
    assert not run.hogging.any()
    # a run's relaxation stops at steps under 1e-4 K (SETTLED_K), at loop gain 0.7 leaving up to
    # 1e-4·0.7/0.3 K a junction, 5e-4 K between them, which moves I₁ by |φ|·5e-4 K/(V_T/I₁ + V_T/I₂) = 3e-5 A
    assert run.device_a[:, -1] == pytest.approx(spread_split(6.0), abs=1e-4)
    args = ["sweep", stage_file(tmp_path), "--ramp", "current", "--from", "0.5", "--to", "3", "--at", "6"]
    payload = json.loads(invoke(*args, "--time", "10s", "--json").stdout)
    assert not hogging_notes(payload)


def test_an_envelope_check_past_the_matched_threshold_reports_hogging(pair, tmp_path):
    """5–12 V at 3 A (1000 W: the edge stays at 3 A): hogging at the edge points from V* = 8.563 V on.

    Each point settles into the brentq split, inside its SOA (at 12 V the hot device carries about 2.8 A,
    under 125 W/12 V = 10.4 A), so the check passes with hogging reported: exit 0.
    """
    envelope = Envelope(5.0, 12.0, TOTAL, 1000.0, ambient_c=None, case_temp_c=25.0)
    check = check_envelope(pair, envelope)
    v = check.source_v
    clear = np.abs(v / V_STAR - 1.0) > 0.005
    assert np.array_equal(check.state.hogging[clear], (v >= V_STAR)[clear])
    assert check.passed and float(np.max(check.state.stage_gain)) < 1.0
    assert check.state.device_a[:, -1] == pytest.approx(spread_split(12.0), rel=1e-5)

    path = tmp_path / "envelope.toml"
    path.write_text(f"voltage = [5, 12]\ncurrent = {TOTAL}\npower = 1000\ncase_temp = 25\n")
    result = invoke("envelope", stage_file(tmp_path), "--check", path, "--json")
    payload = json.loads(result.stdout)
    assert result.exit_code == exit_code_for(payload) == 0, result.output
    (note,) = hogging_notes(payload)
    first = float(v[np.argmax(v >= V_STAR)])
    assert V_STAR <= first < V_STAR * (12 / 5) ** (1 / 399) * (1 + 1e-12)  # the next of 400 log-spaced points
    assert note.startswith(f"from {first:g} V the devices cannot share the current")
    assert "current hogging" in invoke("envelope", stage_file(tmp_path), "--check", path).stdout


def test_the_same_envelope_below_threshold_does_not_hog(pair, tmp_path):
    """3–6 V at 3 A: G at most 0.70, no hogging; the split at 6 V is the brentq one."""
    check = check_envelope(pair, Envelope(3.0, 6.0, TOTAL, 1000.0, ambient_c=None, case_temp_c=25.0))
    assert not check.state.hogging.any()
    assert check.state.device_a[:, -1] == pytest.approx(spread_split(6.0), rel=1e-6)
    path = tmp_path / "envelope.toml"
    path.write_text(f"voltage = [3, 6]\ncurrent = {TOTAL}\npower = 1000\ncase_temp = 25\n")
    payload = json.loads(invoke("envelope", stage_file(tmp_path), "--check", path, "--json").stdout)
    assert not hogging_notes(payload)


@pytest.mark.parametrize(("volts", "hogs"), [(20.0, True), (6.0, False)])
def test_sharing_decides_as_runs_and_envelopes_do(pair, volts, hogs):
    """Every draw of offsets in the 5 mV band hogs above the matched threshold, none below it."""
    import soacheck

    assert bool(equal_split_gain(volts) >= 1.0) is hogs
    spread = soacheck.sharing(pair, current=TOTAL, voltage=volts, draws=200).spread
    assert spread.hogging_fraction == (1.0 if hogs else 0.0) and spread.runaway_fraction == 0.0


def test_a_stage_held_at_a_whole_number_of_degrees_hogs_as_at_the_same_float(bjt):
    """``Stage(case_temp_c=25)`` from Python: the matched pair past its threshold (3 A at 20 V) looks for the
    state with Q1 taking the current from temperatures offset by a float; it stopped with an internal error
    (integer arrays) and now answers as with 25.0."""
    import soacheck

    answers = [
        soacheck.sweep(Stage(bjt, 2, case_temp_c=case), ramp="current", start=2.9, stop=TOTAL, at=20.0).to_dict()
        for case in (25, 25.0)
    ]
    assert answers[0] == answers[1]
    assert any("Q1 takes the current" in note for note in answers[0]["assumptions"])
    envelope = Envelope(15.0, 20.0, TOTAL, 1000.0, ambient_c=None, case_temp_c=25)
    assert check_envelope(Stage(bjt, 2, case_temp_c=25), envelope).state.hogging.all()


def test_a_search_skips_the_matched_set_but_judges_alike(pair):
    """``verdict_only`` (compare's searches) leaves out where the matched devices cannot share, which
    changes notes only: each point's margin and limit, and the verdict, are those of the full check,
    here past V* = 8.563 V where the full check reports hogging and the search does not."""
    envelope = Envelope(5.0, 12.0, TOTAL, 1000.0, ambient_c=None, case_temp_c=25.0)
    full, search = check_envelope(pair, envelope), check_envelope(pair, envelope, verdict_only=True)
    assert full.state.hogging.any() and not search.state.hogging.any()
    assert search.passed == full.passed
    assert np.array_equal(search.margin, full.margin) and np.array_equal(search.limit, full.limit)
    assert not any("cannot share" in note for note in search.assumptions)
    assert any("cannot share" in note for note in full.assumptions)
