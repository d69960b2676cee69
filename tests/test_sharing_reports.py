"""``sharing``'s options and what its failures carry: the second-breakdown derating, a set that runs away,
cases past a policy's ceiling.

Construction: the reference part (conftest: DC current line 15 A to 8.33 V, constant-power line 125 W to
40 V, second-breakdown line I = 3.125·(40/V)² = 5000/V² A to 100 V; tj_max 150 °C, rth_jc 1.0 K/W, i_max
15 A, no derating table), two of them with 0.1 Ω emitter resistors on cases held at 100 °C, no V_BE spread:
every draw is the matched pair, each device carrying half the current at V_CE = V − (I/2)·R_E.

At a 100 °C case the constant-power line derates by (tj_max − Tc)/(tj_max − 25 °C) = 50/125 = 0.4
(JEDEC JESD51-1's Rth: P = (Tj − Tc)/Rth_jc). Second breakdown derates like it under ``thermal`` (and under
``auto``, the part giving no table) and not at all under ``none`` (common practice, no source: the choice
``--breakdown-derating`` offers every checking command). The boundary is the least of the lines, each
extended straight on log-log axes.

1.2 A at 60 V: each device 0.6 A at 59.94 V, junction 100 + 59.94·0.6·1.0 = 136 °C, below 150 °C.
- ``thermal``/``auto``: allowed min(0.4·5000/59.94², 0.4·125/59.94) = 0.5567 A (second breakdown), margin
  1 − 0.6/0.5567 = −7.8 %: fail, exit 1.
- ``none``: allowed min(5000/59.94², 0.4·125/59.94) = 0.834 A (power), inside: pass, and the answer is the
  worst share's current against i_max, 1 − 0.6/15.

The shared state holds: the pair's eigenvalue Z|φ|(d₁ + d₂)/(r₁ + r₂) (test_hogging) with Z = 1 K/W,
|φ| = 2 mV/K, d = 59.94 V, r = 0.1 + V_T/0.6 A is 0.002·59.94/0.1428 = 0.84 < 1.
"""

from __future__ import annotations

import math

import pytest

import soacheck
from soacheck.bipolar import THERMAL_VOLTAGE_V

from .conftest import write_part
from .helpers import exit_code_for, invoke, validate_output

TC_C = 100.0
BALLAST_OHM = 0.1
TOTAL_A, SOURCE_V = 1.2, 60.0
DEVICE_A = TOTAL_A / 2
VCE_V = SOURCE_V - DEVICE_A * BALLAST_OHM
THERMAL_FACTOR = (150.0 - TC_C) / (150.0 - 25.0)  # (tj_max − Tc)/(tj_max − 25 °C)
BREAKDOWN_A = 3.125 * (40.0 / VCE_V) ** 2  # the DC second-breakdown line at 25 °C, extended on log-log axes
POWER_A = 125.0 / VCE_V  # the DC constant-power line at 25 °C


@pytest.fixture
def hot_case_stage(tmp_path):
    write_part(tmp_path / "bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text(f'part = "bjt"\ncount = 2\nballast = {BALLAST_OHM:g}\ncase_temp = {TC_C:g}\nvbe_spread = 0\n')
    return stage


# (choice, verdict, limit, margin): the closed forms of the module docstring
BREAKDOWN_CASES = [
    ("auto", "fail", "second_breakdown", 1 - DEVICE_A / (THERMAL_FACTOR * BREAKDOWN_A)),
    ("thermal", "fail", "second_breakdown", 1 - DEVICE_A / (THERMAL_FACTOR * BREAKDOWN_A)),
    ("none", "pass", "current", 1 - DEVICE_A / 15.0),
]


@pytest.mark.parametrize(("choice", "verdict", "limit", "margin"), BREAKDOWN_CASES)
def test_sharing_judges_each_device_with_the_second_breakdown_derating_chosen(
    hot_case_stage, choice, verdict, limit, margin
):
    assert TC_C + VCE_V * DEVICE_A * 1.0 < 150.0  # the junction stays below tj_max: only the boundary decides
    assert THERMAL_FACTOR * BREAKDOWN_A < DEVICE_A < min(BREAKDOWN_A, THERMAL_FACTOR * POWER_A)
    args = ("sharing", hot_case_stage, "-i", TOTAL_A, "-v", SOURCE_V, "--draws", 20, "--breakdown-derating", choice)
    done = invoke(*args, "--json")
    payload = validate_output("sharing", done.stdout)
    assert done.exit_code == exit_code_for(payload) == (0 if verdict == "pass" else 1), done.output
    assert (payload["verdict"], payload["limit"]) == (verdict, limit)
    assert payload["margin"] == pytest.approx(margin, rel=1e-9)  # the matched pair: every draw alike
    result = soacheck.sharing(hot_case_stage, current=TOTAL_A, voltage=SOURCE_V, draws=20, breakdown=choice)
    assert result.to_dict() == payload
    assert any("not derated" in note for note in result.assumptions) == (choice == "none")
    text = invoke(*args)
    assert text.exit_code == done.exit_code, text.output
    assert ("PASS" if verdict == "pass" else "FAIL") in text.stdout


def test_sharing_names_the_option_of_a_breakdown_choice_it_does_not_know(hot_case_stage):
    done = invoke("sharing", hot_case_stage, "-i", TOTAL_A, "-v", SOURCE_V, "--breakdown-derating", "gentle")
    assert done.exit_code == 2, done.output
    assert "--breakdown-derating" in done.output and "thermal" in done.output
    with pytest.raises(soacheck.SoacheckError, match="--breakdown-derating"):
        soacheck.sharing(hot_case_stage, current=1.0, voltage=SOURCE_V, breakdown="gentle")  # type: ignore[arg-type]


def test_sharing_offers_the_breakdown_option_as_the_other_checking_commands_do():
    """Same option name, choices and help words as ``check`` (its help, read back)."""

    def option_help(command: str) -> str:
        page = " ".join(invoke(command, "--help").stdout.split())
        start = page.index("--breakdown-derating")
        return page[start : page.index("[default: auto]", start)].replace("│", " ")

    assert " ".join(option_help("sharing").split()) == " ".join(option_help("check").split())


def test_a_set_that_runs_away_has_no_current_margin(tmp_path):
    """The matched pair of test_hogging on cases held at 25 °C, no emitter resistors, 3 A at 400 V: the equal split's
    eigenvalue 400·|φ|/(V_T/1.5 A) = 46.7 ≥ 1, and the one stable state left, Q1 taking I₁ (test_hogging's
    hog_split, brentq), would hold its junction at 25 + 400·I₁·1 K/W, past 1000 °C, where soacheck abandons a
    fixed point: every draw runs away. No device settles, so there is no current to judge: margin and
    margin_to_rating null (−inf in Python, as where nothing is allowed), limit runaway, no device, exit 1; not
    the worst share's 1 − 1.5/15 = 90 %, which the JSON gave before. The text says there is no margin.
    """
    from .test_hogging import PHI, hog_split

    assert 400 * abs(PHI) / (THERMAL_VOLTAGE_V / 1.5) >= 1 and 25 + 400 * hog_split(400.0)[0] * 1.0 > 1000.0
    write_part(tmp_path / "bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "bjt"\ncount = 2\ncase_temp = 25\n')
    args = ("sharing", stage, "-i", 3, "-v", 400, "--draws", 50)
    done = invoke(*args, "--json")
    payload = validate_output("sharing", done.stdout)
    assert done.exit_code == exit_code_for(payload) == 1, done.output
    assert (payload["verdict"], payload["limit"], payload["runaway_fraction"]) == ("fail", "runaway", 1.0)
    assert (payload["margin"], payload["margin_to_rating"], payload["device"]) == (None, None, None)
    result = soacheck.sharing(stage, current=3, voltage=400, draws=50)
    assert result.to_dict() == payload
    assert result.margin == result.margin_to_rating == -math.inf and result.limit == "runaway"
    text = invoke(*args)
    assert text.exit_code == 1, text.output
    verdict = " ".join(text.stdout[text.stdout.index("FAIL") :].split())
    assert verdict.startswith("FAIL: runaway: ")  # the reason leads
    assert "no stable state" in verdict and "no current margin" in verdict
    assert "%" not in verdict  # no margin figure beside it


def test_cases_past_the_policys_ceiling_fail_with_no_margin_and_say_why(tmp_path):
    """The reference pair with 0.1 Ω emitter resistors on cases held at 130 °C, 1 A at 10 V, under ``bench``
    (ceiling 125 °C): each device 0.5 A at 9.95 V, P = 4.975 W, Tj = Tc + P·Rth_jc = 134.975 °C (JEDEC
    JESD51-1), past the ceiling. At a case at or above the ceiling the policy's power line
    (T_ceiling − Tc)/Rth_jc is zero or less: no current is allowed, so there is no margin (null, as ``check``
    gives a point there), limit case_at_tj_ceiling (the case past the ceiling, as case_at_tj_max past tj_max). At
    the ratings the power line is (150 − 130)/1.0 = 20 W, and the
    margin 1 − P/20 W = 75.1 % (the current line 15 A and the second-breakdown line 0.16·5000/9.95² = 8.1 A
    allow more). The JSON gives the hottest case and junction; the text says the case passed the ceiling.
    """
    write_part(tmp_path / "bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "bjt"\ncount = 2\nballast = 0.1\ncase_temp = 130\nvbe_spread = 0\n')
    power_w = (10.0 - 0.5 * 0.1) * 0.5
    args = ("sharing", stage, "-i", 1, "-v", 10, "--draws", 20, "--policy", "bench")
    done = invoke(*args, "--json")
    payload = validate_output("sharing", done.stdout)
    assert done.exit_code == exit_code_for(payload) == 1, done.output
    assert (payload["verdict"], payload["limit"], payload["device"], payload["margin"]) == (
        "fail",
        "case_at_tj_ceiling",
        1,
        None,
    )
    # the curve's power segment starts at 8.3333 V × 15 A = 124.9995 W: 125 W to 4e-6, the tolerance
    assert payload["margin_to_rating"] == pytest.approx(1 - power_w / 20.0, rel=1e-5)
    assert payload["case_peak"] == 130.0
    assert payload["tj_peak"] == pytest.approx(130.0 + power_w * 1.0, abs=1e-6)
    text = invoke(*args)
    assert text.exit_code == 1, text.output
    verdict = " ".join(text.stdout[text.stdout.index("FAIL") :].split())
    assert verdict.startswith("FAIL: case_at_tj_ceiling (Q1"), verdict
    assert "the case reaches 130 °C" in verdict, verdict  # 4 digits shown
    assert "the policy's ceiling (125 °C)" in verdict, verdict
    assert "allows no current" in verdict and "least margin +75.1 %" in verdict, verdict
