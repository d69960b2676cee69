"""One validator per quantity; one check of every output path; exit 3 for a bug, never a pass.

Physical ranges: no temperature lies below absolute zero, −273.15 °C (ISO 80000-5,
the kelvin defined from 0 K); counts are whole numbers; a duty cycle tp/T lies in (0, 1]
(common practice, no source).
"""

from __future__ import annotations

import math
import os

import numpy as np
import pytest
from typer.testing import CliRunner

from soacheck.cli import app
from soacheck.errors import SoacheckError
from soacheck.outputs import check_output
from soacheck.quantities import (
    DEVICE_COUNT,
    DRAWS,
    DUTY,
    MAX_DRAWS,
    SAMPLES,
    TEMPERATURE,
    THERMAL_RESISTANCE,
    check_memory,
)

runner = CliRunner(env={"COLUMNS": "120"})


@pytest.mark.parametrize("value", [math.nan, math.inf, -math.inf, -273.15, -300.0, 1e6, "25", True, None])
def test_a_temperature_outside_its_physical_range_is_refused_naming_where_and_the_range(value):
    with pytest.raises(SoacheckError) as caught:
        TEMPERATURE.check(value, "stage.toml: case_temp")
    text = str(caught.value)
    assert text.startswith("stage.toml: case_temp is ")
    assert "above -273.15 °C and at most 1000 °C" in text  # absolute zero, ISO 80000-5


@pytest.mark.parametrize("value", [-273.0, 0, 25, 25.0, np.float64(150.0), 1000])
def test_a_physical_temperature_passes_as_a_float(value):
    assert TEMPERATURE.check(value, "x") == pytest.approx(float(value))


@pytest.mark.parametrize(
    ("quantity", "bad"),
    [
        (DEVICE_COUNT, 0),
        (DEVICE_COUNT, 2.5),
        (DEVICE_COUNT, 10_001),
        (DRAWS, MAX_DRAWS + 1),
        (SAMPLES, 1),
        (SAMPLES, 9),
        (DUTY, 0.0),
        (DUTY, 1.5),
        (THERMAL_RESISTANCE, 0.0),
    ],
)
def test_counts_and_fractions_outside_their_limits_are_refused(quantity, bad):
    with pytest.raises(SoacheckError, match="give a"):
        quantity.check(bad, "key")


def test_a_count_given_as_a_whole_float_is_an_int():
    assert DEVICE_COUNT.check(3.0, "count") == 3
    assert isinstance(DEVICE_COUNT.check(3.0, "count"), int)


def test_an_array_names_the_first_bad_row():
    with pytest.raises(SoacheckError, match=r"points.csv line 4: case_temp is nan"):
        TEMPERATURE.check_array(np.array([25.0, 80.0, np.nan]), lambda k: f"points.csv line {k + 2}: case_temp")


def test_memory_beyond_the_budget_is_refused(monkeypatch):
    monkeypatch.setenv("SOACHECK_MEMORY_BUDGET", str(2**20))
    check_memory(2**19, "a small run", "use less")
    with pytest.raises(SoacheckError, match="a big run would need about .* GiB .* use less"):
        check_memory(2**21, "a big run", "use less")


# --------------------------------------------------------------------------- output paths


def test_an_output_whose_folder_is_missing_gets_its_folder(tmp_path):
    target = tmp_path / "new" / "deeper" / "plot.png"
    assert check_output(target, suffixes=(".png",)) == target
    assert target.parent.is_dir()


def test_an_output_under_a_file_is_refused(tmp_path):
    (tmp_path / "afile").write_text("x")
    with pytest.raises(SoacheckError, match="is a file, so no folder can be made there"):
        check_output(tmp_path / "afile" / "plot.png")


def test_an_output_file_that_is_a_folder_is_refused(tmp_path):
    with pytest.raises(SoacheckError, match="is a folder; give the name of a file"):
        check_output(tmp_path, force=True)


def test_an_output_folder_that_is_a_file_is_refused(tmp_path):
    (tmp_path / "report").write_text("x")
    with pytest.raises(SoacheckError, match="is a file, not a folder"):
        check_output(tmp_path / "report", folder=True, force=True)


@pytest.mark.skipif(not os.path.isdir("/proc/self"), reason="needs a read-only /proc (Linux)")
def test_an_output_in_a_folder_nobody_may_write_is_refused():
    # /proc refuses new files even to root, where permission bits would not
    with pytest.raises(SoacheckError, match="cannot write into the folder"):
        check_output("/proc/soacheck-plot.png")


def test_a_bad_plot_path_stops_the_trace_before_the_trace_is_read(tmp_path):
    (tmp_path / "afile").write_text("x")
    result = runner.invoke(
        app, ["trace", "demo-npn-to3-250w", str(tmp_path / "missing.csv"), "--plot", str(tmp_path / "afile" / "t.png")]
    )
    assert result.exit_code == 2, result.output
    assert "--plot:" in result.stderr and "is a file" in result.stderr, result.stderr


def test_an_export_with_a_wrong_suffix_stops_before_the_search(tmp_path, monkeypatch):
    import soacheck.api.envelopes as api  # the search runs there; the command only calls it

    def never(*args, **kwargs):
        raise AssertionError("the search ran before the output was checked")

    monkeypatch.setattr(api, "largest_safe_envelope", never)
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "demo-npn-to3-250w"\ncount = 1\ncase_temp = 25\n')
    result = runner.invoke(app, ["envelope", str(stage), "--export", str(tmp_path / "limits.txt")])
    assert result.exit_code == 2, result.output
    assert "--export:" in result.stderr and ".csv, .json or .h" in result.stderr


def test_a_report_folder_that_is_a_file_stops_the_run(tmp_path):
    from soacheck.demo import demo_plan_path

    (tmp_path / "out").write_text("mine")
    result = runner.invoke(app, ["run", str(demo_plan_path()), "-o", str(tmp_path / "out"), "--force"])
    assert result.exit_code == 2, result.output
    assert "is a file, not a folder" in result.stderr
    assert (tmp_path / "out").read_text() == "mine"


# --------------------------------------------------------------------------- exit 3


def test_a_bug_exits_3_with_one_line_and_no_traceback(monkeypatch):
    import soacheck.api.points as api  # `check` computes there; the command only calls it

    def broken(*args, **kwargs):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(api, "check_points", broken)
    result = runner.invoke(app, ["check", "demo-npn-to3-250w", "--voltage", "10", "--current", "1"])
    assert result.exit_code == 3, result.output
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1, result.stderr
    assert "internal error (ZeroDivisionError: float division by zero)" in lines[0]
    assert "this is a bug, please report it with the command and files" in lines[0]
    assert "Traceback" not in result.output and "PASS" not in result.output


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--case-temp", "nan"], "--case-temp is nan; give a temperature above -273.15 °C"),
        (["--case-temp", "-300"], "--case-temp is -300"),
        (["--duty", "1.5", "--pulse", "1ms"], "--duty is 1.5; give a duty cycle"),
    ],
)
def test_check_options_go_through_the_validators(args, fragment):
    result = runner.invoke(app, ["check", "demo-npn-to3-250w", "--voltage", "10", "--current", "1", *args])
    assert result.exit_code == 2, result.output
    assert fragment in result.stderr, result.stderr
