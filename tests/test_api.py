"""The public API: the same answers as the command, in Python objects.

Expected allowed currents are computed by hand from the constructed reference part of
``conftest.py`` (current limit 15 A, constant power 125 W, tj_max 150 °C, rth_jc 1 K/W):
P = (tj_max − Tc)/Rth_jc (JEDEC JESD51-1), so at 20 V the allowed current is 125/20 = 6.25 A
at 25 °C and 0.6 · 6.25 = 3.75 A at 75 °C.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from typer.testing import CliRunner

import soacheck
from soacheck.cli import app

from .conftest import write_part
from .helpers import exit_code_for

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})

STAGE = 'part = "ref-bjt"\ncount = 2\nballast = 0.1\nvbe_spread = 0.01\ncase_temp = 40\n'
ENVELOPE = 'voltage = [5, 40]\ncurrent = 4\npower = 60\npulse = "dc"\ncase_temp = 40\n'
OCV = "soc,voltage\n0,40\n0.5,50\n1,60\n"  # one constructed 'cell', 40 V empty to 60 V full
TRACE = "time,voltage,current\n0,20,1\n0.001,20,5\n0.002,20,7\n0.003,20,1\n"  # 7 A > 6.25 A at 20 V: outside
PLAN_JOBS = '[[points]]\nname = "fine"\nfile = "ok.csv"\n\n[[points]]\nname = "too much"\nfile = "bad.csv"\n'


@pytest.fixture
def files(tmp_path, monkeypatch):
    """A user's working folder: a part library, a stage, an envelope, an OCV table, a trace, a plan."""
    monkeypatch.delenv("SOACHECK_LIBRARY", raising=False)
    write_part(tmp_path / "parts" / "ref-bjt")
    (tmp_path / "stage.toml").write_text(STAGE)
    (tmp_path / "envelope.toml").write_text(ENVELOPE)
    (tmp_path / "ocv.csv").write_text(OCV)
    (tmp_path / "trace.csv").write_text(TRACE)
    (tmp_path / "points.csv").write_text("voltage,current,case_temp\n20,3,75\n20,7,25\n")
    (tmp_path / "ok.csv").write_text("voltage,current\n20,3\n")
    (tmp_path / "bad.csv").write_text("voltage,current\n20,9\n")
    (tmp_path / "plan.toml").write_text('title = "small plan"\nstage = "stage.toml"\n' + PLAN_JOBS)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def cli_json(*args):
    result = runner.invoke(app, [str(a) for a in args] + ["--json"])
    payload = json.loads(result.stdout)
    assert result.exit_code == exit_code_for(payload), result.output  # 0 when it passes, 1 when it fails
    return result.exit_code, payload


LIB = ("--library", "parts")

# Each case: the command's arguments, and the API call with the same inputs.
CASES = {
    "check point": (
        ("check", "ref-bjt", "-v", 20, "-i", 3, "-t", 75, *LIB),
        lambda: soacheck.check("ref-bjt", 20, 3, case_temp=75, library="parts"),
    ),
    "check points file": (
        ("check", "ref-bjt", "--points", "points.csv", "--pulse", "1ms", *LIB),
        lambda: soacheck.check("ref-bjt", points="points.csv", pulse="1ms", library="parts"),
    ),
    "trace": (
        ("trace", "ref-bjt", "trace.csv", "--case-temp", 25, *LIB),
        lambda: soacheck.trace("ref-bjt", "trace.csv", case_temp=25, library="parts"),
    ),
    "discharge": (
        (
            "discharge",
            "stage.toml",
            "--battery",
            "ocv.csv",
            "--cells",
            1,
            "--capacity",
            2,
            "--mode",
            "cc",
            "--setpoint",
            1,
            "--samples",
            50,
            "--find-max",
            *LIB,
        ),
        lambda: soacheck.discharge(
            "stage.toml",
            battery="ocv.csv",
            cells=1,
            capacity=2,
            mode="cc",
            setpoint=1,
            samples=50,
            find_max=True,
            library="parts",
        ),
    ),
    "sweep": (
        (
            "sweep",
            "stage.toml",
            "--ramp",
            "current",
            "--from",
            0,
            "--to",
            4,
            "--at",
            20,
            "--time",
            "5s",
            "--samples",
            50,
            *LIB,
        ),
        lambda: soacheck.sweep(
            "stage.toml", ramp="current", start=0, stop=4, at=20, time="5s", samples=50, library="parts"
        ),
    ),
    "sharing": (
        ("sharing", "stage.toml", "--current", 4, "--voltage", 20, "--draws", 200, "--seed", 3, *LIB),
        lambda: soacheck.sharing("stage.toml", current=4, voltage=20, draws=200, seed=3, library="parts"),
    ),
    "envelope check": (
        ("envelope", "stage.toml", "--check", "envelope.toml", *LIB),
        lambda: soacheck.envelope("stage.toml", "envelope.toml", library="parts"),
    ),
    "largest safe envelope": (
        ("envelope", "stage.toml", "--voltages", "10,20,40", *LIB),
        lambda: soacheck.envelope("stage.toml", voltages=[10, 20, 40], library="parts"),
    ),
    "compare": (
        ("compare", "ref-bjt", "demo-npn-to247-125w", "--envelope", "envelope.toml", *LIB),
        lambda: soacheck.compare(["ref-bjt", "demo-npn-to247-125w"], envelope="envelope.toml", library="parts"),
    ),
    "lint": (
        ("lint", "ref-bjt", *LIB),
        lambda: soacheck.lint("ref-bjt", library="parts"),
    ),
    "run": (
        ("run", "plan.toml", "-o", "report", *LIB),
        lambda: soacheck.run_plan("plan.toml", library="parts"),
    ),
}


@pytest.mark.parametrize("case", list(CASES))
def test_every_commands_json_is_the_api_results_to_dict(files, case):
    args, call = CASES[case]
    code, printed = cli_json(*args)
    result = call()
    expected = result.to_dict()
    if case == "run":  # the report's time stamp, if any, is the one field that may differ
        for payload in (printed, expected):
            payload.pop("generated", None)
    assert printed == expected
    assert code == (0 if result.passed else 1)
    assert json.loads(result.to_json()) == result.to_dict()


def test_parts_json_is_the_frame_as_records(files):
    _, printed = cli_json("parts", *LIB)
    frame = soacheck.parts(library="parts")
    assert printed == {"parts": json.loads(frame.to_json(orient="records"))}
    row = frame.set_index("id").loc["ref-bjt"]
    assert (row["v_max"], row["p_max"], row["curves"]) == (100, 125, ["1ms", "dc"])  # conftest's part.toml


# --------------------------------------------------------------------------- the vectorization contract


def test_allowed_current_scalar_in_scalar_out(reference_part):
    value = reference_part.allowed_current(20.0)
    assert isinstance(value, float)
    assert value == pytest.approx(6.25, rel=1e-4)  # 125 W / 20 V, see the module docstring


def test_allowed_current_keeps_the_broadcast_shape(reference_part):
    """A (2, 1) column of case temperatures against a (3,) row of voltages gives (2, 3)."""
    got = reference_part.allowed_current([10.0, 20.0, 40.0], case_temp=[[25.0], [75.0]])
    assert got.shape == (2, 3)
    # by hand: 125/V at 25 °C, 0.6 * 125/V at 75 °C (JESD51-1 derating)
    expected = np.array([[12.5, 6.25, 3.125], [7.5, 3.75, 1.875]])
    np.testing.assert_allclose(got, expected, rtol=1e-4)


def test_scalar_list_and_array_inputs_agree(reference_part):
    voltages = [5.0, 20.0, 60.0]
    from_list = soacheck.allowed_current(reference_part, voltages)
    from_array = soacheck.allowed_current(reference_part, np.array(voltages))
    one_by_one = [soacheck.allowed_current(reference_part, v) for v in voltages]
    np.testing.assert_array_equal(from_list, from_array)
    np.testing.assert_array_equal(from_array, one_by_one)


def test_allowed_current_edges(reference_part):
    """Above v_max nothing is allowed; at tj_max nothing; a voltage of zero cannot be evaluated."""
    assert reference_part.allowed_current(120.0) == 0.0  # v_max = 100 V
    assert reference_part.allowed_current(20.0, case_temp=150.0) == 0.0  # tj_max = 150 °C
    assert math.isnan(reference_part.allowed_current(0.0))


def test_pulse_as_text_or_seconds_is_the_same(reference_part):
    # the 1 ms curve's 400 W line at 20 V: 20 A (conftest's soa.csv: 40 A at 10 V falling to 10 A at 40 V)
    assert reference_part.allowed_current(20.0, pulse="1ms") == pytest.approx(20.0, rel=1e-9)
    assert reference_part.allowed_current(20.0, pulse=1e-3) == reference_part.allowed_current(20.0, pulse="1ms")


def test_check_frame_has_one_row_per_point_with_hand_values(reference_part):
    result = soacheck.check(reference_part, [20.0, 20.0], [3.0, 7.0], case_temp=[75.0, 25.0])
    frame = result.to_frame()
    assert isinstance(frame, pd.DataFrame) and len(frame) == 2
    np.testing.assert_allclose(frame["allowed_current"], [3.75, 6.25], rtol=1e-4)  # by hand, module docstring
    assert list(frame["inside"]) == [True, False]
    assert result.verdict == "fail" and not result.passed
    assert result.margin == pytest.approx(1 - 7 / 6.25, rel=1e-3)  # the least margin: the second point's
    assert result.limit == "power"  # the constant-power segment bounds 20 V on the reference part


def test_check_takes_a_dataframe_of_points(reference_part):
    frame = pd.DataFrame({"voltage": [20.0, 20.0], "current": [3.0, 7.0], "case_temp": [75.0, 25.0]})
    from_frame = soacheck.check(reference_part, points=frame)
    from_arrays = soacheck.check(reference_part, [20.0, 20.0], [3.0, 7.0], case_temp=[75.0, 25.0])
    assert from_frame.to_dict() == from_arrays.to_dict()


# --------------------------------------------------------------------------- traces in memory


def test_a_trace_as_a_frame_or_arrays_gives_the_files_answer(files):
    from_file = soacheck.trace("ref-bjt", "trace.csv", library="parts").to_dict()
    frame = pd.read_csv("trace.csv")
    from_frame = soacheck.trace("ref-bjt", frame, library="parts").to_dict()
    arrays = (frame["time"].to_numpy(), frame["voltage"].to_numpy(), frame["current"].to_numpy())
    from_arrays = soacheck.trace("ref-bjt", arrays, library="parts").to_dict()
    assert from_file == from_frame == from_arrays
    assert from_file["verdict"] == "fail"  # 7 A > 6.25 A at 20 V, module docstring
    assert from_file["first_violation_time"] == pytest.approx(0.002)


def test_a_bad_sample_in_memory_names_its_row(files):
    arrays = ([0.0, 1.0, 0.5], [20.0, 20.0, 20.0], [1.0, 1.0, 1.0])
    with pytest.raises(soacheck.SoacheckError, match="row 3: time 0.5 s goes backwards"):
        soacheck.trace("ref-bjt", arrays, library="parts")


def test_a_trace_on_a_stage_takes_the_stages_case_temperature(files):
    stage = soacheck.load_stage("stage.toml", library="parts")
    on_stage = soacheck.trace(stage, "trace.csv")
    assert on_stage.to_dict()["case_peak"] == 40.0  # the stage file's case_temp


# --------------------------------------------------------------------------- one shape for every result


@pytest.mark.parametrize("case", [c for c in CASES if c != "run"] + ["run"])
def test_every_result_has_the_same_shape(files, case):
    result = CASES[case][1]()
    assert isinstance(result, soacheck.Result)
    assert result.verdict in ("pass", "fail")
    assert isinstance(result.margin, float)
    assert result.limit is None or isinstance(result.limit, str)
    assert isinstance(result.assumptions, tuple) and all(isinstance(a, str) for a in result.assumptions)
    frame = result.to_frame()
    assert isinstance(frame, pd.DataFrame)
    assert len(frame) >= (0 if case == "lint" else 1)  # a clean part folder has no findings
    ax = Figure().add_subplot()
    assert result.plot(ax=ax) is ax
    assert isinstance(result.plot(), Axes)


@pytest.mark.parametrize("case", ["discharge", "sweep", "envelope check"])
def test_tables_and_plots_number_devices_as_the_json_does(files, case):
    """The first device is Q1 (device 1) in the JSON, the frame and the plot's title alike."""
    result = CASES[case][1]()
    payload, frame = result.to_dict(), result.to_frame()
    assert sorted(frame["device"].unique()) == [1, 2]  # the stage file's count = 2
    least = frame.loc[frame["margin"].fillna(-math.inf).idxmin()]
    assert least["device"] == payload["device"] and least["margin"] == pytest.approx(payload["margin"])
    title = result.plot(ax=Figure().add_subplot()).get_title()
    assert f"Q{payload['device']}" in title and "device 0" not in title, title


def test_compare_plot_needs_an_envelope(files):
    trace_job = soacheck.compare(["ref-bjt"], trace="trace.csv", library="parts")
    with pytest.raises(soacheck.SoacheckError, match="use it with --envelope"):
        trace_job.plot()


# --------------------------------------------------------------------------- quiet: no output, no files


def test_the_api_prints_nothing_and_writes_nothing(files, capsys):
    before = sorted(p.name for p in Path(".").iterdir())
    for _, call in CASES.values():
        call()
    assert capsys.readouterr() == ("", "")
    assert sorted(p.name for p in Path(".").iterdir()) == before


def test_run_plan_writes_the_report_only_when_asked(files):
    result = soacheck.run_plan("plan.toml", "out", library="parts")
    assert json.loads((files / "out" / "report.json").read_text()) == result.to_dict()
    assert result.verdict == "fail" and result.to_frame()["name"].iloc[0] == "too much"  # failures first
    (files / "mine").mkdir()
    with pytest.raises(soacheck.SoacheckError, match="holds no soacheck report"):
        soacheck.run_plan("plan.toml", "mine", library="parts")


def test_the_limit_table_is_exported_only_when_asked_and_never_over_a_users_file(files):
    table = soacheck.envelope("stage.toml", voltages=[10, 20, 40], library="parts")
    table.export("limits.csv")
    lines = [line for line in (files / "limits.csv").read_text().splitlines() if not line.startswith("#")]
    assert lines[0] == "voltage,max_current,limit"
    rows = [line.split(",") for line in lines[1:]]
    assert [float(r[0]) for r in rows] == [10.0, 20.0, 40.0]
    assert [float(r[1]) for r in rows] == list(table.to_frame()["max_current"])
    table.export("limits.csv")  # soacheck's own file: replaced without force
    (files / "mine.csv").write_text("my notes\n")
    with pytest.raises(soacheck.SoacheckError, match="exists"):
        table.export("mine.csv")
    assert (files / "mine.csv").read_text() == "my notes\n"


# --------------------------------------------------------------------------- errors: the command's line


@pytest.mark.parametrize(
    ("args", "call"),
    [
        (("check", "no-such-part", "-v", 1, "-i", 1), lambda: soacheck.check("no-such-part", 1, 1)),
        (
            ("check", "ref-bjt", "-v", 20, "-i", 1, "--pulse", "3ms", "--duty", 2, *LIB),
            lambda: soacheck.check("ref-bjt", 20, 1, pulse="3ms", duty=2, library="parts"),
        ),
        (
            ("sweep", "stage.toml", "--ramp", "sideways", "--from", 1, "--to", 2, "--at", 3, *LIB),
            lambda: soacheck.sweep("stage.toml", ramp="sideways", start=1, stop=2, at=3, library="parts"),
        ),
    ],
)
def test_errors_carry_the_line_the_command_prints(files, args, call):
    printed = runner.invoke(app, [str(a) for a in args])
    assert printed.exit_code == 2, printed.output
    with pytest.raises(soacheck.SoacheckError) as raised:
        call()
    assert printed.stderr.strip() == f"soacheck: error: {raised.value}"


def test_importing_the_package_loads_no_numerics_until_asked():
    """``import soacheck`` stays light: the public names load on first use."""
    code = (
        "import sys, soacheck, soacheck.trace; "
        "assert not {'pandas', 'scipy', 'matplotlib'} & set(sys.modules), sorted(sys.modules); "
        "assert callable(soacheck.trace) and callable(soacheck.compare) and callable(soacheck.parts)"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr


def test_all_names_what_the_package_offers():
    assert set(soacheck.__all__) == {"__version__", *soacheck._PUBLIC}
    assert set(soacheck.__all__) <= set(dir(soacheck))
    for name in (
        "load_part",
        "parts",
        "check",
        "trace",
        "discharge",
        "sweep",
        "envelope",
        "compare",
        "run_plan",
        "lint",
    ):
        assert callable(getattr(soacheck, name)), name
