"""``sharing`` where every device's current stays inside its SOA boundary while a junction passes its limit.

Construction (as in test_envelope_junction): the reference part (conftest: DC power line 125 W at a
25 °C case, tj_max 150 °C, i_max 15 A) with rth_jc written as 1.2 K/W instead of 1.0, a part whose
curve disagrees with its thermal rating. Two of them with 0.1 Ω emitter resistors, cases held at
25 °C, no V_BE spread: every draw is the matched pair, each device carrying half the current at
V_CE = V − (I/2)·R_E. In DC steady state each junction sits at Tj = Tc + P·Rth_jc (the definition
of Rth, JEDEC JESD51-1).

- 8 A at 27.9 V: 4 A at 27.5 V, P = 110 W, Tj = 25 + 110·1.2 = 157 °C, past tj_max, while the
  current's margin is 1 − P/P_line = 1 − 110/125 = 12 % on the constant-power segment (8.33–40 V)
  and 1 − 4/15 against i_max: the answer's margin is the lesser, 12 %.
- Under a policy with a 100 °C ceiling the power line is 125·(100 − 25)/(150 − 25) = 75 W (the same
  definition with the ceiling as Tj): 5 A at 28.25 V gives 2.5 A at 28 V, P = 70 W, Tj = 25 + 70·1.2
  = 109 °C past the ceiling, margin 1 − 70/75 = 6.7 %; at the ratings 1 − 70/125 = 44 %, 109 °C < 150 °C.
- 8 A at 25.4 V: 4 A at 25 V, P = 100 W, Tj = 145 °C, below tj_max: pass, the worst share's answer.

The shared state holds in each: the pair's eigenvalue Z|φ|(d₁ + d₂)/(r₁ + r₂) (test_hogging), with
Z = 1.2 K/W, |φ| = 2 mV/K, d = V_CE ≤ 27.5 V and r = R_E + V_T/I ≥ 0.1 + 0.0257/4, is at most
1.2·0.002·55/(2·0.1064) = 0.62 < 1. The two devices are alike: ``device``, the least margin's (as in a
stage run), is the first of equals, Q1.
"""

from __future__ import annotations

import json

import pytest

import soacheck
from soacheck.policy import Policy

from .conftest import REFERENCE_SOA, REFERENCE_TOML, write_part
from .helpers import invoke, validate_output

RTH_JC_K_PER_W = 1.2  # as written in the part file
TC_C = 25.0
CURVE_POWER_W = 125.0  # the DC curve's constant-power segment at 25 °C (conftest)
TJ_MAX_C = 150.0
I_MAX_A = 15.0
BALLAST_OHM = 0.1
STAGE = f'part = "hot-rth"\ncount = 2\nballast = {BALLAST_OHM:g}\ncase_temp = {TC_C:g}\nvbe_spread = 0\n'

# (policy, junction limit [°C], its name, total current [A], source voltage [V], power line [W])
CASES = [
    (None, TJ_MAX_C, "tj_max", 8.0, 27.9, CURVE_POWER_W),
    (Policy("ceiling", tj_ceiling_c=100.0), 100.0, "tj_ceiling", 5.0, 28.25, CURVE_POWER_W * (100.0 - 25.0) / 125.0),
]


@pytest.fixture
def stage_file(tmp_path):
    text = REFERENCE_TOML.format(id="hot-rth", kind="npn", extra="", extra_top="")
    write_part(tmp_path / "hot-rth", soa=REFERENCE_SOA, toml=text.replace("rth_jc = 1.0", "rth_jc = 1.2"))
    stage = tmp_path / "stage.toml"
    stage.write_text(STAGE)
    return stage


def device_power_w(total_a: float, source_v: float) -> float:
    """Each of the matched pair: I/2 at V − (I/2)·R_E. [W]"""
    return (source_v - total_a / 2 * BALLAST_OHM) * total_a / 2


def settled_tj_c(power_w: float) -> float:
    """DC steady state: Tj = Tc + P·Rth_jc (JEDEC JESD51-1). [°C]"""
    return TC_C + power_w * RTH_JC_K_PER_W


@pytest.mark.parametrize(("policy", "limit_c", "limit", "total_a", "source_v", "line_w"), CASES)
def test_a_hot_junction_fails_sharing_and_keeps_the_currents_margin(
    stage_file, policy, limit_c, limit, total_a, source_v, line_w
):
    power_w = device_power_w(total_a, source_v)
    assert settled_tj_c(power_w) > limit_c and power_w < line_w  # the construction: hot, current inside
    result = soacheck.sharing(stage_file, current=total_a, voltage=source_v, draws=50, policy=policy)
    s = result.to_dict()
    assert s["verdict"] == "fail" and not result.passed
    assert s["limit"] == limit and result.limit == limit
    assert s["device"] == 1 and result.device == 1
    # the current's margin as it is (the power line's, less than i_max's), not pushed below zero
    assert s["margin"] == pytest.approx(1 - power_w / line_w, rel=1e-4)  # the corner is written 8.3333 V
    assert s["margin"] < 1 - total_a / 2 / I_MAX_A
    assert s["margin"] > 0 and result.margin == s["margin"]
    # at the ratings: the 125 W line at 25 °C (under the ceiling the junction, 109 °C, is below tj_max)
    assert s["margin_to_rating"] == pytest.approx(1 - power_w / CURVE_POWER_W, rel=1e-4)
    assert result.spread.tj_peak_c == pytest.approx(settled_tj_c(power_w), abs=1e-6)
    assert s["worst_share"] == pytest.approx(0.5, rel=1e-9)
    assert (s["runaway_fraction"], s["hogging_fraction"]) == (0.0, 0.0)


def test_cli_json_and_text_name_the_junction_and_exit_1(stage_file):
    power_w = device_power_w(8.0, 27.9)
    assert power_w == pytest.approx(110.0) and settled_tj_c(power_w) == pytest.approx(157.0)
    as_json = invoke("sharing", stage_file, "-i", "8", "-v", "27.9", "--draws", "50", "--json")
    assert as_json.exit_code == 1, as_json.output
    payload = validate_output("sharing", as_json.stdout)
    assert (payload["verdict"], payload["limit"], payload["device"]) == ("fail", "tj_max", 1)
    assert payload["margin"] == pytest.approx(1 - 110.0 / CURVE_POWER_W, rel=1e-4) and payload["margin"] > 0
    text = invoke("sharing", stage_file, "-i", "8", "-v", "27.9", "--draws", "50")
    assert text.exit_code == 1, text.output
    assert (
        "FAIL: the junction of Q1 in a draw passes tj_max, peaking at 157 °C; the current stays inside "
        "the SOA boundary "
        "(least margin +12.0 %)" in text.stdout
    )
    assert "-0.0" not in text.stdout


def test_the_same_pair_passes_below_tj_max(stage_file):
    """4 A at 25 V each: P = 100 W, Tj = 145 °C < 150 °C: pass, exit 0, the worst share's 1 − 4/15, no device."""
    assert settled_tj_c(device_power_w(8.0, 25.4)) == pytest.approx(145.0)
    as_json = invoke("sharing", stage_file, "-i", "8", "-v", "25.4", "--draws", "50", "--json")
    assert as_json.exit_code == 0, as_json.output
    payload = json.loads(as_json.stdout)
    assert (payload["verdict"], payload["limit"], payload["device"]) == ("pass", "current", None)
    assert payload["margin"] == pytest.approx(1 - 4.0 / I_MAX_A, rel=1e-9)
