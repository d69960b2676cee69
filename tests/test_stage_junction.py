"""A stage whose current stays inside the SOA boundary while a junction passes its limit.

Construction: the reference part (DC power line (150 − 25 °C)/1.0 K/W = 125 W, conftest) with
a Foster network whose terms are 1.2 times conftest's, summing to 1.2 K/W, above rth_jc (a
thermal model that disagrees with the curve; lint warns of it, and the junction check is
what catches it). At constant power P from t = 0 on a 25 °C case the junction follows the
Foster step response Tj(t) = 25 + P·Σ Rᵢ(1 − e^(−t/τᵢ)) (the Foster form; elementary), which
crosses a limit T_lim at the t_x where Σ Rᵢ(1 − e^(−t_x/τᵢ)) = (T_lim − 25)/P, found here with
scipy's brentq. The current's margin is 1 − P/P_line on the constant-power segment
(P_line = (T_lim − 25)/rth_jc, the definition of Rth, JEDEC JESD51-1), so the current is
inside while the junction is not.

A power ramp (``sweep --ramp power``) holds that constant power while the voltage moves
along the power segment (20 → 30 V).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy.optimize import brentq

import soacheck
from soacheck.partfiles import read_part
from soacheck.plots import plot_stage_run
from soacheck.policy import Policy
from soacheck.runner import JobResult
from soacheck.stage import Stage

from .conftest import write_part
from .helpers import FOUR_R_K_PER_W, FOUR_TAU_S, invoke, only_job_why, violation_marks, zth_closed_form

R_HOT = tuple(1.2 * r for r in FOUR_R_K_PER_W)  # sums to 1.2 K/W, above rth_jc = 1.0 K/W
THERMAL_HOT = f"[thermal]\nfoster_r = {list(R_HOT)}\nfoster_tau = {list(FOUR_TAU_S)}\n"
END_S, SAMPLES = 0.6, 601  # 1 ms steps
DT_S = END_S / (SAMPLES - 1)

# (policy, junction limit judged against [°C], its name, constant power [W]); each P inside its power
# line (T_lim − 25)/1.0 and above (T_lim − 25)/1.2, so the junction settles past the limit
CASES = [
    (None, 150.0, "tj_max", 110.0),  # line 125 W: margin 1 − 110/125 = 12 %; Tj settles at 157 °C
    (Policy("ceiling", tj_ceiling_c=100.0), 100.0, "tj_ceiling", 70.0),  # line 75 W: 6.7 %; 109 °C
]


@pytest.fixture
def hot_zth(tmp_path):
    return write_part(tmp_path / "hot-zth", extra=THERMAL_HOT)


def crossing_s(limit_c: float, power_w: float) -> float:
    """When the Foster step response from 25 °C reaches ``limit_c`` (brentq on the closed form). [s]"""
    return brentq(lambda t: 25.0 + power_w * float(zth_closed_form(t, R_HOT)) - limit_c, 1e-9, END_S, xtol=1e-12)


def power_sweep(part_folder, policy, power_w):
    stage = Stage(read_part(part_folder), 1, case_temp_c=25.0)
    return soacheck.sweep(
        stage, ramp="power", start=20, stop=30, at=power_w, time=f"{END_S}s", samples=SAMPLES, policy=policy
    )


@pytest.mark.parametrize(("policy", "limit_c", "limit", "power_w"), CASES)
def test_a_junction_past_its_limit_fails_the_run_and_names_the_junction(hot_zth, policy, limit_c, limit, power_w):
    result = power_sweep(hot_zth, policy, power_w)
    s = result.to_dict()
    t_x = crossing_s(limit_c, power_w)
    assert s["verdict"] == "fail" and not result.passed
    assert s["limit"] == limit and result.limit == limit
    # the first sample past the limit: the samples are exact (power held from t = 0), so within one step after t_x
    assert t_x <= s["first_violation_time"] <= t_x + DT_S
    assert s["time_over_tj_max"] == pytest.approx(END_S - t_x, abs=DT_S)  # held until the last sample
    assert s["tj_peak"] == pytest.approx(25.0 + power_w * float(zth_closed_form(END_S, R_HOT)), rel=1e-9)
    assert s["tj_peak_time"] == pytest.approx(END_S)
    # the current is inside: its margin stays what it is, and says so beside the failure
    assert s["margin"] == pytest.approx(1 - power_w / (limit_c - 25.0), rel=1e-4)
    assert s["margin"] > 0 and s["overload"] is None
    assert "the current inside" in repr(result)


@pytest.mark.parametrize(("policy", "limit_c", "limit", "power_w"), CASES)
def test_no_failing_headline_carries_an_unexplained_positive_margin(hot_zth, policy, limit_c, limit, power_w):
    result = power_sweep(hot_zth, policy, power_w)
    s = result.to_dict()
    headline = JobResult("hot", "sweep", result.passed, s, result.assumptions).headline()
    first_ms = 1e3 * s["first_violation_time"]
    assert headline.startswith(f"the junction passes {limit} at {first_ms:.4g} ms, peaking at {s['tj_peak']:.4g} °C")
    assert headline.endswith(f"the current stays inside the SOA boundary (least margin {100 * s['margin']:+.1f} %)")
    assert not headline.startswith("least margin +")


def test_the_plot_marks_the_junction_where_it_passed_its_limit(hot_zth):
    policy, limit_c, limit, power_w = CASES[0]
    run = power_sweep(hot_zth, policy, power_w).run
    fig = plot_stage_run(run)
    marks = {ax.get_ylabel(): violation_marks(ax) for ax in fig.axes}
    (at,) = marks["°C"]
    t_x = crossing_s(limit_c, power_w)
    assert 1e3 * t_x <= at[0] <= 1e3 * (t_x + DT_S)  # a 0.6 s run: the axis is in ms
    assert limit_c <= at[1] <= 25.0 + power_w * float(zth_closed_form(t_x + DT_S, R_HOT))
    assert marks["margin [%]"] == []  # the margin there is positive: nothing to mark on it


def test_the_same_power_passes_where_the_thermal_model_agrees_with_the_curve(tmp_path):
    """conftest's network sums to rth_jc: at 110 W the junction settles at 25 + 110 = 135 °C, below 150 °C."""
    from .conftest import THERMAL

    result = power_sweep(write_part(tmp_path / "agreeing", extra=THERMAL), None, 110.0)
    s = result.to_dict()
    assert s["verdict"] == "pass" and s["first_violation_time"] is None and s["time_over_tj_max"] == 0.0
    assert s["tj_peak"] == pytest.approx(25.0 + 110.0 * float(zth_closed_form(END_S)), rel=1e-9)


def test_cli_json_and_text_name_the_junction_and_exit_1(hot_zth, tmp_path):
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "hot-zth"\ncount = 1\ncase_temp = 25\n')
    args = ["sweep", str(stage), "--ramp", "power", "--from", "20", "--to", "30", "--at", "110", "--time", "600ms"]
    args += ["--samples", str(SAMPLES)]
    as_json = invoke(*args, "--json")
    assert as_json.exit_code == 1, as_json.output
    payload = json.loads(as_json.stdout)
    t_x = crossing_s(150.0, 110.0)
    assert payload["verdict"] == "fail" and payload["limit"] == "tj_max"
    assert t_x <= payload["first_violation_time"] <= t_x + DT_S and payload["margin"] > 0
    text = invoke(*args)
    assert text.exit_code == 1, text.output
    assert "FAIL: the junction passes tj_max at" in text.stdout
    assert "the current stays inside the SOA boundary (least margin +12.0 %)" in text.stdout
    assert "leaves its safe operating area" not in text.stdout


def test_a_plans_table_and_report_say_why_the_job_failed(hot_zth, tmp_path):
    """The plan's table carries the headline; the report states it at the top of the job's answer."""
    plan = tmp_path / "plan.toml"
    plan.write_text(
        'title = "junction"\n[stage]\npart = "hot-zth"\ncount = 1\ncase_temp = 25\n'
        '[[sweep]]\nname = "hot"\nramp = "power"\nfrom = 20\nto = 30\nat = 110\ntime = "600ms"\n'
        f"samples = {SAMPLES}\n"
    )
    result = soacheck.run_plan(plan, out=tmp_path / "report")
    (row,) = result.to_frame().to_dict(orient="records")
    assert row["verdict"] == "fail" and row["limit"] == "tj_max" and row["margin"] > 0
    assert row["headline"].startswith("the junction passes tj_max at ")
    assert only_job_why(tmp_path / "report") == row["headline"]


def test_a_trace_failing_on_its_junction_alone_is_drawn_so(hot_zth):
    """The same 110 W held as a trace (one device, 25 °C case): the first violation is the junction's, at t_x."""
    import pandas as pd

    from soacheck.plots import plot_trace

    t = np.linspace(0.0, END_S, SAMPLES)
    result = soacheck.trace(hot_zth, pd.DataFrame({"time": t, "voltage": 20.0, "current": 5.5}), case_temp=25)
    t_x = crossing_s(150.0, 110.0)
    assert result.limit == "tj_max" and t_x <= result.trace.first_violation_time_s <= t_x + DT_S
    fig = plot_trace(read_part(hot_zth), result.trace)
    marks = {ax.get_ylabel(): violation_marks(ax) for ax in fig.axes}
    (at,) = marks["temperature [°C]"]
    assert 1e3 * t_x <= at[0] <= 1e3 * (t_x + DT_S) and at[1] >= 150.0
    assert marks["margin [%]"] == []
    (title,) = [ax.get_title() for ax in fig.axes if ax.get_ylabel() == "temperature [°C]"]
    assert title == "verdict fail: tj_max; the current inside, margin +12.0%"
