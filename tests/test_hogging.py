"""Paralleled devices: square-law FET sharing, the whole set's stability, hogging, drive, kinds.

References, all outside soacheck: the square-law device of ``test_mosfet`` (Sedra & Smith,
from memory) solved with scipy's root finders; the bipolar law V_BE = V_T ln(I/I_S) + φ(T − 25 °C)
with φ = −2 mV/K (Sedra & Smith, from memory) solved with brentq; the two-device Jacobian's
eigenvalue derived by hand in the docstring.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.optimize

from soacheck.bipolar import THERMAL_VOLTAGE_V
from soacheck.partfiles import read_part
from soacheck.points import check_points
from soacheck.sharing import loop_gain, share_current, stability_gain
from soacheck.stage import Stage
from soacheck.stage_run import run_stage
from soacheck.steady_state import steady_state

from .conftest import write_part
from .test_mosfet import FET_SOA, T_COOL, T_HOT, k_of, vth_of, write_transfer

VT = 0.02569  # V, kT/q at 25 °C (Sedra & Smith, from memory)
PHI = -0.002  # V/K, dV_BE/dT at constant current (Sedra & Smith, from memory)


@pytest.fixture
def fet(tmp_path):
    folder = write_part(tmp_path / "fet", soa=FET_SOA, kind="nmos")
    write_transfer(folder / "transfer.csv", i_lo=0.01)
    return read_part(folder)


def vgs_square_law(i_a, t_c):
    """V_GS of the square-law device at a curve temperature (closed form)."""
    return vth_of(t_c) + math.sqrt(i_a / k_of(t_c))


def test_square_law_fets_share_by_their_transconductance(fet):
    """3 A between two FETs 20 mV apart in threshold with 50 mΩ source resistors, one at 25 °C and one at 125 °C.

    Reference: V_GS,1(I₁) + I₁R − 0.02 = V_GS,2(3 − I₁) + (3 − I₁)R, solved by brentq.
    """
    r_s, offset = 0.05, 0.02
    temps = (T_COOL, T_HOT)

    def mismatch(i1):
        return vgs_square_law(i1, temps[0]) + i1 * r_s - offset - vgs_square_law(3 - i1, temps[1]) - (3 - i1) * r_s

    expected = scipy.optimize.brentq(mismatch, 1e-9, 3 - 1e-9, xtol=1e-13)
    got = share_current(
        np.array([3.0]),
        np.array([[temps[0]], [temps[1]]]),
        np.array([-offset, 0.0]),
        ballast_ohm=r_s,
        bipolar=False,
        transfer=fet.transfer,
    )
    # the curves are straight in √I between points, exact for the square law
    assert got[0, 0] == pytest.approx(expected, rel=1e-9)
    assert got.sum() == pytest.approx(3.0, rel=1e-12)


def test_fet_electro_thermal_sharing_matches_scipy_on_both_devices_equations(fet):
    """Two FETs on a held case at 25 °C, rth_jc 1 K/W, 10 V, 3 A, 20 mV apart, R_S 50 mΩ, in steady state.

    Reference: scipy.optimize.fsolve on (I₁, T₁, T₂) with T_k = 25 + 1.0·V_k·I_k, V_k = 10 − I_k·R_S, and
    V_GS,1(I₁, T₁) + I₁R − 0.02 = V_GS,2(I₂, T₂) + I₂R, V_GS(I, T) straight in T between the 25 °C and
    125 °C square-law curves (the model the part format states).
    """
    r_s, offset, volts = 0.05, 0.02, 10.0

    def vgs(i, t):
        w = (t - T_COOL) / (T_HOT - T_COOL)
        return (1 - w) * vgs_square_law(i, T_COOL) + w * vgs_square_law(i, T_HOT)

    def equations(x):
        i1, t1, t2 = x
        i2 = 3 - i1
        return [
            vgs(i1, t1) + i1 * r_s - offset - vgs(i2, t2) - i2 * r_s,
            t1 - 25 - (volts - i1 * r_s) * i1,
            t2 - 25 - (volts - i2 * r_s) * i2,
        ]

    i1, t1, t2 = scipy.optimize.fsolve(equations, [1.5, 40, 40], xtol=1e-13)
    stage = Stage(fet, 2, ballast_ohm=r_s, vbe_spread_v=offset, case_temp_c=25.0)
    state = steady_state(stage, np.array([volts]), np.array([3.0]))
    assert state.device_a[:, 0] == pytest.approx([i1, 3 - i1], rel=1e-6)
    assert state.junction_c[:, 0] == pytest.approx([t1, t2], abs=1e-3)
    assert not state.runaway_at[0]


def test_the_pair_eigenvalue_lies_between_the_devices_loop_gains():
    """Two bipolars at an unequal split: by hand, ∂I₁/∂T₁ = −φ/(r₁ + r₂) = −∂I₁/∂T₂ with r_k = R_E + V_T/I_k,
    so J = Z|φ|/(r₁ + r₂)·[[d₁, −d₁], [−d₂, d₂]], d_k = V_k − I_k·R_E, whose eigenvalues are 0 and
    Z|φ|(d₁ + d₂)/(r₁ + r₂); each device's own gain is Z·V_k|φ|/r_k.
    """
    current = np.array([[2.0], [0.5]])
    volts = np.array([[20.0], [20.0]])
    r_e, z = 0.05, 1.5
    law = {"ballast_ohm": r_e, "bipolar": True, "tempco_v_per_k": PHI}
    got = stability_gain(current, volts, np.full((2, 1), 50.0), z_self_k_per_w=z, **law)
    r = r_e + VT / current[:, 0]
    d = volts[:, 0] - current[:, 0] * r_e
    assert got[0] == pytest.approx(z * abs(PHI) * d.sum() / r.sum(), rel=1e-6)
    each = loop_gain(current, volts, z, **law)[:, 0]
    assert each.min() < got[0] < each.max()


def hog_split(volts: float) -> tuple[float, float]:
    """The matched pair's stable state with Q1 taking the current, 3 A at ``volts`` on cases held at 25 °C,
    rth_jc 1 K/W, no emitter resistors: x = ln I₂, I₁ = 3 − eˣ, V_T ln(I₁/I₂) = |φ|·V·(I₁ − I₂), by brentq. [A]"""
    vt = THERMAL_VOLTAGE_V
    x = scipy.optimize.brentq(
        lambda x: vt * (math.log(3 - math.exp(x)) - x) - abs(PHI) * volts * (3 - 2 * math.exp(x)),
        -volts,
        0.0,
        xtol=1e-14,
    )
    return 3 - math.exp(x), math.exp(x)


def test_past_runaway_one_device_takes_the_current(bjt):
    """Two matched bipolars, no emitter resistors, 3 A at 60 V on a case held at 25 °C.

    The equal split's eigenvalue is Z·V|φ|/(V_T/1.5 A) = 60·0.002/0.01713 = 7.0 ≥ 1: unstable. The stable
    state: x = ln I₂, I₁ = 3 − eˣ, with V_T ln(I₁/I₂) = |φ|·(T₁ − T₂) = |φ|·60·(I₁ − I₂), by brentq.
    """
    vt = THERMAL_VOLTAGE_V
    i1, i2 = hog_split(60.0)
    stage = Stage(bjt, 2, case_temp_c=25.0)
    state = steady_state(stage, np.array([60.0]), np.array([3.0]))
    assert state.hogging[0] and not state.runaway_at[0]
    assert state.device_a[1, 0] == pytest.approx(i2, rel=1e-4)
    assert state.device_a[0, 0] == pytest.approx(i1, rel=1e-9)
    assert state.stage_gain[0] < 1
    # the equal split would have been reported before: its gain, by the closed form above
    equal = stability_gain(
        np.full((2, 1), 1.5),
        np.full((2, 1), 60.0),
        np.full((2, 1), 115.0),
        z_self_k_per_w=1.0,
        ballast_ohm=0.0,
        bipolar=True,
        tempco_v_per_k=PHI,
    )
    assert equal[0] == pytest.approx(60 * abs(PHI) / (vt / 1.5), rel=1e-9)


def test_a_run_past_runaway_reports_the_hog_and_checks_it(bjt):
    """The same pair held for 1 s: Q1 takes the current, 3 A at 60 V, above the DC second-breakdown line there,
    3.125·(60/40)^-2 = 1.39 A at 25 °C case (the reference curve, constructed), so the run fails on it."""
    stage = Stage(bjt, 2, case_temp_c=25.0)
    t = np.linspace(0.0, 1.0, 50)
    run = run_stage(stage, t, np.full(50, 60.0), np.full(50, 3.0))
    summary = run.summary()
    assert summary["verdict"] == "fail" and summary["limit"] == "second_breakdown"
    assert run.device_a[0, -1] > 2.99
    assert any("Q1 takes the current" in note for note in run.assumptions)


def test_drive_current_is_the_sum_of_base_currents_and_a_short_driver_fails(tmp_path):
    """Two devices of a gain table h_FE 100 at 1 A and 20 at 10 A (log-log between), 8 A total.

    Matched and ballasted, each carries 4 A: h_FE = 100·(4/1)^(ln(20/100)/ln 10) = 32.9 (log-log), so the
    driver supplies 2·4/(32.9 + 1) = 0.236 A (hand values).
    """
    extra = "[gain]\ncurrent = [0.1, 1, 10]\nhfe = [100, 100, 20]\n"
    part = read_part(write_part(tmp_path / "gain", extra=extra))
    t = np.linspace(0.0, 1.0, 20)
    hfe = 100 * 4 ** (math.log(20 / 100) / math.log(10))
    expected = 2 * 4 / (hfe + 1)
    stage = Stage(part, 2, ballast_ohm=0.1, case_temp_c=25.0)
    run = run_stage(stage, t, np.full(20, 5.0), np.full(20, 8.0))
    assert run.summary()["drive_current_peak"] == pytest.approx(expected, rel=1e-6)
    short = Stage(part, 2, ballast_ohm=0.1, case_temp_c=25.0, drive_limit_a=0.2)
    failed = run_stage(short, t, np.full(20, 5.0), np.full(20, 8.0)).summary()
    assert failed["verdict"] == "fail" and failed["limit"] == "drive"


def test_a_bipolar_without_gain_reports_no_drive_current(bjt):
    run = run_stage(Stage(bjt, 1, case_temp_c=25.0), np.linspace(0, 1, 5), np.full(5, 5.0), np.full(5, 1.0))
    assert run.summary()["drive_current_peak"] is None


def test_a_single_fet_reports_its_loop_gain(fet):
    """One FET at 60 V and 0.2 A on a held case: G = rth_jc·V·α(I), α the square-law finite difference."""
    from .test_mosfet import alpha_reference

    run = run_stage(Stage(fet, 1, case_temp_c=25.0), np.linspace(0, 1, 5), np.full(5, 60.0), np.full(5, 0.2))
    assert run.summary()["loop_gain_peak"] == pytest.approx(1.0 * 60.0 * alpha_reference(0.2), rel=1e-6)


@pytest.mark.parametrize(("kind", "twin"), [("pnp", "npn"), ("pmos", "nmos")])
def test_p_kinds_check_like_their_n_twins(tmp_path, kind, twin):
    """Magnitudes of voltage and current: a pnp (pmos) part with the same curves allows what the npn (nmos) does."""
    soa = FET_SOA if twin == "nmos" else None
    kw = {"soa": soa} if soa else {}
    p = read_part(write_part(tmp_path / f"p-{kind}", kind=kind, **kw))
    n = read_part(write_part(tmp_path / f"n-{twin}", kind=twin, **kw))
    v, i = np.array([5.0, 20.0, 60.0]), np.array([1.0, 2.0, 0.5])
    assert check_points(v, i, p, tc_c=70.0).allowed_current_a == pytest.approx(
        check_points(v, i, n, tc_c=70.0).allowed_current_a, rel=1e-12
    )


def test_a_darlington_shares_with_twice_the_v_be_slope():
    """Isothermal, no emitter resistors, 20 mV apart: I₁/I₂ = exp(ΔV/(J·V_T)), J = 2 junctions for a Darlington."""
    for junctions in (1, 2):
        got = share_current(
            np.array([2.0]),
            np.full((2, 1), 25.0),
            np.array([-0.02, 0.0]),
            ballast_ohm=0.0,
            bipolar=True,
            junctions=junctions,
        )
        ratio = math.exp(0.02 / (junctions * THERMAL_VOLTAGE_V))
        assert got[0, 0] == pytest.approx(2 * ratio / (1 + ratio), rel=1e-9)


def test_a_stage_file_drive_limit_fails_a_sweep_with_the_limit_drive(tmp_path):
    """The bundled Darlington demo (h_FE 300 at 15 A, 800 at 10 A): 12 A through one device needs
    12/(h_FE(12) + 1) with h_FE(12) = 800·(12/10)^(ln(300/800)/ln 1.5) (log-log, hand value) ≈ 0.0266 A."""
    import json

    from typer.testing import CliRunner

    from soacheck.cli import app

    stage = tmp_path / "stage.toml"
    stage.write_text('part = "demo-npn-darlington-to3-150w"\ncount = 1\ncase_temp = 25\ndrive_limit = 0.02\n')
    args = ["sweep", str(stage), "--ramp", "current", "--from", "1", "--to", "12", "--at", "3", "--json"]
    result = CliRunner(env={"COLUMNS": "120"}).invoke(app, args)
    assert result.exit_code == 1, result.output
    payload = json.loads(result.stdout)
    hfe = 800 * (12 / 10) ** (math.log(300 / 800) / math.log(1.5))
    assert payload["drive_current_peak"] == pytest.approx(12 / (hfe + 1), rel=1e-6)
    assert payload["limit"] == "drive"


# --------------------------------------------------------------------------- the sharing command's hog state


def sharing_json(tmp_path, stage_text: str, *args: str) -> tuple[int, dict, str]:
    """``soacheck sharing`` on a stage file written beside the ``bjt`` part folder: exit code, JSON, text output."""
    import json

    from typer.testing import CliRunner

    from soacheck.cli import app

    stage = tmp_path / "stage.toml"
    stage.write_text(stage_text)
    runner = CliRunner(env={"COLUMNS": "120"})
    as_json = runner.invoke(app, ["sharing", str(stage), *args, "--draws", "200", "--json"])
    text = runner.invoke(app, ["sharing", str(stage), *args, "--draws", "200"])
    assert as_json.exit_code == text.exit_code, as_json.output + text.output
    return as_json.exit_code, json.loads(as_json.stdout), text.stdout


def test_sharing_of_a_stable_pair_reports_the_closed_form_stage_gain(bjt, tmp_path):
    """Two matched bipolars with 0.1 Ω emitter resistors, 4 A at 20 V, cases held at 25 °C, rth_jc 1 K/W.

    Each carries 2 A; by the pair's eigenvalue above, Z|φ|(d₁ + d₂)/(r₁ + r₂) with d = V − I·R_E =
    (20 − 2·0.1) − 2·0.1 = 19.6 V and r = R_E + V_T/I = 0.1 + V_T/2, so G = 0.002·19.6/r = 0.347 < 1:
    the shared state holds, no draw hogs or runs away, exit code 0.
    """
    code, payload, text = sharing_json(
        tmp_path, 'part = "bjt"\ncount = 2\nballast = 0.1\ncase_temp = 25\n', "-i", "4", "-v", "20"
    )
    assert code == 0, text
    expected = abs(PHI) * 19.6 / (0.1 + THERMAL_VOLTAGE_V / 2.0)
    assert payload["stage_gain_peak"] == pytest.approx(expected, rel=1e-6)
    assert (payload["verdict"], payload["hogging_fraction"], payload["runaway_fraction"]) == ("pass", 0.0, 0.0)
    assert payload["worst_share"] == pytest.approx(0.5, rel=1e-9)
    assert "stage gain peak 0.347" in text and "hogging fraction 0.0 %" in text and "PASS" in text
    # each device inside its SOA: 2 A at 20 − 0.2 = 19.8 V, under the 125 W line's 125/19.8 = 6.3 A at 25 °C case,
    # junction 25 + 39.6 °C; the answer stays the worst share's: 1 − 2 A/i_max 15 A, limit current, no device named
    assert (payload["limit"], payload["device"]) == ("current", None)
    assert payload["margin"] == pytest.approx(1 - 2.0 / 15.0, rel=1e-9)


def test_sharing_past_runaway_reports_hogging_and_fails_on_the_hog_outside_its_soa(bjt, tmp_path):
    """The matched pair of ``test_past_runaway_one_device_takes_the_current``: 3 A at 60 V, no emitter resistors.

    The equal split's eigenvalue is 7.0 ≥ 1: every draw settles where Q1 takes I₁ of the current (hog_split),
    a stable state whose eigenvalue |φ|·Z·(60 + 60)/(V_T/I₁ + V_T/I₂) is below 1: the set does not run away.
    But Q1 at 60 V (no resistors: V_CE = 60 V) is allowed only the reference curve's DC second-breakdown line
    there, 3.125·(60/40)^-2 = 1.389 A at its case held at 25 °C (constructed curve, no derating at 25 °C), so
    its margin is 1 − I₁/1.389 A < 0: verdict fail, exit 1, limit second_breakdown, device 1.
    """
    vt = THERMAL_VOLTAGE_V
    i1, i2 = hog_split(60.0)
    allowed = 3.125 * (60.0 / 40.0) ** -2
    assert i1 > allowed > i2  # the hot device outside its DC boundary, the cold one inside
    code, payload, text = sharing_json(tmp_path, 'part = "bjt"\ncount = 2\ncase_temp = 25\n', "-i", "3", "-v", "60")
    assert code == 1, text
    assert (payload["verdict"], payload["limit"], payload["device"]) == ("fail", "second_breakdown", 1)
    assert payload["margin"] == pytest.approx(1 - i1 / allowed, rel=1e-6)
    assert payload["margin_to_rating"] == payload["margin"]  # no policy
    assert "FAIL" in text and "Q1" in text and "second_breakdown" in text
    assert payload["hogging_fraction"] == 1.0 and payload["runaway_fraction"] == 0.0
    assert payload["worst_share"] == pytest.approx(i1 / 3, rel=1e-6)
    assert payload["stage_gain_peak"] == pytest.approx(abs(PHI) * 120 / (vt / i1 + vt / i2), rel=1e-4)
    assert payload["stage_gain_peak"] < 1
    assert "hogging fraction 100.0 %" in text and "takes the current" in text


def test_with_a_spread_every_draw_hogs_at_least_as_hard_as_the_matched_pair(bjt):
    """The same pair with a 5 mV spread: the device of the lower V_BE hogs, and its offset Δ ≥ 0 only adds to
    V_T ln(I₁/I₂) = |φ|·60·(I₁ − I₂) + Δ, so every draw's worst share is at least the matched hog's (brentq)."""
    import soacheck

    stage = Stage(bjt, 2, case_temp_c=25.0, vbe_spread_v=0.005)
    result = soacheck.sharing(stage, current=3.0, voltage=60.0, draws=500, percentile=1.0)
    assert result.spread.hogging_fraction == 1.0 and result.spread.runaway_fraction == 0.0
    assert result.spread.worst_share >= hog_split(60.0)[0] / 3 * (1 - 1e-9)


def test_sharing_exits_1_where_the_set_runs_away(bjt, tmp_path):
    """The matched pair at 400 V, 3 A: the equal split's eigenvalue 400·0.002/(V_T/1.5 A) = 46.7 ≥ 1, and the only
    stable state left, Q1 taking I₁ (hog_split at 400 V), puts its junction at 25 + 400·I₁·1 K/W ≈ 1225 °C,
    far past any tj_max, where soacheck abandons a fixed point (1000 °C): no stable state, limit runaway, exit 1."""
    assert 25 + 400 * hog_split(400.0)[0] * 1.0 > 1000.0
    assert 400 * abs(PHI) / (THERMAL_VOLTAGE_V / 1.5) >= 1
    code, payload, text = sharing_json(tmp_path, 'part = "bjt"\ncount = 2\ncase_temp = 25\n', "-i", "3", "-v", "400")
    assert code == 1, text
    assert (payload["verdict"], payload["limit"], payload["runaway_fraction"]) == ("fail", "runaway", 1.0)
    assert payload["device"] is None  # no draw settles: no device state to name
    assert "FAIL: runaway: paralleled devices have no stable state" in " ".join(text.split())  # the reason leads


def spread_split(delta_v: float, volts: float = 30.0, total_a: float = 8.0, r_e: float = 0.1) -> float:
    """The current of the lower-V_BE device of a matched bipolar pair whose V_BE are ``delta_v`` apart, with
    emitter resistors ``r_e`` on cases held at 25 °C, rth_jc 1 K/W, in steady state. [A]

    Equal base voltage, V_BE = V_T ln(I/I_S) + φ(T_j − 25 °C) (Sedra & Smith, from memory), T_k = 25 + V_k·I_k:
    V_T ln(I₁/I₂) + (I₁ − I₂)R_E − |φ|·(V_1·I₁ − V_2·I₂) = Δ, V_k = V − I_k·R_E, I₂ = I − I₁, by brentq.
    """

    def mismatch(i1):
        i2 = total_a - i1
        heat = (volts - i1 * r_e) * i1 - (volts - i2 * r_e) * i2
        return VT * math.log(i1 / i2) + (i1 - i2) * r_e - abs(PHI) * heat - delta_v

    return scipy.optimize.brentq(mismatch, total_a / 2, total_a - 1e-9, xtol=1e-14)


def power_margin(i1: float, volts: float = 30.0, r_e: float = 0.1) -> float:
    """1 − I₁/I_allowed with I_allowed = 125 W/V_CE, the reference curve's DC constant-power line (8.33-40 V)
    at a 25 °C case, V_CE = V − I₁·R_E. [1]"""
    return 1.0 - i1 / (125.0 / (volts - i1 * r_e))


def test_sharing_fails_where_a_spread_puts_the_hotter_device_past_its_dc_boundary(bjt, tmp_path):
    """Two bipolars, 0.1 Ω emitter resistors, 8 A at 30 V, cases held at 25 °C, V_BE band 50 mV.

    Matched, each takes 4 A at 29.6 V, inside the 125 W line (4.223 A, margin +5.3 %), and the pair's
    eigenvalue |φ|(d₁ + d₂)/(r₁ + r₂) = 0.002·59.2/(2·(0.1 + V_T/4)) = 0.56 < 1: no hogging, no runaway.
    Offsets Δ apart put the lower-V_BE device at spread_split(Δ), outside from Δ ≈ 21.7 mV (brentq), so
    draws apart by more than that fail (a third of them, for a uniform band: (1 − 21.7/50)² = 0.32). The least
    margin lies between that of the band's whole width, 50 mV, and that of 40 mV, which 200 draws pass
    (the chance of none doing so is (1 − 0.04)^200 ≈ 3e-4). The hot device is either of the pair.
    """
    assert power_margin(spread_split(0.0)) > 0 > power_margin(spread_split(0.0217 + 1e-4))
    stage = 'part = "bjt"\ncount = 2\nballast = 0.1\ncase_temp = 25\nvbe_spread = 0.05\n'
    code, payload, text = sharing_json(tmp_path, stage, "-i", "8", "-v", "30")
    assert code == 1, text
    assert (payload["verdict"], payload["limit"], payload["runaway_fraction"]) == ("fail", "power", 0.0)
    assert payload["device"] in (1, 2)
    assert power_margin(spread_split(0.05)) * (1 + 1e-6) <= payload["margin"] <= power_margin(spread_split(0.04))
    assert "FAIL" in text and f"Q{payload['device']} in the worst draw leaves its safe operating area" in text


def test_sharing_passes_where_even_the_widest_spread_keeps_every_device_inside(bjt, tmp_path):
    """The same pair with a 10 mV band: at the full 10 mV the lower-V_BE device takes spread_split(0.01) =
    4.10 A, inside 125 W/29.59 V (margin +2.8 %), so every draw is inside: pass, exit 0, the answer the
    worst share's current against i_max 15 A, no device named."""
    assert power_margin(spread_split(0.01)) > 0
    stage = 'part = "bjt"\ncount = 2\nballast = 0.1\ncase_temp = 25\nvbe_spread = 0.01\n'
    code, payload, text = sharing_json(tmp_path, stage, "-i", "8", "-v", "30")
    assert code == 0, text
    assert (payload["verdict"], payload["limit"], payload["device"]) == ("pass", "current", None)
    assert payload["margin"] == pytest.approx(1 - payload["worst_device_current"] / 15.0, rel=1e-12)
    assert "PASS" in text


def test_a_device_that_cannot_be_evaluated_is_never_inside(bjt):
    """A draw whose second device's current is NaN: its margin is NaN, counted as −inf, never as safe; the
    other device, 1 A at 5 V on a 25 °C case (inside the 15 A segment to 8.33 V, hand value), is judged as usual."""
    from soacheck.sharing_spread import SharingSpread, _least, judge_draws
    from soacheck.steady_state import SteadyState

    one = np.ones((2, 1))
    state = SteadyState(
        device_a=np.array([[1.0], [np.nan]]),
        device_v=5.0 * one,
        device_w=np.array([[5.0], [np.nan]]),
        case_c=25.0 * one,
        junction_c=np.array([[30.0], [np.nan]]),
        sink_c=np.array([25.0]),
        gain=0.0 * one,
        runaway_at=np.array([False]),
    )
    margin, limit, inside = judge_draws(Stage(bjt, 2, case_temp_c=25.0), state)
    assert margin[0, 0] == pytest.approx(1 - 1.0 / 15.0, rel=1e-12) and np.isnan(margin[1, 0])
    assert inside[:, 0].tolist() == [True, False]
    least, device, _ = _least(margin, limit)
    assert (least, device) == (-math.inf, 2)
    assert SharingSpread(99.0, 0.5, 0.5, 0.5, 1, 0.0, device_margin=least).outside
