"""From a datasheet picture to a linted part: digitizing, lint, and parts from ratings.

The round trip draws a known curve with matplotlib (a reference plotting library) on
log-log axes, takes its pixel positions from matplotlib's own transform, and recovers the
values within one pixel's error. Lint rules name their sources in soacheck/lint.py.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from matplotlib.figure import Figure
from typer.testing import CliRunner

from soacheck.authoring import AxisCalibration, follow_colour, pixels_to_values, soa_from_ratings
from soacheck.boundary import allowed_current
from soacheck.cli import app
from soacheck.images import read_image
from soacheck.library import bundled_library, list_parts
from soacheck.lint import lint_part
from soacheck.partfiles import read_part

from .conftest import REFERENCE_SOA, REFERENCE_TOML, write_part

runner = CliRunner(env={"COLUMNS": "200"})

# the reference DC curve (constructed; conftest.REFERENCE_SOA)
KNOWN_V = np.array([1.0, 8.3333, 40.0, 100.0])
KNOWN_I = np.array([15.0, 15.0, 3.125, 0.5])
CURVE_COLOUR = "#d1495b"


@pytest.fixture(scope="module")
def drawn(tmp_path_factory):
    """The known curve drawn on log-log axes to a PNG, with pixels of reference ticks and vertices."""
    folder = tmp_path_factory.mktemp("drawn")
    fig = Figure(figsize=(8, 6), dpi=100)
    ax = fig.add_axes((0.1, 0.1, 0.85, 0.85))
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlim(0.5, 200)
    ax.set_ylim(0.1, 50)
    ax.plot(KNOWN_V, KNOWN_I, color=CURVE_COLOUR, lw=2)
    path = folder / "plot.png"
    fig.savefig(path, dpi=100)
    height = fig.get_size_inches()[1] * 100

    def pixel(v, i):
        x, y = ax.transData.transform(np.column_stack([np.atleast_1d(v), np.atleast_1d(i)])).T
        return x, height - y  # image rows count downward

    ticks_x, _ = pixel([1.0, 100.0], [1.0, 1.0])
    _, ticks_y = pixel([1.0, 1.0], [0.1, 10.0])
    return {"path": path, "pixel": pixel, "ticks_x": ticks_x, "ticks_y": ticks_y}


def calibrations(drawn):
    (x1, x2), (y1, y2) = drawn["ticks_x"], drawn["ticks_y"]
    return f"{x1:.2f}=1,{x2:.2f}=100", f"{y1:.2f}=0.1,{y2:.2f}=10"


def one_pixel_relative(drawn):
    """A pixel's share of a decade on the coarser axis, as a relative error in value."""
    (x1, x2), (y1, y2) = drawn["ticks_x"], drawn["ticks_y"]
    pixels_per_decade = min(abs(x2 - x1) / 2, abs(y2 - y1) / 2)
    return 10 ** (1 / pixels_per_decade) - 1


def test_log_axis_calibration_by_hand():
    axis = AxisCalibration(100, 1.0, 300, 100.0)
    # two decades over 200 px: pixel 200 is 10, pixel 250 is 10^1.5
    assert axis.value([200, 250]) == pytest.approx([10.0, 10**1.5])
    linear = AxisCalibration(0, 0.0, 100, 50.0, log=False)
    assert linear.value(40) == pytest.approx(20.0)


def test_round_trip_of_picked_points_within_one_pixel(drawn, tmp_path):
    px, py = drawn["pixel"](KNOWN_V, KNOWN_I)
    picked = tmp_path / "picked.csv"
    # a person picks to the nearest pixel
    pd.DataFrame({"x": np.round(px), "y": np.round(py)}).to_csv(picked, index=False)
    x_cal, y_cal = calibrations(drawn)
    out = tmp_path / "soa.csv"
    result = runner.invoke(
        app, ["digitize", str(picked), "--x", x_cal, "--y", y_cal, "--pulse", "dc", "--into", str(out)]
    )
    assert result.exit_code == 0, result.output
    rows = pd.read_csv(out)
    tolerance = one_pixel_relative(drawn) + 1e-3  # + the 4-digit rounding of the output
    assert rows["voltage"].to_numpy() == pytest.approx(KNOWN_V, rel=tolerance)
    assert rows["current"].to_numpy() == pytest.approx(KNOWN_I, rel=tolerance)


def test_following_the_curve_colour_in_the_png(drawn):
    px, py = follow_colour(read_image(drawn["path"]), (0xD1 / 255, 0x49 / 255, 0x5B / 255))
    x_axis = AxisCalibration(*drawn["ticks_x"][:1], 1.0, *drawn["ticks_x"][1:], 100.0)
    y_axis = AxisCalibration(*drawn["ticks_y"][:1], 0.1, *drawn["ticks_y"][1:], 10.0)
    v, i = pixels_to_values(px, py, x_axis, y_axis)
    # every followed point lies on the known curve (straight on log-log axes) within two pixels:
    # the line is 2 px wide and anti-aliased
    inside = (v >= KNOWN_V[0]) & (v <= KNOWN_V[-1])
    truth = np.exp(np.interp(np.log(v[inside]), np.log(KNOWN_V), np.log(KNOWN_I)))
    assert v.size > 50
    assert i[inside] == pytest.approx(truth, rel=2 * one_pixel_relative(drawn) + 0.02)


def test_digitize_adds_a_curve_and_never_loses_rows(tmp_path):
    out = tmp_path / "soa.csv"
    out.write_text(REFERENCE_SOA)
    picked = tmp_path / "p.csv"
    picked.write_text("x,y\n100,300\n400,100\n")
    args = ["digitize", str(picked), "--x", "100=1,400=1000", "--y", "300=1,100=100", "--into", str(out)]
    result = runner.invoke(app, [*args, "--pulse", "100us"])
    assert result.exit_code == 0, result.output
    after = out.read_text()
    for line in REFERENCE_SOA.strip().splitlines()[1:]:
        pulse, v, i = line.split(",")
        assert any(row.startswith(f"{pulse},") and float(row.split(",")[1]) == float(v) for row in after.splitlines())
    assert "100us,1,1" in after and "100us,1000,100" in after
    again = runner.invoke(app, [*args, "--pulse", "dc"])  # a dc curve is already there
    assert again.exit_code == 2 and "--force" in again.stderr
    assert out.read_text() == after


def test_digitize_without_a_display_says_how_to_pick(tmp_path, monkeypatch, drawn):
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    result = runner.invoke(app, ["digitize", "--image", str(drawn["path"]), "--x", "1=1,2=10", "--y", "1=1,2=10"])
    assert result.exit_code == 2 and "no display" in result.stderr and "x,y" in result.stderr


def test_digitize_a_zth_curve(tmp_path):
    picked = tmp_path / "z.csv"
    picked.write_text("x,y\n0,400\n300,100\n")
    out = tmp_path / "zth.csv"
    result = runner.invoke(
        app, ["digitize", str(picked), "--zth", "--x", "0=1e-5,300=1e-2", "--y", "400=0.01,100=1", "--into", str(out)]
    )
    assert result.exit_code == 0, result.output
    assert out.read_text().splitlines() == ["time,zth", "1e-05,0.01", "0.01,1"]


# --------------------------------------------------------------------------- lint

TOML = REFERENCE_TOML.format(id="{id}", kind="npn", extra="", extra_top="")

SEEDED = {
    # name: (soa.csv, part.toml edits, extra files, expected fragment, severity)
    "thermal segment off p_max": (
        REFERENCE_SOA.replace("dc,40,3.125", "dc,40,2.5").replace("dc,8.3333,15", "dc,6.6667,15"),
        {},
        {},
        "constant-power segment",
        "error",
    ),
    "current above i_max": (
        REFERENCE_SOA.replace("dc,1,15\ndc,8.3333,15", "dc,1,18\ndc,6.944,18"),
        {},
        {},
        "above i_max",
        "error",
    ),
    "curve ends early": (REFERENCE_SOA.replace("dc,100,0.5", "dc,70,1.0204"), {}, {}, "below v_max", "warning"),
    "pulse curve below dc": (
        REFERENCE_SOA.replace("1ms,1,40\n1ms,10,40\n1ms,40,10\n1ms,100,2", "1ms,1,10\n1ms,8,10\n1ms,40,2\n1ms,100,0.3"),
        {},
        {},
        "allows less",
        "error",
    ),
    "slope fits no mechanism": (
        REFERENCE_SOA.replace("dc,8.3333,15", "dc,4,15\ndc,8.3333,10.5"),
        {},
        {},
        "fits no mechanism",
        "warning",
    ),
    "bend the wrong way": (
        REFERENCE_SOA.replace("dc,40,3.125", "dc,25,3\ndc,40,3.125"),
        {},
        {},
        "bends upward",
        "error",
    ),
    "points out of order": (
        REFERENCE_SOA.replace("dc,40,3.125\ndc,100,0.5", "dc,100,0.5\ndc,40,3.125"),
        {},
        {},
        "follows",
        "error",
    ),
    "repeated voltage": (REFERENCE_SOA.replace("dc,100,0.5", "dc,40,1"), {}, {}, "twice", "error"),
    "rising current": (REFERENCE_SOA.replace("dc,40,3.125", "dc,40,31.25"), {}, {}, "rises", "error"),
    "p_max off rth": (REFERENCE_SOA, {"p_max = 125": "p_max = 150"}, {}, "differs from (tj_max - 25)/rth_jc", "error"),
    "rising derating table": (
        REFERENCE_SOA,
        {},
        {"append": "[derating]\nsecond_breakdown = [[25, 0.8], [100, 0.9]]\n"},
        "rises with temperature",
        "error",
    ),
    "zth above rth_jc": (
        REFERENCE_SOA,
        {},
        {"zth.csv": "time,zth\n0.001,0.1\n0.1,0.8\n10,1.6\n"},
        "above rth_jc",
        "error",
    ),
    "foster sum off rth_jc": (
        REFERENCE_SOA,
        {},
        {"append": "[thermal]\nfoster_r = [0.2, 0.3]\nfoster_tau = [0.01, 0.1]\n"},
        "differs from rth_jc",
        "warning",
    ),
}


@pytest.mark.parametrize("case", list(SEEDED), ids=list(SEEDED))
def test_lint_finds_each_seeded_mistake(tmp_path, case):
    soa, edits, extra, fragment, severity = SEEDED[case]
    toml = TOML.replace("{id}", "broken")
    for old, new in edits.items():
        toml = toml.replace(old, new)
    toml += extra.get("append", "")
    folder = write_part(tmp_path / "broken", soa=soa, toml=toml)
    for name, text in extra.items():
        if name != "append":
            (folder / name).write_text(text)
    findings = lint_part(folder)
    hits = [f for f in findings if fragment in f.message]
    assert hits, [f.message for f in findings]
    assert hits[0].severity == severity
    assert hits[0].file in ("soa.csv", "part.toml", "zth.csv")


@pytest.mark.parametrize("part_id", [e.id for e in list_parts([bundled_library()])])
def test_lint_finds_nothing_in_the_bundled_parts(part_id):
    assert lint_part(bundled_library() / part_id) == []


def test_lint_cli_exit_codes_and_json(tmp_path):
    clean = runner.invoke(app, ["lint", "demo-npn-to3-250w", "--json"])
    assert clean.exit_code == 0, clean.output
    assert json.loads(clean.stdout) == {"part": "demo-npn-to3-250w", "findings": []}
    broken = write_part(tmp_path / "broken", soa=SEEDED["rising current"][0], toml=TOML.replace("{id}", "broken"))
    result = runner.invoke(app, ["lint", str(broken), "--json"])
    assert result.exit_code == 1, result.output
    finding = json.loads(result.stdout)["findings"][0]
    assert set(finding) == {"severity", "file", "row", "message"} and finding["row"] == 8
    warned = write_part(tmp_path / "warned", soa=SEEDED["curve ends early"][0], toml=TOML.replace("{id}", "warned"))
    assert runner.invoke(app, ["lint", str(warned)]).exit_code == 0  # warnings alone exit 0


# --------------------------------------------------------------------------- new parts from ratings


def test_new_part_thermal_segment_is_exactly_p_max_over_v(tmp_path):
    result = runner.invoke(
        app,
        [
            "new-part",
            "lab-npn-1",
            "--kind",
            "npn",
            "--v-max",
            "100",
            "--i-max",
            "10",
            "--p-max",
            "100",
            "--tj-max",
            "150",
            "--rth-jc",
            "1.25",
            "--sb-knee",
            "40",
            "--sb-exponent",
            "2",
            "--into",
            str(tmp_path),
        ],
    )
    assert result.exit_code == 0, result.output
    part = read_part(tmp_path / "lab-npn-1")
    v = np.array([12.0, 20.0, 39.0])
    got = allowed_current(v, part)
    assert got.current_a == pytest.approx(100.0 / v, rel=1e-12)  # I = P/V exactly
    assert list(got.limit) == ["power"] * 3
    # above the knee: (100/40) (V/40)^-2
    assert allowed_current(80.0, part).current_a[0] == pytest.approx(2.5 * 0.25, rel=1e-12)
    assert "synthesized from ratings" in part.source
    assert lint_part(tmp_path / "lab-npn-1") == []


def test_new_part_without_a_knee_warns(tmp_path):
    result = runner.invoke(
        app,
        [
            "new-part",
            "lab-npn-2",
            "--kind",
            "npn",
            "--v-max",
            "100",
            "--i-max",
            "10",
            "--p-max",
            "100",
            "--tj-max",
            "150",
            "--rth-jc",
            "1.25",
            "--into",
            str(tmp_path),
        ],
    )
    assert result.exit_code == 0 and "NOT safe above the unknown knee" in result.stderr
    fet = soa_from_ratings(kind="nmos", v_max_v=100, i_max_a=10, p_max_w=100, tj_max_c=150, rth_jc_k_per_w=1.25)
    assert any("not valid for long linear-mode operation" in w for w in fet.warnings)


@pytest.mark.parametrize("bad_id", ["../escape", "a/b", ".hidden", ""])
def test_new_part_refuses_unsafe_ids(tmp_path, bad_id):
    result = runner.invoke(
        app,
        [
            "new-part",
            bad_id,
            "--kind",
            "npn",
            "--v-max",
            "100",
            "--i-max",
            "10",
            "--p-max",
            "100",
            "--tj-max",
            "150",
            "--rth-jc",
            "1.25",
            "--into",
            str(tmp_path),
        ],
    )
    assert result.exit_code == 2, result.output
    assert list(tmp_path.iterdir()) == []


NEW_PART = [
    "new-part",
    "lab-npn-3",
    "--kind",
    "npn",
    "--v-max",
    "100",
    "--i-max",
    "15",
    "--p-max",
    "125",
    "--tj-max",
    "150",
    "--rth-jc",
    "1.0",
]


def test_new_part_never_overwrites_without_force(tmp_path):
    args = [*NEW_PART, "--into", str(tmp_path)]
    assert runner.invoke(app, args).exit_code == 0
    folder = tmp_path / "lab-npn-3"
    (folder / "notes.txt").write_text("mine")
    (folder / "part.toml").write_text((folder / "part.toml").read_text() + "# my edit\n")
    again = runner.invoke(app, args)
    assert again.exit_code == 2 and "--force" in again.stderr and str(folder / "part.toml") in again.stderr
    assert "# my edit" in (folder / "part.toml").read_text()
    assert runner.invoke(app, [*args, "--force"]).exit_code == 0
    # --force replaces what new-part writes and nothing else; no staging files left behind
    assert "# my edit" not in (folder / "part.toml").read_text()
    assert (folder / "notes.txt").read_text() == "mine"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["lab-npn-3"]
    assert sorted(p.name for p in folder.iterdir()) == ["notes.txt", "part.toml", "soa.csv"]


@pytest.mark.parametrize("force", [False, True], ids=["plain", "force"])
def test_new_part_keeps_digitized_curves(tmp_path, force):
    """A folder holding the user's soa.csv and zth.csv keeps both, byte for byte, with or without --force."""
    folder = tmp_path / "lab-npn-3"
    folder.mkdir()
    (folder / "soa.csv").write_text(REFERENCE_SOA)
    zth = "time,zth\n0.001,0.05\n0.1,0.5\n10,0.95\n"
    (folder / "zth.csv").write_text(zth)
    result = runner.invoke(app, [*NEW_PART, "--into", str(tmp_path), *(["--force"] if force else [])])
    assert result.exit_code == 0, result.output
    assert (folder / "soa.csv").read_text() == REFERENCE_SOA and (folder / "zth.csv").read_text() == zth
    assert f"kept {folder / 'soa.csv'}" in result.stdout and f"kept {folder / 'zth.csv'}" in result.stdout
    part = read_part(folder)
    assert [c.pulse_s for c in part.curves] == [1e-3, math.inf]  # the digitized 1 ms and DC curves
    assert "digitized" in part.source


def test_new_part_library_option_is_a_search_path_only(tmp_path):
    result = runner.invoke(app, [*NEW_PART, "-L", str(tmp_path)])
    assert result.exit_code == 2 and "--into" in result.stderr
    assert list(tmp_path.iterdir()) == []


def test_inconsistent_ratings_use_the_smaller_power():
    made = soa_from_ratings(
        kind="npn", v_max_v=100, i_max_a=10, p_max_w=150, tj_max_c=150, rth_jc_k_per_w=1.25, sb_knee_v=40, sb_exponent=2
    )
    assert made.p_max_w == pytest.approx(100.0) and made.warnings
    assert math.isclose(made.voltage_v[1], 10.0)  # 100 W / 10 A


# --------------------------------------------------------------------------- output folders


def one_line_exit_2(result, *fragments):
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output and result.exception is None or isinstance(result.exception, SystemExit)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("soacheck: error:"), result.stderr
    for fragment in fragments:
        assert fragment in lines[0], lines[0]


def picked_args(tmp_path):
    picked = tmp_path / "p.csv"
    picked.write_text("x,y\n100,300\n400,100\n")
    return ["digitize", str(picked), "--x", "100=1,400=1000", "--y", "300=1,100=100"]


@pytest.mark.parametrize("zth", [False, True], ids=["soa", "zth"])
def test_digitize_makes_missing_output_folders(tmp_path, zth):
    out = tmp_path / "my-parts" / "lab-npn-a" / ("zth.csv" if zth else "soa.csv")
    result = runner.invoke(app, [*picked_args(tmp_path), *(["--zth"] if zth else []), "--into", str(out)])
    assert result.exit_code == 0, result.output
    assert out.is_file()


@pytest.mark.parametrize("zth", [False, True], ids=["soa", "zth"])
def test_digitize_into_a_file_instead_of_a_folder(tmp_path, zth):
    blocker = tmp_path / "my-parts"
    blocker.write_text("a file where a folder should be")
    out = blocker / "lab-npn-a" / "soa.csv"
    result = runner.invoke(app, [*picked_args(tmp_path), *(["--zth"] if zth else []), "--into", str(out)])
    one_line_exit_2(result, str(blocker))
    assert blocker.read_text() == "a file where a folder should be"


@pytest.mark.parametrize("zth", [False, True], ids=["soa", "zth"])
def test_digitize_into_an_unwritable_folder(tmp_path, unwritable, zth):
    out = unwritable / "soa.csv"
    result = runner.invoke(app, [*picked_args(tmp_path), *(["--zth"] if zth else []), "--into", str(out)])
    one_line_exit_2(result, str(out), "Permission denied")


def test_digitize_output_that_is_a_folder(tmp_path):
    result = runner.invoke(app, [*picked_args(tmp_path), "--into", str(tmp_path)])
    one_line_exit_2(result, "is a folder")


def test_new_part_makes_missing_folders(tmp_path):
    into = tmp_path / "my-parts" / "bench"
    result = runner.invoke(app, [*NEW_PART, "--into", str(into)])
    assert result.exit_code == 0, result.output
    assert lint_part(into / "lab-npn-3") == []


def test_new_part_into_a_file(tmp_path):
    blocker = tmp_path / "my-parts"
    blocker.write_text("not a folder")
    one_line_exit_2(runner.invoke(app, [*NEW_PART, "--into", str(blocker)]), str(blocker))


def test_new_part_where_the_part_folder_is_a_file(tmp_path):
    (tmp_path / "lab-npn-3").write_text("not a folder")
    one_line_exit_2(runner.invoke(app, [*NEW_PART, "--into", str(tmp_path), "--force"]), "is a file")


def test_new_part_into_an_unwritable_folder(unwritable):
    one_line_exit_2(runner.invoke(app, [*NEW_PART, "--into", str(unwritable)]), "Permission denied")


def test_new_part_into_an_unwritable_part_folder(tmp_path, monkeypatch):
    """An existing part folder nobody may write into (part.toml is written there, not staged beside it)."""
    folder = tmp_path / "lab-npn-3"
    folder.mkdir()
    (folder / "soa.csv").write_text(REFERENCE_SOA)
    import errno
    import tempfile

    real = tempfile.mkstemp

    def refuse(*args, dir=None, **kwargs):
        if dir is not None and Path(dir) == folder:
            raise PermissionError(errno.EACCES, "Permission denied", str(dir))
        return real(*args, dir=dir, **kwargs)

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    one_line_exit_2(runner.invoke(app, [*NEW_PART, "--into", str(tmp_path)]), "Permission denied")
    assert (folder / "soa.csv").read_text() == REFERENCE_SOA
