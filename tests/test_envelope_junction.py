"""An envelope whose devices stay inside the SOA current boundary while a junction passes its limit.

Construction: the reference part (conftest: DC power line 125 W at a 25 °C case, tj_max 150 °C)
with rth_jc written as 1.2 K/W instead of 1.0 (a part whose curve disagrees with its thermal
rating; lint reports it, and the junction check is what catches it). One device, cases held at
25 °C, no resistors: the envelope's edge over 20–30 V at P = 110 W is the device's own path.
In DC steady state its junction sits at Tj = Tc + P·Rth_jc (the definition of Rth, JEDEC
JESD51-1): 25 + 110·1.2 = 157 °C, past tj_max, while its current's margin is 1 − P/P_line =
1 − 110/125 = 12 % on the constant-power segment. Under a policy with a 100 °C ceiling the
power line is 125·(100 − 25)/(150 − 25) = 75 W (the same definition with the ceiling as Tj)
and at 70 W the junction settles at 25 + 70·1.2 = 109 °C: margin 1 − 70/75 = 6.7 %.

The largest safe envelope at source voltage V is then bounded by the junction before the power
line: I = (T_lim − Tc)/(Rth_jc·V) (the same definition), below P_line/V.
"""

from __future__ import annotations

import json

import pytest

import soacheck
from soacheck.envelope import Envelope
from soacheck.partfiles import read_part
from soacheck.plots import plot_envelope_check
from soacheck.policy import Policy
from soacheck.runner import JobResult
from soacheck.stage import Stage

from .conftest import REFERENCE_SOA, REFERENCE_TOML, write_part
from .helpers import invoke, only_job_why, violation_marks

RTH_JC_K_PER_W = 1.2  # as written in the part file
TC_C = 25.0
CURVE_POWER_W = 125.0  # the DC curve's constant-power segment at 25 °C (conftest)
TJ_MAX_C = 150.0

# (policy, junction limit judged against [°C], its name, envelope power [W], power line [W])
CASES = [
    (None, TJ_MAX_C, "tj_max", 110.0, CURVE_POWER_W),
    (Policy("ceiling", tj_ceiling_c=100.0), 100.0, "tj_ceiling", 70.0, CURVE_POWER_W * (100.0 - 25.0) / 125.0),
]
V_LOW, V_HIGH = 20.0, 30.0


@pytest.fixture
def hot_rth(tmp_path):
    text = REFERENCE_TOML.format(id="hot-rth", kind="npn", extra="", extra_top="")
    return write_part(tmp_path / "hot-rth", soa=REFERENCE_SOA, toml=text.replace("rth_jc = 1.0", "rth_jc = 1.2"))


def settled_tj_c(power_w: float) -> float:
    """DC steady state: Tj = Tc + P·Rth_jc (JEDEC JESD51-1). [°C]"""
    return TC_C + power_w * RTH_JC_K_PER_W


def envelope_at(power_w: float) -> Envelope:
    """20–30 V at ``power_w``: the current P/20 V meets the power at 20 V, so the whole edge is at P."""
    return Envelope(V_LOW, V_HIGH, power_w / V_LOW, power_w, ambient_c=None, case_temp_c=TC_C)


def one_device(part_folder) -> Stage:
    return Stage(read_part(part_folder), 1, case_temp_c=TC_C)


@pytest.mark.parametrize(("policy", "limit_c", "limit", "power_w", "line_w"), CASES)
def test_a_junction_past_its_limit_fails_the_envelope_and_keeps_the_currents_margin(
    hot_rth, policy, limit_c, limit, power_w, line_w
):
    assert settled_tj_c(power_w) > limit_c and power_w < line_w  # the construction: hot, current inside
    result = soacheck.envelope(one_device(hot_rth), envelope_at(power_w), policy=policy)
    s = result.to_dict()
    assert s["verdict"] == "fail" and not result.passed
    assert s["limit"] == limit and result.limit == limit
    assert s["tj_peak"] == pytest.approx(settled_tj_c(power_w), abs=1e-6)
    # the current's margin as it is, not pushed below zero
    assert s["margin"] == pytest.approx(1 - power_w / line_w, rel=1e-4)
    assert s["margin"] > 0 and s["overload"] is None
    assert result.margin == pytest.approx(s["margin"])
    (stretch,) = s["outside"]
    assert stretch["from_voltage"] == pytest.approx(V_LOW) and stretch["to_voltage"] == pytest.approx(V_HIGH)
    assert stretch["limit"] == limit and stretch["margin"] == pytest.approx(s["margin"])
    assert repr(result) == f"<EnvelopeResult fail, limit {limit}; the current inside, margin {s['margin']:+.1%}>"
    frame = result.to_frame()
    assert (frame["limit"] == limit).all() and (frame["margin"] > 0).all()


def test_the_same_envelope_passes_below_tj_max(hot_rth):
    """At 100 W the junction settles at 25 + 100·1.2 = 145 °C, below 150 °C: margin 1 − 100/125 = 20 %."""
    s = soacheck.envelope(one_device(hot_rth), envelope_at(100.0)).to_dict()
    assert s["verdict"] == "pass" and s["outside"] == []
    assert s["tj_peak"] == pytest.approx(settled_tj_c(100.0), abs=1e-6)
    assert s["margin"] == pytest.approx(0.2, rel=1e-4)


@pytest.mark.parametrize(("policy", "limit_c", "limit", "power_w", "line_w"), CASES)
def test_the_largest_safe_envelope_still_stops_at_the_junction(hot_rth, policy, limit_c, limit, power_w, line_w):
    """The search treats a hot junction as unsafe: I = (T_lim − Tc)/(Rth_jc·V), under the power line."""
    voltages = [V_LOW, 25.0, V_HIGH]
    table = soacheck.envelope(one_device(hot_rth), voltages=voltages, policy=policy).table
    for v, found_a, found_limit in zip(table.voltage_v, table.max_current_a, table.limit, strict=True):
        expected_a = (limit_c - TC_C) / (RTH_JC_K_PER_W * v)
        assert expected_a < line_w / v
        assert expected_a - 1e-3 - 1e-9 <= found_a <= expected_a  # rounded down to 1 mA
        assert found_limit == limit


def test_no_failing_headline_carries_an_unexplained_positive_margin(hot_rth):
    result = soacheck.envelope(one_device(hot_rth), envelope_at(110.0))
    s = result.to_dict()
    headline = JobResult("hot", "envelope", result.passed, s, result.assumptions).headline()
    assert headline == (
        f"the junction passes tj_max, peaking at {settled_tj_c(110.0):.4g} °C; the current stays inside the SOA "
        f"boundary (least margin {100 * s['margin']:+.1f} %)"
    )


def test_the_plot_marks_the_junction_where_it_passed_its_limit(hot_rth):
    check = soacheck.envelope(one_device(hot_rth), envelope_at(110.0)).check
    fig = plot_envelope_check(check)
    ax = fig.axes[0]
    (at,) = violation_marks(ax)
    assert at == pytest.approx((V_LOW, 110.0 / V_LOW))  # the edge's first point, where the stretch starts
    labels = ax.get_legend_handles_labels()[1] + [t.get_text() for t in ax.texts]
    assert "tj_max passed" in labels and "tj_max passed, current inside" in labels and "outside" not in labels
    assert fig.get_suptitle() == "verdict fail: tj_max; the current inside, margin +12.0%"


def test_cli_json_and_text_name_the_junction_and_exit_1(hot_rth, tmp_path):
    stage = tmp_path / "stage.toml"
    stage.write_text(f'part = "hot-rth"\ncount = 1\ncase_temp = {TC_C:g}\n')
    envelope = tmp_path / "envelope.toml"
    envelope.write_text(
        f'voltage = [{V_LOW:g}, {V_HIGH:g}]\ncurrent = 5.5\npower = 110\npulse = "dc"\ncase_temp = 25\n'
    )
    as_json = invoke("envelope", stage, "--check", envelope, "--json")
    assert as_json.exit_code == 1, as_json.output
    payload = json.loads(as_json.stdout)
    assert payload["verdict"] == "fail" and payload["limit"] == "tj_max"
    assert payload["margin"] == pytest.approx(1 - 110.0 / CURVE_POWER_W, rel=1e-4)
    assert payload["tj_peak"] == pytest.approx(settled_tj_c(110.0), abs=1e-6)
    text = invoke("envelope", stage, "--check", envelope)
    assert text.exit_code == 1, text.output
    assert "FAIL: the junction passes tj_max, peaking at 157 °C" in text.stdout
    assert "the current stays inside the SOA boundary (least margin +12.0 %)" in text.stdout
    assert "-0.0" not in text.stdout
    limits = invoke("envelope", stage, "--voltages", "20,25,30", "--json")
    assert limits.exit_code == 0, limits.output
    found = json.loads(limits.stdout)["points"]
    assert [p["limit"] for p in found] == ["tj_max"] * 3
    assert found[0]["max_current"] == pytest.approx((TJ_MAX_C - TC_C) / (RTH_JC_K_PER_W * V_LOW), abs=1e-3)


def test_a_plans_table_and_report_say_why_the_envelope_failed(hot_rth, tmp_path):
    plan = tmp_path / "plan.toml"
    plan.write_text(
        'title = "junction"\n[stage]\npart = "hot-rth"\ncount = 1\ncase_temp = 25\n'
        '[[envelope]]\nname = "hot"\nvoltage = [20, 30]\ncurrent = 5.5\npower = 110\npulse = "dc"\ncase_temp = 25\n'
    )
    result = soacheck.run_plan(plan, out=tmp_path / "report")
    (row,) = result.to_frame().to_dict(orient="records")
    assert row["verdict"] == "fail" and row["limit"] == "tj_max" and row["margin"] > 0
    assert row["headline"].startswith("the junction passes tj_max, peaking at 157 °C")
    assert only_job_why(tmp_path / "report") == row["headline"]
