"""Trace checks: Tj along a pulse waveform against the closed form, excursions, chunking, bad input.

The closed form for a periodic train is the periodic steady state of the Foster network
(elementary derivation: a geometric series of first-order step responses); the
limits are the reference part's constructed curves (conftest, computed by hand).
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import soacheck
from soacheck.cli import app
from soacheck.errors import SoacheckError
from soacheck.glossary import TERMS
from soacheck.stage import Cooling
from soacheck.trace import TraceChecker
from soacheck.tracefiles import iter_trace

from .conftest import THERMAL, write_part
from .helpers import PULSE_TRAIN_DT_S, PULSE_TRAIN_TP_S, pulse_train_above_dc, svg_texts, zth_train_closed_form

runner = CliRunner(env={"COLUMNS": "200"})


@pytest.fixture
def modelled(modelled_part):
    return modelled_part


def pulse_train(*, v, i_on, i_off, tp, period, periods, dt=1e-5):
    t = np.arange(0, periods * period, dt)
    on = (t % period) < tp - dt / 2
    return t, np.full(t.size, float(v)), np.where(on, i_on, i_off)


def check(part, t, v, i, chunks=1, **kwargs):
    checker = TraceChecker(part, **({"tc_c": 25.0} | kwargs))
    for rows in np.array_split(np.arange(t.size), chunks):
        checker.feed(t[rows], v[rows], i[rows])
    return checker.result()


def test_tj_peak_of_a_pulse_train_matches_the_closed_form(modelled):
    # 20 V x 10 A = 200 W for 1 ms every 10 ms, 1 s long: ten times the slowest time constant,
    # so the train is within e^-10 of its periodic steady state: Tj = Tc + P Zth(tp, D)
    t, v, i = pulse_train(v=20, i_on=10.0, i_off=0.0, tp=1e-3, period=1e-2, periods=100)
    result = check(modelled, t, v, i)
    expected = 25 + 200 * zth_train_closed_form(1e-3, 0.1)  # tests/helpers.py, written out
    assert result.tj_peak_c == pytest.approx(expected, rel=0.01)  # the acceptance: 1 %
    assert result.tj_peak_c == pytest.approx(expected, rel=2e-4)  # and in fact to sampling accuracy
    assert result.passed and result.excursions == 100


def test_a_short_excursion_inside_its_pulse_curve_passes(modelled):
    # 10 A at 20 V is above DC (6.25 A) but far inside the 1 ms curve; 0.5 ms long, once
    t = np.arange(0, 0.05, 1e-5)
    i = np.where((t >= 0.01) & (t < 0.0105), 10.0, 1.0)
    result = check(modelled, t, np.full(t.size, 20.0), i)
    assert result.passed, result
    assert result.excursions == 1


def test_an_excursion_longer_than_every_pulse_curve_fails_at_its_start(modelled):
    # the same current for 5 ms: longer than the 1 ms curve, so it is judged as DC
    t = np.arange(0, 0.05, 1e-5)
    i = np.where((t >= 0.01) & (t < 0.015), 10.0, 1.0)
    result = check(modelled, t, np.full(t.size, 20.0), i)
    assert not result.passed
    assert result.first_violation_time_s == pytest.approx(0.01, abs=1e-9)
    assert result.limit == "power"
    assert result.time_outside_s == pytest.approx(0.005, abs=2e-5)


def test_second_breakdown_of_the_pulse_curve_still_applies(modelled):
    # at 80 V the 1 ms curve allows 10 (80/40)^m, m = ln(0.2)/ln(2.5): 2.95 A; a 0.3 ms pulse of 4 A exceeds it
    t = np.arange(0, 0.02, 1e-5)
    i = np.where((t >= 0.005) & (t < 0.0053), 4.0, 0.1)
    result = check(modelled, t, np.full(t.size, 80.0), i)
    assert not result.passed and result.limit == "second_breakdown"


def test_junction_over_tj_max_fails_even_inside_the_curves(modelled):
    # 250 W pulses of 1 ms at D = 0.5: the train heats to 25 + 250 Zth(1 ms, 0.5) > 150 °C
    t, v, i = pulse_train(v=10, i_on=25.0, i_off=0.0, tp=1e-3, period=2e-3, periods=300)
    assert 25 + 250 * zth_train_closed_form(1e-3, 0.5) > 150  # 25 + 250 x 0.5684 = 167.1 °C
    result = check(modelled, t, v, i)
    assert not result.passed and result.limit == "tj_max"
    assert result.time_over_tj_max_s > 0


def test_without_a_thermal_model_no_excursion_is_credited(reference_part):
    t = np.arange(0, 0.05, 1e-5)
    i = np.where((t >= 0.01) & (t < 0.0105), 10.0, 1.0)
    result = check(reference_part, t, np.full(t.size, 20.0), i)
    assert not result.passed and result.tj_peak_c is None
    assert any("no thermal model" in note for note in result.assumptions)


def test_a_trace_ending_above_dc_is_judged_as_dc(modelled):
    t = np.arange(0, 0.01, 1e-5)
    i = np.where(t >= 0.0099, 10.0, 1.0)
    result = check(modelled, t, np.full(t.size, 20.0), i)
    assert not result.passed
    assert any("ends above the DC boundary" in note for note in result.assumptions)


@pytest.mark.parametrize("chunks", [2, 7, 64])
@pytest.mark.parametrize("heatsink", [False, True])
def test_chunked_trace_equals_one_pass(modelled, chunks, heatsink):
    rng = np.random.default_rng(11)
    t = np.cumsum(rng.uniform(5e-6, 2e-5, 40000))
    v = 20 + 60 * (np.sin(t * 40) > 0.8)
    i = np.where(rng.uniform(size=t.size) < 0.5, 2.0, 0.5) + 9 * ((t % 0.01) < 6e-4)
    kwargs = {"cooling": Cooling(0.3, 0.6, 30.0, 40.0), "tc_c": None} if heatsink else {}
    one = check(modelled, t, v, i, 1, **kwargs).summary()
    many = check(modelled, t, v, i, chunks, **kwargs).summary()
    for key, value in one.items():
        if isinstance(value, float):
            assert many[key] == pytest.approx(value, rel=1e-9, abs=1e-12), key
        else:
            assert many[key] == value, key


def test_heatsink_warms_the_case(modelled):
    # 60 W for 600 s on a lumped heatsink (constructed): Rth_sa 0.6 K/W, 358.8 J/K (0.4 kg of aluminium,
    # c_p 897 J/(kg K), from memory), Rth_cs 0.3 K/W, Ta 25 °C: Tc = 25 + 60 (0.3 + 0.6 (1 - e^(-600/215.28)))
    # = 76.78 °C, the lumped sink's first-order step response (elementary)
    t = np.linspace(0, 600, 60001)
    result = check(
        modelled, t, np.full(t.size, 10.0), np.full(t.size, 6.0), tc_c=None, cooling=Cooling(0.3, 0.6, 358.8, 25.0)
    )
    assert result.tc_peak_c == pytest.approx(76.78, abs=0.1)


def test_cli_trace_json_and_plot(tmp_path):
    folder = write_part(tmp_path / "modelled", extra=THERMAL)
    t, v, i = pulse_train(v=20, i_on=10.0, i_off=0.0, tp=1e-3, period=1e-2, periods=20)
    path = tmp_path / "trace.csv"
    pd.DataFrame({"time": t, "voltage": v, "current": i}).to_csv(path, index=False)
    plot = tmp_path / "trace.svg"
    result = runner.invoke(
        app, ["trace", str(folder), str(path), "--json", "--plot", str(plot), "--chunk-rows", "5000"]
    )
    assert result.exit_code == 0, result.output
    payload = json.loads(result.stdout)
    for key in ("verdict", "tj_peak", "first_violation_time", "margin", "margin_time", "time_outside"):
        assert key in payload
    assert payload["verdict"] == "pass" and payload["first_violation_time"] is None
    texts = svg_texts(plot)  # the plot, read back: the trajectory with its verdict, Tj against tj_max
    assert "modelled: trajectory (pass)" in texts
    assert {"junction Tj", "case Tc", "tj_max", "dc derated, Tc = 25 °C"} <= set(texts)


def test_parquet_trace_reads_like_csv(tmp_path):
    pytest.importorskip("pyarrow")
    t = np.linspace(0, 1, 1001)
    frame = pd.DataFrame({"time": t, "voltage": 10.0, "current": 1.0})
    frame.to_parquet(tmp_path / "t.parquet")
    chunks = list(iter_trace(tmp_path / "t.parquet", chunk_rows=300))
    assert sum(c[0].size for c in chunks) == 1001


@pytest.mark.parametrize(
    ("rows", "fragment"),
    [
        ("0,10,1\n0.1,10,1\n0.05,10,1\n", "data row 3: time 0.05 s goes backwards"),
        ("0,10,1\n0.1,10,1\n0.1,10,1\n", "data row 3: time 0.1 s repeats"),
        ("0,10,1\n0.1,nan,1\n", "data row 2: voltage is not a finite number"),
        ("0,10,1\n0.1,10,abc\n", "data row 2: current 'abc' is not a number"),
        ("0,10,1\n0.1,10,-1\n", "data row 2: current -1 is negative"),
    ],
)
def test_bad_trace_exits_2(tmp_path, rows, fragment):
    path = tmp_path / "bad.csv"
    path.write_text("time,voltage,current\n" + rows)
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path)])
    assert result.exit_code == 2, result.output
    assert fragment in result.stderr and "bad.csv" in result.stderr


def test_time_going_backwards_across_a_chunk_border_is_caught(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_text("time,voltage,current\n0,10,1\n0.2,10,1\n0.1,10,1\n0.3,10,1\n")
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path), "--chunk-rows", "2"])
    assert result.exit_code == 2 and "data row 3" in result.stderr, result.output


@pytest.mark.parametrize("suffix", [".csv", ".parquet"])
def test_a_trace_read_ahead_stops_its_reader_when_the_check_stops_early(tmp_path, suffix):
    # the next chunks are read in threads; leaving after the first chunk must not leave one running
    import threading

    path = tmp_path / f"long{suffix}"
    t = np.arange(5000) * 1e-3
    frame = pd.DataFrame({"time": t, "voltage": 10.0, "current": 1.0})
    if suffix == ".csv":
        frame.to_csv(path, index=False)
    else:
        pytest.importorskip("pyarrow")
        frame.to_parquet(path)
    chunks = iter_trace(path, chunk_rows=100)
    next(chunks)
    chunks.close()
    readers = ("soacheck-trace", "soacheck-csv")
    assert not [thread for thread in threading.enumerate() if thread.name.startswith(readers)]


def test_a_bad_value_in_a_late_chunk_read_ahead_names_its_row(tmp_path):
    path = tmp_path / "late.csv"
    rows = ["time,voltage,current"] + [f"{k * 1e-3:.3f},10,1" for k in range(1000)]
    rows[901] = "0.900,10,abc"  # data row 901
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    seen = 0
    with pytest.raises(SoacheckError, match="data row 901: current 'abc' is not a number"):
        for t, *_ in iter_trace(path, chunk_rows=100):
            seen += t.size
    assert seen == 900  # the chunks before it were checked and handed over first


def test_a_traces_table_carries_the_margin_its_plot_draws(modelled_part):
    """to_frame()'s margin is against the boundary that judged each sample, as the plot draws it.

    Five 2 A, 80 V, 0.3 ms pulses every 5 ms on the reference part with its Foster network, case
    at 25 °C (helpers.pulse_train_above_dc, closed form derived there): each pulse lies far above
    DC but passes the 1 ms curve derated at the junction where it starts. Inside a pulse the
    table's margin must be that closed-form value (>= 0) and equal the drawn line; the margin
    against DC alone stays in a column named for it (glossary: dc_margin), below 0 there.
    """
    t, v, i, starts_s, expected = pulse_train_above_dc()
    dt, tp, n_pulse = PULSE_TRAIN_DT_S, PULSE_TRAIN_TP_S, round(PULSE_TRAIN_TP_S / PULSE_TRAIN_DT_S)
    checked = soacheck.trace(modelled_part, (t, v, i), case_temp=25.0)
    assert checked.passed, checked.to_dict()
    frame = checked.to_frame()
    time_s, margin, dc_margin = (frame[name].to_numpy() for name in ("time", "margin", "dc_margin"))
    for t_n, want in zip(starts_s, expected, strict=True):
        in_pulse = (time_s > t_n - dt / 2) & (time_s < t_n + tp - dt / 2)
        assert in_pulse.sum() == n_pulse  # every sample of the pulse is kept (no thinning at this length)
        np.testing.assert_allclose(margin[in_pulse], want, rtol=1e-9)  # only rounding: straight line on log axes
        assert margin[in_pulse].min() >= 0
        # 1 − 2/0.78125 against the DC boundary alone (slope −2 line through 3.125 A at 40 V)
        np.testing.assert_allclose(dc_margin[in_pulse], 1 - 2 / 0.78125, rtol=1e-9)
    assert margin.min() >= 0

    ax = checked.plot().figure.axes
    margin_ax = next(a for a in ax if a.get_ylabel() == "margin [%]")
    line = next(line for line in margin_ax.lines if line.get_gid() == "judged-margin")
    unit_s = {"time [s]": 1.0, "time [ms]": 1e-3, "time [µs]": 1e-6}[margin_ax.get_xlabel()]
    drawn_t_s, drawn = np.asarray(line.get_xdata()) * unit_s, np.asarray(line.get_ydata()) / 100
    at = np.searchsorted(drawn_t_s, time_s - dt / 100)  # the drawn point at each row's time
    np.testing.assert_allclose(drawn_t_s[at], time_s, rtol=1e-12, atol=dt / 100)
    np.testing.assert_allclose(drawn[at], margin, rtol=1e-12, atol=1e-15)

    assert {"margin", "dc_margin"} <= set(TERMS)  # the columns are glossary words
    assert "against the DC boundary" in TERMS["dc_margin"].text


def test_time_over_tj_max_counts_time_over_the_ceiling_the_trace_was_judged_against(modelled):
    """Under a policy with a tj_ceiling the junction is judged against the ceiling, and so is its time over it.

    Hand derivation: 100 W DC from t = 0 at a 25 °C case through the four Foster terms (ΣR = 1.0 K/W)
    gives Tj(t) = 25 + 100 Σ R_i (1 − exp(−t/τ_i)), which settles at 125 °C: below tj_max = 150 °C
    (no time over it), above a 100 °C ceiling from the t_x where the sum reaches 0.75 K/W, found here
    with scipy's brentq. The samples over the ceiling are held until the last one, t_end − t_x, to
    within one step.
    """
    from scipy.optimize import brentq

    from soacheck.policy import Policy

    r, tau = np.array([0.05, 0.15, 0.30, 0.50]), np.array([1e-4, 1e-3, 1e-2, 1e-1])  # conftest.THERMAL
    dt = 1e-4
    t = np.arange(0.0, 0.6, dt)
    trace = pd.DataFrame({"time": t, "voltage": 10.0, "current": 10.0})
    rated = soacheck.trace(modelled, trace, case_temp=25)
    assert rated.passed and rated.trace.time_over_tj_max_s == 0.0
    capped = soacheck.trace(modelled, trace, case_temp=25, policy=Policy("ceiling", tj_ceiling_c=100.0))
    t_x = brentq(lambda s: 100 * np.sum(r * (1 - np.exp(-s / tau))) - 75.0, 1e-6, 0.6)
    # under the ceiling the DC power line is (100 − 25 °C)/1.0 K/W = 75 W (digitized: 1e-4), so 100 W is outside too
    assert not capped.passed and capped.limit == "power" and capped.margin == pytest.approx(1 - 100 / 75, rel=1e-4)
    assert capped.trace.time_over_tj_max_s == pytest.approx(t[-1] - t_x, abs=dt)
