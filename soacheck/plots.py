"""Log-log SOA plots.

Plot functions take ``ax=None`` (a new figure is made) and return the axes they drew
on. They use matplotlib's object interface only, so no display or GUI backend is ever
needed; saving is left to the caller.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from matplotlib.axes import Axes
from matplotlib.colors import TwoSlopeNorm
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from soacheck.boundary import boundary_polyline
from soacheck.derating import BreakdownDerating
from soacheck.envelope import Envelope, EnvelopeCheck
from soacheck.instability import instability_line
from soacheck.mechanisms import mechanism_lines
from soacheck.mosfet import ztc_point
from soacheck.parts import Part
from soacheck.points import PointCheck
from soacheck.stage_run import StageRun
from soacheck.trace import TraceResult
from soacheck.units import DC, format_duration

MECHANISM_STYLE: dict[str, dict] = {
    "on_resistance": {"color": "#8c8c8c", "label": "on-resistance"},
    "current": {"color": "#1f5fa8", "label": "current limit"},
    "power": {"color": "#d1495b", "label": "power (constant power)"},
    "second_breakdown": {"color": "#6a3d9a", "label": "second breakdown"},
    "thermal_instability": {"color": "#6a3d9a", "label": "thermal instability"},
    "unclassified": {"color": "#222222", "label": "unclassified slope"},
}


def new_axes(width_in: float = 8.0, height_in: float = 6.0) -> Axes:
    """A fresh figure with one axes, no pyplot state involved."""
    return Figure(figsize=(width_in, height_in), layout="constrained").add_subplot()


def plot_soa(
    part: Part,
    *,
    case_temps_c: Sequence[float] = (),
    pulse_s: float = DC,
    points: PointCheck | None = None,
    breakdown: BreakdownDerating = "auto",
    ax: Axes | None = None,
) -> Axes:
    """Draw a part's digitized SOA curves, derated boundaries and checked points.

    Parameters
    ----------
    part
        The part.
    case_temps_c
        Case temperatures at which to draw the derated boundary of the ``pulse_s`` curve
        (dashed). [°C]
    pulse_s
        Pulse width whose derated boundary is drawn, ``inf`` for DC. [s]
    points
        Checked points, coloured by margin (crosses for points outside).
    breakdown
        Derating of second breakdown or instability.
    ax
        Axes to draw on; a new figure when None.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = ax if ax is not None else new_axes()
    ax.set_xscale("log")
    ax.set_yscale("log")
    used = set()
    for curve in part.curves:
        lines = mechanism_lines(part, curve)[:-1]  # the last is the implicit rated cap
        for line in lines:
            style = MECHANISM_STYLE[line.mechanism]
            used.add(line.mechanism)
            ax.plot(
                np.exp(line.log_v),
                np.exp(line.log_i),
                color=style["color"],
                lw=2.4 if curve.is_dc else 1.4,
                solid_capstyle="round",
            )
        ax.annotate(
            curve.label,
            (curve.voltage_v[-1], curve.current_a[-1]),
            xytext=(4, 0),
            textcoords="offset points",
            fontsize=8,
            va="center",
        )
    _draw_instability(ax, part)
    cmap_t = ["#e08214", "#b35806", "#7f3b08", "#542788"]
    for n, tc in enumerate(case_temps_c):
        poly = boundary_polyline(
            part, tc_c=tc, pulse_s=pulse_s, breakdown=breakdown, v_min_v=part.curve_for(pulse_s).voltage_v[0]
        )
        if poly.is_empty:
            continue
        ax.plot(
            poly.voltage_v,
            poly.current_a,
            ls="--",
            lw=1.6,
            color=cmap_t[n % len(cmap_t)],
            label=f"{format_duration(pulse_s)} derated, Tc = {tc:.3g} °C",
        )
    if points is not None and points.voltage_v.size:
        margin = np.where(np.isfinite(points.margin), points.margin, -1.0)
        norm = TwoSlopeNorm(vmin=min(-0.5, margin.min()), vcenter=0.0, vmax=max(1.0, margin.max()))
        ok = points.inside
        shown = ax.scatter(
            points.voltage_v[ok],
            points.current_a[ok],
            c=margin[ok],
            cmap="RdYlGn",
            norm=norm,
            s=36,
            edgecolors="k",
            linewidths=0.5,
            zorder=5,
        )
        ax.scatter(
            points.voltage_v[~ok],
            points.current_a[~ok],
            c=margin[~ok],
            cmap="RdYlGn",
            norm=norm,
            s=60,
            marker="X",
            edgecolors="k",
            linewidths=0.5,
            zorder=6,
        )
        ax.figure.colorbar(shown, ax=ax, label="margin  1 − I/I_allowed")
    ax.axvline(part.ratings.v_max_v, color="k", lw=0.8, ls=":")
    handles = [
        Line2D([], [], color=MECHANISM_STYLE[m]["color"], lw=2, label=MECHANISM_STYLE[m]["label"])
        for m in MECHANISM_STYLE
        if m in used
    ]
    handles += ax.get_legend_handles_labels()[0]
    ax.legend(handles=handles, fontsize=8, loc="lower left")
    ax.set_xlabel("voltage V_CE / V_DS [V]")
    ax.set_ylabel("current I_C / I_D [A]")
    ax.set_title(f"{part.id}: SOA at 25 °C case (solid), derated (dashed)", fontsize=10)
    ax.grid(True, which="both", lw=0.3, alpha=0.6)
    return ax


def _draw_instability(ax: Axes, part: Part) -> None:
    """The DC thermal instability cap (case held, Z = rth_jc) and the ZTC current, for a part with transfer.csv."""
    if part.transfer is None or part.is_bipolar:
        return
    ztc = ztc_point(part.transfer)
    if ztc.current_a is not None:
        ax.axhline(ztc.current_a, color="#6a3d9a", lw=0.9, ls="-.", label=f"ZTC current {ztc.current_a:.3g} A")
    lines = instability_line(part, part.ratings.rth_jc_k_per_w)
    if lines:
        v = np.geomspace(part.dc_curve.voltage_v[0], part.ratings.v_max_v, 300)
        with np.errstate(over="ignore"):
            i = np.exp(lines[0](np.log(v)))
        shown = i <= part.ratings.i_max_a * 10
        ax.plot(
            v[shown],
            i[shown],
            color="#6a3d9a",
            lw=1.6,
            ls=(0, (1, 1)),
            label="instability cap (DC, case held)",
            zorder=4,
        )


def plot_point_check(
    part: Part, points: PointCheck, *, breakdown: BreakdownDerating = "auto", ax: Axes | None = None
) -> Axes:
    """Checked points over the boundary at the case temperatures and pulse width they were checked at.

    The boundary is drawn at every distinct case temperature of the points (the lowest and
    the highest when there are more than four) for the points' common pulse width; points of
    mixed widths are drawn over the DC boundary, and the title says so.
    """
    temps = sorted({float(t) for t in np.asarray(points.tc_c).ravel() if np.isfinite(t)})
    if len(temps) > 4:
        temps = [temps[0], temps[-1]]
    widths = {float(t) for t in np.asarray(points.pulse_s).ravel()}
    pulse_s = widths.pop() if len(widths) == 1 else DC
    ax = plot_soa(part, case_temps_c=temps, pulse_s=pulse_s, points=points, breakdown=breakdown, ax=ax)
    if len(widths) > 0:
        ax.set_title(f"{part.id}: points of several pulse widths over the DC boundary", fontsize=10)
    return ax


def plot_trace(part: Part, result: TraceResult, *, breakdown: BreakdownDerating = "auto") -> Figure:
    """Two panels: the trajectory on the part's SOA coloured by time, and Tj(t) with the margin.

    The SOA panel shows the digitized curves and the DC boundary derated at the lowest
    and the highest case temperature seen. Traces are thinned to about 20 000 samples
    for drawing; the check itself used every sample.
    """
    fig = Figure(figsize=(13, 5.5), layout="constrained")
    ax_soa, ax_time = fig.subplots(1, 2, width_ratios=[1.1, 1])
    data = result.plot
    plot_soa(
        part, case_temps_c=sorted({float(data["case_temp"].min()), result.tc_peak_c}), breakdown=breakdown, ax=ax_soa
    )
    shown = data["current"] > 1e-3 * max(float(data["current"].max()), 1e-12)  # log axes: skip ~0 A
    dots = ax_soa.scatter(
        data["voltage"][shown], data["current"][shown], c=data["time"][shown], cmap="viridis", s=6, zorder=5
    )
    fig.colorbar(dots, ax=ax_soa, label="time [s]")
    ax_soa.set_title(f"{part.id}: trajectory ({result.verdict})", fontsize=10)
    if "tj" in data:
        ax_time.plot(data["time"], data["tj"], color="#d1495b", lw=1.2, label="junction Tj")
    ax_time.plot(data["time"], data["case_temp"], color="#e08214", lw=1.0, label="case Tc")
    ax_time.axhline(part.ratings.tj_max_c, color="k", ls=":", lw=0.8, label="tj_max")
    ax_time.set_xlabel("time [s]")
    ax_time.set_ylabel("temperature [°C]")
    margin_ax = ax_time.twinx()
    margin_ax.plot(
        data["time"], np.clip(data["margin"], -1, 1), color="#1f5fa8", lw=0.8, alpha=0.8, label="margin to DC boundary"
    )
    margin_ax.axhline(0, color="#1f5fa8", lw=0.5)
    margin_ax.set_ylim(-1.05, 1.05)
    margin_ax.set_ylabel("margin  1 − I/I_allowed (DC boundary)")
    handles = ax_time.get_legend_handles_labels()[0] + margin_ax.get_legend_handles_labels()[0]
    ax_time.legend(handles=handles, fontsize=8, loc="lower right")
    ax_time.grid(True, lw=0.3, alpha=0.6)
    return fig


def plot_stage_run(run: StageRun, *, title: str = "", breakdown: BreakdownDerating = "auto") -> Figure:
    """The worst device's trajectory on its SOA, and the test over time.

    Left: the worst device's (V_CE, I_C) path coloured by time, over its SOA derated at the
    case temperature at the start and at the hottest point. Right, over time: source voltage
    and total current; each device's power; case, junction and heatsink temperatures; each
    device's margin.
    """
    fig = Figure(figsize=(14, 8), layout="constrained")
    grid = fig.add_gridspec(4, 2, width_ratios=[1.1, 1])
    ax_soa = fig.add_subplot(grid[:, 0])
    axes = [fig.add_subplot(grid[k, 1]) for k in range(4)]
    for ax in axes[1:]:
        ax.sharex(axes[0])
    part = run.stage.part
    worst = run.worst_device
    hottest = float(run.case_c[worst].max())
    plot_soa(part, case_temps_c=sorted({float(run.case_c[worst, 0]), hottest}), breakdown=breakdown, ax=ax_soa)
    shown = run.device_a[worst] > 1e-3 * max(float(run.device_a[worst].max()), 1e-12)  # log axes: skip ~0 A
    path = ax_soa.scatter(
        run.device_v[worst][shown], run.device_a[worst][shown], c=run.time_s[shown], cmap="viridis", s=8, zorder=6
    )
    fig.colorbar(path, ax=ax_soa, label="time [s]")
    ax_soa.set_title(f"{title or part.id}: Q{worst + 1} (worst)", fontsize=10)
    t = run.time_s
    axes[0].plot(t, run.source_v, color="#1f5fa8", label="source V")
    axes[0].set_ylabel("V")
    current_ax = axes[0].twinx()
    current_ax.plot(t, run.total_a, color="#d1495b", label="total I")
    current_ax.set_ylabel("A")
    for k in range(run.device_w.shape[0]):
        axes[1].plot(t, run.device_w[k], lw=1.4 if k == worst else 0.8, label=f"Q{k + 1}")
    axes[1].set_ylabel("device power [W]")
    axes[2].plot(t, run.junction_c[worst], color="#d1495b", label="junction (worst)")
    axes[2].plot(t, run.case_c[worst], color="#e08214", label="case (worst)")
    axes[2].plot(t, run.sink_c, color="#6a3d9a", label="heatsink")
    axes[2].axhline(part.ratings.tj_max_c, color="k", ls=":", lw=0.8, label="tj_max")
    axes[2].set_ylabel("°C")
    for k in range(run.margin.shape[0]):
        axes[3].plot(t, np.clip(run.margin[k], -1, 1), lw=1.4 if k == worst else 0.8, label=f"Q{k + 1}")
    axes[3].axhline(0, color="k", lw=0.6)
    axes[3].set_ylabel("margin")
    axes[3].set_xlabel("time [s]")
    for ax in axes:
        ax.grid(True, lw=0.3, alpha=0.6)
        if ax.get_legend_handles_labels()[0]:
            ax.legend(fontsize=7, loc="best")
    current_ax.legend(fontsize=7, loc="lower right")
    return fig


def plot_envelope_check(check: EnvelopeCheck, *, breakdown: BreakdownDerating = "auto", most: int = 4) -> Figure:
    """The envelope's edge, mapped to each device, over that device's SOA derated at its hottest case.

    One panel per device (the ``most`` worst when there are more); the path is red where it
    lies outside.
    """
    devices = np.argsort(np.min(check.margin, axis=1))[:most]
    fig = Figure(figsize=(6.5 * len(devices), 5.5), layout="constrained")
    axes = np.atleast_1d(fig.subplots(1, len(devices)))
    env = check.envelope
    for ax, d in zip(axes, devices, strict=True):
        hottest = float(check.state.case_c[d].max())
        plot_soa(check.stage.part, case_temps_c=[hottest], pulse_s=env.pulse_s, breakdown=breakdown, ax=ax)
        v, i = check.state.device_v[d], check.state.device_a[d]
        ok = check.margin[d] >= 0
        ax.plot(v, i, color="#444444", lw=1.0, zorder=5, label="envelope edge, this device")
        ax.scatter(v[~ok], i[~ok], color="#c0392b", s=10, zorder=6, label="outside")
        ax.legend(fontsize=7, loc="lower left")
        ax.set_title(f"{check.stage.part.id}, Q{d + 1}: {env.label}", fontsize=9)
    return fig


def plot_compare(
    parts: Sequence[Part],
    envelope: Envelope,
    *,
    case_temp_c: float,
    count: int = 1,
    breakdown: BreakdownDerating = "auto",
    ax: Axes | None = None,
) -> Axes:
    """Candidates' SOAs derated at one case temperature, overlaid, with the envelope's edge.

    With ``count`` devices the edge is drawn at an even share, I/count per device, for
    orientation only: the verdicts include the uneven sharing and the resistor drops.
    """
    ax = new_axes(9, 6.5) if ax is None else ax
    ax.set_xscale("log")
    ax.set_yscale("log")
    colours = ["#1f5fa8", "#d1495b", "#2a9d8f", "#e08214", "#6a3d9a", "#8c564b", "#17becf", "#bcbd22"]
    for n, part in enumerate(parts):
        poly = boundary_polyline(
            part,
            tc_c=case_temp_c,
            pulse_s=envelope.pulse_s,
            duty=0.0 if np.isinf(envelope.pulse_s) else envelope.duty,
            breakdown=breakdown,
            v_min_v=min(envelope.v_min_v, part.dc_curve.voltage_v[0]),
        )
        if not poly.is_empty:
            ax.plot(poly.voltage_v, poly.current_a, color=colours[n % len(colours)], lw=1.6, label=part.id)
    v, i = envelope.edge(400)
    i = i / count
    share = "" if count == 1 else f", even share of {count} devices"
    ax.fill_between(v, i, i.min() / 10, color="#999999", alpha=0.25, label=f"envelope: {envelope.label}{share}")
    ax.plot(v, i, color="k", lw=1.2)
    ax.set_xlabel("voltage across one device [V]")
    ax.set_ylabel("current through one device [A]")
    ax.set_title(f"candidates derated at {case_temp_c:.3g} °C case", fontsize=10)
    ax.grid(True, which="both", lw=0.3, alpha=0.6)
    ax.legend(fontsize=7, loc="lower left")
    return ax
