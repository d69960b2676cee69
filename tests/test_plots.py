"""Plots agree with their verdicts: read back from the matplotlib objects what they drew.

Temperatures in the legends, the first violation's mark and its coordinates, time axes in
a unit that fits, pulse points labelled with their width, Tj on an axis of its own.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

import soacheck
from soacheck.jobfiles import read_envelope
from soacheck.plots import POLICY_GID, plot_point_check, plot_stage_run, plot_trace
from soacheck.points import check_points
from soacheck.policy import BENCH, Policy
from soacheck.trace import TraceChecker

from .helpers import PULSE_TRAIN_DT_S, PULSE_TRAIN_TP_S, pulse_train_above_dc, violation_marks

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
STAGE = EXAMPLES / "stage.toml"


def legend_texts(ax) -> list[str]:
    legend = ax.get_legend()
    return [t.get_text() for t in legend.get_texts()] if legend is not None else []


@pytest.fixture(scope="module")
def failing_ramp():
    """A current ramp to 20 A at 40 V through the example stage: far past 150 W, so it fails."""
    return soacheck.sweep(STAGE, ramp="current", start=0.1, stop=20, at=40, time="30s", samples=80).run


def test_each_device_is_drawn_at_its_own_hottest_case_temperature(failing_ramp):
    run = failing_ramp
    fig = plot_stage_run(run, title="ramp")
    texts = legend_texts(fig.axes[0])
    for d in range(run.device_a.shape[0]):
        hottest = float(run.case_c[d].max())
        assert f"Q{d + 1} path, hottest case {hottest:.3g} °C" in texts, texts
        assert f"dc derated, Tc = {hottest:.3g} °C" in texts, texts


def test_the_first_violation_is_marked_where_the_run_first_leaves(failing_ramp):
    """The mark sits on the first sample where any device is outside, found here from run.inside."""
    run = failing_ramp
    fig = plot_stage_run(run)
    k = int(np.argmax((~run.inside).any(axis=0)))  # first time index with a device outside
    d = int(np.argmax(~run.inside[:, k]))
    (mark,) = violation_marks(fig.axes[0])
    assert mark == pytest.approx((run.device_v[d, k], run.device_a[d, k]))
    margin_axes = [ax for ax in fig.axes if ax.get_ylabel() == "margin [%]"]
    (time_mark,) = violation_marks(margin_axes[0])
    assert time_mark[0] == pytest.approx(run.time_s[k])  # a 30 s ramp: the axis is in seconds


def test_time_axis_reads_hours_for_a_long_discharge():
    """10 Ah at 4 A lasts about 2.5 h (capacity/current): the axis is in hours, not 9000 s."""
    run = soacheck.discharge(
        STAGE, battery="nmc", cells=10, capacity=10, mode="cc", setpoint=4, internal_resistance=0.15, samples=60
    ).run
    fig = plot_stage_run(run)
    labels = [ax.get_xlabel() for ax in fig.axes if ax.get_xlabel().startswith("time")]
    assert labels == ["time [h]"]
    longest = max(
        float(np.max(line.get_xdata())) for ax in fig.axes[1:5] for line in ax.lines if len(line.get_xdata()) > 2
    )
    assert longest == pytest.approx(run.time_s[-1] / 3600.0)


def test_legends_stand_outside_the_data(failing_ramp):
    fig = plot_stage_run(failing_ramp)
    for ax in fig.axes:
        legend = ax.get_legend()
        if legend is not None and ax.get_label() != "<colorbar>":
            assert legend.get_bbox_to_anchor() is not None and legend._loc == 2  # upper left of the anchor
            assert legend.get_bbox_to_anchor().x0 >= ax.get_window_extent().x1 - 1  # right of the axes


def test_point_plot_marks_the_first_outside_point_and_labels_pulse_widths():
    part = soacheck.load_part("demo-npn-to3-250w")
    checked = check_points([40, 60, 41], [3, 5, 8], part, tc_c=[60, 60, 35], pulse_s=[math.inf, math.inf, 0.01])
    ax = plot_point_check(part, checked)
    assert violation_marks(ax) == [(60.0, 5.0)]  # 60 V, 5 A at 60 °C is outside (power: 3.33 A allowed)
    widths = [t.get_text() for t in ax.texts if t.get_gid() == "pulse-width"]
    assert widths == ["10ms single"]
    assert {"dc derated, Tc = 35 °C", "dc derated, Tc = 60 °C"} <= set(legend_texts(ax))


def test_trace_shows_the_junction_on_its_own_axis():
    part = soacheck.load_part("demo-npn-to3-250w")
    result = soacheck.trace(part, EXAMPLES / "pulse-test.csv", case_temp=45)
    fig = plot_trace(part, result.trace)
    tj_axes = [ax for ax in fig.axes if ax.get_ylabel() == "temperature [°C]"]
    margin_axes = [ax for ax in fig.axes if ax.get_ylabel() == "margin [%]"]
    assert len(tj_axes) == 1 and len(margin_axes) == 1 and tj_axes[0] is not margin_axes[0]
    tj = next(line for line in tj_axes[0].lines if line.get_label() == "junction Tj")
    assert math.isclose(float(np.max(tj.get_ydata())), result.trace.tj_peak_c, rel_tol=0.02)  # thinned for drawing
    assert "trajectory (pass)" in fig.axes[0].get_title()


def test_compare_draws_each_candidate_at_its_case_temperature_in_the_stage_not_the_ambient():
    """The example stage: heatsink 0.4 K/W at ambient 25 °C under up to 150 W of the envelope.

    By hand: well over half of the 150 W reaches the heatsink (the resistors take a few
    watts), so the heatsink alone sits above 25 + 0.5 · 150 · 0.4 = 55 °C and each case
    above it; drawing the candidates at the 25 °C ambient was the old, misleading plot.
    """
    from soacheck.compare import case_temps_in_stage
    from soacheck.plots import plot_compare

    stage = soacheck.load_stage(STAGE)
    parts = [soacheck.load_part("demo-npn-to3-250w"), soacheck.load_part("demo-npn-to220-62w")]
    envelope = read_envelope(EXAMPLES / "envelope.toml")
    temps = case_temps_in_stage(parts, stage, envelope)
    ax = plot_compare(parts, envelope, case_temp_c=temps, count=stage.count)
    shown = {t.split(", Tc = ")[0]: float(t.split("Tc = ")[1].split(" °C")[0]) for t in legend_texts(ax) if "Tc =" in t}
    assert set(shown) == {"demo-npn-to3-250w", "demo-npn-to220-62w"}
    assert all(tc > 55.0 for tc in shown.values()), shown
    assert "its own hottest case temperature" in ax.get_title()


CANDIDATES = ("demo-npn-to3-250w", "demo-npn-to220-62w")


def drawn_line(ax, label: str):
    """The one line of ``ax`` whose legend label starts with ``label``: (voltages, currents)."""
    (line,) = [line for line in ax.lines if line.get_label().startswith(label)]
    return np.asarray(line.get_xdata(), dtype=float), np.asarray(line.get_ydata(), dtype=float)


def rated_over_policy(rated, policy) -> np.ndarray:
    """Rated current over policy current at every vertex of either line within the policy's voltages.

    Both lines are straight between vertices on log-log axes, so interpolating log i over
    log v between them is exact.
    """
    (rv, ri), (pv, pi) = rated, policy
    v = np.unique(np.concatenate([pv, rv[(rv >= pv[0]) & (rv <= pv[-1])]]))

    def at(vv: np.ndarray, ii: np.ndarray) -> np.ndarray:
        return 10 ** np.interp(np.log10(v), np.log10(vv), np.log10(ii))

    return at(rv, ri) / at(pv, pi)


@pytest.mark.parametrize(
    "policy",
    [Policy("current only", current_fraction=0.8), BENCH],
    ids=["current-fraction", "bench"],
)
def test_compare_draws_each_candidate_rated_boundary_above_its_policy_boundary(tmp_path, policy):
    """compare's plot draws, per candidate, the rated boundary and the policy's beside it (gid policy-boundary).

    The policy's boundary is its current_fraction times the boundary derated to its junction
    ceiling and power fraction (policy.py; P = (T_ceiling - Tc)/Rth on constant-power lines,
    JEDEC JESD51-1), and a lower ceiling or power fraction only lowers it further. So the
    rated line lies at or above the policy line by 1/current_fraction = 1/0.8 = 1.25 at every
    voltage both cover, exactly 1.25 for a policy with a current fraction alone; the policy
    line ends at voltage_fraction x v_max (bench: 0.8), the rated one at v_max. Cases held at
    60 °C, below either part's tj_max and bench's 125 °C ceiling, so both lines are drawn.
    """
    envelope = tmp_path / "envelope.toml"
    envelope.write_text('voltage = [5, 42]\ncurrent = 10\npower = 150\npulse = "dc"\ncase_temp = 60\n')
    result = soacheck.compare(list(CANDIDATES), envelope=envelope, policy=policy)
    ax = result.plot()
    expected = 1.0 / policy.current_fraction
    for part in result.parts:
        rated = drawn_line(ax, f"{part.id}, Tc = 60 °C")
        policy_line = drawn_line(ax, f"{part.id}: policy '{policy.name}'")
        (policy_object,) = [line for line in ax.lines if line.get_label().startswith(f"{part.id}: policy")]
        assert policy_object.get_gid() == POLICY_GID
        ratio = rated_over_policy(rated, policy_line)
        if policy.tj_ceiling_c is None and policy.power_fraction is None:
            assert ratio == pytest.approx(expected, rel=1e-9), ratio  # the current fraction alone
        else:
            assert np.all(ratio >= expected * (1 - 1e-9)), ratio  # a lower ceiling lowers it further
        assert rated[0][-1] == pytest.approx(part.ratings.v_max_v, rel=1e-9)
        assert policy_line[0][-1] == pytest.approx(policy.voltage_factor * part.ratings.v_max_v, rel=1e-9)


def test_a_passing_envelope_plot_shows_no_outside_entry_and_no_violation_mark():
    """The example stage covers the example envelope (margin +31 %): nothing may look outside."""
    from soacheck.envelope import check_envelope
    from soacheck.plots import plot_envelope_check

    stage = soacheck.load_stage(STAGE)
    check = check_envelope(stage, read_envelope(EXAMPLES / "envelope.toml"))
    assert check.passed
    fig = plot_envelope_check(check)
    for ax in fig.axes:
        assert "outside" not in legend_texts(ax) and violation_marks(ax) == []


def test_trace_margin_is_drawn_against_the_pulse_curve_that_judged_each_pulse(modelled_part):
    """Pulses above DC that pass against their pulse curve draw their margin to that curve, not to DC.

    Five 2 A, 80 V, 0.3 ms pulses every 5 ms on the reference part with its Foster network, case
    at 25 °C: each lies far above DC but inside the 1 ms curve derated at the junction where it
    starts; its margin in closed form is derived in helpers.pulse_train_above_dc. The drawn
    margin must equal it and stay >= 0.
    """
    t, v, i, starts_s, expected = pulse_train_above_dc()
    dt, tp, n_pulse = PULSE_TRAIN_DT_S, PULSE_TRAIN_TP_S, round(PULSE_TRAIN_TP_S / PULSE_TRAIN_DT_S)
    checker = TraceChecker(modelled_part, tc_c=25.0)
    checker.feed(t, v, i)
    result = checker.result()
    assert result.passed, result
    assert 0 < min(expected) < max(expected) < 0.33  # each later pulse starts warmer: less margin

    fig = plot_trace(modelled_part, result)
    margin_ax = next(ax for ax in fig.axes if ax.get_ylabel() == "margin [%]")
    line = next(line for line in margin_ax.lines if line.get_gid() == "judged-margin")
    assert "pulse curve" in line.get_label() and "DC" in line.get_label()  # it says what it shows
    unit_s = {"time [s]": 1.0, "time [ms]": 1e-3, "time [µs]": 1e-6}[margin_ax.get_xlabel()]
    drawn_t_s, drawn = np.asarray(line.get_xdata()) * unit_s, np.asarray(line.get_ydata()) / 100
    for t_n, want in zip(starts_s, expected, strict=True):
        inside = (drawn_t_s > t_n - dt / 2) & (drawn_t_s < t_n + tp - dt / 2)
        assert inside.sum() >= n_pulse  # every sample of the pulse is drawn (no thinning at this length)
        # the pulse curve is a straight line on log axes, so only rounding separates the two
        np.testing.assert_allclose(drawn[inside], want, rtol=1e-9)
    assert drawn.min() >= 0  # a passing trace never dives below zero
    assert math.isclose(result.margin, min(expected), rel_tol=1e-9)  # the summary's margin is the least drawn
    dc_margin = result.plot["margin"][(result.plot["current"] > 0)]
    assert dc_margin.max() < 0  # against DC alone, every pulse sample would be drawn deep below zero
