"""Parallel devices, batteries and sweeps through a stage.

Sources: V_BE = V_T ln(I/I_S) with V_T = 25.7 mV and dV_BE/dT = -2 mV/K (Sedra & Smith,
*Microelectronic Circuits*, from memory); the imbalance and loop gain (elementary
derivation, constructed case recomputed here); the battery relations (elementary circuit
analysis); facts of the trade marked as such.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from typer.testing import CliRunner

from soacheck.battery import PRESETS, Battery, Chemistry, discharge, discharge_current, sweep
from soacheck.cli import app
from soacheck.errors import SoacheckError
from soacheck.partfiles import read_part
from soacheck.sharing import loop_gain, share_current
from soacheck.sharing_spread import sharing_monte_carlo
from soacheck.stage import Stage
from soacheck.stage_run import run_stage

from .conftest import write_part
from .helpers import svg_texts

runner = CliRunner(env={"COLUMNS": "200"})


# --------------------------------------------------------------------------- sharing: closed form


def test_two_device_sharing_matches_the_closed_form():
    """Constructed: 4 A, V_CE 20 V, Rth(j-sink) 1.5 K/W, sink 50 °C, ΔV 20 mV, R_E 0.22 Ω.

    Isothermal: I1 - I2 = ΔV/(R_E + r_e) to first order, I1 = 2.0429 A; with self-heating
    2.0579 A, since the loop gain G = 1.5·20·0.002/(0.22 + 0.0257/2) = 0.258 amplifies the
    imbalance by about 1/(1 - G)."""
    total = np.array([4.0])
    offsets = np.array([-0.02, 0.0])
    iso = share_current(total, np.full((2, 1), 50.0), offsets, ballast_ohm=0.22, bipolar=True)
    assert iso[:, 0] == pytest.approx([2.0429, 1.9571], abs=1e-4)
    first_order = 0.02 / (0.22 + 0.02569 / 2)
    assert iso[0, 0] - iso[1, 0] == pytest.approx(first_order, rel=0.01)
    tj = np.full((2, 1), 50.0)
    for _ in range(200):
        heated = share_current(total, tj, offsets, ballast_ohm=0.22, bipolar=True)
        tj = 50.0 + 1.5 * 20.0 * heated
    assert heated[0, 0] == pytest.approx(2.0579, abs=1e-4)
    gain = loop_gain(np.array(2.0), 20.0, 1.5, ballast_ohm=0.22, bipolar=True)
    assert gain == pytest.approx(0.258, abs=1e-3)
    assert (heated[0, 0] - 2) / (iso[0, 0] - 2) == pytest.approx(1 / (1 - gain), rel=0.02)


def test_loop_gain_reaches_one_at_the_critical_ballast():
    # constructed, from G = Rth V_CE |φ|/(R_E + r_e) by hand: R_E = 0 gives G = 4.67 (hogging); G = 1 at R_E = 0.0472 Ω
    assert loop_gain(np.array(2.0), 20.0, 1.5, ballast_ohm=0.0, bipolar=True) == pytest.approx(4.67, abs=0.01)
    assert loop_gain(np.array(2.0), 20.0, 1.5, ballast_ohm=0.0472, bipolar=True) == pytest.approx(1.0, abs=0.002)


def test_sharing_conserves_the_total_and_is_vectorized():
    rng = np.random.default_rng(2)
    total = rng.uniform(0.5, 30, 500)
    tj = rng.uniform(30, 120, (4, 500))
    offsets = rng.uniform(-0.03, 0.0, (4, 500))
    for bipolar in (True, False):
        split = share_current(total, tj, offsets, ballast_ohm=0.1, bipolar=bipolar)
        assert split.shape == (4, 500)
        assert split.sum(axis=0) == pytest.approx(total, rel=1e-10)
        assert np.all(split >= 0)


def test_identical_devices_solved_once_match_a_root_finder_device_by_device():
    """Eight bipolars, the fourth at the bottom of a 20 mV band and hotter, seven alike, 0.1 Ω ballasts.

    Reference: scipy.optimize.brentq on the common base voltage V_B, each device's
    current found from its own law V_B = V_T ln I + I·R_E + shift by brentq as well, with no
    merging and no Wright omega."""
    bipolar = True
    from scipy.optimize import brentq

    r, vt = 0.1, 0.02569
    total = np.array([0.5, 4.0, 24.0])
    tj = np.full((8, 3), 60.0)
    tj[3] = 80.0
    offsets = np.zeros(8)
    offsets[3] = -0.02
    shift = offsets[:, None] - 0.002 * (tj - 25.0)

    def device(vb, s):
        return math.exp(brentq(lambda y: vt * y + math.exp(y) * r + s - vb, -300.0, 10.0, xtol=1e-14))  # y = ln I

    def excess(vb, column, want_total):
        return sum(device(vb, s) for s in column) - want_total

    got = share_current(total, tj, offsets, ballast_ohm=r, bipolar=bipolar)
    for k, want_total in enumerate(total):
        vb = brentq(excess, -2.0, 10.0, args=(shift[:, k], want_total), xtol=1e-15)
        assert got[:, k] == pytest.approx([device(vb, s) for s in shift[:, k]], rel=1e-9, abs=1e-12)


def test_a_warm_start_reaches_the_same_sharing():
    """Newton from a nearby solution's currents lands on the same root as from equal sharing
    (the root is unique: the sum of currents rises strictly with V_B)."""
    total = np.linspace(0.5, 20.0, 50)
    offsets = np.array([-0.03, 0.0, 0.0])
    cold = share_current(total, np.full((3, 50), 40.0), offsets, ballast_ohm=0.05, bipolar=True)
    hot = np.vstack([np.full(50, 90.0), np.full((2, 50), 70.0)])
    fresh = share_current(total, hot, offsets, ballast_ohm=0.05, bipolar=True)
    warm = share_current(total, hot, offsets, ballast_ohm=0.05, bipolar=True, start_a=cold)
    assert warm == pytest.approx(fresh, rel=1e-10)


# --------------------------------------------------------------------------- stages through trajectories


@pytest.fixture
def ref_part(tmp_path):
    return read_part(write_part(tmp_path / "ref-bjt"))


def test_past_runaway_the_state_with_one_device_taking_the_current_is_checked(ref_part):
    # no ballast, a 20 mV spread, 30 V across the devices: G = Rth V |φ| / r_e >> 1 at an equal split, so the
    # shared state cannot hold; Q1 takes the current: V_T ln(I1/I2) = 0.02 + 0.002·30·(I1 - I2) leaves
    # I2 ~ 1e-4 A (hand estimate), and 2 A at 30 V (60 W, Tj 85 °C) is inside the reference part's DC SOA
    stage = Stage(ref_part, 2, ballast_ohm=0.0, vbe_spread_v=0.02, case_temp_c=25.0)
    t = np.linspace(0, 10, 200)
    run = run_stage(stage, t, np.full(t.size, 30.0), np.full(t.size, 2.0))
    assert not run.runaway and run.device_a[0, -1] > 1.99
    summary = run.summary()
    assert summary["verdict"] == "pass"
    # Q1's own loop gain at 2 A is 1·30·0.002/(0.02569/2) = 4.7 while the pair, once there, is stable
    assert summary["loop_gain_peak"] > 1 > run.stage_gain[-1]
    # enough ballast cures it: G = 1 * 30 * 0.002 / (0.5 + 0.026) = 0.11
    cured = run_stage(
        Stage(ref_part, 2, ballast_ohm=0.5, vbe_spread_v=0.02, case_temp_c=25.0),
        t,
        np.full(t.size, 30.0),
        np.full(t.size, 2.0),
    )
    assert not cured.runaway and cured.passed


def test_load_current_must_stay_below_the_sum_of_ratings(tmp_path):
    """Fact of the trade (common practice, no source): the load's current is bounded by the sum
    of the devices' rated collector currents, with a margin kept below it (15 A where it is 20 A)."""
    soa = "pulse,voltage,current\ndc,1,10\ndc,10,10\ndc,100,1\n"
    part = read_part(
        write_part(
            tmp_path / "ten-amp",
            soa=soa,
            toml="""id = "ten-amp"
kind = "npn"
description = "constructed"
source = "constructed"
[ratings]
v_max = 100
i_max = 10
p_max = 100
tj_max = 150
rth_jc = 1.25
""",
        )
    )
    stage = Stage(part, 2, ballast_ohm=0.1, vbe_spread_v=0.02, case_temp_c=25.0)
    assert stage.rated_current_a() == 20.0
    t = np.linspace(0, 1, 50)
    at_15 = run_stage(stage, t, np.full(t.size, 3.0), np.full(t.size, 15.0))
    at_20 = run_stage(stage, t, np.full(t.size, 3.0), np.full(t.size, 20.0))
    assert at_15.passed
    assert not at_20.passed and at_20.summary()["limit"] == "current"


def test_sense_resistor_power_at_tens_of_amps():
    """Fact of the trade (common practice, no source): the current-sense resistors of a linear
    load run very hot at tens of amps and should be rated 15-20 W: 0.02 Ω at 30 A is 18 W."""
    stage_part = read_part_from_bundle("demo-npn-to3-250w")
    stage = Stage(stage_part, 4, ballast_ohm=0.05, series_ohm=0.02, case_temp_c=25.0)
    t = np.linspace(0, 1, 20)
    run = run_stage(stage, t, np.full(t.size, 3.0), np.full(t.size, 30.0))
    assert 15.0 <= run.summary()["sense_resistor_power_peak"] <= 20.0


def read_part_from_bundle(part_id):
    from soacheck.library import bundled_library

    return read_part(bundled_library() / part_id)


# --------------------------------------------------------------------------- batteries


@pytest.fixture
def ocv_csv(tmp_path):
    """A user OCV file: one 'cell' from 40 V empty to 60 V full, linear (constructed)."""
    path = tmp_path / "ocv.csv"
    path.write_text("soc,voltage\n0,40\n0.5,50\n1,60\n")
    return path


def run_discharge(tmp_path, ocv_csv, *args):
    stage = tmp_path / "stage.toml"
    write_part(tmp_path / "ref-bjt")
    stage.write_text('part = "ref-bjt"\ncount = 1\ncase_temp = 25\n')
    return runner.invoke(
        app, ["discharge", str(stage), "--battery", str(ocv_csv), "--cells", "1", "--capacity", "2", "--json", *args]
    )


def test_cc_discharge_lasts_capacity_over_current_and_fails_at_its_start(tmp_path, ocv_csv):
    """A 2 Ah pack at 1.5 A lasts 2/1.5 h = 4800 s (dSoC/dt = -I/Q). At 60 V the reference part's
    second-breakdown line allows 3.125 (60/40)^-2 = 1.389 A: 1.5 A fails at t = 0."""
    result = run_discharge(tmp_path, ocv_csv, "--mode", "cc", "--setpoint", "1.5", "--cutoff", "40.5")
    assert result.exit_code == 1, result.output
    payload = json.loads(result.stdout)
    expected = 3600 * 2 * (1 - 0.025) / 1.5  # cut-off at 40.5 V leaves 2.5 % of the charge
    assert payload["duration"] == pytest.approx(expected, rel=1e-4)
    assert payload["first_violation_time"] == 0.0
    assert payload["limit"] == "second_breakdown"


def test_cc_discharge_passes_at_a_low_enough_current(tmp_path, ocv_csv):
    result = run_discharge(tmp_path, ocv_csv, "--mode", "cc", "--setpoint", "1.2", "--find-max")
    assert result.exit_code == 0, result.output
    payload = json.loads(result.stdout)
    assert payload["duration"] == pytest.approx(3600 * 2 / 1.2, rel=1e-3)  # cut-off at the table's 40 V
    # the most demanding safe current is set by 60 V at the start: 3.125 (1.5)^-2 = 1.3889 A
    assert payload["max_safe_setpoint"] == pytest.approx(3.125 / 1.5**2, rel=2e-3)


def constant_case_run(ref_part, trajectory):
    stage = Stage(ref_part, 1, case_temp_c=25.0)
    return run_stage(stage, trajectory.time_s, trajectory.source_v, trajectory.total_a)


def test_constant_current_is_worst_at_the_start_and_constant_power_at_the_end(ref_part):
    """Common practice, no source: constant current stresses second breakdown most at the
    start, where the voltage is highest; constant power draws its largest current at the end.
    Constructed pack: 7 V empty to 20 V full, 2 Ah, no internal resistance."""
    pack = Battery(Chemistry("linear", np.array([0.0, 1.0]), np.array([7.0, 20.0]), 7.0, "constructed"), 1, 2.0)
    cc = constant_case_run(ref_part, discharge(pack, "cc", 2.0, cutoff_v=7.2))
    cp = constant_case_run(ref_part, discharge(pack, "cp", 100.0, cutoff_v=7.2))
    # CC: margin 1 - 2/6.25 = 0.68 at 20 V, rising as the voltage falls
    assert np.argmin(cc.margin[0]) == 0
    assert cc.margin[0, 0] == pytest.approx(1 - 2 / 6.2499, rel=1e-4)
    # CP: 100 W; thermal margin 1 - 100/125 = 0.2 at the start, the 15 A current limit at 7.2 V
    # gives 1 - (100/7.2)/15 = 0.074 at the end
    assert np.argmin(cp.margin[0]) == cp.margin.shape[1] - 1
    assert cp.margin[0, -1] == pytest.approx(1 - (100 / 7.2) / 15, rel=1e-3)


def test_constant_power_and_resistance_currents():
    pack = Battery(PRESETS["nmc"], 10, 5.0, r_int_ohm=0.2)
    e = np.array([40.0])
    # elementary circuit analysis: I = (E - sqrt(E^2 - 4 R P))/(2R) and I = E/(R + R_int)
    assert discharge_current(e, pack, "cp", 200.0)[0] == pytest.approx((40 - math.sqrt(1600 - 160)) / 0.4)
    assert discharge_current(e, pack, "cr", 3.8)[0] == pytest.approx(10.0)


def test_presets_rise_with_charge_and_name_their_source():
    for chem in PRESETS.values():
        assert np.all(np.diff(chem.ocv_v) > 0)
        assert "from memory" in chem.source


# --------------------------------------------------------------------------- sweeps


@pytest.mark.parametrize(
    ("kind", "start", "stop", "at", "crossing_s"),
    [
        ("current", 0.0, 10.0, 20.0, 6.2499 / 10 * 10),  # 125 W / 20 V = 6.25 A, reached at 6.25 s of 10
        ("voltage", 10.0, 80.0, 2.0, (50 - 10) / 70 * 10),  # 3.125 (V/40)^-2 = 2 A at V = 50 V
        ("power", 10.0, 80.0, 100.0, (50 - 10) / 70 * 10),  # 100/V = 5000/V^2 at V = 50 V
    ],
)
def test_sweeps_fail_where_the_ramp_crosses_the_boundary(ref_part, kind, start, stop, at, crossing_s):
    run = constant_case_run(ref_part, sweep(kind, start, stop, at=at, ramp_s=10.0, samples=100001))
    summary = run.summary()
    assert summary["verdict"] == "fail"
    assert summary["first_violation_time"] == pytest.approx(crossing_s, abs=2e-4)


def test_sweep_cli(tmp_path):
    write_part(tmp_path / "ref-bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "ref-bjt"\ncount = 2\nballast = 0.1\nvbe_spread = 0.01\ncase_temp = 40\n')
    plot = tmp_path / "sweep.svg"
    result = runner.invoke(
        app,
        [
            "sweep",
            str(stage),
            "--ramp",
            "current",
            "--from",
            "0",
            "--to",
            "4",
            "--at",
            "20",
            "--time",
            "5s",
            "--plot",
            str(plot),
            "--json",
        ],
    )
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["verdict"] == "pass"
    texts = svg_texts(plot)  # read back: device 0 (Q1) sits at the bottom of the V_BE band, so it is the worst
    assert "current ramp 0→4 A at 20 V in 5 s: Q1 (worst)" in texts
    assert {"Q1", "Q2", "tj_max", "dc derated, Tc = 40 °C"} <= set(texts)


# --------------------------------------------------------------------------- Monte Carlo


def test_monte_carlo_is_seedable_and_bounded_by_the_worst_case(ref_part):
    stage = Stage(ref_part, 4, ballast_ohm=0.1, vbe_spread_v=0.02, case_temp_c=40.0)
    a = sharing_monte_carlo(stage, 8.0, 15.0, draws=3000, seed=7)
    b = sharing_monte_carlo(stage, 8.0, 15.0, draws=3000, seed=7)
    assert a == b
    assert 0.25 < a.mean_share < a.worst_share
    t = np.array([0.0, 1e4])
    worst_case = run_stage(stage, t, np.full(2, 15.0), np.full(2, 8.0))
    # the deterministic worst case (one device at the bottom of the band, steady state) bounds the draws
    assert a.worst_share <= worst_case.device_a[0, -1] / 8.0 + 1e-9


# --------------------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    ("stage_text", "args", "fragment"),
    [
        (
            'part = "ref-bjt"\ncount = 1\ncase_temp = 25\n',
            ["--mode", "cc", "--setpoint", "1", "--cutoff", "70"],
            "at or above the full-charge",
        ),
        (
            'part = "ref-bjt"\ncount = 1\ncase_temp = 25\n',
            ["--mode", "cp", "--setpoint", "5000", "--internal-resistance", "0.5"],
            "cannot give it",
        ),
        ('part = "ref-bjt"\ncount = 0\ncase_temp = 25\n', ["--mode", "cc", "--setpoint", "1"], "count is 0"),
        (
            'part = "ref-bjt"\ncount = 2\nballast = -0.1\ncase_temp = 25\n',
            ["--mode", "cc", "--setpoint", "1"],
            "ballast is -0.1",
        ),
        (
            'part = "ref-bjt"\ncount = 2\nbalast = 0.1\ncase_temp = 25\n',
            ["--mode", "cc", "--setpoint", "1"],
            "did you mean 'ballast'",
        ),
        ('part = "ref-bjt"\ncount = 2\n', ["--mode", "cc", "--setpoint", "1"], "[cooling] table or a fixed case_temp"),
        ('part = "ref-bjt"\ncount = 1\ncase_temp = 25\n', ["--mode", "cx", "--setpoint", "1"], "--mode"),
    ],
)
def test_impossible_plans_exit_2(tmp_path, ocv_csv, stage_text, args, fragment):
    write_part(tmp_path / "ref-bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text(stage_text)
    result = runner.invoke(
        app, ["discharge", str(stage), "--battery", str(ocv_csv), "--cells", "1", "--capacity", "2", *args]
    )
    assert result.exit_code == 2, result.output
    assert fragment in result.stderr and len(result.stderr.strip().splitlines()) == 1


def test_battery_csv_whose_voltage_does_not_rise_exits_2(tmp_path):
    write_part(tmp_path / "ref-bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "ref-bjt"\ncount = 1\ncase_temp = 25\n')
    ocv = tmp_path / "bad.csv"
    ocv.write_text("soc,voltage\n0,3.0\n0.5,3.7\n1,3.6\n")
    result = runner.invoke(
        app,
        [
            "discharge",
            str(stage),
            "--battery",
            str(ocv),
            "--cells",
            "10",
            "--capacity",
            "2",
            "--mode",
            "cc",
            "--setpoint",
            "1",
        ],
    )
    assert result.exit_code == 2 and "bad.csv line 4" in result.stderr and "does not rise" in result.stderr


def test_unknown_chemistry_exits_2(tmp_path):
    write_part(tmp_path / "ref-bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "ref-bjt"\ncount = 1\ncase_temp = 25\n')
    result = runner.invoke(
        app,
        [
            "discharge",
            str(stage),
            "--battery",
            "lipo",
            "--cells",
            "10",
            "--capacity",
            "2",
            "--mode",
            "cc",
            "--setpoint",
            "1",
        ],
    )
    assert result.exit_code == 2 and "unknown chemistry" in result.stderr


def test_a_stage_needs_devices():
    with pytest.raises(SoacheckError, match="count is 0; give a number of devices from 1"):
        Stage(read_part_from_bundle("demo-npn-to3-250w"), 0, case_temp_c=25.0)


@pytest.mark.parametrize(("part_id", "named"), [("demo-npn-to3-250w", True), ("demo-nmos-to247-linear-240w", False)])
def test_a_run_names_the_v_be_tempco_only_where_a_v_be_law_is_used(part_id, named):
    """A bipolar stage shares by V_BE = V_T ln(I/I_S) and its tempco (about −2 mV/K, Sedra & Smith,
    from memory), so a run names it; a FET with transfer curves takes α = ∂I_D/∂T_j from them, and a
    run naming a V_BE tempco there would state an assumption that was not made."""
    from soacheck.library import bundled_library

    stage = Stage(read_part(bundled_library() / part_id), 2, ballast_ohm=0.1, case_temp_c=40.0)
    t = np.linspace(0.0, 1.0, 5)
    notes = run_stage(stage, t, np.full(5, 20.0), np.full(5, 2.0)).assumptions
    assert any("temperature coefficient -2 mV/K" in note for note in notes) == named
