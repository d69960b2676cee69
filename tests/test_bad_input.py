"""Every malformed part or points file gets one clear line, exit code 2 and no traceback.

What counts as malformed follows from the part format (docs/part-format.md) and from
the log-log axes of an SOA plot: values must be finite and above zero, and a boundary
must fall with voltage (common practice, no source).
"""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from soacheck.cli import app

from .conftest import REFERENCE_SOA, REFERENCE_TOML, write_part

runner = CliRunner()

TOML = REFERENCE_TOML.format(id="bad", kind="npn", extra="", extra_top="")

PART_CASES = {
    # name: (file, content, fragments expected in the message)
    "misspelt column": (
        "soa.csv",
        "pulse,volatge,current\ndc,1,15\ndc,10,1.5\n",
        ["soa.csv", "volatge", "did you mean 'voltage'"],
    ),
    "missing column": ("soa.csv", "pulse,voltage\ndc,1\ndc,10\n", ["soa.csv", "missing column 'current'"]),
    "non-numeric cell": (
        "soa.csv",
        "pulse,voltage,current\ndc,1,15\ndc,ten,1.5\n",
        ["soa.csv line 3", "'ten' is not a finite number"],
    ),
    "nan cell": ("soa.csv", "pulse,voltage,current\ndc,1,15\ndc,10,nan\n", ["soa.csv line 3", "'nan'"]),
    "infinite cell": ("soa.csv", "pulse,voltage,current\ndc,1,inf\ndc,10,1.5\n", ["soa.csv line 2", "'inf'"]),
    "empty cell": ("soa.csv", "pulse,voltage,current\ndc,1,\ndc,10,1.5\n", ["soa.csv line 2", "is empty"]),
    "zero on log axis": ("soa.csv", "pulse,voltage,current\ndc,0,15\ndc,10,1.5\n", ["soa.csv line 2", "above zero"]),
    "negative on log axis": (
        "soa.csv",
        "pulse,voltage,current\ndc,1,15\ndc,10,-1.5\n",
        ["soa.csv line 3", "above zero"],
    ),
    "current rises": (
        "soa.csv",
        "pulse,voltage,current\ndc,1,15\ndc,10,12.5\ndc,20,20\n",
        ["soa.csv line 4", "current rises"],
    ),
    "duplicate voltage": (
        "soa.csv",
        "pulse,voltage,current\ndc,1,15\ndc,10,12.5\ndc,10,1\n",
        ["soa.csv line 4", "appears twice"],
    ),
    "out of order": (
        "soa.csv",
        "pulse,voltage,current\ndc,1,15\ndc,20,6\ndc,10,12.5\n",
        ["soa.csv line 4", "low to high voltage"],
    ),
    "unknown pulse suffix": (
        "soa.csv",
        "pulse,voltage,current\n1mn,1,30\n1mn,10,3\ndc,1,15\ndc,10,1.5\n",
        ["soa.csv line 2", "unknown time unit 'mn'"],
    ),
    "pulse without unit": (
        "soa.csv",
        "pulse,voltage,current\n10,1,30\n10,10,3\ndc,1,15\ndc,10,1.5\n",
        ["soa.csv line 2", "has no unit"],
    ),
    "no dc curve": ("soa.csv", "pulse,voltage,current\n1ms,1,30\n1ms,10,3\n", ["soa.csv", "no 'dc' curve"]),
    "empty file": ("soa.csv", "", ["soa.csv", "empty"]),
    "header only": ("soa.csv", "pulse,voltage,current\n", ["soa.csv", "no rows"]),
    "decimal commas with comma separator": (
        "soa.csv",
        "pulse,voltage,current\ndc,1,15\ndc,10,1,5\n",
        ["soa.csv", "line 3 has 4 fields", "';'"],
    ),
    "beyond v_max": ("soa.csv", "pulse,voltage,current\ndc,1,15\ndc,120,0.5\n", ["soa.csv line 3", "v_max"]),
    "misspelt key": ("part.toml", TOML.replace("tj_max", "tjmax"), ["part.toml", "'tjmax'", "did you mean 'tj_max'"]),
    "missing key": ("part.toml", TOML.replace("rth_jc = 1.0\n", ""), ["part.toml", "missing key 'rth_jc'"]),
    "unknown kind": ("part.toml", TOML.replace('kind = "npn"', 'kind = "nnp"'), ["part.toml", "kind 'nnp'", "'npn'"]),
    "text rating": (
        "part.toml",
        TOML.replace("v_max = 100", 'v_max = "100"'),
        ["part.toml", "ratings.v_max", "finite number"],
    ),
    "negative rating": (
        "part.toml",
        TOML.replace("i_max = 15", "i_max = -15"),
        ["part.toml", "ratings.i_max", "above zero"],
    ),
    "bad toml": ("part.toml", TOML.replace("v_max = 100", "v_max = = 100"), ["part.toml", "invalid TOML"]),
    "id differs from folder": (
        "part.toml",
        TOML.replace('id = "bad"', 'id = "other"'),
        ["part.toml", "differs from the folder name"],
    ),
    "negative foster r": (
        "part.toml",
        TOML + "[thermal]\nfoster_r = [0.5, -0.5]\nfoster_tau = [0.01, 0.1]\n",
        ["part.toml", "foster_r[1]", "above zero"],
    ),
    "fraction above one": (
        "part.toml",
        TOML + "[derating]\nsecond_breakdown = [[25, 1.2]]\n",
        ["part.toml", "between 0 and 1"],
    ),
}


def _run(*args):
    result = runner.invoke(app, list(args))
    return result, result.stderr


def _assert_one_clean_line(result, stderr, fragments):
    assert result.exit_code == 2, result.output
    lines = [line for line in stderr.splitlines() if line.strip()]
    assert len(lines) == 1, stderr
    assert "Traceback" not in result.output
    for fragment in fragments:
        assert fragment in lines[0], lines[0]


@pytest.mark.parametrize("case", list(PART_CASES), ids=list(PART_CASES))
def test_a_malformed_part_exits_2_with_one_clear_line(tmp_path, case):
    filename, content, fragments = PART_CASES[case]
    folder = write_part(tmp_path / "bad", toml=TOML)
    (folder / filename).write_text(content, encoding="utf-8")
    result, stderr = _run("check", str(folder), "--voltage", "10", "--current", "1")
    _assert_one_clean_line(result, stderr, fragments)


POINT_CASES = {
    "misspelt column": ("voltage,curent\n10,1\n", ["points.csv", "'curent'", "did you mean 'current'"]),
    "misspelt optional column": ("voltage,current,case_tmp\n10,1,80\n", ["points.csv", "'case_tmp'", "'case_temp'"]),
    "non-numeric": ("voltage,current\n10,1\n20,x\n", ["points.csv line 3", "'x'"]),
    "zero current": ("voltage,current\n10,0\n", ["points.csv line 2", "above zero"]),
    "infinite case temperature": ("voltage,current,case_temp\n10,1,inf\n", ["points.csv line 2", "case_temp"]),
    "bad pulse": ("voltage,current,pulse\n10,1,3 fortnights\n", ["points.csv line 2", "pulse"]),
    "empty": ("\n\n", ["points.csv", "empty"]),
}


@pytest.mark.parametrize("case", list(POINT_CASES), ids=list(POINT_CASES))
def test_a_malformed_points_file_exits_2_with_one_clear_line(tmp_path, case):
    content, fragments = POINT_CASES[case]
    path = tmp_path / "points.csv"
    path.write_text(content, encoding="utf-8")
    result, stderr = _run("check", "demo-npn-to3-250w", "--points", str(path))
    _assert_one_clean_line(result, stderr, fragments)


def test_spreadsheet_export_with_semicolons_and_decimal_commas_is_read(tmp_path):
    folder = write_part(tmp_path / "comma", soa=REFERENCE_SOA.replace(",", ";").replace(".", ","))
    points = tmp_path / "points.csv"
    points.write_text("voltage;current;case_temp\n20,0;3,5;75\n", encoding="utf-8")
    result = runner.invoke(app, ["check", str(folder), "--points", str(points), "--json"])
    assert result.exit_code == 0, result.output
    allowed = json.loads(result.stdout)["points"][0]["allowed_current"]
    assert allowed == pytest.approx(3.75, abs=1e-4)  # 75 W / 20 V: 125 W x (150 - 75)/(150 - 25), by hand


def test_unknown_part_names_the_nearest_ids():
    result, stderr = _run("check", "demo-npn-to274-125w", "--voltage", "10", "--current", "1")
    _assert_one_clean_line(result, stderr, ["unknown part 'demo-npn-to274-125w'", "'demo-npn-to247-125w'"])


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--voltage", "10"], "give --voltage and --current"),
        (["--voltage", "-10", "--current", "1"], "--voltage is -10"),
        (["--voltage", "10", "--current", "1", "--pulse", "5 parsecs"], "--pulse"),
        (["--voltage", "10", "--current", "1", "--breakdown-derating", "maybe"], "--breakdown-derating"),
        (["--voltage", "10", "--current", "1", "--library", "/nonexistent-library"], "is not a folder"),
    ],
)
def test_bad_options_exit_2(args, fragment):
    result, stderr = _run("check", "demo-npn-to3-250w", *args)
    _assert_one_clean_line(result, stderr, [fragment])
