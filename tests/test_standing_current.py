"""Pulses on a standing current, and repeated pulses judged at the junction temperature where they start.

References: the periodic junction temperature is checked against an explicit simulation of
many pulses with scipy (``solve_ivp`` on each Foster branch, dθ/dt = (R·P(t) − θ)/τ, one
call per pulse and per pause so that no step straddles a jump of power); the second-breakdown
lines against closed forms derived in the docstrings.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import scipy.integrate
from typer.testing import CliRunner

import soacheck
from soacheck.boundary import allowed_current
from soacheck.cli import app
from soacheck.partfiles import read_part

from .conftest import FOUR, THERMAL, write_part
from .helpers import zth_train_closed_form, zth_train_start_closed_form

# a FET-like curve with no steep segment: the 15 A current limit, then 125 W to 100 V (constructed)
POWER_ONLY_SOA = "pulse,voltage,current\ndc,1,15\ndc,8.3333,15\ndc,100,1.25\n"
TP_S, DUTY, TC_C = 3e-3, 0.1, 25.0


def simulated_periodic_tj(p_w: float, p_idle_w: float, *, periods: int = 60) -> tuple[float, float]:
    """Junction rise at the end of the last pulse and just before it, from rest, by solve_ivp. [K]

    60 periods of 30 ms are 18 time constants of the slowest branch (0.1 s): settled to e^-18.
    """
    r, tau = FOUR.r_k_per_w, FOUR.tau_s
    theta = np.zeros(r.size)
    period = TP_S / DUTY
    start = peak = 0.0
    for _ in range(periods):
        for width, power in ((TP_S, p_w), (period - TP_S, p_idle_w)):
            sol = scipy.integrate.solve_ivp(
                lambda _t, th, p=power: (r * p - th) / tau, (0.0, width), theta, method="LSODA", rtol=1e-10, atol=1e-12
            )
            if power == p_w:
                start = float(theta.sum())
            theta = sol.y[:, -1]
            if power == p_w:
                peak = float(theta.sum())
    return peak, start


def test_superposition_gives_the_periodic_peak_and_start_of_a_many_pulse_simulation():
    """Tj − Tc = P_idle·Rth + (P − P_idle)·Z at the end (Zth(tp, D)) and the start (Z_start) of a pulse."""
    p_w, p_idle_w = 30.0 * 15.0, 30.0 * 1.3  # W: 15 A pulses on 1.3 A at 30 V
    peak, start = simulated_periodic_tj(p_w, p_idle_w)
    rth = FOUR.rth_k_per_w
    assert p_idle_w * rth + (p_w - p_idle_w) * float(FOUR.zth_train(TP_S, DUTY)) == pytest.approx(peak, abs=1e-4)
    assert p_idle_w * rth + (p_w - p_idle_w) * float(FOUR.zth_train_start(TP_S, DUTY)) == pytest.approx(start, abs=1e-4)


@pytest.fixture
def power_only_part(tmp_path):
    return read_part(write_part(tmp_path / "fet-power", soa=POWER_ONLY_SOA, kind="nmos", extra=THERMAL))


def test_allowed_pulse_current_on_a_standing_current_brings_the_simulated_peak_to_tj_max(power_only_part):
    """At the allowed current the simulated periodic peak is tj_max = 150 °C (the definition of the limit)."""
    idle_a, volts = 1.3, 30.0
    got = allowed_current(volts, power_only_part, pulse_s=TP_S, duty=DUTY, idle_current_a=idle_a, tc_c=TC_C)
    assert got.limit[0] == "power"
    peak, _ = simulated_periodic_tj(volts * got.current_a[0], volts * idle_a)
    assert TC_C + peak == pytest.approx(150.0, abs=1e-3)
    alone = allowed_current(volts, power_only_part, pulse_s=TP_S, duty=DUTY, tc_c=TC_C).current_a[0]
    assert got.current_a[0] < alone


def test_a_standing_current_outside_the_dc_boundary_allows_no_pulse(power_only_part):
    """5 A standing at 30 V is 150 W, above the DC 125 W line: nothing is allowed on top of it."""
    got = allowed_current(30.0, power_only_part, pulse_s=TP_S, duty=DUTY, idle_current_a=5.0)
    assert got.current_a[0] == 0.0 and got.limit[0] == "power"


def test_without_a_thermal_model_a_pulse_on_a_standing_current_is_judged_as_dc(tmp_path):
    part = read_part(write_part(tmp_path / "no-model"))
    on_idle = allowed_current(20.0, part, pulse_s=1e-3, idle_current_a=0.5)
    dc = allowed_current(20.0, part)
    assert on_idle.current_a[0] == dc.current_a[0] and on_idle.curve_pulse_s[0] == math.inf


def test_second_breakdown_of_a_pulse_on_a_standing_current_is_derated_where_the_pulse_starts(modelled_part):
    """The reference part (no derating table: second breakdown derates like power) at 60 V, 3 ms, D 0.1, 0.5 A idle.

    The 3 ms pulse takes its second-breakdown line from the DC curve (the next longer width):
    c = 3.125·(60/40)^m, m = ln(0.5/3.125)/ln(100/40). The pulse starts at
    T_s = Tc + V·I_idle·(Rth − Z_s) + V·I·Z_s, so I = c·(150 − T_s)/125 solves to
    I = c·(125 − V·I_idle·(Rth − Z_s))/(125 + c·V·Z_s) (hand derivation).
    """
    volts, idle_a = 60.0, 0.5
    m = math.log(0.5 / 3.125) / math.log(100 / 40)
    c = 3.125 * (volts / 40) ** m
    z_s = zth_train_start_closed_form(TP_S, DUTY)  # written out in tests/helpers.py
    expected = c * (125 - volts * idle_a * (1.0 - z_s)) / (125 + c * volts * z_s)
    got = allowed_current(volts, modelled_part, pulse_s=TP_S, duty=DUTY, idle_current_a=idle_a)
    assert got.limit[0] == "second_breakdown"
    assert got.current_a[0] == pytest.approx(expected, rel=1e-9)


def test_a_single_pulse_from_the_case_temperature_is_unchanged(modelled_part):
    """No duty and no standing current: the pulse starts at Tc, so the 1 ms curve's own lines apply as before."""
    got = allowed_current(90.0, modelled_part, pulse_s=1e-3)
    # the 1 ms curve's second breakdown through (40 V, 10 A) and (100 V, 2 A), read at 90 V (constructed)
    assert got.current_a[0] == pytest.approx(10 * (90 / 40) ** (math.log(0.2) / math.log(2.5)), rel=1e-12)


def test_check_idle_current_fails_a_pulse_that_passes_alone(tmp_path):
    folder = write_part(tmp_path / "fet-power", soa=POWER_ONLY_SOA, kind="nmos", extra=THERMAL)
    args = ["check", str(folder), "-v", "30", "-i", "10.5", "--pulse", "3ms", "--duty", "0.1", "--json"]
    runner = CliRunner(env={"COLUMNS": "120"})
    alone = runner.invoke(app, args)
    assert alone.exit_code == 0, alone.output
    result = runner.invoke(app, [*args, "--idle-current", "1.3"])
    assert result.exit_code == 1, result.output
    payload = json.loads(result.stdout)
    (point,) = payload["points"]
    assert point["idle_current"] == 1.3 and point["limit"] == "power"
    assert any("P_idle" in note for note in payload["assumptions"])


def test_points_file_idle_current_column(tmp_path):
    folder = write_part(tmp_path / "fet-power", soa=POWER_ONLY_SOA, kind="nmos", extra=THERMAL)
    points = tmp_path / "points.csv"
    points.write_text("voltage,current,pulse,duty,idle_current\n30,10.5,3ms,0.1,0\n30,10.5,3ms,0.1,1.3\n")
    result = CliRunner(env={"COLUMNS": "120"}).invoke(app, ["check", str(folder), "-p", str(points), "--json"])
    assert result.exit_code == 1, result.output
    inside = [p["inside"] for p in json.loads(result.stdout)["points"]]
    assert inside == [True, False]


def test_a_negative_idle_current_names_the_line(tmp_path):
    folder = write_part(tmp_path / "fet-power", soa=POWER_ONLY_SOA, kind="nmos", extra=THERMAL)
    points = tmp_path / "points.csv"
    points.write_text("voltage,current,idle_current\n30,9,0\n30,9,-1\n")
    result = CliRunner(env={"COLUMNS": "120"}).invoke(app, ["check", str(folder), "-p", str(points)])
    assert result.exit_code == 2, result.output
    assert "line 3" in result.output and "idle_current" in result.output


def _pulse_after(standing_a: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """1 s at 60 V and ``standing_a``, a 1 ms pulse of 2.2 A at 90 V, then 0.1 s standing again (0.1 ms steps)."""
    t = np.arange(0.0, 1.101, 1e-4)
    pulse = (t >= 1.0) & (t < 1.001 - 1e-9)
    v = np.where(pulse, 90.0, 60.0)
    i = np.where(pulse, 2.2, standing_a)
    return t, v, i


def test_a_trace_pulse_on_a_standing_current_is_judged_where_the_junction_starts(modelled_part):
    """The 1 ms curve's second breakdown at 90 V is 10·(90/40)^m = 2.406 A at 25 °C, m = ln(0.2)/ln(2.5).

    From rest the 2.2 A pulse is inside it. After 1 s of 0.4 A at 60 V (24 W, about ten time
    constants of the slowest branch) the junction starts the pulse at 25 + 24·Σ Rᵢ(1 − e^(−1 s/τᵢ))
    ≈ 49.0 °C, where the line is derated like the thermal limit (no table) to
    2.406·(150 − 49.0)/125 = 1.94 A < 2.2 A (hand values).
    """
    from soacheck.trace import TraceChecker

    cold = TraceChecker(modelled_part, tc_c=25.0)
    cold.feed(*_pulse_after(1e-3))
    assert cold.result().passed
    warm = TraceChecker(modelled_part, tc_c=25.0)
    t, v, i = _pulse_after(0.4)
    warm.feed(t[:10003], v[:10003], i[:10003])  # the excursion crosses a chunk border
    warm.feed(t[10003:], v[10003:], i[10003:])
    result = warm.result()
    assert not result.passed and result.limit == "second_breakdown"
    assert result.first_violation_time_s == pytest.approx(1.0, abs=1e-9)
    assert any("up to 49.0 °C" in note for note in result.assumptions)  # the start temperature, named


def test_an_envelope_with_a_standing_current_fails_where_the_points_check_does(tmp_path):
    """One device, cases held at 25 °C: the envelope's edge at 30 V asks 10 A in 3 ms pulses at duty 0.1.

    Alone the pulse is allowed 125/Zth(3 ms, 0.1)/30 = 12.6 A; on 1.3 A between pulses 9.95 A (the points check
    above, which the many-pulse simulation confirms), so the envelope passes without and fails with it.
    """
    from soacheck.envelope import Envelope, check_envelope
    from soacheck.stage import Stage

    part = read_part(write_part(tmp_path / "fet-power", soa=POWER_ONLY_SOA, kind="nmos", extra=THERMAL))
    stage = Stage(part, 1, case_temp_c=25.0)
    alone = Envelope(20.0, 40.0, 10.0, 300.0, TP_S, DUTY, None, 25.0)
    assert check_envelope(stage, alone).passed
    on_idle = Envelope(20.0, 40.0, 10.0, 300.0, TP_S, DUTY, None, 25.0, idle_current_a=1.3)
    checked = check_envelope(stage, on_idle)
    assert not checked.passed and checked.summary()["limit"] == "power"
    allowed = allowed_current(30.0, part, pulse_s=TP_S, duty=DUTY, idle_current_a=1.3).current_a[0]
    assert checked.outside[0]["from_voltage"] <= 300.0 / allowed + 1e-9  # where 300 W/V falls below the allowed


@pytest.mark.parametrize("duty", [None, DUTY])
def test_the_api_allowed_current_on_a_standing_current_is_the_superposition_closed_form(power_only_part, duty):
    """soacheck.allowed_current(..., idle_current=) against the periodic peak written out by hand.

    The junction of a linear thermal network under pulses of power P on a standing P_idle = V·I_idle
    peaks at Tj = Tc + P_idle·Rth + (P − P_idle)·Zth(tp, D) (superposition of the standing current's
    steady rise and the pulses' periodic impedance: elementary for any linear network; the Foster form
    Zth(tp, D) = Σ Rᵢ (1 − e^(−tp/τᵢ))/(1 − e^(−T/τᵢ)), JEDEC JESD51-14, written out in tests/helpers.py).
    The constant-power limit is the P with Tj = tj_max:

        P = P_idle + (tj_max − Tc − P_idle·Rth)/Zth(tp, D),  I = P/V,

    with tj_max 150 °C and Rth = Σ Rᵢ = 1.0 K/W (conftest's part). At 60 V the part's only other
    line is the 15 A current limit, far above; the standing currents stay inside the DC line (125 W
    at 25 °C, 125·(150 − 70)/125 = 80 W at 70 °C), except 2.5 A (150 W), on which no pulse is allowed.
    """
    volts, tc_c, rth = 60.0, np.array([[25.0], [70.0]]), 1.0
    idle_a = np.array([0.0, 0.5, 1.0, 2.5])
    z = zth_train_closed_form(1e-3, duty or 0.0)
    p_idle = volts * idle_a
    expected = (p_idle + (150.0 - tc_c - p_idle * rth) / z) / volts  # (2, 4)
    expected[:, idle_a * volts > 125.0] = 0.0
    got = soacheck.allowed_current(power_only_part, volts, case_temp=tc_c, pulse="1ms", duty=duty, idle_current=idle_a)
    assert got.shape == (2, 4)
    np.testing.assert_allclose(got, expected, rtol=1e-9, atol=0.0)
    # the part's own method and one scalar point give the same
    assert power_only_part.allowed_current(volts, 70.0, "1ms", duty, idle_current=1.0) == got[1, 2]
    assert isinstance(soacheck.allowed_current(power_only_part, volts, pulse="1ms", idle_current=1.0), float)


def test_the_command_checks_a_standing_current_against_the_api_allowed_current(tmp_path):
    """check --idle-current reports the allowed current of soacheck.allowed_current(idle_current=),
    the superposition closed form above: 1 A standing at 60 V under 1 ms pulses, Tc 25 °C."""
    folder = write_part(tmp_path / "fet-power", soa=POWER_ONLY_SOA, kind="nmos", extra=THERMAL)
    z = zth_train_closed_form(1e-3, 0.0)
    expected = (60.0 + (150.0 - 25.0 - 60.0 * 1.0) / z) / 60.0  # A, see the test above
    args = ["check", str(folder), "-v", "60", "-i", "7", "--pulse", "1ms", "--idle-current", "1", "--json"]
    result = CliRunner(env={"COLUMNS": "120"}).invoke(app, args)
    assert result.exit_code == 0, result.output
    (point,) = json.loads(result.stdout)["points"]
    assert point["allowed_current"] == pytest.approx(expected, rel=1e-9)
    api = soacheck.allowed_current(str(folder), 60.0, pulse="1ms", idle_current=1.0)
    assert point["allowed_current"] == pytest.approx(api, rel=1e-15)
