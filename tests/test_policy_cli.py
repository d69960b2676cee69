"""Design-margin policies on every command, in plans and stage files, and in the API.

Expected numbers come from the constructed reference part (see test_policy.py for the
hand-derived policy boundary) or from an independent search written here; none is read
back from the code under test.
"""

from __future__ import annotations

import json

import pytest

import soacheck
from soacheck.policy import BENCH

from .conftest import THERMAL, write_part
from .helpers import invoke

REL = 1e-5  # the reference curve's knee is written as 8.3333 V (125/15 rounded): see test_policy.py

EXAMPLE_POLICY = """name = "example"
tj_ceiling = 125
current_fraction = 0.8
voltage_fraction = 0.8
power_fraction = 0.9
"""


@pytest.fixture
def ref_folder(tmp_path):
    return write_part(tmp_path / "ref-bjt", extra=THERMAL)


@pytest.fixture
def policy_file(tmp_path):
    path = tmp_path / "example.toml"
    path.write_text(EXAMPLE_POLICY, encoding="utf-8")
    return path


def _stage(tmp_path, ref_folder, extra=""):
    path = tmp_path / "stage.toml"
    path.write_text(f'part = "{ref_folder}"\ncount = 1\ncase_temp = 25\n{extra}', encoding="utf-8")
    return path


def test_check_under_a_policy_file(ref_folder, policy_file):
    """3 A at 20 V, 25 °C case: the example policy allows 72 W / 20 V = 3.6 A (margin 1/6), the
    rating 125 W / 20 V = 6.25 A (margin 0.52); 4 A fails the policy (1 − 4/3.6 = −1/9) and
    passes the rating (0.36). Derivation: test_policy.test_the_policy_boundary_by_hand."""
    result = invoke("check", ref_folder, "-v", 20, "-i", 3, "--policy", policy_file, "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["policy"] == {
        "name": "example",
        "tj_ceiling": 125.0,
        "current_fraction": 0.8,
        "voltage_fraction": 0.8,
        "power_fraction": 0.9,
        "source": str(policy_file),
    }
    point = data["points"][0]
    assert point["allowed_current"] == pytest.approx(3.6, rel=REL)
    assert point["margin"] == pytest.approx(1 / 6, rel=REL)
    assert point["margin_to_rating"] == pytest.approx(0.52, rel=REL)
    failing = invoke("check", ref_folder, "-v", 20, "-i", 4, "--policy", policy_file)
    assert failing.exit_code == 1, failing.output
    assert "under policy 'example'" in failing.output and "margin to rating" in failing.output
    assert "+36.0" in failing.output and "-11.1" in failing.output


def test_the_policy_voltage_and_ceiling_are_limits(ref_folder):
    """Bench (80 % of v_max 100 V = 80 V; ceiling 125 °C): 85 V is refused with policy_voltage and a
    130 °C case with case_at_tj_ceiling (the case, not a junction, past the ceiling: as a case past tj_max is
    case_at_tj_max without a policy), although both lie inside the ratings."""
    over_v = json.loads(invoke("check", ref_folder, "-v", 85, "-i", 0.1, "--policy", "bench", "--json").output)
    assert over_v["points"][0]["limit"] == "policy_voltage" and over_v["verdict"] == "fail"
    assert over_v["points"][0]["margin_to_rating"] > 0  # 3.125 × (40/85)² = 0.692 A at rating
    hot = json.loads(invoke("check", ref_folder, "-v", 10, "-i", 0.1, "-t", 130, "--policy", "BENCH", "--json").output)
    assert hot["points"][0]["limit"] == "case_at_tj_ceiling"
    past = json.loads(invoke("check", ref_folder, "-v", 10, "-i", 0.1, "-t", 150, "--json").output)
    assert past["points"][0]["limit"] == "case_at_tj_max"  # tj_max 150 °C, no policy: the same situation's word


def test_no_policy_is_todays_answer_and_says_so(ref_folder):
    """``--policy none`` and no option print the same JSON; 3 A at 20 V is 1 − 3/6.25 = 0.52."""
    plain = invoke("check", ref_folder, "-v", 20, "-i", 3, "--json")
    none = invoke("check", ref_folder, "-v", 20, "-i", 3, "--policy", "none", "--json")
    assert plain.output == none.output
    data = json.loads(plain.output)
    assert data["policy"]["name"] == "none" and data["points"][0]["margin"] == pytest.approx(0.52, rel=REL)
    assert any("no design-margin policy" in note for note in data["assumptions"])


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("current_fraction = 1.5\n", "current_fraction is 1.5; give a fraction above 0 and at most 1"),
        ("tj_ceiling = 160\n", "tj_ceiling is 160 °C, above ref-bjt's tj_max 150 °C"),
        ("tj_ceiling = 10\n", "tj_ceiling is 10; give a junction ceiling from 25 to 1000 °C"),
        ("power_fracton = 0.9\n", "unknown key 'power_fracton'"),
        ("tj_ceiling = \n", "invalid TOML"),
    ],
)
def test_a_bad_policy_exits_2_naming_the_key(ref_folder, tmp_path, text, fragment):
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    result = invoke("check", ref_folder, "-v", 20, "-i", 1, "--policy", path)
    assert result.exit_code == 2, result.output
    assert fragment in result.output and "Traceback" not in result.output


def test_find_max_under_a_policy_against_an_independent_bisection(tmp_path, ref_folder):
    """One device at a 25 °C case, a constant-current discharge of 10 NMC cells (≈ 42 V full).

    The largest safe current is found here by plain bisection on the command's own verdict
    (exit 0 or 1) at each setpoint, under the example policy and without it; --find-max must
    agree within its 0.1 % tolerance plus this bisection's 0.05 %. The policy's answer is the
    lower: a policy only takes margin away.
    """
    stage = _stage(tmp_path, ref_folder)
    policy = tmp_path / "example.toml"
    policy.write_text(EXAMPLE_POLICY, encoding="utf-8")
    common = ("discharge", stage, "--battery", "nmc", "--cells", 10, "--capacity", 1, "--mode", "cc", "--samples", 60)

    def passes(current: float, *extra) -> bool:
        result = invoke(*common, "--setpoint", current, *extra)
        assert result.exit_code in (0, 1), result.output
        return result.exit_code == 0

    def bisect(*extra) -> float:
        lo, hi = 0.01, 20.0  # 0.01 A passes; 20 A exceeds the 15 A current limit
        assert passes(lo, *extra) and not passes(hi, *extra)
        while hi - lo > 5e-4 * lo:
            mid = 0.5 * (lo + hi)
            lo, hi = (mid, hi) if passes(mid, *extra) else (lo, mid)
        return lo

    found = json.loads(invoke(*common, "--setpoint", 1, "--find-max", "--policy", policy, "--json").output)
    at_policy, at_rating = bisect("--policy", policy), bisect()
    assert found["max_safe_setpoint"] == pytest.approx(at_policy, rel=1.5e-3)
    assert found["max_setpoint_at_rating"] == pytest.approx(at_rating, rel=1.5e-3)
    assert at_policy < at_rating
    plain = json.loads(invoke(*common, "--setpoint", 1, "--find-max", "--json").output)
    assert plain["max_safe_setpoint"] == plain["max_setpoint_at_rating"] == found["max_setpoint_at_rating"]


def test_a_stage_files_policy_table_and_the_option_that_replaces_it(tmp_path, ref_folder):
    """A sweep at a 25 °C case: the stage's [policy] ceiling of 100 °C leaves (100 − 25)/(150 − 25)
    = 0.6 of 125 W = 75 W; 4 A at 20 V is 80 W, outside; without the policy 80 W < 125 W passes."""
    stage = _stage(tmp_path, ref_folder, '[policy]\nname = "cool"\ntj_ceiling = 100\n')
    args = ("sweep", stage, "--ramp", "current", "--from", 0, "--to", 4, "--at", 20, "--samples", 20, "--json")
    with_table = invoke(*args)
    assert with_table.exit_code == 1, with_table.output
    data = json.loads(with_table.output)
    assert data["policy"]["name"] == "cool" and data["policy"]["tj_ceiling"] == 100.0
    assert data["margin_to_rating"] == pytest.approx(1 - 4 / 6.25, rel=1e-3)  # 125 W / 20 V = 6.25 A
    replaced = invoke(*args, "--policy", "none")
    assert replaced.exit_code == 0, replaced.output
    assert json.loads(replaced.output)["policy"]["name"] == "none"


def test_a_plans_policy_reaches_every_job(tmp_path, ref_folder, policy_file):
    """The plan's policy judges the points job: 3 A at 20 V has margin 1/6 under it and 0.52 at rating."""
    (tmp_path / "points.csv").write_text("voltage,current\n20,3\n", encoding="utf-8")
    plan = tmp_path / "plan.toml"
    plan.write_text(
        f'title = "policy plan"\npolicy = "{policy_file.name}"\n'
        f'[stage]\npart = "{ref_folder}"\ncount = 1\ncase_temp = 25\n'
        '[[points]]\nname = "one point"\nfile = "points.csv"\n',
        encoding="utf-8",
    )
    result = soacheck.run_plan(plan)
    job = result.jobs[0]
    assert job.summary["policy"]["name"] == "example"
    assert job.summary["margin"] == pytest.approx(1 / 6, rel=REL)
    assert job.summary["margin_to_rating"] == pytest.approx(0.52, rel=REL)
    assert "junction ceiling 125 °C, in place of tj_max" in job.policy  # the report's "Design policy" lines
    inline = tmp_path / "inline.toml"
    inline.write_text(plan.read_text().replace(f'policy = "{policy_file.name}"', "policy = { voltage_fracton = 1 }"))
    failed = invoke("run", inline, "-o", tmp_path / "out")
    assert failed.exit_code == 2 and "unknown key 'voltage_fracton'" in failed.output, failed.output


def test_the_api_takes_a_policy_keyword(ref_folder):
    """api.check and api.allowed_current under BENCH: at 20 V, 25 °C the bench boundary is
    125 W × (125 − 25)/(150 − 25) × 0.9 × 0.8 / 20 V = 3.6 A, the same numbers as the example policy."""
    assert soacheck.allowed_current(ref_folder, 20.0, policy="bench") == pytest.approx(3.6, rel=REL)
    assert soacheck.allowed_current(ref_folder, 20.0) == pytest.approx(6.25, rel=REL)
    part = soacheck.load_part(ref_folder)
    assert part.allowed_current(20.0, policy="bench") == pytest.approx(3.6, rel=REL)
    assert part.under(BENCH).allowed_current(20.0) == pytest.approx(3.6, rel=REL)
    assert part.under(BENCH).allowed_current(20.0, policy="none") == pytest.approx(6.25, rel=REL)
    result = soacheck.check(ref_folder, 20.0, 3.0, policy=BENCH)
    assert result.margin == pytest.approx(1 / 6, rel=REL)
    assert result.margin_to_rating == pytest.approx(0.52, rel=REL)
    assert result.to_dict()["policy"]["name"] == "bench"


def test_envelope_and_compare_under_a_policy(tmp_path, ref_folder):
    """The largest safe envelope under bench stops at 80 V (80 % of v_max) and names the policy;
    at 20 V it is 3.6 A (rounded down to 1 mA: 3.599 or 3.6), the hand value of test_policy."""
    stage = _stage(tmp_path, ref_folder)
    result = invoke("envelope", stage, "--voltages", "20,80,90", "--policy", "bench", "--json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert data["policy"]["name"] == "bench"
    by_v = {p["voltage"]: p for p in data["points"]}
    assert by_v[20.0]["max_current"] == pytest.approx(3.6, abs=1.5e-3)
    assert by_v[90.0]["max_current"] == 0.0 and by_v[90.0]["limit"] == "policy_voltage"
    assert any("design-margin policy 'bench'" in note for note in data["assumptions"])
    env = tmp_path / "env.toml"
    env.write_text("voltage = [10, 40]\ncurrent = 2\npower = 30\ncase_temp = 25\n", encoding="utf-8")
    ranked = invoke("compare", ref_folder, "--envelope", env, "--policy", "bench", "--json")
    compared = json.loads(ranked.output)
    assert compared["policy"]["name"] == "bench", ranked.output
    candidate = compared["candidates"][0]
    assert candidate["margin"] < candidate["margin_to_rating"]


def test_every_soa_plot_draws_the_policy_beside_the_rating(tmp_path, ref_folder):
    """check --plot under bench: the SVG holds the policy's boundary (gid policy-boundary) labelled
    with its name beside the rated dashed boundary; without a policy there is none. The drawn policy
    line at 25 °C has the hand-derived corners of test_policy: 6 V (current/power knee) and
    4000/72 = 55.6 V (power/second breakdown), and ends at 80 V (80 % of v_max)."""
    from matplotlib.figure import Figure

    from soacheck.plots import POLICY_GID, draw_policy_boundary
    from soacheck.policy import BENCH

    svg = tmp_path / "bench.svg"
    result = invoke("check", ref_folder, "-v", 20, "-i", 3, "--policy", "bench", "--plot", svg)
    assert result.exit_code == 0, result.output
    text = svg.read_text(encoding="utf-8")
    assert f'id="{POLICY_GID}' in text and "policy 'bench'" in text
    plain_svg = tmp_path / "plain.svg"
    assert invoke("check", ref_folder, "-v", 20, "-i", 3, "--plot", plain_svg).exit_code == 0
    assert POLICY_GID not in plain_svg.read_text(encoding="utf-8")
    part = soacheck.load_part(ref_folder).under(BENCH)
    ax = Figure().add_subplot()
    ax.set_xscale("log")
    ax.set_yscale("log")
    line, vertical = draw_policy_boundary(ax, part, [25.0])
    v = line.get_xdata()
    assert v[-1] == pytest.approx(80.0, rel=1e-9)
    assert v[1:-1] == pytest.approx([6.0, 4000 / 72], rel=REL)
    assert vertical.get_xdata()[0] == pytest.approx(80.0)
