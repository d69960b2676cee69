"""Synthetic datasheet SOA pictures drawn with matplotlib from known curves.

The drawing's own data is the reference a traced curve is compared with: black curves on
a grey log-log grid (major and minor lines), a black frame with ticks, tick labels, and a
label beside each curve, as an engineer finds them in datasheets. Used by the tracing
tests and by ``benchmarks/digitize_accuracy.py``.
"""

from __future__ import annotations

import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from matplotlib.figure import Figure
from PIL import Image


@dataclass(frozen=True)
class KnownCurve:
    """A curve as drawn: its pulse width label, its vertices [V], [A] and matplotlib's line style.

    ``linestyle`` is ``"-"`` (solid), ``"--"`` (dashed) or ``":"`` (dotted); matplotlib
    scales the dashes and the gaps with the line width.
    """

    pulse: str
    voltage_v: tuple[float, ...]
    current_a: tuple[float, ...]
    linestyle: str = "-"

    def current_at(self, voltage_v: np.ndarray) -> np.ndarray:
        """The drawn current at ``voltage_v``, straight between vertices on log-log axes. [A]"""
        return 10 ** np.interp(np.log10(voltage_v), np.log10(self.voltage_v), np.log10(self.current_a))


# Invented curves (no datasheet's data): a DC curve with a current limit, a constant-power
# line and a second-breakdown line of slope -2; pulse curves above it. The 1 ms and 100 us
# curves share the 40 A pulsed current limit from 1 V to 10 V: they touch.
DC = KnownCurve("dc", (1.0, 8.3333, 40.0, 100.0), (15.0, 15.0, 3.125, 0.5))
PULSE_10MS = KnownCurve("10ms", (1.0, 5.0, 30.0, 100.0), (25.0, 25.0, 8.0, 1.2))
PULSE_1MS = KnownCurve("1ms", (1.0, 10.0, 40.0, 100.0), (40.0, 40.0, 10.0, 2.0))
PULSE_100US = KnownCurve("100us", (1.0, 30.0, 100.0), (40.0, 40.0, 9.0))
CURVES = (DC, PULSE_10MS, PULSE_1MS, PULSE_100US)

X_RANGE = (1.0, 100.0)  # V at the frame's left and right edges
Y_RANGE = (0.1, 100.0)  # A at the frame's bottom and top edges


@dataclass(frozen=True)
class Sheet:
    """A drawn picture and what a reader knows about it.

    Attributes
    ----------
    path
        The PNG or JPEG file.
    curves
        The curves as drawn.
    pixel
        ``pixel(v, i) -> (column, row)``: matplotlib's own transform, rows counting downward.
    """

    path: Path
    curves: tuple[KnownCurve, ...]
    pixel: object


def draw_sheet(
    path: Path,
    curves: tuple[KnownCurve, ...] = (DC, PULSE_1MS),
    *,
    dpi: int = 100,
    line_width_pt: float = 1.5,
    size_in: tuple[float, float] = (6.0, 4.5),
    x_range: tuple[float, float] = X_RANGE,
    y_range: tuple[float, float] = Y_RANGE,
    jpeg_quality: int = 75,
    frame: bool = True,
    grid_grey: tuple[float, float] = (0.65, 0.82),
) -> Sheet:
    """Draw ``curves`` as a datasheet SOA picture at ``path`` (``.png`` or ``.jpg``).

    ``frame=False`` leaves the frame out; ``grid_grey`` gives the grey levels of the major
    and minor grid lines (0 black).
    """
    fig = Figure(figsize=size_in, dpi=dpi)
    ax = fig.add_axes((0.13, 0.12, 0.82, 0.83))
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlim(*x_range)
    ax.set_ylim(*y_range)
    ax.grid(True, which="major", color=str(grid_grey[0]), linewidth=0.8, snap=False)
    ax.grid(True, which="minor", color=str(grid_grey[1]), linewidth=0.5, snap=False)
    ax.tick_params(which="both", direction="in", top=True, right=True)
    # matplotlib snaps straight lines to whole pixels, moving the frame by up to half a
    # pixel against the curves; a datasheet's frame is where its axis is
    for spine in ax.spines.values():
        spine.set_color("black")
        spine.set_snap(False)
        spine.set_visible(frame)
    for curve in curves:
        ax.plot(
            curve.voltage_v,
            curve.current_a,
            color="black",
            linewidth=line_width_pt,
            linestyle=curve.linestyle,
            solid_joinstyle="miter",
        )
        # a label beside the curve, above its middle vertex, as datasheets print them
        k = len(curve.voltage_v) // 2
        label = "DC" if curve.pulse == "dc" else curve.pulse.replace("us", " µs").replace("ms", " ms")
        ax.text(curve.voltage_v[k] * 1.15, curve.current_a[k] * 1.25, label, fontsize=8, color="black")
    ax.set_xlabel("V_CE [V]")
    ax.set_ylabel("I_C [A]")
    height = fig.get_size_inches()[1] * dpi

    def pixel(v, i):
        # pixel indices: pixel k covers k to k + 1 of matplotlib's display coordinates
        x, y = ax.transData.transform(np.column_stack([np.atleast_1d(v), np.atleast_1d(i)])).T
        return x - 0.5, height - y - 0.5

    path = Path(path)
    if path.suffix.lower() in (".jpg", ".jpeg"):
        buffer = io.BytesIO()
        fig.savefig(buffer, format="png", dpi=dpi)
        buffer.seek(0)
        Image.open(buffer).convert("RGB").save(path, format="JPEG", quality=jpeg_quality)
    else:
        fig.savefig(path, dpi=dpi)
    return Sheet(path, tuple(curves), pixel)
