"""Accuracy of seeded tracing on synthetic datasheet pictures with known curves.

Draws SOA pictures with matplotlib (tests/pictures.py: black curves on a log-log grid,
frame, ticks, labels) with two to four curves, three line widths, a grey grid and a
black one, as PNG and as JPEG (quality 75), at 100 and 200 dpi; traces every curve from a seed read "by eye" (2 %
off the curve in current), and compares the traced vertices with the drawn ones:

- the largest error in log10 current along each curve (straight lines between vertices
  on log-log axes, both sides), over the voltages both cover, in decades;
- whether the trace ran end to end: both ends within 2 px of the drawn ends.

Target (issue 17, black curves on a grey grid): every curve end to end, largest error
under 0.01 decade at 100 dpi and better; the black grid (as dark as the curves) is
measured beside it. Broken curves are measured too, on the grey grid: the pulse curves
drawn dashed (matplotlib ``--``) or dotted (``:``) beside a solid DC curve, as datasheets
draw them, against the same target. Run: ``python benchmarks/digitize_accuracy.py``; the
last lines give the verdicts.
"""

from __future__ import annotations

import sys
import tempfile
from dataclasses import replace
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from soacheck.calibration import Seed, range_calibration  # noqa: E402
from soacheck.images import read_image  # noqa: E402
from soacheck.picture import find_frame, grey_levels  # noqa: E402
from soacheck.tracing import trace_curves  # noqa: E402
from tests.pictures import CURVES, DC, PULSE_1MS, PULSE_10MS, X_RANGE, Y_RANGE, draw_sheet  # noqa: E402

SEED_VOLTAGE = {"dc": 20.0, "10ms": 15.0, "1ms": 20.0, "100us": 60.0}  # on each curve's own stretch
EYE_ERROR = 1.02  # a seed read by eye: 2 % above the curve
SETS = {2: (DC, PULSE_1MS), 3: (DC, PULSE_10MS, PULSE_1MS), 4: CURVES}
WIDTHS_PT = (1.0, 1.5, 2.5)
DPIS = (100, 200)
FORMATS = ("png", "jpg")
GRIDS = {"grey": (0.65, 0.82), "black": (0.0, 0.0)}  # grey levels of major and minor grid lines
STYLES = {"solid": "-", "dashed": "--", "dotted": ":"}  # the pulse curves' line; DC stays solid


def measure(path: Path, curves, dpi: int) -> list[tuple[str, float, bool]]:
    """Per curve: its pulse, the largest error in log current [decades], traced end to end."""
    grey = grey_levels(read_image(path))
    frame = find_frame(grey)
    x_axis = range_calibration(frame.left, frame.right, X_RANGE, log=True)
    y_axis = range_calibration(frame.bottom, frame.top, Y_RANGE, log=True)
    seeds = [
        Seed(SEED_VOLTAGE[c.pulse], float(c.current_at(np.array([SEED_VOLTAGE[c.pulse]]))[0]) * EYE_ERROR, c.pulse)
        for c in curves
    ]
    traced = trace_curves(grey, frame, seeds, x_axis, y_axis)
    px_per_decade_x = abs(frame.right - frame.left) / np.log10(X_RANGE[1] / X_RANGE[0])
    results = []
    for known, curve in zip(curves, traced, strict=True):
        lo = max(np.log10(known.voltage_v[0]), np.log10(curve.x[0]))
        hi = min(np.log10(known.voltage_v[-1]), np.log10(curve.x[-1]))
        v = 10 ** np.linspace(lo, hi, 2000)
        traced_i = np.interp(np.log10(v), np.log10(curve.x), np.log10(curve.y))
        error = float(np.abs(traced_i - np.log10(known.current_at(v))).max())
        ends_px = np.abs(np.log10(curve.x[[0, -1]]) - np.log10(np.array(known.voltage_v)[[0, -1]])) * px_per_decade_x
        results.append((known.pulse, error, bool(np.all(ends_px <= 2.0))))
    return results


def styled(curves, style: str):
    """The curves with every pulse curve drawn in ``style``; DC stays solid."""
    return tuple(c if c.pulse == "dc" else replace(c, linestyle=STYLES[style]) for c in curves)


def main() -> None:
    rows = []
    with tempfile.TemporaryDirectory() as folder:
        for dpi in DPIS:
            for fmt in FORMATS:
                for grid, grid_grey in GRIDS.items():
                    for style in STYLES if grid == "grey" else ("solid",):
                        for width in WIDTHS_PT:
                            for count, plain in SETS.items():
                                curves = styled(plain, style)
                                path = Path(folder) / f"sheet-{dpi}-{grid}-{style}-{width}-{count}.{fmt}"
                                draw_sheet(path, curves, dpi=dpi, line_width_pt=width, grid_grey=grid_grey)
                                for pulse, error, whole in measure(path, curves, dpi):
                                    rows.append((dpi, fmt, grid, style, width, count, pulse, error, whole))
    header = (
        f"{'dpi':>4} {'format':>6} {'grid':>5} {'pulses':>6} {'width pt':>8} {'curves':>6} {'curve':>6} "
        f"{'error [decade]':>15}"
    )
    print(header + " end to end")
    for dpi, fmt, grid, style, width, count, pulse, error, whole in rows:
        print(
            f"{dpi:>4} {fmt:>6} {grid:>5} {style:>6} {width:>8.1f} {count:>6} {pulse:>6} {error:>15.4f} "
            f"{'yes' if whole else 'NO'}"
        )
    errors = np.array([r[7] for r in rows])
    whole = np.array([r[8] for r in rows])
    for grid in GRIDS:
        for style in STYLES:
            for dpi in DPIS:
                mine = np.array([r[2] == grid and r[3] == style and r[0] == dpi for r in rows])
                if not mine.any():
                    continue
                print(
                    f"{grid} grid, {style} pulse curves, {dpi} dpi: largest error {errors[mine].max():.4f} decade "
                    f"(median {np.median(errors[mine]):.4f}); {whole[mine].mean():.0%} of {mine.sum()} curves "
                    "traced end to end"
                )
    # the target is set on black curves over a grey grid; the black grid is measured beyond it
    for style in STYLES:
        mine = np.array([r[2] == "grey" and r[3] == style for r in rows])
        met = bool(whole[mine].all() and errors[mine].max() < 0.01)
        print(
            f"grey grid, {style} pulse curves: largest error {errors[mine].max():.4f} decade, "
            f"{whole[mine].mean():.0%} end to end, {np.mean(errors[mine] < 0.01):.0%} within 0.01 decade; target "
            f"(every curve end to end, < 0.01 decade at 100 dpi and better): {'met' if met else 'NOT met'}"
        )


if __name__ == "__main__":
    main()
