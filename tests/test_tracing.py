"""Tracing black curves on synthetic datasheet pictures, checked against the drawing's own data.

Each picture is drawn with matplotlib (a reference plotting library) from known curves
(tests/pictures.py): black curves on a grey log-log grid, a framed plot with ticks and
labels. The known vertices are the reference; tolerances are stated in pixels of the
drawing and converted to decades.
"""

from __future__ import annotations

import math
import shlex
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from soacheck.broken_lines import heading_at, piece_middles
from soacheck.calibration import AxisCalibration, decades_disagree
from soacheck.cli import app
from soacheck.images import read_image
from soacheck.lint import lint_part
from soacheck.partfiles import read_part
from soacheck.picture import decades_seen
from soacheck.tracing import OVERLAY_COLOUR
from soacheck.vertices import merge_straight, sharpen, simplify

from .pictures import CURVES, DC, PULSE_1MS, PULSE_100US, KnownCurve, Sheet, draw_sheet

runner = CliRunner(env={"COLUMNS": "200"})

RANGES = ["--x-range", "1:100", "--y-range", "0.1:100"]
# seeds read off the picture by eye: on each curve's own stretch (not the shared 40 A line)
SEEDS = {"dc": "20:6.2", "10ms": "15:12", "1ms": "20:20", "100us": "60:18"}


def pixels_per_decade(sheet) -> float:
    """The coarser axis's pixels per decade in the drawing (from matplotlib's transform)."""
    (x1, x2), (y1, y2) = sheet.pixel([1.0, 100.0], [0.1, 100.0])
    return min(abs(x2 - x1) / 2, abs(y2 - y1) / 3)


@pytest.fixture(scope="module", params=["png", "jpg"])
def sheet(request, tmp_path_factory):
    """All four known curves, two of them touching along the 40 A line, as PNG and as JPEG (quality 75)."""
    return draw_sheet(tmp_path_factory.mktemp("sheet") / f"sheet.{request.param}", CURVES)


@pytest.fixture(scope="module")
def traced(sheet, tmp_path_factory):
    """The four curves traced from their seeds once per picture, with an overlay: (rows, result, overlay)."""
    folder = tmp_path_factory.mktemp("traced")
    out, overlay = folder / "soa.csv", folder / "check.png"
    traces = [arg for pulse, seed in SEEDS.items() for arg in ("--trace", f"{seed}={pulse}")]
    result = runner.invoke(
        app, ["digitize", "--image", str(sheet.path), *RANGES, *traces, "--into", str(out), "--overlay", str(overlay)]
    )
    assert result.exit_code == 0, result.output
    return pd.read_csv(out), result, overlay


@pytest.mark.parametrize("known", CURVES, ids=[c.pulse for c in CURVES])
def test_traced_vertices_are_the_drawn_vertices(traced, sheet, known: KnownCurve):
    rows, _, _ = traced
    curve = rows[rows["pulse"] == known.pulse]
    # one vertex per drawn vertex: the corners, and the ends at the frame (1 V and 100 V)
    assert curve["voltage"].size == len(known.voltage_v), curve
    # within 1.5 px of the drawing on its coarser axis (antialiasing and JPEG noise), as a
    # ratio of values; plus the 4-digit rounding of soa.csv
    tolerance = 10 ** (1.5 / pixels_per_decade(sheet)) - 1 + 1e-3
    assert curve["voltage"].to_numpy() == pytest.approx(known.voltage_v, rel=tolerance)
    assert curve["current"].to_numpy() == pytest.approx(known.current_a, rel=tolerance)


def test_the_printout_gives_vertices_and_largest_distance_per_curve(traced):
    _, result, _ = traced
    for pulse in SEEDS:
        line = next(line for line in result.stdout.splitlines() if line.startswith(f"{pulse}:"))
        assert "vertices" in line and "px" in line and "decade" in line
        distance_px = float(line.split("within ")[1].split(" px")[0])
        assert distance_px <= 1.5  # the Douglas-Peucker tolerance is 0.005 decade, about 0.6 px here


def test_a_seed_between_two_curves_takes_the_nearer_and_says_so(tmp_path, sheet):
    # at 12 V the 1 ms curve is at 33.3 A (40 A x 10/12) and the 100 us curve at 40 A, about
    # 10 px apart; a seed a third of the way up (in log) lies nearer the 1 ms curve
    v = 12.0
    low, high = PULSE_1MS.current_at(np.array([v]))[0], PULSE_100US.current_at(np.array([v]))[0]
    seed_i = low * (high / low) ** (1 / 3)
    out = tmp_path / "soa.csv"
    result = runner.invoke(
        app, ["digitize", "--image", str(sheet.path), *RANGES, "--trace", f"{v:g}:{seed_i:.2f}=1ms", "--into", str(out)]
    )
    assert result.exit_code == 0, result.output
    assert "between two curves" in result.stderr and f"{v:g}:{seed_i:.2f} (1ms)" in result.stderr
    rows = pd.read_csv(out)
    assert rows["voltage"].to_numpy() == pytest.approx(PULSE_1MS.voltage_v, rel=0.03)  # the 1 ms curve
    assert rows["current"].to_numpy() == pytest.approx(PULSE_1MS.current_a, rel=0.03)


def test_a_seed_far_from_any_curve_exits_2_naming_it(tmp_path, sheet):
    out = tmp_path / "soa.csv"
    result = runner.invoke(
        app,
        [
            "digitize",
            "--image",
            str(sheet.path),
            *RANGES,
            "--trace",
            "20:6.2=dc",
            "--trace",
            "2:0.5=1ms",
            "--into",
            str(out),
        ],
    )
    assert result.exit_code == 2, result.output
    assert "2:0.5 (1ms)" in result.stderr and "no curve within" in result.stderr
    assert "Traceback" not in result.output and not out.exists()  # nothing written when one seed fails


def test_touching_curves_each_keep_their_own_corner(traced):
    """The 1 ms and 100 us curves share the 40 A line up to 10 V; each keeps its own bend."""
    rows, _, _ = traced
    one_ms = rows[rows["pulse"] == "1ms"]
    short = rows[rows["pulse"] == "100us"]
    assert one_ms["voltage"].iloc[1] == pytest.approx(10.0, rel=0.03)  # drawn at 10 V
    assert short["voltage"].iloc[1] == pytest.approx(30.0, rel=0.03)  # drawn at 30 V


def test_a_range_that_disagrees_with_the_grid_is_refused(tmp_path, sheet):
    # the drawing's y axis spans 0.1 A to 100 A: three decades of grid
    out = tmp_path / "soa.csv"
    result = runner.invoke(
        app,
        [
            "digitize",
            "--image",
            str(sheet.path),
            "--x-range",
            "1:100",
            "--y-range",
            "0.1:10",
            "--trace",
            "20:6.2=dc",
            "--into",
            str(out),
        ],
    )
    assert result.exit_code == 2, result.output
    assert "--y-range 0.1:10 spans 2 decade(s)" in result.stderr and "grid shows 3" in result.stderr


def test_the_overlay_draws_each_vertex_over_the_picture(traced, sheet):
    rows, _, overlay = traced
    picture = read_image(overlay)
    assert picture.shape[:2] == read_image(sheet.path).shape[:2]  # pixel for pixel over the original
    colour = np.array([int(OVERLAY_COLOUR[k : k + 2], 16) / 255 for k in (1, 3, 5)])
    for v, i in zip(rows["voltage"], rows["current"], strict=True):
        column, row = (int(round(float(p[0]))) for p in sheet.pixel(v, i))
        # the vertex's marker ring (4 pt across) lies within 4 px of it
        near = picture[max(row - 4, 0) : row + 5, max(column - 4, 0) : column + 5].reshape(-1, 3)
        assert np.min(np.linalg.norm(near - colour, axis=1)) < 0.2, (v, i)


def test_a_zth_curve_is_traced_into_zth_csv(tmp_path):
    # an invented single-pulse Zth curve: rising, flattening towards 1 K/W
    zth = KnownCurve("", (1e-5, 1e-3, 1e-1, 10.0), (0.02, 0.15, 0.7, 1.0))
    sheet = draw_sheet(tmp_path / "zth.png", (zth,), x_range=(1e-5, 10.0), y_range=(0.01, 2.0))
    out = tmp_path / "zth.csv"
    result = runner.invoke(
        app,
        [
            "digitize",
            "--image",
            str(sheet.path),
            "--zth",
            "--x-range",
            "1e-5:10",
            "--y-range",
            "0.01:2",
            "--trace",
            "1e-3:0.15",
            "--into",
            str(out),
        ],
    )
    assert result.exit_code == 0, result.output
    rows = pd.read_csv(out)
    truth = zth.current_at(rows["time"].to_numpy())
    assert rows["zth"].to_numpy() == pytest.approx(truth, rel=0.02)  # 1.5 px of ~80 px/decade ≈ 4 %; typical 1 %
    assert rows["time"].iloc[0] == pytest.approx(1e-5, rel=0.05) and rows["time"].iloc[-1] == pytest.approx(
        10, rel=0.05
    )


# --------------------------------------------------------------------------- the pieces


def test_douglas_peucker_keeps_corners_of_a_noisy_polyline():
    """Points along two straight lines (slope 0 then -1) with ±0.001 noise keep one corner."""
    x = np.linspace(0.0, 2.0, 401)
    y = np.where(x < 1.0, 1.0, 2.0 - x) + 0.001 * np.sin(37 * x)
    keep = simplify(x, y, 0.005)
    assert x[keep] == pytest.approx([0.0, 1.0, 2.0], abs=0.011)


def test_sharpen_moves_a_cut_corner_to_the_crossing_of_its_lines():
    """A corner rounded over ±0.03 in x (a line join) moves to where the two lines cross, x = 1."""
    x = np.linspace(0.0, 2.0, 401)
    y = np.where(x < 1.0, 1.0, 2.0 - x)
    rounded = np.abs(x - 1.0) < 0.03
    y[rounded] -= 0.01  # the join pulls the corner inward
    keep = simplify(x, y, 0.005)
    vx, vy = sharpen(x, y, keep, np.ones(x.size, bool), margin=10, tolerance=0.005)
    assert vx == pytest.approx([0.0, 1.0, 2.0], abs=1e-9)
    assert vy == pytest.approx([1.0, 1.0, 0.0], abs=1e-9)


def test_decades_from_a_log_grid_with_minor_lines():
    """Grid lines at log10(k) for k = 1..9 in each of three decades of 100 px: 3 decades across 300 px."""
    k = np.arange(1, 10)
    positions = np.concatenate([100 * (d + np.log10(k)) for d in range(3)] + [np.array([300.0])])
    assert decades_seen(positions, 300.0) == pytest.approx(3.0)
    majors = np.array([0.0, 100.0, 200.0, 300.0])
    assert decades_seen(majors, 300.0) == pytest.approx(3.0)
    axis = AxisCalibration(0.0, 0.1, 300.0, 10.0)  # two decades given
    assert "grid shows 3" in decades_disagree(axis, 3.0, "--y-range 0.1:10")
    assert decades_disagree(AxisCalibration(0.0, 0.1, 300.0, 100.0), 3.02, "--y-range") is None


def test_calibration_pixel_is_the_inverse_of_value():
    axis = AxisCalibration(10.0, 1.0, 310.0, 1000.0)
    assert axis.pixel(axis.value([10.0, 110.0, 250.0])) == pytest.approx([10.0, 110.0, 250.0])
    assert axis.pixel(10.0) == pytest.approx(110.0)  # one decade of three over 300 px
    assert math.isclose(axis.decades, 3.0)


def test_the_touching_pair_exists_in_the_drawing():
    """The reference: 1 ms and 100 us share the 40 A line from 1 V to 10 V (so the touching test means something)."""
    v = np.array([1.0, 5.0, 10.0])
    assert PULSE_1MS.current_at(v) == pytest.approx(PULSE_100US.current_at(v))


# --------------------------------------------------------------------------- the overlay's folder


@pytest.fixture(scope="module")
def small_sheet(tmp_path_factory):
    return draw_sheet(tmp_path_factory.mktemp("small") / "sheet.png", (DC,), size_in=(4.0, 3.0))


def overlay_args(sheet, out, overlay):
    return [
        "digitize",
        "--image",
        str(sheet.path),
        *RANGES,
        "--trace",
        "20:6.2=dc",
        "--into",
        str(out),
        "--overlay",
        str(overlay),
    ]


def test_the_overlay_folder_is_made(tmp_path, small_sheet):
    overlay = tmp_path / "checks" / "today" / "check.png"
    result = runner.invoke(app, overlay_args(small_sheet, tmp_path / "soa.csv", overlay))
    assert result.exit_code == 0, result.output
    assert read_image(overlay).shape[:2] == read_image(small_sheet.path).shape[:2]


def test_an_overlay_under_a_file_exits_2_in_one_line(tmp_path, small_sheet):
    blocker = tmp_path / "checks"
    blocker.write_text("a file")
    result = runner.invoke(app, overlay_args(small_sheet, tmp_path / "soa.csv", blocker / "check.png"))
    assert result.exit_code == 2, result.output
    assert result.stderr.strip().count("\n") == 0 and str(blocker) in result.stderr
    assert not (tmp_path / "soa.csv").exists()  # the overlay comes first: nothing half-written


def test_an_existing_overlay_needs_force(tmp_path, small_sheet):
    overlay = tmp_path / "check.png"
    overlay.write_bytes(b"mine")
    result = runner.invoke(app, overlay_args(small_sheet, tmp_path / "soa.csv", overlay))
    assert result.exit_code == 2 and "--force" in result.stderr
    assert overlay.read_bytes() == b"mine"


# --------------------------------------------------------------------------- the documented path


def documented_authoring_path() -> list[list[str]]:
    """The commands of docs/part-format.md's authoring path, in the order written."""
    text = (Path(__file__).parents[1] / "docs" / "part-format.md").read_text(encoding="utf-8")
    block = text.split("<!-- authoring-path")[1].split("```sh\n")[1].split("```")[0]
    return [shlex.split(line) for line in block.splitlines() if line.strip()]


def test_the_documented_authoring_path_runs_from_an_empty_folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    # the picture the text describes, drawn here from the known curves (examples/sheet.png
    # is the same drawing, written by tools/make_example_sheet.py)
    (tmp_path / "examples").mkdir()
    draw_sheet(tmp_path / "examples" / "sheet.png", (DC, PULSE_1MS))
    commands = documented_authoring_path()
    assert [argv[1] for argv in commands] == ["digitize", "new-part", "lint", "check"]
    for argv in commands:
        assert argv[0] == "soacheck"
        result = runner.invoke(app, argv[1:])
        assert result.exit_code == 0, (argv, result.output)
    part = read_part(tmp_path / "my-parts" / "lab-npn-a")
    # the traced curves, not a synthesized one: the drawn vertices within 3 % (1.5 px, see above)
    for known in (DC, PULSE_1MS):
        curve = next(c for c in part.curves if (c.pulse_s == math.inf) == (known.pulse == "dc"))
        assert curve.voltage_v == pytest.approx(known.voltage_v, rel=0.03)
        assert curve.current_a == pytest.approx(known.current_a, rel=0.03)
    assert lint_part(tmp_path / "my-parts" / "lab-npn-a") == []
    assert (tmp_path / "check.png").is_file()


def test_sharpen_drops_a_bump_on_a_straight_line():
    """A straight line with a 0.006 dip over 0.04 (a touching curve pulls the middle) stays one segment."""
    x = np.linspace(0.0, 2.0, 401)
    y = np.full(x.size, 1.0)
    y[np.abs(x - 1.0) < 0.02] -= 0.006
    keep = simplify(x, y, 0.005)
    assert keep.size > 2  # Douglas-Peucker alone keeps the dip
    vx, vy = sharpen(x, y, keep, np.ones(x.size, bool), margin=10, tolerance=0.005)
    assert vx == pytest.approx([0.0, 2.0])
    # the refitted line takes in the dip: 9 of 401 points 0.006 low pull it down by 1.3e-4
    assert vy == pytest.approx([1.0, 1.0], abs=2e-4)


def test_an_overlay_in_an_unwritable_folder_exits_2_in_one_line(tmp_path, small_sheet, unwritable):
    result = runner.invoke(app, overlay_args(small_sheet, tmp_path / "soa.csv", unwritable / "check.png"))
    assert result.exit_code == 2, result.output
    assert result.stderr.strip().count("\n") == 0 and "Permission denied" in result.stderr


def test_a_rerun_replaces_its_own_overlay_without_force(tmp_path, small_sheet):
    overlay = tmp_path / "check.png"
    first = runner.invoke(app, overlay_args(small_sheet, tmp_path / "a" / "soa.csv", overlay))
    assert first.exit_code == 0, first.output
    again = runner.invoke(app, overlay_args(small_sheet, tmp_path / "b" / "soa.csv", overlay))
    assert again.exit_code == 0, again.output  # soacheck marked the PNG it wrote (issue 14)


# --------------------------------------------------------------------------- crossings and a vertical end

FALLING = KnownCurve("dc", (1.0, 100.0), (30.0, 0.3))  # slope -1 across the whole frame
RISING = KnownCurve("1ms", (1.0, 100.0), (0.5, 50.0))  # slope +1: crosses FALLING near 7.7 V
# a curve that ends in a vertical line down to the frame at 60 V (the voltage rating drawn out)
VERTICAL_END = KnownCurve("10ms", (1.0, 10.0, 60.0, 60.0), (20.0, 20.0, 10 * 20 / 60, 0.1))


@pytest.fixture(scope="module", params=["png", "jpg"])
def crossings(request, tmp_path_factory):
    """Three curves crossing one another: FALLING crosses RISING, VERTICAL_END's current limit and its vertical."""
    return draw_sheet(tmp_path_factory.mktemp("cross") / f"cross.{request.param}", (FALLING, RISING, VERTICAL_END))


@pytest.mark.parametrize(
    ("known", "seed", "vertices"),
    [
        (FALLING, "3:10=dc", FALLING),
        (RISING, "3:1.5=1ms", RISING),
        # the vertical line is not part of the curve: it ends where the line turns down
        (VERTICAL_END, "30:6.67=10ms", KnownCurve("10ms", (1.0, 10.0, 60.0), (20.0, 20.0, 10 * 20 / 60))),
    ],
    ids=["falling", "rising", "vertical-end"],
)
def test_a_trace_goes_straight_through_crossings(tmp_path, crossings, known, seed, vertices):
    out = tmp_path / "soa.csv"
    result = runner.invoke(
        app, ["digitize", "--image", str(crossings.path), *RANGES, "--trace", seed, "--into", str(out)]
    )
    assert result.exit_code == 0, result.output
    rows = pd.read_csv(out)
    tolerance = 10 ** (1.5 / pixels_per_decade(crossings)) - 1 + 1e-3  # 1.5 px, as above
    assert rows["voltage"].to_numpy() == pytest.approx(vertices.voltage_v, rel=tolerance)
    assert rows["current"].to_numpy() == pytest.approx(vertices.current_a, rel=tolerance)


def test_pixel_ticks_trace_a_picture_without_a_frame(tmp_path):
    """No frame drawn: --x/--y pixel ticks (from matplotlib's transform) calibrate, the curve ends where its line does."""
    sheet = draw_sheet(tmp_path / "bare.png", (DC,), frame=False)
    (x1, x2), (y1, y2) = sheet.pixel([1.0, 100.0], [0.1, 100.0])
    out = tmp_path / "soa.csv"
    result = runner.invoke(
        app,
        [
            "digitize",
            "--image",
            str(sheet.path),
            "--x",
            f"{x1:.2f}=1,{x2:.2f}=100",
            "--y",
            f"{y1:.2f}=0.1,{y2:.2f}=100",
            "--trace",
            "20:6.2=dc",
            "--into",
            str(out),
        ],
    )
    assert result.exit_code == 0, result.output
    rows = pd.read_csv(out)
    tolerance = 10 ** (1.5 / pixels_per_decade(sheet)) - 1 + 1e-3  # 1.5 px, as above
    assert rows["voltage"].to_numpy() == pytest.approx(DC.voltage_v, rel=tolerance)
    assert rows["current"].to_numpy() == pytest.approx(DC.current_a, rel=tolerance)
    refused = runner.invoke(
        app,
        ["digitize", "--image", str(sheet.path), *RANGES, "--trace", "20:6.2=dc", "--into", str(tmp_path / "b.csv")],
    )
    assert refused.exit_code == 2 and "no plot frame found" in refused.stderr  # ranges need the frame's edges


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--trace", "20=dc"], "'20=dc' is not a seed"),
        (["--trace", "a:b=dc"], "'a:b=dc' is not a seed"),
        (["--trace", "20:5"], "names no pulse width"),
        (["--trace", "20:5=1xs"], "1xs"),
        (["--trace", "-1:5=dc"], "above zero"),
        (["--trace", "nan:5=dc"], "finite"),
        (["--trace", "20:6.2=dc", "--trace", "30:4=DC"], "given twice"),
        (["--trace", "20:6.2=dc", "--zth"], "no pulse width"),
        (["--trace", "500:6.2=dc"], "outside the plot's frame"),
        (["--trace", "20:6.2=dc", "--x", "1=1,2=10"], "not both"),
        (["--trace", "20:6.2=dc", "--linear-y"], "log-log"),
        (["--trace", "20:6.2=dc", "--colour", "#000000"], "leave out"),
        (["--overlay", "check.png", "--x", "1=1,2=10", "--y", "1=1,2=10", "--colour", "#000000"], "--overlay"),
    ],
    ids=lambda v: v if isinstance(v, str) else " ".join(v),
)
def test_bad_tracing_input_is_one_line_and_exit_2(tmp_path, small_sheet, args, fragment):
    base = ["digitize", "--image", str(small_sheet.path), "--into", str(tmp_path / "soa.csv")]
    ranges = [] if "--overlay" in args else RANGES
    result = runner.invoke(app, [*base, *ranges, *args])
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and fragment in lines[0], result.stderr
    assert not (tmp_path / "soa.csv").exists()


@pytest.mark.parametrize(
    ("x_range", "fragment"), [("100:1", "the lower first"), ("0:100", "above zero"), ("1-100", "LOW:HIGH")]
)
def test_bad_ranges_are_one_line_and_exit_2(tmp_path, small_sheet, x_range, fragment):
    result = runner.invoke(
        app,
        [
            "digitize",
            "--image",
            str(small_sheet.path),
            "--x-range",
            x_range,
            "--y-range",
            "0.1:100",
            "--trace",
            "20:6.2=dc",
            "--into",
            str(tmp_path / "soa.csv"),
        ],
    )
    assert result.exit_code == 2 and fragment in result.stderr and "--x-range" in result.stderr, result.output


@pytest.mark.parametrize("suffix", ["png", "jpg"])
def test_a_black_grid_is_not_a_curve(tmp_path, suffix):
    """Grid lines as black as the curves (thinner): taken out as long lines across the frame, and crossed."""
    sheet = draw_sheet(tmp_path / f"black-grid.{suffix}", CURVES, grid_grey=(0.0, 0.0))
    out = tmp_path / "soa.csv"
    traces = [arg for pulse, seed in SEEDS.items() for arg in ("--trace", f"{seed}={pulse}")]
    result = runner.invoke(app, ["digitize", "--image", str(sheet.path), *RANGES, *traces, "--into", str(out)])
    assert result.exit_code == 0, result.output
    rows = pd.read_csv(out)
    tolerance = 10 ** (1.5 / pixels_per_decade(sheet)) - 1 + 1e-3  # 1.5 px, as above
    for known in CURVES:
        curve = rows[rows["pulse"] == known.pulse]
        assert curve["voltage"].to_numpy() == pytest.approx(known.voltage_v, rel=tolerance), known.pulse
        assert curve["current"].to_numpy() == pytest.approx(known.current_a, rel=tolerance), known.pulse


def test_merge_straight_drops_a_kink_within_one_slope_band():
    """The vertex at x = 1 (slope 0 then 0.01: 0.005 off the joining line) goes; the corner at x = 2 stays."""
    x = np.linspace(0.0, 3.0, 301)
    y = np.where(x < 1.0, 0.0, 0.01 * (x - 1.0))
    y = np.where(x < 2.0, y, 0.01 - (x - 2.0))
    vx, vy = merge_straight(np.array([0.0, 1.0, 2.0, 3.0]), np.array([0.0, 0.0, 0.01, -0.99]), x, y, 0.005)
    assert vx == pytest.approx([0.0, 2.0, 3.0]) and vy == pytest.approx([0.0, 0.01, -0.99])


# --------------------------------------------------------------------------- dashed and dotted curves


def largest_error_decades(known: KnownCurve, voltage_v: np.ndarray, current_a: np.ndarray) -> float:
    """Largest difference in log10 current between a traced polyline and the drawn curve, 1 V to 100 V.

    Both are straight between vertices on log-log axes; compared at 2000 voltages over the
    drawn curve's whole span (the polyline's own ends extended flat would hide a short trace,
    so the span is checked apart).
    """
    v = np.logspace(np.log10(known.voltage_v[0]), np.log10(known.voltage_v[-1]), 2000)
    traced = np.interp(np.log10(v), np.log10(voltage_v), np.log10(current_a))
    return float(np.abs(traced - np.log10(known.current_at(v))).max())


def trace_rows(sheet, seeds: dict[str, str], out: Path) -> pd.DataFrame:
    """Trace ``seeds`` (pulse: "V:I") in ``sheet`` through the CLI, the rows written."""
    traces = [arg for pulse, seed in seeds.items() for arg in ("--trace", f"{seed}={pulse}")]
    result = runner.invoke(app, ["digitize", "--image", str(sheet.path), *RANGES, *traces, "--into", str(out)])
    assert result.exit_code == 0, result.output
    return pd.read_csv(out)


@pytest.mark.parametrize("suffix", ["png", "jpg"])
@pytest.mark.parametrize("dpi", [100, 200])
@pytest.mark.parametrize("linestyle", ["--", ":"], ids=["dashed", "dotted"])
def test_a_dashed_or_dotted_curve_is_traced_end_to_end(tmp_path, linestyle, dpi, suffix):
    """A pulse curve drawn dashed (matplotlib '--': dashes 3.7, gaps 1.6 line widths) or dotted
    (':': dots 1, gaps 1.65 line widths) beside a solid DC curve, as datasheets draw them.

    Its two corners (10 V, 40 V) may fall in a gap. The trace must run from frame to frame
    (1 V to 100 V, within 2 px) and stay within 0.01 decade of the drawn curve everywhere:
    the accuracy target of solid curves (issue 17, benchmarks/digitize_accuracy.py), which
    at 100 dpi is about 1.2 px on the current axis (124 px a decade).
    """
    broken = replace(PULSE_1MS, linestyle=linestyle)
    sheet = draw_sheet(tmp_path / f"sheet.{suffix}", (DC, broken), dpi=dpi)
    rows = trace_rows(sheet, {"dc": SEEDS["dc"], "1ms": SEEDS["1ms"]}, tmp_path / "soa.csv")
    curve = rows[rows["pulse"] == "1ms"]
    v, i = curve["voltage"].to_numpy(), curve["current"].to_numpy()
    ends_px = np.abs(np.log10(v[[0, -1]] / np.array([1.0, 100.0]))) * pixels_per_decade(sheet)
    assert np.all(ends_px <= 2.0), (v, i)
    assert largest_error_decades(broken, v, i) <= 0.01, (v, i)
    assert len(v) == len(broken.voltage_v), curve  # the corners, no vertex at a dash's end


PARALLEL_RATIO = 1.15  # 0.061 decade apart: 7.5 px at 100 dpi, 15 px at 200 dpi; a gap of 1.6 line widths is 3.3 px


@pytest.mark.parametrize("dpi", [100, 200])
@pytest.mark.parametrize("linestyle", ["--", ":"], ids=["dashed", "dotted"])
def test_two_dashed_curves_close_together_are_not_merged(tmp_path, linestyle, dpi):
    """Two parallel broken curves of slope -1, 0.061 decade apart (closer than twice a gap's length
    at 200 dpi): each seed's trace stays on its own curve, within 0.01 decade, frame to frame.

    Tracing one onto the other would be off by log10(1.15) = 0.061 decade somewhere.
    """
    lower = KnownCurve("dc", (1.0, 100.0), (30.0, 0.3), linestyle)
    upper = KnownCurve("1ms", (1.0, 100.0), (30.0 * PARALLEL_RATIO, 0.3 * PARALLEL_RATIO), linestyle)
    sheet = draw_sheet(tmp_path / "pair.png", (lower, upper), dpi=dpi)
    seeds = {
        "dc": f"5:{lower.current_at(np.array([5.0]))[0]:.3f}",
        "1ms": f"20:{upper.current_at(np.array([20.0]))[0]:.3f}",
    }
    rows = trace_rows(sheet, seeds, tmp_path / "soa.csv")
    for known in (lower, upper):
        curve = rows[rows["pulse"] == known.pulse]
        v, i = curve["voltage"].to_numpy(), curve["current"].to_numpy()
        assert v[0] == pytest.approx(1.0, rel=0.02) and v[-1] == pytest.approx(100.0, rel=0.02), curve
        assert largest_error_decades(known, v, i) <= 0.01, curve


def test_the_documented_dashed_example_traces_to_its_drawn_curve(tmp_path):
    """examples/sheet-dashed.png (tools/make_example_sheet.py: DC solid, 1 ms dashed, 100 dpi), traced
    with the seeds docs/part-format.md gives: the dashed curve within 0.01 decade of the drawing, frame
    to frame, with its four vertices."""
    sheet = Sheet(Path(__file__).resolve().parents[1] / "examples" / "sheet-dashed.png", (DC, PULSE_1MS), None)
    rows = trace_rows(sheet, {"dc": SEEDS["dc"], "1ms": SEEDS["1ms"]}, tmp_path / "soa.csv")
    for known in (DC, PULSE_1MS):
        curve = rows[rows["pulse"] == known.pulse]
        v, i = curve["voltage"].to_numpy(), curve["current"].to_numpy()
        assert len(v) == len(known.voltage_v), curve
        assert v[0] == pytest.approx(1.0, rel=0.02) and v[-1] == pytest.approx(100.0, rel=0.02), curve
        assert largest_error_decades(known, v, i) <= 0.01, curve


def dotted_mask(slope: float, offset_row: float = 0.0, *, every: int = 8, shape=(200, 240)) -> np.ndarray:
    """3 x 3 px dots centred on row = 60 + offset_row + slope * (column - 20), one every ``every`` columns."""
    mask = np.zeros(shape, dtype=bool)
    for column in range(20, shape[1] - 20, every):
        row = int(round(60 + offset_row + slope * (column - 20)))
        mask[row - 1 : row + 2, column - 1 : column + 2] = True
    return mask


def test_the_heading_at_a_dot_is_the_line_through_the_dots_in_line_beside_it():
    """Dots every 8 columns on a line of slope 0.5 (4 rows a step: whole pixels, so their centres are
    exact): the heading at a dot is 0.5, with a parallel dotted line 9 px below; on a solid line there is
    none (its own columns give it)."""
    dots = dotted_mask(0.5) | dotted_mask(0.5, offset_row=9.0)
    assert heading_at(dots, 60 + 0.5 * 80, 100.0, 3.0) == pytest.approx(0.5, abs=1e-9)  # the dot at column 100
    solid = np.zeros((200, 240), dtype=bool)
    solid[99:102, 10:230] = True
    assert heading_at(solid, 100.0, 120.0, 3.0) is None


def test_piece_middles_drop_the_ends_of_dashes_and_take_a_dots_centre():
    """A line row = 2 + 0.3 column in two dashes (columns 0-9, 15-24) whose end columns lean 1 px off,
    and a dot (columns 30, 31) whose two columns lie flat at the line's row at 30.5: the points kept lie
    on the line exactly, the dot as one point at (30.5, 2 + 0.3 x 30.5); an unbroken curve is untouched."""

    def line(c):
        return 2 + 0.3 * c

    column = np.r_[np.arange(10), np.arange(15, 25), 30, 31].astype(float)
    row = line(column)
    for end in (0, 9, 10, 19):
        row[end] += 1.0  # a dash's end leans off the line
    row[20:] = line(30.5)
    ink = np.ones(column.size)
    c, r, clear = piece_middles(column, row, np.ones(column.size, bool), ink, 2.0)
    assert r == pytest.approx(line(c), abs=1e-9)
    assert 30.5 in c and c.size < column.size and clear.all()
    solid = np.arange(10.0)
    assert piece_middles(solid, line(solid), np.ones(10, bool), np.ones(10), 2.0)[0] is solid
