"""Stage checks that fail on something other than the current: runaway, a driver that falls short, a junction.

Each keeps the current's own margin (1 − I/I_allowed, 0 or more where the current is inside), fails
the verdict, names what failed in ``limit`` (the glossary's words: ``runaway``, ``drive``, ``tj_max``),
and leads its text with the reason, naming the device where the stage has more than one.

References, all outside soacheck:

- DC steady state of a junction: Tj = Tc + P·Rth_jc (the definition of Rth, JEDEC JESD51-1).
- The bipolar law V_BE = V_T ln(I/I_S) + φ(T − 25 °C), φ = −2 mV/K, V_T = 25.69 mV (Sedra & Smith,
  from memory). For n matched devices on one base drive, no resistors, cases held: with the total
  fixed, r·dI_k + φ·dT_k is the same for every k (r = V_T/I_k), so Σ dI_k = 0 gives
  dI_k = (|φ|/r)(dT_k − mean dT), and dT_k = Rth·V·dI_k: every mode that moves the devices apart
  has the loop gain G = Rth·V·|φ|·I_k/V_T (hand derivation; the pair's case is test_hogging's).
  G ≥ 1: the equal split cannot hold. The state with one device taking the current solves
  V_T ln(I₁/I₂) = |φ|·Rth·V·(I₁ − I₂) with I₁ + (n − 1)·I₂ = I (brentq here); where its junction
  would lie past 1000 °C, far past any tj_max, no stable state is left: runaway.
- A driver's share: Σ I_E/(h_FE + 1), h_FE read log-log from the part's gain table (common practice,
  no source).
"""

from __future__ import annotations

import json
import math

import pytest
import scipy.optimize

import soacheck
from soacheck.envelope import Envelope, check_envelope
from soacheck.partfiles import read_part
from soacheck.runner import JobResult
from soacheck.stage import Stage

from .conftest import REFERENCE_SOA, REFERENCE_TOML, write_part
from .helpers import invoke, only_job_why, validate_output

VT_V = 0.02569  # V, kT/q at 25 °C (Sedra & Smith, from memory)
PHI_V_PER_K = -0.002  # V/K, dV_BE/dT at constant current (Sedra & Smith, from memory)
TC_C = 25.0

# ---------------------------------------------------------------- runaway: ten matched devices, no resistors

# A constructed part (invented numbers): rth_jc 5 K/W, tj_max 150 °C, so p_max = (150 − 25)/5 = 25 W; its DC
# curve a 5 A current limit to 5 V, then the 25 W line to 100 V (0.25 A there).
WARM_SOA = "pulse,voltage,current\ndc,1,5\ndc,5,5\ndc,100,0.25\n"
WARM_TOML = (
    REFERENCE_TOML.format(id="warm", kind="npn", extra="", extra_top="")
    .replace("rth_jc = 1.0", "rth_jc = 5.0")
    .replace("p_max = 125", "p_max = 25")
    .replace("i_max = 15", "i_max = 5")
    .replace("i_pulse_max = 40", "i_pulse_max = 10")
)
WARM_RTH, WARM_LINE_W, COUNT, EACH_A = 5.0, 25.0, 10, 0.22
RUNAWAY_ENVELOPE = Envelope(90.0, 100.0, COUNT * EACH_A, 100.0 * COUNT * EACH_A, case_temp_c=TC_C)


@pytest.fixture
def warm(tmp_path):
    return write_part(tmp_path / "warm", soa=WARM_SOA, toml=WARM_TOML)


def spread_gain(volts: float) -> float:
    """G = Rth·V·|φ|·I_k/V_T of the equal split (module docstring). [1]"""
    return WARM_RTH * volts * abs(PHI_V_PER_K) * EACH_A / VT_V


def hog_junction_c(volts: float) -> float:
    """The junction of the device that would take the current, Tc + Rth·V·I₁, I₁ by brentq on x = ln I₂
    (bracketed away from the equal split, x = ln I/n, which solves the same equation). [°C]"""
    total = COUNT * EACH_A

    def mismatch(x: float) -> float:
        i1 = total - (COUNT - 1) * math.exp(x)
        return VT_V * (math.log(i1) - x) - abs(PHI_V_PER_K) * WARM_RTH * volts * (i1 - math.exp(x))

    x = scipy.optimize.brentq(mismatch, -700.0, math.log(EACH_A * (1 - 1e-6)), xtol=1e-12)
    return TC_C + WARM_RTH * volts * (total - (COUNT - 1) * math.exp(x))


def test_the_construction_runs_away_with_every_current_inside():
    for volts in (90.0, 100.0):
        assert spread_gain(volts) >= 1  # 7.7 and 8.6: the equal split cannot hold
        assert hog_junction_c(volts) > 1000.0  # nor can one device take the current
        assert TC_C + WARM_RTH * volts * EACH_A <= 150.0  # the equal split's junction, at most 135 °C
        assert EACH_A < WARM_LINE_W / volts  # its current inside the 25 W line


def test_an_envelope_that_runs_away_keeps_the_currents_margin_and_names_runaway(warm):
    """At 100 V each device carries 0.22 A against the 25 W line's 0.25 A: margin 1 − 0.22/0.25 = 12 %, the least
    along the edge (at 90 V: 1 − 0.22/0.2778 = 21 %). Every point runs away: verdict fail, limit runaway, the
    margin 12 % as it is (it read −1e-9 before), and the stretch names runaway with that margin."""
    check = check_envelope(Stage(read_part(warm), COUNT, case_temp_c=TC_C), RUNAWAY_ENVELOPE, points=20)
    s = check.summary()
    expected = 1 - EACH_A / (WARM_LINE_W / 100.0)
    assert s["verdict"] == "fail" and not check.passed
    assert s["limit"] == "runaway" and check.failed_limit == "runaway"
    assert s["margin"] == pytest.approx(expected, rel=1e-9) and s["margin"] > 0 and s["overload"] is None
    assert s["worst_voltage"] == pytest.approx(100.0)
    assert s["tj_peak"] == pytest.approx(TC_C + WARM_RTH * 100.0 * EACH_A, rel=1e-9)  # the equal split's
    ((stretch),) = s["outside"]
    assert (stretch["from_voltage"], stretch["to_voltage"]) == (90.0, 100.0)
    assert stretch["limit"] == "runaway" and stretch["margin"] == pytest.approx(expected, rel=1e-9)
    # runaway is the whole set's state: every device carries it, none counts as inside
    assert (check.limit == "runaway").all() and not check.inside.any()


def test_cli_names_runaway_first_and_the_device(warm, tmp_path):
    stage = tmp_path / "stage.toml"
    stage.write_text(f'part = "warm"\ncount = {COUNT}\ncase_temp = 25\n')
    envelope = tmp_path / "envelope.toml"
    envelope.write_text("voltage = [90, 100]\ncurrent = 2.2\npower = 220\ncase_temp = 25\n")
    as_json = invoke("envelope", stage, "--check", envelope, "--json")
    assert as_json.exit_code == 1, as_json.output
    payload = validate_output("envelope", as_json.stdout)
    assert (payload["verdict"], payload["limit"]) == ("fail", "runaway")
    assert payload["margin"] == pytest.approx(0.12, rel=1e-9)
    text = invoke("envelope", stage, "--check", envelope)
    assert text.exit_code == 1, text.output
    flat = " ".join(text.stdout.split())
    assert "FAIL: runaway: paralleled devices have no stable state" in flat  # the set's state: no device named
    assert flat.endswith("the current stays inside the SOA boundary (least margin +12.0 %)")
    assert "-0.0 %" not in flat


# ---------------------------------------------------------------- drive: a pair whose driver falls short

GAIN = "[gain]\ncurrent = [0.1, 1, 10]\nhfe = [100, 100, 20]\n"
DRIVE_LIMIT_A, BALLAST_OHM, I_MAX_A = 0.2, 0.1, 15.0


def hfe(device_a: float) -> float:
    """h_FE 100 at 1 A and 20 at 10 A, log-log between (the gain table above). [1]"""
    return 100.0 * device_a ** (math.log(20 / 100) / math.log(10))


def drive_a(total_a: float) -> float:
    """The matched pair's base current, 2·(I/2)/(h_FE(I/2) + 1). [A]"""
    return total_a / (hfe(total_a / 2) + 1)


@pytest.fixture
def gain_stage(tmp_path):
    write_part(tmp_path / "gain", extra=GAIN)
    stage = tmp_path / "stage.toml"
    stage.write_text(
        f'part = "gain"\ncount = 2\nballast = {BALLAST_OHM:g}\ncase_temp = 25\ndrive_limit = {DRIVE_LIMIT_A:g}\n'
    )
    return stage


def test_an_envelope_short_of_drive_keeps_the_currents_margin_and_names_drive(gain_stage):
    """8 A from 2 to 5 V (40 W): each device 4 A at V − 0.4 V, inside the reference curve's 15 A segment (to
    8.33 V): margin 1 − 4/15 = 73.3 %; the driver must give 8/(h_FE(4) + 1) = 0.236 A > 0.2 A: fail, limit
    drive (it read −1e-9 before). The junction stays at 25 + 4·4.6·1 K/W = 43.4 °C at most."""
    assert drive_a(8.0) > DRIVE_LIMIT_A
    result = soacheck.envelope(gain_stage, Envelope(2.0, 5.0, 8.0, 40.0, case_temp_c=TC_C))
    s = result.to_dict()
    assert (s["verdict"], s["limit"]) == ("fail", "drive") and not result.passed
    assert s["margin"] == pytest.approx(1 - 4.0 / I_MAX_A, rel=1e-9) and s["overload"] is None
    assert s["drive_current_peak"] == pytest.approx(drive_a(8.0), rel=1e-6)
    assert s["tj_peak"] == pytest.approx(TC_C + 4.0 * (5.0 - 4.0 * BALLAST_OHM) * 1.0, rel=1e-9)
    assert [o["limit"] for o in s["outside"]] == ["drive"]
    assert result.check.failed_device == 1


def test_cli_and_plan_lead_with_drive(gain_stage, tmp_path):
    envelope = tmp_path / "envelope.toml"
    envelope.write_text("voltage = [2, 5]\ncurrent = 8\npower = 40\ncase_temp = 25\n")
    as_json = invoke("envelope", gain_stage, "--check", envelope, "--json")
    assert as_json.exit_code == 1, as_json.output
    assert json.loads(as_json.stdout)["limit"] == "drive"
    text = invoke("envelope", gain_stage, "--check", envelope)
    assert text.exit_code == 1, text.output
    flat = " ".join(text.stdout.split())
    assert "FAIL: drive (Q1): the base driver cannot supply the drive current the device needs; the current " in flat
    assert flat.endswith("stays inside the SOA boundary (least margin +73.3 %)")
    plan = tmp_path / "plan.toml"
    plan.write_text('title = "drive"\nstage = "stage.toml"\n[[envelope]]\nname = "short"\nfile = "envelope.toml"\n')
    row = soacheck.run_plan(plan, out=tmp_path / "report").to_frame().to_dict(orient="records")[0]
    assert row["headline"].startswith("drive (Q1): the base driver cannot supply")
    assert only_job_why(tmp_path / "report") == row["headline"]


def test_the_largest_safe_envelope_still_stops_where_the_driver_falls_short(gain_stage):
    """At 5 V the devices stay inside their 15 A segment up to far more than the driver allows, so the highest
    safe total current is where 2·(I/2)/(h_FE(I/2) + 1) = 0.2 A (brentq); the search answers from the safe side."""
    found = scipy.optimize.brentq(lambda i: drive_a(i) - DRIVE_LIMIT_A, 2.0, 20.0, xtol=1e-12)
    assert found / 2 < I_MAX_A
    result = soacheck.envelope(gain_stage, voltages=[5.0])
    (point,) = result.to_dict()["points"]
    assert point["max_current"] == math.floor(found * 1e3) / 1e3  # the table rounds down to 1 mA
    assert point["limit"] == "drive"


# ---------------------------------------------------------------- a junction: where the failure is, and when

HOT_RTH = 1.2  # K/W written in place of 1.0: a part whose curve (125 W at 25 °C) disagrees with its rating
RAMP_S, SAMPLES = 1.0, 401
V_SOURCE = 27.9


def crossing_current_a() -> float:
    """The total current where the pair's junctions reach 150 °C: each I/2 at V − (I/2)·R_E, so
    25 + Rth·(V − 0.05·I)·I/2 = 150 (Tj = Tc + P·Rth_jc, JESD51-1), the smaller root of the quadratic. [A]"""
    a, b, c = BALLAST_OHM / 4, -V_SOURCE / 2, (150.0 - TC_C) / HOT_RTH
    return (-b - math.sqrt(b * b - 4 * a * c)) / (2 * a)


@pytest.fixture
def hot_pair(tmp_path):
    text = REFERENCE_TOML.format(id="hot-rth", kind="npn", extra="", extra_top="")
    write_part(tmp_path / "hot-rth", soa=REFERENCE_SOA, toml=text.replace("rth_jc = 1.0", f"rth_jc = {HOT_RTH}"))
    stage = tmp_path / "stage.toml"
    stage.write_text(f'part = "hot-rth"\ncount = 2\nballast = {BALLAST_OHM:g}\ncase_temp = 25\nvbe_spread = 0\n')
    return stage


def test_a_junction_failure_points_at_its_crossing_and_the_margin_at_its_least(hot_pair):
    """A current ramp 4 → 8 A in 1 s at 27.9 V through the matched pair (no thermal model: the junction at
    Tc + P·rth_jc at every instant). Each device's margin on the 125 W line, 1 − P/125 W, falls all along, so
    the least is at the end (8 A: P = 4·27.5 = 110 W, 12 %, margin_time 1 s), while the junction crosses
    150 °C at the current of :func:`crossing_current_a` (7.57 A), 0.11 s before: first_violation_time. The
    junction at a sample follows the power held over the step before it (a sampled filter), so the first
    sample past 150 °C is at most two steps after the crossing, and the peak lies between the closed form's
    values at the last two samples."""
    i_x = crossing_current_a()
    t_x = (i_x - 4.0) / 4.0 * RAMP_S
    step = RAMP_S / (SAMPLES - 1)
    result = soacheck.sweep(hot_pair, ramp="current", start=4, stop=8, at=V_SOURCE, time="1s", samples=SAMPLES)
    s = result.to_dict()
    assert (s["verdict"], s["limit"], s["device"]) == ("fail", "tj_max", 1)
    assert t_x <= s["first_violation_time"] <= t_x + 2 * step
    assert s["margin_time"] == pytest.approx(RAMP_S) and s["margin_time"] > s["first_violation_time"]
    assert s["margin"] == pytest.approx(1 - 4.0 * (V_SOURCE - 0.4) / 125.0, rel=1e-4)  # corner written 8.3333 V

    def settled_c(total_a: float) -> float:  # Tj = Tc + P·Rth_jc, each device I/2 at V − (I/2)·R_E
        return TC_C + HOT_RTH * total_a / 2 * (V_SOURCE - total_a / 2 * BALLAST_OHM)

    assert settled_c(8.0 - 4.0 * step) - 1e-9 <= s["tj_peak"] <= settled_c(8.0) + 1e-9
    assert result.run.failed_device == 1


def test_the_text_names_the_device_where_a_stage_has_more_than_one(hot_pair, tmp_path):
    args = ["sweep", hot_pair, "--ramp", "current", "--from", "4", "--to", "8", "--at", str(V_SOURCE)]
    args += ["--time", "1s", "--samples", str(SAMPLES)]
    text = invoke(*args)
    assert text.exit_code == 1, text.output
    flat = " ".join(text.stdout.split())
    assert "FAIL: the junction of Q1 passes tj_max at " in flat
    single = tmp_path / "single.toml"
    single.write_text('part = "hot-rth"\ncount = 1\ncase_temp = 25\n')
    alone = invoke("sweep", single, "--ramp", "current", "--from", "2", "--to", "4", "--at", str(V_SOURCE))
    assert alone.exit_code == 1, alone.output
    assert "FAIL: the junction passes tj_max at " in " ".join(alone.stdout.split())  # one device: none named


def test_failure_text_names_a_device_only_where_given():
    """The words themselves (display.failure_text), for each kind of failure, from JSON figures written here."""
    from soacheck.display import failing_device, failure_text

    junction = {"limit": "tj_max", "first_violation_time": 0.25, "margin": 0.12, "tj_peak": 156.8}
    assert failure_text(junction, subject="a device", device="Q2") == (
        "the junction of Q2 passes tj_max at 250 ms, peaking at 156.8 °C; the current stays inside the SOA "
        "boundary (least margin +12.0 %)"
    )
    drive = {"limit": "drive", "first_violation_time": None, "margin": -0.5}
    assert failure_text(drive, subject="a device", device="Q1") == (
        "drive (Q1): the base driver cannot supply the drive current the device needs; least margin -50.0 %"
    )
    power = {"limit": "power", "first_violation_time": 3.0, "margin": -0.25}
    assert failure_text(power, subject="a device", device="Q2") == (
        "Q2 leaves its safe operating area at 3 s (limit power), least margin -25.0 %"
    )
    assert failure_text(power, subject="a device") == (
        "a device leaves its safe operating area at 3 s (limit power), least margin -25.0 %"
    )
    assert (failing_device(2, 3), failing_device(1, 1), failing_device(None, 2)) == ("Q2", None, None)


def test_a_headline_given_no_device_names_none():
    """A job result built without its device (one device) reads as before."""
    s = {"limit": "runaway", "first_violation_time": 2.0, "margin": 0.3, "duration": 10.0}
    headline = JobResult("r", "sweep", False, s, ()).headline()
    assert headline.startswith("runaway at 2 s: paralleled devices have no stable state")
    assert headline.endswith("the current stays inside the SOA boundary (least margin +30.0 %)")
