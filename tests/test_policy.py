"""Design-margin policies: reading them, and the boundary and junction limits they set.

Check values come from the constructed reference part (conftest.REFERENCE_SOA: current
limit 15 A, constant power 125 W from 8.3333 V to 40 V, second breakdown of slope −2 to
100 V; tj_max 150 °C, rth_jc 1 K/W), so every policy boundary follows by hand from
P = (T_ceiling − Tc)/Rth (the definition of Rth_jc, JEDEC JESD51-1) and I = I0 (V/V0)^m;
each is derived in its test's docstring.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from soacheck.boundary import allowed_current, boundary_polyline, max_case_temp
from soacheck.errors import SoacheckError
from soacheck.points import check_points
from soacheck.policy import BENCH, NO_POLICY, Policy, policy_from_table, read_policy, resolve_policy
from soacheck.stage import Stage
from soacheck.stage_run import check_devices

REL = 1e-5  # the reference curve's knee is written as 8.3333 V (125/15 rounded, 4e-6 relative): the
# constant-power line through it and (40 V, 3.125 A) deviates from 125 W by up to that much

# the example policy, constructed numbers
EXAMPLE = Policy("example", tj_ceiling_c=125.0, current_fraction=0.8, voltage_fraction=0.8, power_fraction=0.9)


# --------------------------------------------------------------------------- the policy boundary


@pytest.mark.parametrize(
    ("voltage_v", "tc_c", "expected_a", "limit"),
    [
        # Tc 25 °C: power factor (125 − 25)/(150 − 25) = 0.8, × power_fraction 0.9 = 0.72, so the
        # constant-power line is 125 W × 0.72 = 90 W; × current_fraction 0.8 = 72 W. The current
        # limit is 15 A × 0.8 = 12 A; second breakdown 3.125 A × (40/V)² × 0.8 = 4000/V² A.
        (4.0, 25.0, 12.0, "current"),  # 72/4 = 18 > 12: the current limit, 12 A
        (5.9, 25.0, 12.0, "current"),  # the knee moved from 8.333 V to 72/12 = 6 V: 72/5.9 = 12.2 > 12
        (20.0, 25.0, 3.6, "power"),  # 72 W / 20 V
        (50.0, 25.0, 1.44, "power"),  # 72/50 = 1.44 < 4000/2500 = 1.6: the corner moved to 4000/72 = 55.6 V
        (60.0, 25.0, 4000 / 3600, "second_breakdown"),  # 1.1111 A < 72/60 = 1.2 A
        (80.0, 25.0, 4000 / 6400, "second_breakdown"),  # 0.8 × 100 V: the last voltage allowed
        (80.5, 25.0, 0.0, "policy_voltage"),  # above 80 V: nothing
        (101.0, 25.0, 0.0, "voltage"),  # above v_max: the rating's own limit
        # Tc 75 °C: power (125 − 75)/125 × 0.9 × 0.8 = 0.288 → 36 W; second breakdown derated like the
        # thermal limit (no table): (150 − 75)/125 = 0.6, × 0.8: 3.125 × 0.48 × 1600/V² = 2400/V² A
        (2.0, 75.0, 12.0, "current"),  # the current limit is not derated: 12 A, knee at 36/12 = 3 V
        (20.0, 75.0, 1.8, "power"),  # 36/20
        (70.0, 75.0, 2400 / 4900, "second_breakdown"),  # 0.4898 A < 36/70 = 0.514 A
        (20.0, 125.0, 0.0, "case_at_tj_ceiling"),  # the case at the ceiling: nothing
        (20.0, 130.0, 0.0, "case_at_tj_ceiling"),
        (20.0, 150.0, 0.0, "case_at_tj_max"),  # the case at tj_max: the rating's own limit
    ],
)
def test_the_policy_boundary_by_hand(reference_part, voltage_v, tc_c, expected_a, limit):
    part = reference_part.under(EXAMPLE)
    allowed = allowed_current(voltage_v, part, tc_c=tc_c)
    assert allowed.current_a[0] == pytest.approx(expected_a, rel=REL)
    assert allowed.limit[0] == limit


def test_policy_fractions_apply_one_at_a_time(reference_part):
    """Each key alone at 20 V, 25 °C, where the rated boundary is 125 W / 20 V = 6.25 A (power).

    - tj_ceiling 100 °C: (100 − 25)/(150 − 25) = 0.6 of 125 W = 75 W → 3.75 A;
    - power_fraction 0.5: 62.5 W → 3.125 A;
    - current_fraction 0.5: 3.125 A, and the 15 A current limit halves to 7.5 A (at 2 V);
    - voltage_fraction 0.5: 6.25 A unchanged at 20 V, nothing above 50 V.
    """
    cases = [
        (Policy("c", tj_ceiling_c=100.0), 20.0, 3.75),
        (Policy("p", power_fraction=0.5), 20.0, 3.125),
        (Policy("i", current_fraction=0.5), 20.0, 3.125),
        (Policy("i", current_fraction=0.5), 2.0, 7.5),
        (Policy("v", voltage_fraction=0.5), 20.0, 6.25),
    ]
    for policy, v, expected in cases:
        assert allowed_current(v, reference_part.under(policy)).current_a[0] == pytest.approx(expected, rel=REL)
    # at 50 V the rated boundary is second breakdown, 3.125 × (40/50)² = 2.0 A; 50 V = 0.5 × 100 V is allowed
    half = reference_part.under(Policy("v", voltage_fraction=0.5))
    assert allowed_current(50.0, half).current_a[0] == pytest.approx(2.0, rel=REL)
    assert allowed_current(50.01, half).limit[0] == "policy_voltage"


def test_a_pulse_under_a_policy_uses_the_ceiling_on_the_thermal_model(modelled_part):
    """1 ms single pulse at 20 V, 25 °C case, thermal model Zth(1 ms) = 0.178340 K/W.

    Zth(1 ms) = Σ Rᵢ(1 − e^(−tp/τᵢ)) for R = [0.05, 0.15, 0.30, 0.50] K/W, τ = [1e-4 … 1e-1] s
    (constructed; the same network's value in test_thermal). The 1 ms curve's second-breakdown
    line runs from (40 V, 10 A) to (100 V, 2 A), slope m = −ln 5/ln 2.5 = −1.7565, so at 20 V it
    allows 10 × 2^1.7565 = 33.787 A. Rated: (150 − 25)/0.178340 = 700.91 W → 35.05 A, so second
    breakdown bounds it at 33.787 A. Under EXAMPLE: (125 − 25)/0.178340 × 0.9 × 0.8 = 403.72 W
    → 20.186 A, below the current cap 40 × 0.8 = 32 A and second breakdown 0.8 × 33.787 = 27.03 A.
    """
    zth = 0.05 * (1 - np.exp(-10)) + 0.15 * (1 - np.exp(-1)) + 0.30 * (1 - np.exp(-0.1)) + 0.50 * (1 - np.exp(-0.01))
    assert zth == pytest.approx(0.178340, abs=1e-6)  # constructed value, Foster sum by hand
    rated = allowed_current(20.0, modelled_part, pulse_s=1e-3)
    policy = allowed_current(20.0, modelled_part.under(EXAMPLE), pulse_s=1e-3)
    assert rated.current_a[0] == pytest.approx(10 * 2 ** (math.log(5) / math.log(2.5)), rel=1e-9)
    assert rated.limit[0] == "second_breakdown"
    assert policy.current_a[0] == pytest.approx(100 / zth * 0.72 / 20, rel=1e-9)
    assert policy.limit[0] == "power"


def test_the_policy_polyline_matches_the_pointwise_boundary(reference_part):
    """The exact polyline and allowed_current agree everywhere from 1 V to 80 V; its corners are
    the hand-derived knees: 6 V (current/power) and 55.556 V (power/second breakdown) at 25 °C."""
    part = reference_part.under(EXAMPLE)
    line = boundary_polyline(part, tc_c=25.0, v_min_v=1.0)
    assert line.voltage_v[-1] == pytest.approx(80.0, rel=REL)  # ends at the policy voltage
    corners = line.voltage_v[1:-1]
    assert corners == pytest.approx([6.0, 4000 / 72], rel=REL)
    v = np.geomspace(1.0, 80.0, 301)
    assert line.current_at(v) == pytest.approx(allowed_current(v, part).current_a, rel=1e-9)  # same lines


def test_the_highest_case_temperature_under_a_policy(reference_part):
    """One point at 20 V, 1.8 A: under EXAMPLE, 36 W at 20 V is the boundary at Tc = 75 °C
    (see the hand table above), so the highest case temperature is 75 °C (a 0.05 K grid,
    rounded down); rated, 1.8 A × 20 V = 36 W = (150 − Tc)/1 K/W gives 114 °C."""
    v, i = np.array([20.0]), np.array([1.8])
    assert max_case_temp(v, i, reference_part.under(EXAMPLE)) == pytest.approx(75.0, abs=0.05 + 1e-9)
    assert max_case_temp(v, i, reference_part) == pytest.approx(114.0, abs=0.05 + 1e-9)
    assert max_case_temp(np.array([85.0]), np.array([0.1]), reference_part.under(EXAMPLE)) is None


def test_junction_checks_use_the_ceiling(reference_part):
    """A device at 10 V, 1 A (well inside) whose junction is at 110 °C: below tj_max 150 °C, so
    inside at rating; above a 100 °C ceiling, so outside with limit ``tj_ceiling``."""
    junction = np.array([[110.0]])
    args = (np.array([[10.0]]), np.array([[1.0]]), np.array([[25.0]]), junction, np.array([False]))
    _, _, rated_limit = check_devices(Stage(reference_part, 1, case_temp_c=25.0), *args)
    ceiling = reference_part.under(Policy("hot", tj_ceiling_c=100.0))
    _, _, limit = check_devices(Stage(ceiling, 1, case_temp_c=25.0), *args)
    assert rated_limit[0, 0] == "power"  # the bounding mechanism, inside
    assert limit[0, 0] == "tj_ceiling"


# --------------------------------------------------------------------------- none reproduces the ratings


def test_policy_none_reproduces_the_ratings_exactly(reference_part_with_table, modelled_part):
    """``none`` is the part itself: the same arrays bit for bit, and the hand values of the
    rated boundary: 125 W / 20 V = 6.25 A at 25 °C; (150 − 75)/125 × 125 W / 20 V = 3.75 A at
    75 °C (JEDEC JESD51-1 definition of Rth)."""
    rng = np.random.default_rng(11)
    v = rng.uniform(0.5, 120, 400)
    i = rng.uniform(0, 20, 400)
    tc = rng.uniform(0, 160, 400)
    for part in (reference_part_with_table, modelled_part):
        for pulse in (np.inf, 1e-3, 3e-3):
            plain = check_points(v, i, part, tc_c=tc, pulse_s=pulse)
            none = check_points(v, i, part.under(NO_POLICY), tc_c=tc, pulse_s=pulse)
            np.testing.assert_array_equal(plain.allowed_current_a, none.allowed_current_a)
            np.testing.assert_array_equal(plain.limit, none.limit)
            np.testing.assert_array_equal(plain.margin, none.margin)
            assert plain.assumptions == none.assumptions
    part = reference_part_with_table.under(NO_POLICY)
    assert part.policy is None
    assert allowed_current([20.0, 20.0], part, tc_c=[25.0, 75.0]).current_a == pytest.approx([6.25, 3.75], rel=REL)


def test_margin_to_rating_beside_the_policy_margin(reference_part):
    """3 A at 20 V, 25 °C: the policy allows 3.6 A (margin 1 − 3/3.6 = 1/6), the rating 6.25 A
    (margin 1 − 3/6.25 = 0.52)."""
    result = check_points(20.0, 3.0, reference_part.under(EXAMPLE))
    assert result.margin[0] == pytest.approx(1 / 6, rel=REL)
    assert result.margin_to_rating[0] == pytest.approx(0.52, rel=REL)
    assert result.policy is EXAMPLE
    frame = result.to_frame()
    assert frame["margin_to_rating"].iloc[0] == pytest.approx(0.52, rel=REL)
    assert any("design-margin policy 'example'" in note for note in result.assumptions)
    rated = check_points(20.0, 3.0, reference_part)
    assert rated.to_frame()["margin_to_rating"].iloc[0] == pytest.approx(0.52, rel=REL)  # the margin itself
    assert any("no design-margin policy" in note for note in rated.assumptions)


# --------------------------------------------------------------------------- reading policies


def test_a_policy_file_and_a_policy_table(tmp_path):
    flat = tmp_path / "lab.toml"
    flat.write_text("tj_ceiling = 110\ncurrent_fraction = 0.7\n", encoding="utf-8")
    policy = read_policy(flat)
    assert (policy.name, policy.tj_ceiling_c, policy.current_fraction) == ("lab", 110.0, 0.7)
    assert policy.voltage_fraction is None and policy.power_fraction is None  # missing: no margin
    nested = tmp_path / "other.toml"
    nested.write_text('[policy]\nname = "bench B"\nvoltage_fraction = 0.75\n', encoding="utf-8")
    assert read_policy(nested) == Policy("bench B", voltage_fraction=0.75, source=f"{nested} [policy]")


@pytest.mark.parametrize(
    ("table", "fragment"),
    [
        ({"current_fraction": 0}, "lab.toml: current_fraction is 0; give a fraction above 0 and at most 1"),
        ({"voltage_fraction": 1.2}, "lab.toml: voltage_fraction is 1.2; give a fraction above 0 and at most 1"),
        ({"power_fraction": -0.5}, "lab.toml: power_fraction is -0.5"),
        ({"power_fraction": "0.9"}, "lab.toml: power_fraction is '0.9'"),
        ({"tj_ceiling": 20}, "lab.toml: tj_ceiling is 20; give a junction ceiling from 25 to 1000 °C"),
        ({"current_fracton": 0.8}, "lab.toml: unknown key 'current_fracton' (did you mean 'current_fraction'"),
        ({"name": 3}, "lab.toml: name is 3"),
    ],
)
def test_bad_policy_values_name_the_key_and_range(table, fragment):
    with pytest.raises(SoacheckError, match=None) as err:
        policy_from_table(table, "lab.toml", default_name="lab")
    assert fragment in str(err.value)


def test_a_ceiling_above_the_parts_tj_max_is_refused(reference_part):
    with pytest.raises(SoacheckError) as err:
        reference_part.under(Policy("hot", tj_ceiling_c=160.0))
    assert "tj_ceiling is 160 °C, above ref-bjt's tj_max 150 °C; give a tj_ceiling from 25 to 150 °C" in str(err.value)


def test_presets():
    # the bench preset's numbers: common practice, no source
    assert (BENCH.tj_ceiling_c, BENCH.current_fraction, BENCH.voltage_fraction, BENCH.power_fraction) == (
        125.0,
        0.8,
        0.8,
        0.9,
    )
    assert BENCH.source == "common practice, no source"
    assert resolve_policy("BENCH") is BENCH and resolve_policy("none") is NO_POLICY and resolve_policy(None).is_none
    with pytest.raises(SoacheckError, match="neither a preset"):
        resolve_policy("benhc")
