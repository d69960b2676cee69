"""Paralleled FETs (and IGBTs) whose part has no transfer.csv: no sharing is credited.

Without the transfer curves nothing tells how such devices share (their transconductance and
α = ∂I_D/∂T_j, which changes sign at the zero-temperature-coefficient point: Spirito, Breglio,
d'Alessandro, Rinaldi, MIEL 2002), so one device is taken to carry the whole current: no device
of a set carries more than the whole current, so the bound holds whatever the split. Every
stage command judges by it and names the missing file and what it must hold.

The part is the constructed reference curve (tests/conftest.py) as an nmos: current limit 15 A,
125 W (tj_max 150 °C, rth_jc 1 K/W), slope −2 above 40 V, no derating table, no thermal model.
With the cases held at 60 °C the power line derates by (150 − 60)/(150 − 25) = 0.72 to 90 W and
the steep line lies above it below 40 V (README, derating); the junction sits at 60 + P·1.0 °C.
Two devices with 0.1 Ω source resistors and no series resistance: the device carrying I from a
source V sees V − 0.1·I, so its margin below 40 V is 1 − I·(V − 0.1·I)/90 (hand values below).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from soacheck.partfiles import read_part
from soacheck.sharing import loop_gain, share_current, stability_gain
from soacheck.stage import Stage

from .conftest import write_part
from .helpers import exit_code_for, invoke
from .test_mosfet import FET_SOA, write_transfer

STAGE = """part = "lib/ref-fet"
count = {count}
ballast = 0.1
vbe_spread = 0.02
case_temp = 60
"""

TOL = 1e-4  # the constructed curve's corner at 8.3333 V carries 124.9995 W, 4 ppm short of 125 W: its power line
# is that far from slope −1, which moves the allowed current near 20 V by about 2e-5 (relative)
MISSING = "ref-fet/transfer.csv is missing"
FIX = "add transfer.csv with columns temp,vgs,current"


@pytest.fixture
def fet_stage(tmp_path):
    """Two reference nmos devices without transfer.csv, cases held at 60 °C; the stage file's path."""
    write_part(tmp_path / "lib" / "ref-fet", kind="nmos")
    path = tmp_path / "stage.toml"
    path.write_text(STAGE.format(count=2), encoding="utf-8")
    return path


def answer(*args):
    """The --json answer of a command, its exit code checked against its verdict."""
    result = invoke(*args, "--json")
    payload = json.loads(result.output)
    assert result.exit_code == exit_code_for(payload), result.output
    return payload


def names_the_missing_file(notes) -> bool:
    return sum(MISSING in note and FIX in note for note in notes) == 1


# --------------------------------------------------------------------------- the law


@pytest.mark.parametrize("ballast_ohm", [0.0, 0.1])
def test_the_device_lowest_in_the_band_carries_the_whole_current(ballast_ohm):
    """Four devices, the third lowest in the band, at any temperatures: it carries every ampere, the others none
    (the bound stated in the module docstring), whatever the source resistors."""
    total = np.array([0.1, 3.0, 40.0])
    tj = np.array([[25.0, 80.0, 120.0], [30.0, 60.0, 90.0], [25.0, 25.0, 25.0], [100.0, 100.0, 100.0]])
    offsets = np.array([0.0, 0.01, -0.02, 0.0])
    got = share_current(total, tj, offsets, ballast_ohm=ballast_ohm, bipolar=False)
    assert got[2] == pytest.approx(total, rel=0, abs=0)
    assert not got[[0, 1, 3]].any()


def test_rows_standing_for_several_devices_never_take_the_whole_current():
    """Q1 and a row for seven matched devices (the worst case solved once): with no spread Q1 still takes it all,
    never the row of seven, which would put seven times the current into the set."""
    got = share_current(
        np.array([5.0]), np.full((2, 1), 25.0), np.zeros(2), ballast_ohm=0.1, bipolar=False, counts=np.array([1, 7])
    )
    assert got[:, 0].tolist() == [5.0, 0.0]


def test_no_electro_thermal_gain_is_claimed_for_currents_that_are_taken():
    """The bound's currents do not move with temperature, so neither loop nor stage gain is computed: 0."""
    i = np.array([[4.0], [0.0]])
    law = {"ballast_ohm": 0.0, "bipolar": False}
    assert loop_gain(i, np.full((2, 1), 30.0), 1.0, **law).tolist() == [[0.0], [0.0]]
    assert stability_gain(i, np.full((2, 1), 30.0), np.full((2, 1), 60.0), z_self_k_per_w=1.0, **law).tolist() == [0.0]


def test_parts_with_transfer_curves_keep_their_sharing(tmp_path):
    """A FET with transfer.csv shares by its curves: no assumption, and 3 A split between both devices."""
    folder = write_part(tmp_path / "fet", soa=FET_SOA, kind="nmos")
    write_transfer(folder / "transfer.csv", i_lo=0.01)
    stage = Stage(read_part(folder), 2, ballast_ohm=0.05, vbe_spread_v=0.02, case_temp_c=25.0)
    assert stage.sharing_assumption is None
    split = stage.share(np.array([3.0]), np.full((2, 1), 25.0))
    assert 0 < split[1, 0] < split[0, 0] < 3.0


def test_one_device_needs_no_transfer_curves(tmp_path):
    write_part(tmp_path / "lib" / "ref-fet", kind="nmos")
    stage = Stage(read_part(tmp_path / "lib" / "ref-fet"), 1, case_temp_c=60.0)
    assert stage.sharing_assumption is None


# --------------------------------------------------------------------------- every command


def test_sweep_judges_one_device_carrying_the_ramp(fet_stage):
    """0 → 5 A at 20 V: at the end one device carries 5 A at 19.5 V, 97.5 W against 90 W: margin 1 − 97.5/90
    (hand value; an even split would put 48.75 W on each and pass)."""
    payload = answer("sweep", fet_stage, "--ramp", "current", "--from", 0, "--to", 5, "--at", 20, "--time", "10s")
    assert payload["verdict"] == "fail" and payload["limit"] == "power"
    assert payload["margin"] == pytest.approx(1 - 97.5 / 90, rel=TOL)
    assert payload["loop_gain_peak"] == 0 and payload["stage_gain_peak"] == 0
    assert names_the_missing_file(payload["assumptions"])


def test_discharge_names_the_assumption(fet_stage):
    payload = answer(
        "discharge", fet_stage, "--battery", "nmc", "--cells", 4, "--capacity", 2, "--mode", "cc", "--setpoint", 3
    )
    assert names_the_missing_file(payload["assumptions"])


@pytest.mark.parametrize(("current_a", "margin"), [(5.0, 1 - 5 * 19.5 / 90), (4.0, 1 - 4 / 15)])
def test_sharing_takes_every_draw_on_one_device(fet_stage, current_a, margin):
    """At 20 V every draw puts the whole current on the device lowest in the band: worst share 1 (hand values:
    5 A at 19.5 V, 97.5 W, fails its 90 W line; 4 A at 19.6 V, 78.4 W, is inside, and the margin is then the
    worst share's against i_max 15 A, as README states for `sharing`)."""
    payload = answer("sharing", fet_stage, "--current", current_a, "--voltage", 20, "--draws", 200)
    assert payload["worst_share"] == 1.0 and payload["mean_worst_share"] == 1.0
    assert payload["hogging_fraction"] == 0 and payload["runaway_fraction"] == 0
    assert payload["margin"] == pytest.approx(margin, rel=TOL)
    assert payload["verdict"] == ("pass" if margin >= 0 else "fail")


def test_sharing_text_says_the_share_is_taken(fet_stage):
    result = invoke("sharing", fet_stage, "--current", 4, "--voltage", 20, "--draws", 50)
    assert result.exit_code == 0, result.output
    assert "the worst device is taken to carry 100.0% of the current" in " ".join(result.output.split())
    assert MISSING in " ".join(result.output.split())


def test_envelope_check_fails_where_one_device_cannot_carry_the_edge(fet_stage, tmp_path):
    """Edge min(10 A, 100 W/V) from 5 to 20 V on one device: from 10 V, P = 100 − 0.1·(100/V)², most at 20 V:
    97.5 W against 90 W, margin 1 − 97.5/90 (hand value); 9.75 W less per device would pass with an even split."""
    envelope = tmp_path / "envelope.toml"
    envelope.write_text('voltage = [5, 20]\ncurrent = 10\npower = 100\npulse = "dc"\ncase_temp = 60\n')
    payload = answer("envelope", fet_stage, "--check", envelope)
    assert payload["verdict"] == "fail" and payload["limit"] == "power"
    assert payload["margin"] == pytest.approx(1 - 97.5 / 90, rel=TOL)
    assert payload["worst_voltage"] == pytest.approx(20.0)
    assert names_the_missing_file(payload["assumptions"])


def test_largest_safe_envelope_is_one_devices(fet_stage):
    """The highest total current with I·(V − 0.1·I) = 90 W (the junction then at 150 °C too): at 10 V
    (10 − √(100 − 36))/0.2 = 10 A, at 20 V (20 − √(400 − 36))/0.2 = 4.6061 A (hand values; rounded down to 1 mA)."""
    payload = answer("envelope", fet_stage, "--voltages", "10,20")
    currents = [row["max_current"] for row in payload["points"]]
    expected = [10.0, (20 - math.sqrt(364)) / 0.2]
    for got, want in zip(currents, expected, strict=True):
        assert want - 2e-3 <= got <= want
    assert names_the_missing_file(payload["assumptions"])


def test_compare_credits_no_extra_devices(fet_stage, tmp_path):
    """In the stage's place the part fails as one device does, and no count of devices passes (None)."""
    envelope = tmp_path / "envelope.toml"
    envelope.write_text('voltage = [5, 20]\ncurrent = 10\npower = 100\npulse = "dc"\ncase_temp = 60\n')
    payload = answer("compare", tmp_path / "lib" / "ref-fet", "--envelope", envelope, "--stage", fet_stage)
    (candidate,) = payload["candidates"]
    assert candidate["verdict"] == "fail" and candidate["min_count"] is None
    assert candidate["margin"] == pytest.approx(1 - 97.5 / 90, rel=TOL)
    text = invoke("compare", tmp_path / "lib" / "ref-fet", "--envelope", envelope, "--stage", fet_stage)
    assert MISSING in " ".join(text.output.split())
