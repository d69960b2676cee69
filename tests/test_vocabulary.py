"""One vocabulary: every name any command's JSON uses is a glossary word, every limit a glossary limit.

The commands run in-process on the bundled examples and on cases built to fail for each
kind of reason (above v_max, the case at tj_max, second breakdown, a junction over tj_max,
a stage running away), so that the limits they name are collected too.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from soacheck.glossary import LIMITS, TERMS

from .helpers import exit_code_for, invoke

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
STAGE = EXAMPLES / "stage.toml"

COMMANDS = {
    "check inside": ["check", "demo-npn-to3-250w", "--points", EXAMPLES / "points.csv"],
    "check second breakdown": ["check", "demo-npn-to3-250w", "-v", 60, "-i", 5, "-t", 60],
    "check on-resistance": ["check", "demo-nmos-to247-300w", "-v", 0.5, "-i", 50],
    "check above v_max": ["check", "demo-nmos-to247-300w", "-v", 500, "-i", 1],
    "check case at tj_max": ["check", "demo-nmos-to247-300w", "-v", 20, "-i", 1, "-t", 180],
    "parts": ["parts"],
    "trace": ["trace", "demo-npn-to3-250w", EXAMPLES / "pulse-test.csv", "-t", 45],
    "discharge": [
        "discharge", STAGE, "--battery", "nmc", "--cells", 10, "--capacity", 2, "--mode", "cc", "--setpoint", 4,
        "--internal-resistance", 0.15, "--samples", 60,
    ],
    "sweep past tj_max": ["sweep", STAGE, "--ramp", "current", "--from", 0.1, "--to", 20, "--at", 40, "--samples", 60],
    "sharing": ["sharing", STAGE, "-i", 6, "-v", 40, "--draws", 50],
    "envelope check": ["envelope", STAGE, "--check", EXAMPLES / "envelope.toml"],
    "limit table": ["envelope", STAGE, "--voltages", "5,20,40"],
    "lint": ["lint", "demo-npn-to3-250w"],
}  # fmt: skip

SMALL_PLAN = """title = "every job kind"
stage = "{stage}"

[[points]]
name = "points"
file = "{examples}/points.csv"

[[envelope]]
name = "envelope"
voltage = [5, 42]
current = 10
power = 150

[[discharge]]
name = "discharge"
battery = "nmc"
cells = 10
capacity = 1
mode = "cc"
setpoint = 4
samples = 40

[[sweep]]
name = "sweep"
ramp = "voltage"
from = 5
to = 42
at = 3
time = "30s"

[[trace]]
name = "trace"
file = "{examples}/pulse-test.csv"
case_temp = 45

[[compare]]
name = "compare"
parts = ["demo-npn-to3-250w", "demo-npn-to220-62w"]
envelope = "hot-case.toml"
use_stage = false
"""


def _walk(value, keys: set[str], limits: set[str]) -> None:
    if isinstance(value, dict):
        for key, item in value.items():
            keys.add(key)
            if key == "limit" and isinstance(item, str):
                limits.add(item)
            _walk(item, keys, limits)
    elif isinstance(value, list):
        for item in value:
            _walk(item, keys, limits)


@pytest.fixture(scope="module")
def outputs(tmp_path_factory) -> dict[str, dict]:
    """Every command's --json object, and a plan run of every job kind."""
    found = {}
    for name, args in COMMANDS.items():
        result = invoke(*args, "--json")
        found[name] = json.loads(result.stdout)
        assert result.exit_code == exit_code_for(found[name]), f"{name}: {result.output}"
    folder = tmp_path_factory.mktemp("plan")
    (folder / "hot-case.toml").write_text("voltage = [5, 42]\ncurrent = 10\npower = 150\ncase_temp = 60\n")
    result = invoke(
        "compare", "demo-npn-to3-250w", "demo-npn-to220-62w", "--envelope", folder / "hot-case.toml", "--json"
    )
    found["compare"] = json.loads(result.stdout)
    assert result.exit_code == exit_code_for(found["compare"]), result.output
    plan = folder / "plan.toml"
    plan.write_text(SMALL_PLAN.format(stage=STAGE.as_posix(), examples=EXAMPLES.as_posix()), encoding="utf-8")
    result = invoke("run", plan, "-o", folder / "out", "--json")
    assert result.exit_code == exit_code_for(json.loads(result.stdout)), result.output
    found["run"] = json.loads(result.stdout)
    return found


def test_every_limit_any_command_names_is_a_glossary_limit(outputs):
    keys: set[str] = set()
    limits: set[str] = set()
    for payload in outputs.values():
        _walk(payload, keys, limits)
    assert limits <= set(LIMITS), limits - set(LIMITS)
    # the constructed cases above do reach these (each command above is built for one of them)
    assert {"power", "second_breakdown", "on_resistance", "voltage", "case_at_tj_max"} <= limits, limits


def test_every_name_any_command_prints_is_in_the_glossary(outputs):
    keys: set[str] = set()
    for payload in outputs.values():
        _walk(payload, keys, set())
    assert keys <= set(TERMS), sorted(keys - set(TERMS))


def test_overload_stands_beside_the_margin_where_a_point_is_outside(outputs):
    """overload = I/I_allowed = 1 − margin outside, null inside (the glossary's definition)."""
    (point,) = outputs["check second breakdown"]["points"]
    assert point["inside"] is False and point["margin"] < 0
    assert point["overload"] == pytest.approx(point["current"] / point["allowed_current"], rel=1e-9)
    inside = outputs["check inside"]["points"]
    assert all(p["overload"] is None for p in inside if p["inside"])


def test_one_name_for_the_case_peak(outputs):
    assert "case_peak" in outputs["trace"] and "tc_peak" not in outputs["trace"]
    assert "case_peak" in outputs["discharge"]


def test_duty_is_null_for_dc_and_single_pulses(outputs):
    assert all(p["duty"] is None for p in outputs["check inside"]["points"])


def _frames(tmp_path) -> dict[str, object]:
    """Every kind of result's table, through the Python API on the bundled examples."""
    import soacheck

    part = "demo-npn-to3-250w"
    (tmp_path / "hot-case.toml").write_text("voltage = [5, 42]\ncurrent = 10\npower = 150\ncase_temp = 60\n")
    plan = tmp_path / "plan.toml"
    plan.write_text(SMALL_PLAN.format(stage=STAGE.as_posix(), examples=EXAMPLES.as_posix()), encoding="utf-8")
    return {
        "check": soacheck.check(part, points=EXAMPLES / "points.csv").to_frame(),
        "trace": soacheck.trace(part, EXAMPLES / "pulse-test.csv", case_temp=45).to_frame(),
        "discharge": soacheck.discharge(
            STAGE, battery="nmc", cells=10, capacity=2, mode="cc", setpoint=4, internal_resistance=0.15, samples=30
        ).to_frame(),
        "sweep": soacheck.sweep(STAGE, ramp="current", start=0.1, stop=20, at=40, samples=30).to_frame(),
        "sharing": soacheck.sharing(STAGE, current=6, voltage=40, draws=50).to_frame(),
        "envelope check": soacheck.envelope(STAGE, EXAMPLES / "envelope.toml").to_frame(),
        "limit table": soacheck.envelope(STAGE, voltages=[5, 20, 40]).to_frame(),
        "compare": soacheck.compare([part, "demo-npn-to220-62w"], envelope=tmp_path / "hot-case.toml").to_frame(),
        "lint": soacheck.lint(part).to_frame(),
        "parts": soacheck.parts(),
        "plan": soacheck.run_plan(plan, tmp_path / "out").to_frame(),
    }


def test_every_column_of_every_table_the_api_returns_is_a_glossary_word(tmp_path):
    """to_frame() speaks the JSON's words: a column is a glossary term, so its unit is the glossary's."""
    unknown = {name: sorted(set(frame.columns) - set(TERMS)) for name, frame in _frames(tmp_path).items()}
    assert not any(unknown.values()), {name: cols for name, cols in unknown.items() if cols}
