"""Envelopes, the largest safe envelope and its limit table, and candidate comparison.

Check values: the reference part's constructed curve (conftest, hand-computed
limits), the steady-state heatsink relation Tj = Ta + P (Rth_jc + Rth_cs + Rth_sa)
(resistances in series, elementary; JEDEC JESD51-1 for the definition of Rth), and the facts of the trade on
package classes, marked as such.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from soacheck.cli import app
from soacheck.compare import compare
from soacheck.envelope import Envelope, check_envelope, largest_safe_envelope
from soacheck.errors import SoacheckError
from soacheck.library import bundled_library
from soacheck.partfiles import read_part
from soacheck.stage import Cooling, Stage
from soacheck.steady_state import steady_state

from .conftest import write_part
from .helpers import svg_texts

runner = CliRunner(env={"COLUMNS": "200"})


def bundled(part_id):
    return read_part(bundled_library() / part_id)


@pytest.fixture
def ref_part(tmp_path):
    return read_part(write_part(tmp_path / "ref-bjt"))


# --------------------------------------------------------------------------- envelope checks


def test_single_device_envelope_by_hand(ref_part):
    """One device at 25 °C case, no resistors: the edge min(10 A, 100 W/V) from 2 to 60 V lies
    inside the 15 A / 125 W curve up to the second-breakdown line, which allows 3.125 (V/40)^-2;
    100/V meets it at V = 50 V, so the edge is outside from 50 V to 60 V."""
    stage = Stage(ref_part, 1, case_temp_c=25.0)
    result = check_envelope(stage, Envelope(2.0, 60.0, 10.0, 100.0, case_temp_c=25.0), points=2000)
    assert not result.passed
    (outside,) = result.outside
    assert outside["from_voltage"] == pytest.approx(50.0, rel=2e-3)
    assert outside["to_voltage"] == pytest.approx(60.0)
    assert outside["limit"] == "second_breakdown"
    # worst margin at 60 V: 1 - (100/60)/(3.125 (60/40)^-2) = 1 - 1.6667/1.3889
    assert result.min_margin == pytest.approx(1 - (100 / 60) / (3.125 / 1.5**2), rel=1e-4)


def test_heatsink_settles_at_the_worst_power(ref_part):
    # Tj = Ta + P (Rth_jc + Rth_cs + Rth_sa) in steady state (resistances in series, elementary): one device, 50 W
    stage = Stage(ref_part, 1, cooling=Cooling(0.5, 0.5, 100.0, 30.0))
    state = steady_state(stage, np.array([10.0]), np.array([5.0]))
    assert state.junction_c[0, 0] == pytest.approx(30 + 50 * (1.0 + 0.5 + 0.5))
    assert state.case_c[0, 0] == pytest.approx(30 + 50 * 1.0)


def test_pulsed_envelope_uses_the_pulse_train_impedance(modelled_part):

    stage = Stage(modelled_part, 1, case_temp_c=25.0)
    env = Envelope(5.0, 30.0, 30.0, 600.0, pulse_s=1e-3, duty=0.1, ambient_c=None, case_temp_c=25.0)
    state = steady_state(stage, np.array([20.0]), np.array([20.0]), pulse_s=1e-3, duty=0.1)
    # Tj = Tc + P Zth(tp, D): 400 W x 0.242263 K/W (constructed network, closed form of the periodic train)
    assert state.junction_c[0, 0] == pytest.approx(25 + 400 * 0.242263, abs=400 * 5e-7)  # 121.905 °C
    assert check_envelope(stage, env).passed is False  # 600 W: above 515.97 W the train allows


# --------------------------------------------------------------------------- the limit table


def test_largest_safe_envelope_json(tmp_path):
    stage_file = tmp_path / "stage.toml"
    stage_file.write_text('part = "demo-npn-to247-125w"\ncount = 1\ncase_temp = 25\n')
    result = runner.invoke(app, ["envelope", str(stage_file), "--voltages", "5,20,60", "--json"])
    payload = json.loads(result.stdout)
    points = payload["points"]
    assert [p["voltage"] for p in points] == [5.0, 20.0, 60.0]
    # by hand from the demo curve: 15 A current limit at 5 V, 125 W/20 V = 6.25 A,
    # second breakdown 4.167 (60/30)^-2.5 = 0.7366 A at 60 V
    # (the JSON's currents are rounded down to 1 mA: at most one step below, never above)
    assert 15.0 - 0.001 <= points[0]["max_current"] <= 15.0 and points[0]["limit"] == "current"
    assert 6.25 - 0.001 <= points[1]["max_current"] <= 6.25 and points[1]["limit"] == "tj_max"
    assert points[2]["max_current"] == pytest.approx(4.167 * 2**-2.5, rel=1e-3)
    assert points[2]["limit"] == "second_breakdown"


# --------------------------------------------------------------------------- facts of the trade


TYPICAL = {  # interface with grease (from memory), an ordinary 0.5 K/W per device, 25 °C room
    "TO-220": 0.5,
    "TO-247": 0.3,
}


def max_power_w(stage, voltages):
    """The devices' own dissipation at the largest safe current (the resistors take the rest)."""
    table = largest_safe_envelope(stage, voltages)
    return steady_state(stage, table.voltage_v, table.max_current_a).device_w.sum(axis=0)


@pytest.mark.parametrize(
    ("part_id", "package", "expected_w"),
    [
        # common practice, no source: with ordinary heatsinks a TO-220 device handles about 40 W
        ("demo-npn-to220-62w", "TO-220", 40.0),
        # and a TO-247 device about 70-75 W
        ("demo-npn-to247-125w", "TO-247", 72.5),
    ],
)
def test_package_class_power_with_typical_cooling(part_id, package, expected_w):
    stage = Stage(bundled(part_id), 1, cooling=Cooling(TYPICAL[package], 0.5, 500.0, 25.0))
    best = max_power_w(stage, np.geomspace(3, 25, 12)).max()
    assert best == pytest.approx(expected_w, rel=0.08)


def test_two_to247_devices_and_the_forty_volt_rule():
    """Common practice, no source: two TO-247 devices handle about 140-150 W, and a load of two
    small devices is kept under about 40 V and 150 W. Two demo TO-247 bipolars with 0.22 ohm
    ballasts on a shared 0.25 K/W heatsink dissipate about 140 W at low voltage (the ballast
    resistors take the rest of the input power), far less above 40 V."""
    stage = Stage(
        bundled("demo-npn-to247-125w"),
        2,
        ballast_ohm=0.22,
        vbe_spread_v=0.01,
        cooling=Cooling(TYPICAL["TO-247"], 0.25, 1000.0, 25.0),
    )
    power = max_power_w(stage, np.array([10.0, 20.0, 30.0, 45.0, 60.0]))
    assert 125 <= power[:2].max() <= 155
    assert power[-1] < 0.5 * power[:2].max()


# --------------------------------------------------------------------------- compare


def test_compare_ranks_by_margin_and_finds_the_fewest_devices_by_search():
    parts = [
        bundled(p)
        for p in (
            "demo-npn-to3-250w",
            "demo-npn-to247-125w",
            "demo-npn-to220-62w",
            "demo-nmos-to247-300w",
            "demo-igbt-to247-200w",
        )
    ]
    env = Envelope(5.0, 40.0, 20.0, 150.0, ambient_c=None, case_temp_c=60.0)
    ranked = compare(parts, env, points=2000)
    margins = [c.margin if c.margin is not None else -math.inf for c in ranked]
    passing = [c.passes for c in ranked]
    assert passing == sorted(passing, reverse=True)
    for group in (True, False):
        group_margins = [m for m, p in zip(margins, passing, strict=True) if p is group]
        assert group_margins == sorted(group_margins, reverse=True)


def test_compare_with_a_stage_finds_the_heatsink_by_hand(ref_part):
    """One reference device on a heatsink (interface 0.3 K/W, ambient 25 °C) against min(10 A, 60 W/V)
    from 5 to 30 V. By hand: the heatsink settles at the worst power, 60 W (from 6 V up), so
    Tc = 25 + 60 (R_sa + 0.3); the derated power line (150 - Tc)/Rth_jc (Rth_jc 1 K/W) must carry 60 W,
    and the current limit (15 A) and second breakdown (above the power line below 40 V) never bind:
    R_sa <= (150 - 25)/60 - 1 - 0.3 = 0.78333 K/W. At R_sa = 0.5: Tc = 73 °C, 77 W allowed, margin
    1 - 60/77 = 0.22078, limit power, first at the 6 V corner; one device is enough."""
    stage = Stage(ref_part, 1, cooling=Cooling(0.3, 0.5, 600.0, 25.0))
    (best,) = compare([ref_part], Envelope(5.0, 30.0, 10.0, 60.0), stage=stage)
    assert best.passes and best.min_count == 1 and best.limit == "power"
    assert best.margin == pytest.approx(1 - 60 / 77, abs=1e-4)
    assert best.worst_voltage == pytest.approx(6.0, rel=1e-3)
    # the search stops on the safe side, within 0.1 % of the hand value
    assert (150 - 25) / 60 - 1 - 0.3 - 1e-3 <= best.max_heatsink_rth <= (150 - 25) / 60 - 1 - 0.3


def test_compare_cli_json_and_plot_by_hand(tmp_path):
    """The reference part alone at a 60 °C case on the envelope min(20 A, 150 W/V) from 5 to 40 V.

    By hand: f = (150 - 60)/(150 - 25) = 0.72, so 15 A, 90 W and second breakdown
    0.72 x 3.125 (V/40)^-2 = 3600/V^2 A, which lies above 90/V below 40 V. One device: from
    7.5 V (where 150/V falls below 20 A) the edge carries 150/V against 90/V, so the
    least margin is 1 - 150/90 = -2/3 (overload 5/3), limit power, first at 7.5 V. Two devices:
    75/V against 90/V and 10 A against 15 A everywhere: they pass, so the fewest is 2.
    """
    write_part(tmp_path / "lib" / "ref-bjt")
    env = tmp_path / "env.toml"
    env.write_text('voltage = [5, 40]\ncurrent = 20\npower = 150\npulse = "dc"\ncase_temp = 60\n')
    plot = tmp_path / "c.svg"
    result = runner.invoke(
        app,
        [
            "compare",
            "ref-bjt",
            "--envelope",
            str(env),
            "--library",
            str(tmp_path / "lib"),
            "--json",
            "--plot",
            str(plot),
        ],
    )
    assert result.exit_code == 1, result.output  # the only candidate fails alone
    (row,) = json.loads(result.stdout)["candidates"]
    assert row["verdict"] == "fail" and row["limit"] == "power"
    assert row["margin"] == pytest.approx(-2 / 3, abs=1e-4) and row["overload"] == pytest.approx(5 / 3, abs=1e-4)
    assert row["worst_voltage"] == pytest.approx(7.5, rel=1e-3)
    assert row["min_count"] == 2
    texts = svg_texts(plot)  # what the plot shows, read back
    assert "ref-bjt, Tc = 60 °C" in texts and "candidates derated at 60 °C case" in texts
    assert any(t.startswith("envelope: 5–40 V, 20 A, 150 W") for t in texts)


# --------------------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("voltage = [40, 5]\ncurrent = 20\npower = 150\ncase_temp = 60\n", "is empty"),
        ('voltage = [5, 40]\ncurrent = 20\npower = 150\npulse = "10ms"\nduty = 0\ncase_temp = 60\n', "duty is 0"),
        ("voltage = [700, 900]\ncurrent = 20\npower = 150\ncase_temp = 60\n", "past every candidate's v_max"),
        ("voltage = [5, 40]\ncurrent = 20\npowr = 150\ncase_temp = 60\n", "did you mean 'power'"),
        ("voltage = [5, 40]\ncurrent = 20\npower = 150\nambient = 25\ncase_temp = 60\n", "not both"),
    ],
)
def test_bad_envelopes_exit_2(tmp_path, text, fragment):
    env = tmp_path / "env.toml"
    env.write_text(text)
    result = runner.invoke(app, ["compare", "--all", "--envelope", str(env)])
    assert result.exit_code == 2, result.output
    assert fragment in result.stderr


def test_envelope_past_v_max_of_the_stage_part_is_refused():
    with pytest.raises(SoacheckError, match="above"):
        check_envelope(
            Stage(bundled("demo-npn-to220-62w"), 1, case_temp_c=25.0),
            Envelope(100.0, 200.0, 1.0, 10.0, case_temp_c=25.0),
        )


def test_compare_on_a_discharge_and_on_a_trace(tmp_path):
    discharge = tmp_path / "discharge.toml"
    discharge.write_text(
        'battery = "nmc"\ncells = 10\ncapacity = 2\ninternal_resistance = 0.1\nmode = "cc"\n'
        "setpoint = 3\nsamples = 300\n"
    )
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "demo-npn-to3-250w"\ncount = 2\nballast = 0.1\nvbe_spread = 0.02\ncase_temp = 40\n')
    result = runner.invoke(
        app,
        [
            "compare",
            "demo-npn-to3-250w",
            "demo-npn-to247-125w",
            "--discharge",
            str(discharge),
            "--stage",
            str(stage),
            "--json",
        ],
    )
    assert result.exit_code == 0, result.output
    rows = {r["part"]: r for r in json.loads(result.stdout)["candidates"]}
    # 1.5 A per device at about 40 V: inside the TO-3 part's 250 W curve, far past the TO-247
    # part's second breakdown (4.167 (40/30)^-2.5 = 2.03 A at 25 °C, derated like thermal)
    assert rows["demo-npn-to3-250w"]["verdict"] == "pass" and rows["demo-npn-to247-125w"]["verdict"] == "fail"
    assert rows["demo-npn-to247-125w"]["limit"] == "second_breakdown"
    assert rows["demo-npn-to247-125w"]["min_count"] > 2
    trace = tmp_path / "trace.csv"
    t = np.linspace(0, 1, 1001)
    pd.DataFrame({"time": t, "voltage": 40.0, "current": 3.0}).to_csv(trace, index=False)
    result = runner.invoke(
        app,
        ["compare", "demo-npn-to3-250w", "demo-npn-to247-125w", "--trace", str(trace), "--case-temp", "25", "--json"],
    )
    rows = {r["part"]: r for r in json.loads(result.stdout)["candidates"]}
    # one device, 3 A at 40 V: the TO-247 part allows 2.03 A, so it needs 2 devices sharing evenly
    assert rows["demo-npn-to247-125w"]["min_count"] == 2
    assert rows["demo-npn-to3-250w"]["verdict"] == "pass" and rows["demo-npn-to3-250w"]["max_case_temp"] > 25
