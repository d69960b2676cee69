"""Log-log SOA plots.

Plot functions take ``ax=None`` (a new figure is made) and return the axes they drew
on. They use matplotlib's object interface only, so no display or GUI backend is ever
needed; saving is left to the caller.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from soacheck.boundary import boundary_polyline
from soacheck.derating import BreakdownDerating
from soacheck.display import device_name
from soacheck.envelope import Envelope, EnvelopeCheck
from soacheck.glossary import JUNCTION_LIMITS
from soacheck.instability import instability_line
from soacheck.mechanisms import mechanism_lines
from soacheck.mosfet import ztc_point
from soacheck.parts import Part
from soacheck.plotstyle import (
    CURRENT_LABEL,
    INSIDE,
    MECHANISM_STYLES,
    OUTSIDE,
    VOLTAGE_LABEL,
    grid,
    legend_outside,
    mark_violation,
    series_style,
    time_axis,
)
from soacheck.points import PointCheck
from soacheck.stage_run import StageRun
from soacheck.thinning import judged_margin_line
from soacheck.trace_result import TraceResult
from soacheck.units import DC, format_duration

MECHANISM_STYLE = MECHANISM_STYLES  # one palette, defined in soacheck.plotstyle


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
                linestyle=style["linestyle"],
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
    for n, tc in enumerate(case_temps_c):
        poly = boundary_polyline(
            part.rated, tc_c=tc, pulse_s=pulse_s, breakdown=breakdown, v_min_v=part.curve_for(pulse_s).voltage_v[0]
        )
        if poly.is_empty:
            continue
        ax.plot(
            poly.voltage_v,
            poly.current_a,
            lw=1.8,
            **{**series_style(n + 1), "color": ("#000000", "#56B4E9", "#E69F00", "#009E73")[n % 4]},
            label=f"{format_duration(pulse_s)} derated, Tc = {tc:.3g} °C",
        )
    draw_policy_boundary(ax, part, case_temps_c, pulse_s=pulse_s, breakdown=breakdown)
    if points is not None and points.voltage_v.size:
        _draw_points(ax, points)
    ax.axvline(part.ratings.v_max_v, color="k", lw=0.8, ls=":")
    handles = [
        Line2D([], [], color=s["color"], linestyle=s["linestyle"], lw=2, label=s["label"])
        for m, s in MECHANISM_STYLES.items()
        if m in used
    ]
    handles += ax.get_legend_handles_labels()[0]
    legend_outside(ax, handles)
    ax.set_xlabel(VOLTAGE_LABEL)
    ax.set_ylabel(CURRENT_LABEL)
    ax.set_title(f"{part.id}: SOA at 25 °C case (by mechanism), derated (markers)", fontsize=10)
    grid(ax)
    return ax


def _draw_points(ax: Axes, points: PointCheck) -> None:
    """Checked points: circles inside, crosses outside, each pulse point labelled with its width; the
    first point outside (in the file's order) ringed as the first violation."""
    ok = points.inside
    ax.scatter(points.voltage_v[ok], points.current_a[ok], color=INSIDE, edgecolors="k", linewidths=0.5, s=36,
               zorder=5, label="point inside")  # fmt: skip
    if (~ok).any():
        ax.scatter(points.voltage_v[~ok], points.current_a[~ok], color=OUTSIDE, marker="X", edgecolors="k",
                   linewidths=0.5, s=64, zorder=6, label="point outside")  # fmt: skip
        k = int(np.argmax(~ok))
        mark_violation(ax, float(points.voltage_v[k]), float(points.current_a[k]))
    for v, i, tp, duty in zip(points.voltage_v, points.current_a, points.pulse_s, points.duty, strict=True):
        if np.isfinite(tp):  # a pulse point sits above the DC lines: say which pulse it is
            text = format_duration(float(tp)) + (f" at D = {duty:g}" if duty > 0 else " single")
            ax.annotate(text, (v, i), xytext=(6, -10), textcoords="offset points", fontsize=7, gid="pulse-width")


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
    """The trajectory on the part's SOA, and over time the junction temperature and the margin, each on its own axis.

    The SOA panel is zoomed to the trajectory (the whole SOA in an inset) over the DC
    boundary derated at the lowest and the highest case temperature seen. The margin panel
    shows the margin against the boundary that judged each sample: the DC boundary between
    excursions, and inside an excursion its least margin against the pulse curve that
    judged it (:func:`soacheck.thinning.judged_margin_line`), so a passing trace stays at
    or above zero. The first violation is marked on the SOA and on the margin panel; where
    the junction passed its limit first, on the temperature panel instead (the title then
    calls a margin of 0 or more the current's). Traces are thinned to
    about 20 000 samples for drawing (excursions merged per bin, the worst kept); the
    check itself used every sample.
    """
    fig = Figure(figsize=(14, 7), layout="constrained")
    layout = fig.add_gridspec(2, 2, width_ratios=[1.1, 1])
    ax_soa = fig.add_subplot(layout[:, 0])
    ax_tj = fig.add_subplot(layout[0, 1])
    ax_margin = fig.add_subplot(layout[1, 1], sharex=ax_tj)
    data = result.plot
    plot_soa(
        part, case_temps_c=sorted({float(data["case_temp"].min()), result.tc_peak_c}), breakdown=breakdown, ax=ax_soa
    )
    shown = data["current"] > 1e-3 * max(float(data["current"].max()), 1e-12)  # log axes: skip ~0 A
    t, size_s = time_axis(ax_margin, data["time"])
    dots = ax_soa.scatter(data["voltage"][shown], data["current"][shown], c=t[shown], cmap="viridis", s=6, zorder=5)
    fig.colorbar(dots, ax=ax_soa, label=ax_margin.get_xlabel(), location="bottom", shrink=0.6)
    _zoom(ax_soa, data["voltage"], data["current"])
    _full_range_inset(ax_soa, part, [(data["voltage"], data["current"])])
    margin = "—" if result.margin is None else f"{result.margin:+.1%}"
    ax_soa.set_title(f"{part.id}: trajectory ({result.verdict})", fontsize=10)
    junction = result.limit in JUNCTION_LIMITS and "tj" in data  # the junction passed its limit first
    if not result.passed and result.margin is not None and result.margin >= 0:  # failed on another limit
        ax_tj.set_title(inside_failure_title(result.limit, result.margin), fontsize=9)
    else:
        ax_tj.set_title(f"verdict {result.verdict}, margin {margin} (the least, as judged)", fontsize=9)
    if "tj" in data:
        ax_tj.plot(t, data["tj"], color=OKABE_JUNCTION, lw=1.2, label="junction Tj")
    ax_tj.plot(t, data["case_temp"], color=OKABE_CASE, lw=1.0, linestyle="--", label="case Tc")
    ax_tj.axhline(part.tj_limit_c, color="k", ls=":", lw=0.8, label=part.tj_limit)
    ax_tj.set_ylabel("temperature [°C]")
    margin_t_s, margin = judged_margin_line(data["time"], data["margin"], result.excursion_spans)
    label = "margin, as judged:\nDC boundary between excursions,\nthe pulse curve inside each"
    ax_margin.plot(margin_t_s / size_s, 100 * np.clip(margin, -1, 1), color=series_style(0)["color"], lw=0.8,
                   label=label, gid="judged-margin")  # fmt: skip
    ax_margin.axhline(0, color="k", lw=0.5)
    ax_margin.set_ylim(-105, 105)
    ax_margin.set_ylabel("margin [%]")
    if result.first_violation_time_s is not None:
        tv = result.first_violation_time_s / size_s
        k = int(np.argmin(np.abs(data["time"] - result.first_violation_time_s)))
        mark = f"{result.limit} passed" if junction else "first violation"
        mark_violation(ax_soa, float(data["voltage"][k]), float(data["current"][k]), text=mark)
        if junction:  # on the junction's panel, where it passed its limit; the margin there may be positive
            mark_violation(ax_tj, float(tv), float(data["tj"][k]), text=mark)
            ax_margin.axvline(float(tv), color=OUTSIDE, lw=1.0, ls="--", gid="first-violation-time")
        else:
            m = int(np.argmin(np.abs(margin_t_s - result.first_violation_time_s)))
            mark_violation(ax_margin, float(tv), float(100 * np.clip(margin[m], -1, 1)))
            ax_tj.axvline(float(tv), color=OUTSIDE, lw=1.0, ls="--", gid="first-violation-time")
    _relegend(ax_soa)
    for ax in (ax_tj, ax_margin):
        grid(ax)
        legend_outside(ax)
    return fig


def _zoom(ax: Axes, v: np.ndarray, i: np.ndarray) -> None:
    """Zoom log axes to the region a path occupies, with room around it for the boundary."""
    shown = (v > 0) & (i > 0) & np.isfinite(v) & np.isfinite(i)
    if not shown.any():
        return
    ax.set_xlim(float(v[shown].min()) / 2.5, float(v[shown].max()) * 2.5)
    ax.set_ylim(float(i[shown].min()) / 3.0, float(i[shown].max()) * 3.0)


def _full_range_inset(ax: Axes, part: Part, paths: Sequence[tuple[np.ndarray, np.ndarray]]) -> Axes:
    """A small panel in the corner with the whole DC curve and the paths, to place the zoomed view."""
    inset = ax.inset_axes((0.02, 0.02, 0.3, 0.3))
    inset.set_xscale("log")
    inset.set_yscale("log")
    curve = part.dc_curve
    inset.plot(curve.voltage_v, curve.current_a, color="k", lw=1.0)
    for n, (v, i) in enumerate(paths):
        shown = (v > 0) & (i > 0)
        inset.plot(v[shown], i[shown], color=series_style(n)["color"], lw=1.2)
    inset.tick_params(labelsize=6)
    inset.set_title("full range", fontsize=6)
    return inset


def _relegend(ax: Axes) -> None:
    """Redraw the legend outside with the mechanisms plot_soa listed plus everything labelled since."""
    old = ax.get_legend()
    handles = list(old.legend_handles) if old is not None else []
    labels = {h.get_label() for h in handles}
    handles += [h for h in ax.get_legend_handles_labels()[0] if h.get_label() not in labels]
    legend_outside(ax, handles)


def plot_stage_run(
    run: StageRun,
    *,
    title: str = "",
    breakdown: BreakdownDerating = "auto",
    max_setpoint: tuple[float | None, str] | None = None,
) -> Figure:
    """Every device's path on its SOA at its own hottest case temperature, and the test over time.

    Left: each device's (V_CE, I_C) path, zoomed to the region it occupies, over the DC
    boundary derated at that device's hottest case temperature (the temperature its verdict
    used at its worst), with the whole SOA in an inset. Right, over time (in s, min or h as
    fits): source voltage and total current; each device's power; junction, case and
    heatsink temperatures; each device's margin. The first violation is marked on the SOA
    and on the margin panel, or on the temperature panel where a junction passed its limit
    (``tj_max passed``), with a line at its time on the other time panels.

    ``max_setpoint`` is the most demanding safe setpoint of a ``--find-max`` search and its
    unit (``(7.2, "A")``; the value None when no setpoint is safe): a constant-current one is
    drawn as a line on the current axis, any other stated in the top panel; both carry the
    gid ``max-safe-setpoint``.
    """
    fig = Figure(figsize=(15, 8.5), layout="constrained")
    layout = fig.add_gridspec(4, 2, width_ratios=[1.15, 1])
    ax_soa = fig.add_subplot(layout[:, 0])
    axes = [fig.add_subplot(layout[k, 1]) for k in range(4)]
    for ax in axes[1:]:
        ax.sharex(axes[0])
    part = run.stage.part
    worst = run.worst_device
    devices = range(run.device_a.shape[0])
    hottest = [float(run.case_c[d].max()) for d in devices]
    plot_soa(part, case_temps_c=sorted(set(hottest)), breakdown=breakdown, ax=ax_soa)
    for d in devices:
        shown = run.device_a[d] > 1e-3 * max(float(run.device_a[d].max()), 1e-12)  # log axes: skip ~0 A
        label = f"{device_name(d + 1)} path, hottest case {hottest[d]:.3g} °C"
        style = series_style(d + 1, markers=False)
        ax_soa.plot(run.device_v[d][shown], run.device_a[d][shown], lw=2.2 if d == worst else 1.4, zorder=6,
                    label=label, **style)  # fmt: skip
    first = run.first_violation
    passed = None if first is None else str(run.limit[first])
    junction = passed in JUNCTION_LIMITS  # the junction passed its limit there, the current may be inside
    mark = f"{passed} passed" if junction else "first violation"
    if first is not None:
        d, k = first
        mark_violation(ax_soa, float(run.device_v[d, k]), float(run.device_a[d, k]), text=mark)
    _zoom(ax_soa, run.device_v.ravel(), run.device_a.ravel())
    _full_range_inset(ax_soa, part, [(run.device_v[d], run.device_a[d]) for d in devices])
    _relegend(ax_soa)
    ax_soa.set_title(f"{title or part.id}: {device_name(worst + 1)} (worst)", fontsize=10)
    t, _ = time_axis(axes[3], run.time_s)
    axes[0].plot(t, run.source_v, color=series_style(0)["color"], label="source voltage [V]")
    axes[0].set_ylabel("V")
    current_ax = axes[0].twinx()
    current_ax.plot(t, run.total_a, color=series_style(1)["color"], linestyle=series_style(1)["linestyle"],
                    label="total current [A]")  # fmt: skip
    current_ax.set_ylabel("A")
    if max_setpoint is not None:
        _mark_max_setpoint(axes[0], current_ax, *max_setpoint, policy=part.policy)
    for d in devices:
        axes[1].plot(t, run.device_w[d], lw=1.4 if d == worst else 0.9, **series_style(d + 1, markers=False),
                     label=device_name(d + 1))  # fmt: skip
    axes[1].set_ylabel("device power [W]")
    axes[2].plot(t, run.junction_c[worst], color=OKABE_JUNCTION, label=f"junction {device_name(worst + 1)}")
    if junction and first[0] != worst:  # the device whose junction passed its limit first
        axes[2].plot(
            t, run.junction_c[first[0]], color=OKABE_JUNCTION, ls=":", label=f"junction {device_name(first[0] + 1)}"
        )
    axes[2].plot(t, run.case_c[worst], color=OKABE_CASE, linestyle="--", label=f"case {device_name(worst + 1)}")
    axes[2].plot(t, run.sink_c, color="#000000", linestyle="-.", label="heatsink")
    axes[2].axhline(part.ratings.tj_max_c, color="k", ls=":", lw=0.8, label="tj_max")
    if part.tj_limit == "tj_ceiling":
        axes[2].axhline(part.tj_limit_c, **POLICY_STYLE, label=f"tj_ceiling, policy '{part.policy.name}'")
    axes[2].set_ylabel("°C")
    for d in devices:
        axes[3].plot(t, 100 * np.clip(run.margin[d], -1, 1), lw=1.4 if d == worst else 0.9,
                     **series_style(d + 1, markers=False), label=device_name(d + 1))  # fmt: skip
    axes[3].axhline(0, color="k", lw=0.6)
    axes[3].set_ylabel("margin [%]")
    if first is not None:  # marked on the junction's panel where the junction passed its limit, else the margin's
        d, k = first
        marked = 2 if junction else 3
        at = float(run.junction_c[d, k]) if junction else float(100 * np.clip(run.margin[d, k], -1, 1))
        mark_violation(axes[marked], float(t[k]), at, text=mark)
        for ax in axes[:marked] + axes[marked + 1 :]:
            ax.axvline(float(t[k]), color=OUTSIDE, lw=1.0, ls="--", gid="first-violation-time")
    for ax in axes:
        grid(ax)
    handles = axes[0].get_legend_handles_labels()[0] + current_ax.get_legend_handles_labels()[0]
    legend_outside(axes[0], handles)
    for ax in axes[1:]:
        legend_outside(ax)
    return fig


def _mark_max_setpoint(ax: Axes, current_ax: Axes, value: float | None, unit: str, *, policy) -> None:
    """Mark the most demanding safe setpoint: a line on the current axis for amperes, else a note."""
    under = f" (policy '{policy.name}')" if policy is not None else ""
    if value is None:
        ax.text(0.01, 0.95, f"no safe setpoint found{under}", transform=ax.transAxes, va="top", fontsize=8,
                color=OUTSIDE, gid="max-safe-setpoint")  # fmt: skip
        return
    text = f"max safe setpoint {value:.4g} {unit}{under}"
    if unit == "A":
        current_ax.axhline(value, color=OUTSIDE, lw=1.0, ls=(0, (1, 1)), label=text, gid="max-safe-setpoint")
    else:
        ax.text(0.01, 0.95, text, transform=ax.transAxes, va="top", fontsize=8, gid="max-safe-setpoint")


OKABE_JUNCTION = "#D55E00"
OKABE_CASE = "#E69F00"


def plot_envelope_check(check: EnvelopeCheck, *, breakdown: BreakdownDerating = "auto", most: int = 4) -> Figure:
    """The envelope's edge, mapped to each device, over that device's SOA derated at its hottest case.

    One panel per device (the ``most`` that fail first, then by least margin); the path is
    marked where it lies outside (``outside``) and where its junction passes tj_max or the
    policy's tj_ceiling with its current inside (``tj_max passed``), the first point failing
    ringed, the view zoomed to the path with the whole SOA in an inset. A check failing with
    every current inside says so in the figure's title, as the trace plot does.
    """
    devices = envelope_devices(check)[:most]
    fig = Figure(figsize=(6.5 * len(devices), 5.5), layout="constrained")
    axes = np.atleast_1d(fig.subplots(1, len(devices)))
    for ax, d in zip(axes, devices, strict=True):
        v, i = envelope_device_panel(ax, check, d, breakdown=breakdown)
        _zoom(ax, v, i)
        _full_range_inset(ax, check.stage.part, [(v, i)])
        _relegend(ax)
    if not check.passed and check.min_margin >= 0:  # failed on a junction: the margins drawn are the current's
        fig.suptitle(inside_failure_title(check.failed_limit, check.min_margin), fontsize=10)
    return fig


def envelope_devices(check: EnvelopeCheck) -> np.ndarray:
    """The devices of an envelope check in the order a plot shows them: those not inside somewhere first,
    each group by least margin (the JSON's ``device`` leads when something is outside on its current)."""
    least = np.min(check.margin, axis=1)
    return np.lexsort((least, check.inside.all(axis=1)))


def envelope_device_panel(
    ax: Axes, check: EnvelopeCheck, d: int, *, breakdown: BreakdownDerating = "auto"
) -> tuple[np.ndarray, np.ndarray]:
    """Device ``d``'s share of the envelope's edge on its SOA derated at its hottest case, on ``ax``.

    Points where its current is outside are crossed (``outside``); points where only its junction
    passes its limit are marked ``tj_max passed, current inside`` (or ``tj_ceiling ...``); its first
    point failing is ringed (``first violation``, or ``tj_max passed`` there).
    Returns the device's (V, I) path. [V], [A]
    """
    env = check.envelope
    part = check.stage.part
    plot_soa(part, case_temps_c=[float(check.state.case_c[d].max())], pulse_s=env.pulse_s, breakdown=breakdown, ax=ax)
    v, i = check.state.device_v[d], check.state.device_a[d]
    inside = check.inside[d]
    current_out = ~(check.margin[d] >= 0)
    junction_only = ~inside & ~current_out
    hot = f"{part.tj_limit} passed"
    ax.plot(v, i, color="#444444", lw=1.0, zorder=5, label=f"envelope edge, {device_name(d + 1)}")
    if current_out.any():
        ax.scatter(v[current_out], i[current_out], color=OUTSIDE, marker="x", s=14, zorder=6, label="outside")
    if junction_only.any():
        ax.scatter(v[junction_only], i[junction_only], facecolors="none", edgecolors=OUTSIDE, marker="^", s=18,
                   zorder=6, label=f"{hot}, current inside")  # fmt: skip
    if (~inside).any():
        k = int(np.argmax(~inside))
        mark_violation(ax, float(v[k]), float(i[k]), text=hot if junction_only[k] else "first violation")
    ax.set_title(f"{part.id}, {device_name(d + 1)}: {env.label}", fontsize=9)
    return v, i


def inside_failure_title(limit: str | None, margin: float | None) -> str:
    """A plot's title for a result that fails with its current inside: the limit it passed, and the current's
    margin said to be the current's (``verdict fail: tj_max; the current inside, margin +12.0%``)."""
    shown = "—" if margin is None else f"{margin:+.1%}"
    return f"verdict fail: {limit}; the current inside, margin {shown}"


def plot_compare(
    parts: Sequence[Part],
    envelope: Envelope,
    *,
    case_temp_c: float | Mapping[str, float],
    count: int = 1,
    breakdown: BreakdownDerating = "auto",
    ax: Axes | None = None,
) -> Axes:
    """Candidates' SOAs, each derated at the case temperature its verdict used, with the envelope's edge.

    Each candidate's rated boundary is drawn in its own colour and, for a part under a
    design-margin policy, the policy's boundary beside it (:func:`draw_policy_boundary`,
    dotted, in the candidate's colour and named by its id).

    ``case_temp_c`` is one temperature for all (cases held at the envelope's case_temp), or
    each candidate's own by part id (in a stage: its hottest case, from
    :func:`soacheck.compare.case_temps_in_stage`); the legend gives each candidate's. With
    ``count`` devices the edge is drawn at an even share, I/count per device, for
    orientation only: the verdicts include the uneven sharing and the resistor drops.
    """
    ax = new_axes(10, 6.5) if ax is None else ax
    ax.set_xscale("log")
    ax.set_yscale("log")
    for n, part in enumerate(parts):
        tc = case_temp_c[part.id] if isinstance(case_temp_c, Mapping) else case_temp_c
        style = series_style(n)
        duty = 0.0 if np.isinf(envelope.pulse_s) else envelope.duty
        v_min_v = min(envelope.v_min_v, part.dc_curve.voltage_v[0])
        poly = boundary_polyline(
            part.rated, tc_c=tc, pulse_s=envelope.pulse_s, duty=duty, breakdown=breakdown, v_min_v=v_min_v
        )
        if not poly.is_empty:
            ax.plot(poly.voltage_v, poly.current_a, lw=1.6, label=f"{part.id}, Tc = {tc:.3g} °C", **style)
        draw_policy_boundary(
            ax, part, [tc], pulse_s=envelope.pulse_s, duty=duty, v_min_v=v_min_v, breakdown=breakdown,
            color=style["color"], of=part.id,
        )  # fmt: skip
    v, i = envelope.edge(400)
    i = i / count
    share = "" if count == 1 else f", even share of {count} devices"
    ax.fill_between(v, i, i.min() / 10, color="#999999", alpha=0.25, label=f"envelope: {envelope.label}{share}")
    ax.plot(v, i, color="k", lw=1.2)
    ax.set_xlabel(r"voltage across one device $V_{CE}$ / $V_{DS}$ [V]")
    ax.set_ylabel(r"current through one device $I_C$ / $I_D$ [A]")
    if isinstance(case_temp_c, Mapping):
        ax.set_title("candidates, each derated at its own hottest case temperature in the stage", fontsize=10)
    else:
        ax.set_title(f"candidates derated at {case_temp_c:.3g} °C case", fontsize=10)
    grid(ax)
    legend_outside(ax)
    return ax


POLICY_GID = "policy-boundary"
"""The ``gid`` of a policy boundary, by which a test or a reader of the SVG finds it."""

POLICY_STYLE = {"color": "#CC79A7", "ls": (0, (1, 1.5)), "lw": 2.2}
"""A design-margin policy's lines: dotted, reddish purple (Okabe & Ito 2008), unlike every rated line."""


def draw_policy_boundary(
    ax: Axes,
    part: Part,
    case_temps_c: Sequence[float],
    *,
    pulse_s: float = DC,
    duty: float = 0.0,
    v_min_v: float | None = None,
    breakdown: BreakdownDerating = "auto",
    color: str | None = None,
    of: str = "",
) -> list[Line2D]:
    """Draw the boundary of the part's design-margin policy beside the rated one, and its voltage limit.

    Nothing is drawn for a part without a policy. Each case temperature gets the policy's
    boundary (:func:`~soacheck.boundary.boundary_polyline` of the part under its policy, for
    pulses of ``pulse_s`` [s] repeated at ``duty`` [1], from ``v_min_v`` [V], by default the
    curve's first voltage), dotted and labelled with the policy's name; a policy voltage
    fraction adds a vertical line at that fraction of v_max. Every line carries the gid
    :data:`POLICY_GID`. ``color`` replaces the policy's colour and ``of`` (a part id) heads
    the label, where several parts share the axes.

    Returns
    -------
    list of matplotlib.lines.Line2D
        The lines drawn.
    """
    if part.policy is None:
        return []
    drawn = []
    name = part.policy.name
    style = {**POLICY_STYLE, "color": color or POLICY_STYLE["color"]}
    v_min_v = part.curve_for(pulse_s).voltage_v[0] if v_min_v is None else v_min_v
    for tc in case_temps_c:
        poly = boundary_polyline(part, tc_c=tc, pulse_s=pulse_s, duty=duty, breakdown=breakdown, v_min_v=v_min_v)
        if poly.is_empty:
            continue
        label = f"{of + ': ' if of else ''}policy '{name}', {format_duration(pulse_s)}, Tc = {tc:.3g} °C"
        drawn += ax.plot(poly.voltage_v, poly.current_a, **style, label=label, gid=POLICY_GID, zorder=4)
    if part.v_limit == "policy_voltage":
        drawn.append(ax.axvline(part.v_limit_v, color=style["color"], ls=style["ls"], lw=1.0, gid=POLICY_GID))
    return drawn
