"""One word for one thing in failure reports: a case past the limit, runaway, the shares of draws that settle.

- A case at or above the junction's limit leaves no current at all: the constant-power line
  P = (T_limit − Tc)/Rth_jc (Rth_jc by its definition, Tj = Tc + P·Rth_jc, JEDEC JESD51-1) is zero or
  less there. Without a policy that limit is tj_max and the word ``case_at_tj_max``; under a policy it
  is the ceiling and the word ``case_at_tj_ceiling``, in every command that can meet it (``check``,
  ``trace``, stage runs, envelope checks, ``sharing``), never ``tj_ceiling``, the junction's word.
- Runaway is a state of the whole set (no stable state exists for the devices together): every
  device carries it, none counts as inside (the ten matched devices of test_state_failures, whose
  loop gain Rth·V·|φ|·I/V_T is 7.7 to 8.6 and whose hog would sit past 1000 °C).
- A draw that runs away has no settled share: ``sharing``'s share statistics are over the draws that
  settle (numpy's percentile checked against scipy.stats.scoreatpercentile), null where none does.
- A failing stage job's headline names the device the limit was passed at where the stage has more
  than one, as the closing line of the CLI does.

The reference part (tests/conftest.py): DC curve 15 A to 8.3333 V, then 125 W to 40 V; rth_jc 1.0 K/W,
tj_max 150 °C, no thermal model. The ``bench`` policy's ceiling is 125 °C (common practice, no source).
"""

from __future__ import annotations

import json
import re
import statistics

import numpy as np
import pytest
import scipy.stats

import soacheck
from soacheck.api.stages import SharingResult
from soacheck.boundary import allowed_current
from soacheck.policy import BENCH
from soacheck.runner import JobResult
from soacheck.stage import Stage
from soacheck.steady_state import SteadyState

from .conftest import write_part
from .helpers import invoke, validate_output
from .test_state_failures import COUNT, EACH_A, TC_C, hog_junction_c, spread_gain, warm  # noqa: F401

CEILING_C = 125.0  # the bench policy's junction ceiling (common practice, no source)
RTH_JC = 1.0  # K/W, the reference part's
TJ_MAX_C = 150.0


def rated_power_w(tc_c: float) -> float:
    """The ratings' constant-power line at case ``tc_c``: (tj_max − Tc)/Rth_jc (JESD51-1). [W]"""
    return (TJ_MAX_C - tc_c) / RTH_JC


@pytest.fixture
def hot_files(tmp_path):
    """The reference pair (0.1 Ω ballasts, matched) on cases held at 130 °C and at 150 °C, an envelope and a
    steady trace (10 V, 0.1 A for 0.1 s) beside them."""
    write_part(tmp_path / "bjt")
    for name, case_c in (("hot", 130), ("past", 150)):
        (tmp_path / f"{name}.toml").write_text(
            f'part = "bjt"\ncount = 2\nballast = 0.1\ncase_temp = {case_c}\nvbe_spread = 0\n'
        )
        (tmp_path / f"{name}-envelope.toml").write_text(
            f"voltage = [5, 10]\ncurrent = 1\npower = 10\ncase_temp = {case_c}\n"
        )
    rows = "".join(f"{k * 0.01:g},10,0.1\n" for k in range(11))
    (tmp_path / "steady.csv").write_text("time,voltage,current\n" + rows)
    return tmp_path


def test_the_boundary_names_a_case_past_the_ceiling_as_a_case(bjt):
    """At 20 V under bench: at 130 °C (past the ceiling, below tj_max) nothing is allowed, and the word is the
    case's; at 150 °C the ratings' own word; at rating 130 °C allows (150 − 130)/1 = 20 W, 1 A at 20 V."""
    policy = bjt.under(BENCH)
    allowed = allowed_current(np.array([20.0, 20.0]), policy, tc_c=np.array([130.0, 150.0]))
    assert allowed.current_a.tolist() == [0.0, 0.0]
    assert allowed.limit.tolist() == ["case_at_tj_ceiling", "case_at_tj_max"]
    rated = allowed_current(20.0, bjt, tc_c=130.0)
    # the power segment starts at 8.3333 V × 15 A = 124.9995 W: 125 W to 4e-6, the tolerance
    assert rated.current_a[0] == pytest.approx(rated_power_w(130.0) / 20.0, rel=1e-5)
    assert allowed_current(20.0, bjt, tc_c=150.0).limit.tolist() == ["case_at_tj_max"]  # no policy: tj_max's


def test_every_command_names_a_case_past_the_ceiling_case_at_tj_ceiling(hot_files):
    """130 °C cases under bench: ``trace``, ``sweep`` and ``envelope --check`` fail with no margin (null) and
    ``case_at_tj_ceiling``; the margin to the ratings stays the current's against (150 − 130)/1 = 20 W:
    the trace 1 − 10·0.1/20 = 95 %, the pair at 1 A each 0.5 A at 10 − 0.05 V, 1 − 4.975/20 = 75.1 %."""
    d = hot_files
    runs = {
        "trace": ("trace", d / "bjt", d / "steady.csv", "--case-temp", 130),
        "sweep": ("sweep", d / "hot.toml", "--ramp", "current", "--from", 0.5, "--to", 1, "--at", 10, "--time", "1s"),
        "envelope": ("envelope", d / "hot.toml", "--check", d / "hot-envelope.toml"),
    }
    to_rating = {"trace": 1 - 10 * 0.1 / 20.0, "sweep": 1 - 0.5 * 9.95 / 20.0, "envelope": 1 - 0.5 * 9.95 / 20.0}
    for command, args in runs.items():
        done = invoke(*args, "--policy", "bench", "--json")
        assert done.exit_code == 1, done.output
        payload = validate_output(command, done.stdout)
        assert (payload["verdict"], payload["limit"], payload["margin"]) == ("fail", "case_at_tj_ceiling", None)
        assert payload["margin_to_rating"] == pytest.approx(to_rating[command], rel=1e-5)
        text = invoke(*args, "--policy", "bench")
        flat = " ".join(text.stdout.split())
        assert "FAIL: case_at_tj_ceiling" in flat and "tj_ceiling," not in flat, flat
        assert "allows no current" in flat or "allows nothing" in flat, flat
        assert f"least margin {100 * to_rating[command]:+.1f} %" in flat, flat
    for line in json.loads(invoke(*runs["envelope"], "--policy", "bench", "--json").stdout)["outside"]:
        assert (line["limit"], line["margin"]) == ("case_at_tj_ceiling", None)


def test_without_a_policy_the_same_situation_is_case_at_tj_max(hot_files):
    """150 °C cases, no policy: the same commands say ``case_at_tj_max`` (the ratings' own word), no margin."""
    d = hot_files
    runs = {
        "check": ("check", d / "bjt", "-v", 10, "-i", 0.1, "-t", 150),
        "trace": ("trace", d / "bjt", d / "steady.csv", "--case-temp", 150),
        "sweep": ("sweep", d / "past.toml", "--ramp", "current", "--from", 0.5, "--to", 1, "--at", 10, "--time", "1s"),
        "envelope": ("envelope", d / "past.toml", "--check", d / "past-envelope.toml"),
    }
    for command, args in runs.items():
        done = invoke(*args, "--json")
        assert done.exit_code == 1, done.output
        payload = validate_output(command, done.stdout)
        found = payload["points"][0] if command == "check" else payload
        assert (payload["verdict"], found["limit"], found["margin"]) == ("fail", "case_at_tj_max", None)
        if command != "check":
            flat = " ".join(invoke(*args).stdout.split())
            assert "FAIL: case_at_tj_max" in flat and "no margin" in flat, flat


# ---------------------------------------------------------------- runaway: the whole set's state


def test_a_stage_run_in_runaway_marks_every_device(warm, tmp_path):  # noqa: F811
    """Ten matched devices at 2.2 A total from 90 to 100 V: the equal split's gain is 7.7-8.6 and the hog past
    1000 °C at every sample, so every sample runs away; every device is labelled runaway, none inside."""
    assert spread_gain(90.0) >= 1 and hog_junction_c(90.0) > 1000.0
    stage = tmp_path / "ten.toml"
    stage.write_text(f'part = "warm"\ncount = {COUNT}\ncase_temp = {TC_C:g}\nvbe_spread = 0\n')
    result = soacheck.sweep(stage, ramp="voltage", start=90, stop=100, at=COUNT * EACH_A, time="1s", samples=11)
    run = result.run
    assert run.runaway and result.limit == "runaway" and not result.passed
    assert (run.limit == "runaway").all() and not run.inside.any()
    assert result.to_frame()["limit"].eq("runaway").all()  # the frame, every device at every sample
    text = " ".join(invoke("sweep", stage, "--ramp", "voltage", "--from", 90, "--to", 100, "--at", 2.2).stdout.split())
    assert "FAIL: runaway at 0 s: paralleled devices have no stable state" in text, text  # no device singled out


def test_sharing_in_runaway_has_no_settled_share(warm, tmp_path):  # noqa: F811
    """The same ten devices with a 1 mV spread at 2.2 A, 100 V: every draw runs away, so no draw has a
    settled share: worst_share, mean_worst_share and worst_device_current are null, as the margin is."""
    stage = tmp_path / "ten.toml"
    stage.write_text(f'part = "warm"\ncount = {COUNT}\ncase_temp = {TC_C:g}\nvbe_spread = 0.001\n')
    done = invoke("sharing", stage, "-i", COUNT * EACH_A, "-v", 100, "--draws", 20, "--json")
    assert done.exit_code == 1, done.output
    payload = validate_output("sharing", done.stdout)
    assert (payload["limit"], payload["runaway_fraction"], payload["margin"]) == ("runaway", 1.0, None)
    assert (payload["worst_share"], payload["mean_worst_share"], payload["worst_device_current"]) == (None,) * 3
    flat = " ".join(invoke("sharing", stage, "-i", 2.2, "-v", 100, "--draws", 20).stdout.split())
    assert "no draw of 20 settles" in flat and "FAIL: runaway: paralleled devices" in flat, flat


def test_share_statistics_leave_out_the_draws_that_run_away(bjt, monkeypatch):
    """Ten draws of a pair, 1 A at 5 V on 25 °C cases (inside the 15 A segment): Q1's share written here, draws
    3 and 7 running away with a share of 0.95 that no settled state has. The statistics are those of the eight
    others (scipy's percentile, the mean by statistics.fmean), and every device of a run-away draw is runaway."""
    import soacheck.sharing_spread as sharing_spread

    shares = np.array([0.50, 0.52, 0.54, 0.95, 0.51, 0.53, 0.55, 0.95, 0.56, 0.58])
    away = np.zeros(shares.size, dtype=bool)
    away[[3, 7]] = True

    def constructed(stage, source_v, total_a, *, offsets_v=None, **_):
        device_a = np.vstack([shares, 1 - shares]) * total_a[None, :]
        ones = np.ones_like(device_a)
        return SteadyState(
            device_a=device_a,
            device_v=5.0 * ones,
            device_w=5.0 * device_a,
            case_c=25.0 * ones,
            junction_c=25.0 + 5.0 * device_a * 1.0,  # Tc + P·Rth_jc (JESD51-1)
            sink_c=np.full(shares.size, 25.0),
            gain=0.0 * ones,
            runaway_at=away,
        )

    monkeypatch.setattr(sharing_spread, "steady_state", constructed)
    pair = Stage(bjt, 2, case_temp_c=25.0, vbe_spread_v=0.01)
    spread = sharing_spread.sharing_monte_carlo(pair, 1.0, 5.0, draws=shares.size, percentile=90.0)
    settled = shares[~away].tolist()
    assert spread.worst_share == pytest.approx(scipy.stats.scoreatpercentile(settled, 90.0), rel=1e-12)
    assert spread.mean_share == pytest.approx(statistics.fmean(settled), rel=1e-12)
    assert spread.runaway_fraction == pytest.approx(0.2)
    payload = SharingResult(pair, "pair", 1.0, 5.0, 0, spread).to_dict()
    assert payload["worst_device_current"] == pytest.approx(scipy.stats.scoreatpercentile(settled, 90.0) * 1.0)
    assert payload["limit"] == "runaway" and payload["margin"] is None
    margin, limit, inside = sharing_spread.judge_draws(pair, constructed(pair, None, np.full(10, 1.0)))
    assert (limit[:, away] == "runaway").all() and not inside[:, away].any()
    assert inside[:, ~away].all()  # 0.58 A at most at 5 V: inside the 15 A segment
    assert np.isinf(margin[:, away]).all() and margin[:, ~away].min() == pytest.approx(1 - 0.58 / 15.0)


# ---------------------------------------------------------------- the headline names the device


def test_a_headline_of_a_current_failure_names_the_device():
    """A stage job whose current leaves its boundary at Q2: the headline says where, as the CLI's closing line
    does; with one device (no device given) it reads as before, and runaway names none."""
    s = {"limit": "power", "first_violation_time": 3.0, "margin": -0.25}
    assert JobResult("s", "sweep", False, s, (), failed_device="Q2").headline() == (
        "least margin -25.0%; limit power (Q2); first outside at 3 s"
    )
    assert JobResult("s", "sweep", False, s, ()).headline() == "least margin -25.0%; limit power; first outside at 3 s"
    away = {"limit": "runaway", "first_violation_time": 2.0, "margin": -0.1}
    assert "(Q1)" not in JobResult("r", "sweep", False, away, (), failed_device="Q1").headline()


def test_the_demo_headline_names_its_device(demo_report):
    """The demo's failing multi-device stage job: its headline in the report names the device where its limit
    was passed (``limit power (Q1)``)."""
    from .helpers import parse_html

    page = parse_html((demo_report / "report.html").read_text(encoding="utf-8"))
    whys = [p.text() for p in page.iter("p") if "why" in p.classes]
    assert any(re.search(r"; limit [a-z_]+ \(Q\d+\)", why) for why in whys), whys
