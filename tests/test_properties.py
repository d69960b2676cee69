"""Properties that must hold for any input: unknown is never safe, chunking changes nothing, derating only lowers.

- A non-finite number anywhere a command takes one never earns exit 0 (README, "Bad input,
  limits and exit codes"); it is bad input, exit 2, one line.
- A trace fed in chunks reports exactly what one pass reports, every field, times included
  (the checker carries its state across chunk borders; docs of soacheck.trace).
- The allowed current never rises with case temperature: every derating factor falls with
  Tc (common practice, no source; e.g. the thermal line (tj_max − Tc)/(tj_max − 25 °C)).
- The allowed current never lies above the digitized curve (derating only lowers it;
  between digitized points the boundary is the straight log-log segment, so the curve is
  interpolated in logs here).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from soacheck.boundary import allowed_current
from soacheck.library import bundled_library
from soacheck.partfiles import read_part
from soacheck.stage import Cooling
from soacheck.trace import TraceChecker

from .conftest import BUNDLED_IDS, THERMAL, write_part
from .helpers import invoke

PART = "demo-npn-to3-250w"
NON_FINITE = st.sampled_from(["nan", "inf", "-inf", "NaN", "-nan", "+inf", "Infinity", "1e999", "-1e999"])
STAGE = f'part = "{PART}"\ncount = 2\nballast = 0.1\nvbe_spread = 0.02\ncase_temp = 40\n'
TRACE = "time,voltage,current\n0,100,20\n0.001,100,20\n"

# each command with one number left open: X
COMMANDS = [
    ("check", PART, "-v", "10", "-i", "1", "--case-temp", "X"),
    ("check", PART, "-v", "X", "-i", "1"),
    ("check", PART, "-v", "10", "-i", "X"),
    ("check", PART, "-v", "10", "-i", "1", "--pulse", "1ms", "--duty", "X"),
    ("trace", PART, "t.csv", "--case-temp", "X"),
    ("trace", PART, "t.csv", "--heatsink-rth", "1", "--heatsink-capacity", "100", "--ambient", "X"),
    ("trace", PART, "t.csv", "--heatsink-rth", "1", "--heatsink-capacity", "X"),
    ("trace", PART, "t.csv", "--heatsink-rth", "X", "--heatsink-capacity", "100"),
    ("compare", PART, "--trace", "t.csv", "--case-temp", "X"),
    ("sharing", "s.toml", "-i", "X", "-v", "20", "--draws", "10"),
    ("sharing", "s.toml", "-i", "2", "-v", "X", "--draws", "10"),
    ("envelope", "s.toml", "--case-temp", "X"),
    ("sweep", "s.toml", "--ramp", "current", "--from", "0", "--to", "X", "--at", "10", "--samples", "20"),
    ("sweep", "s.toml", "--ramp", "current", "--from", "0", "--to", "6", "--at", "X", "--samples", "20"),
    ("discharge", "s.toml", "-b", "nmc", "--cells", "4", "--capacity", "2", "--mode", "cc", "--setpoint", "X"),
]
FILES = [
    ("t.csv", "time,voltage,current\n0,100,20\nX,100,20\n"),
    ("t.csv", "time,voltage,current\n0,X,20\n0.001,100,20\n"),
    ("t.csv", "time,voltage,current\n0,100,X\n0.001,100,20\n"),
    ("s.toml", STAGE.replace("case_temp = 40", "case_temp = X")),
    ("s.toml", STAGE.replace("ballast = 0.1", "ballast = X")),
]


def _toml_number(text: str) -> str:
    """The same non-finite value as TOML writes it (nan, inf, -inf; 1e999 overflows to inf in both)."""
    value = float(text)
    return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf") if math.isinf(value) else text


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(command=st.sampled_from(COMMANDS), bad=NON_FINITE)
def test_a_non_finite_option_never_passes(tmp_path, monkeypatch, command, bad):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "t.csv").write_text(TRACE)
    (tmp_path / "s.toml").write_text(STAGE)
    result = invoke(*(bad if word == "X" else word for word in command))
    assert result.exit_code == 2, f"{command} with {bad}: {result.output}"
    assert "Traceback" not in result.output


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(file=st.sampled_from(FILES), bad=NON_FINITE)
def test_a_non_finite_number_in_a_file_never_passes(tmp_path, monkeypatch, file, bad):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "t.csv").write_text(TRACE)
    (tmp_path / "s.toml").write_text(STAGE)
    name, text = file
    value = _toml_number(bad) if name.endswith(".toml") else bad
    (tmp_path / name).write_text(text.replace("X", value))
    command = (
        ("trace", PART, "t.csv") if name == "t.csv" else ("sharing", "s.toml", "-i", "2", "-v", "20", "--draws", "10")
    )
    result = invoke(*command)
    assert result.exit_code == 2, f"{name} with {bad}: {result.output}"
    assert "Traceback" not in result.output


# --------------------------------------------------------------------------- chunked trace == one pass


@pytest.fixture(scope="module")
def modelled_part(tmp_path_factory):
    return read_part(write_part(tmp_path_factory.mktemp("p") / "modelled", extra=THERMAL))


SAMPLE = st.tuples(st.sampled_from([0.0, 5.0, 20.0, 40.0, 90.0]), st.sampled_from([0.0, 0.5, 2.0, 6.0, 14.0, 30.0]))


def _summary(checker: TraceChecker, t, v, i, cuts) -> dict:
    for rows in np.split(np.arange(t.size), cuts):
        if rows.size:
            checker.feed(t[rows], v[rows], i[rows])
    summary = checker.result().summary()
    summary.pop("assumptions")
    return summary


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    samples=st.lists(SAMPLE, min_size=2, max_size=40),
    steps=st.lists(st.sampled_from([1e-5, 1e-4, 1e-3, 2e-2]), min_size=1, max_size=3),
    cuts=st.lists(st.integers(1, 39), max_size=5),
    heatsink=st.booleans(),
)
def test_a_trace_fed_in_chunks_reports_what_one_pass_reports(modelled_part, samples, steps, cuts, heatsink):
    v = np.array([s[0] for s in samples])
    i = np.array([s[1] for s in samples])
    t = np.cumsum(np.resize(np.array(steps), v.size)) - steps[0]
    cuts = sorted({c for c in cuts if c < v.size})
    kwargs = {"cooling": Cooling(0.3, 0.6, 50.0, 25.0)} if heatsink else {"tc_c": 40.0}
    whole = _summary(TraceChecker(modelled_part, **kwargs), t, v, i, [])
    chunked = _summary(TraceChecker(modelled_part, **kwargs), t, v, i, cuts)
    assert whole.keys() == chunked.keys()
    for key in whole:
        a, b = whole[key], chunked[key]
        if isinstance(a, float) and isinstance(b, float):
            assert a == pytest.approx(b, rel=1e-9, abs=1e-12) or (math.isnan(a) and math.isnan(b)), key
        else:
            assert a == b, (key, a, b)


# --------------------------------------------------------------------------- derating only lowers


PARTS = {name: read_part(bundled_library() / name) for name in BUNDLED_IDS}


@settings(max_examples=60, deadline=None)
@given(
    name=st.sampled_from(BUNDLED_IDS),
    fraction=st.floats(0.0, 1.0),
    tc=st.lists(st.floats(-40.0, 250.0), min_size=2, max_size=6),
)
def test_allowed_current_never_rises_with_case_temperature(name, fraction, tc):
    part = PARTS[name]
    dc = part.curves[-1]
    v = float(np.exp(np.log(dc.voltage_v[0]) + fraction * np.log(dc.voltage_v[-1] / dc.voltage_v[0])))
    temps = np.sort(np.array(tc))
    allowed = allowed_current(np.full(temps.size, v), part, tc_c=temps).current_a
    assert np.all(np.diff(allowed) <= 1e-12 * np.maximum(allowed[:-1], 1.0)), (temps, allowed)


@settings(max_examples=60, deadline=None)
@given(
    name=st.sampled_from(BUNDLED_IDS),
    fractions=st.lists(st.floats(0.0, 1.0), min_size=1, max_size=8),
    tc=st.floats(25.0, 250.0),
)
def test_allowed_current_never_lies_above_the_digitized_curve(name, fractions, tc):
    part = PARTS[name]
    for curve in part.curves:
        lv, li = np.log(curve.voltage_v), np.log(curve.current_a)
        v = np.exp(lv[0] + np.array(fractions) * (lv[-1] - lv[0]))
        digitized = np.exp(np.interp(np.log(v), lv, li))
        allowed = allowed_current(v, part, tc_c=tc, pulse_s=curve.pulse_s, use_model=False).current_a
        assert np.all(allowed <= digitized * (1 + 1e-9)), (curve.pulse_s, v, allowed, digitized)


def test_the_margin_time_is_never_an_idle_sample(modelled_part):
    """Idle samples (0 V, 0 A) carry no current: the least margin is at the one loaded sample, 1 ms."""
    t = np.array([0.0, 1e-3, 2e-3, 3e-3])
    checker = TraceChecker(modelled_part, tc_c=25.0)
    checker.feed(t, np.array([0.0, 10.0, 0.0, 0.0]), np.array([0.0, 1.0, 0.0, 0.0]))
    summary = checker.result().summary()
    assert summary["margin_time"] == pytest.approx(1e-3)
    # 1 A at 10 V against 15 A allowed (current limit to 8.33 V, then 125 W / 10 V = 12.5 A):
    # margin 1 - 1/12.5 = 0.92 (conftest's constructed curve, closed form)
    assert summary["margin"] == pytest.approx(0.92, rel=1e-3)


def test_a_sample_that_cannot_be_evaluated_makes_the_trace_fail_as_invalid(modelled_part, monkeypatch):
    checker = TraceChecker(modelled_part, tc_c=25.0)
    monkeypatch.setattr(checker.boundaries, "excess", lambda index, v, i, tc, **_: np.full(v.shape, np.nan))
    checker.feed(np.array([0.0, 1e-3]), np.array([10.0, 10.0]), np.array([1.0, 1.0]))
    result = checker.result()
    assert not result.passed
    assert result.limit == "invalid" and result.first_violation_time_s == 0.0
