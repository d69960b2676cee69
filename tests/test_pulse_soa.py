"""Pulse SOA from a part's thermal model: P = (tj_max - Tc)/Zth(tp, D) (common
practice, no source; Zth(tp, D) the exact periodic steady state of the Foster network)."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from typer.testing import CliRunner

from soacheck.boundary import allowed_current, model_consistency
from soacheck.cli import app
from soacheck.partfiles import read_part
from soacheck.points import check_points
from soacheck.thermal_model import thermal_model

from .conftest import REFERENCE_SOA, THERMAL, write_part
from .helpers import zth_closed_form, zth_train_closed_form

runner = CliRunner(env={"COLUMNS": "200"})


@pytest.mark.parametrize(
    ("tp_s", "duty", "tc_c"), [(3e-3, 0.1, 25.0), (3e-3, 0.1, 80.0), (1e-3, 0.1, 60.0), (5e-4, 0.0, 25.0)]
)
def test_cli_thermal_limit_is_tj_headroom_over_zth(tmp_path, tp_s, duty, tc_c):
    folder = write_part(tmp_path / "modelled", extra=THERMAL)
    voltage = 30.0  # on the constant-power part of the 1 ms curve, below its second breakdown
    args = [
        "check",
        str(folder),
        "-v",
        str(voltage),
        "-i",
        "1",
        "--pulse",
        f"{tp_s * 1e6:g}us",
        "-t",
        str(tc_c),
        "--json",
    ]
    if duty:
        args += ["--duty", str(duty)]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.output
    (point,) = json.loads(result.stdout)["points"]
    expected = (150 - tc_c) / zth_train_closed_form(tp_s, duty) / voltage  # A, the closed form in tests/helpers.py
    if point["limit"] == "power":
        assert point["allowed_current"] == pytest.approx(expected, rel=0.02)  # issue's acceptance: 2 %
    else:  # bounded lower by another mechanism: never above the thermal limit
        assert point["allowed_current"] <= expected


def test_a_pulse_train_allows_less_than_a_single_pulse(modelled_part):
    single = allowed_current(20.0, modelled_part, pulse_s=1e-3).current_a[0]
    train = allowed_current(20.0, modelled_part, pulse_s=1e-3, duty=0.1).current_a[0]
    # constructed network (conftest FOUR): 125/0.178340 = 700.91 W single, 125/0.242263 = 515.97 W at
    # D = 0.1, Zth from the closed forms Σ Ri (1 - e^(-tp/τi)) and Σ Ri (1 - e^(-tp/τi))/(1 - e^(-T/τi)).
    # The single pulse's 35.05 A lies above the 1 ms curve's second-breakdown line extended to
    # 20 V, 10 (20/40)^m with m = ln(2/10)/ln(100/40), which bounds it instead.
    m = math.log(2 / 10) / math.log(100 / 40)
    breakdown_a = 10 * 0.5**m
    assert single == pytest.approx(min(700.91 / 20, breakdown_a), rel=1e-4)
    # In the train each pulse starts from a warm junction: second breakdown derated (like the thermal
    # limit, the part has no table) at Tc + V·I·Z_start, Z_start = Σ Ri (1 - e^(-tp/τi)) e^(-(T-tp)/τi)
    # / (1 - e^(-T/τi)). I = c (150 - 25 - V I Z_start)/125 solves to I = 125 c/(125 + c V Z_start).
    period = 1e-3 / 0.1
    z_start = sum(
        r * -math.expm1(-1e-3 / tau) * math.exp(-(period - 1e-3) / tau) / -math.expm1(-period / tau)
        for r, tau in zip([0.05, 0.15, 0.30, 0.50], [1e-4, 1e-3, 1e-2, 1e-1], strict=True)
    )
    breakdown_train_a = 125 * breakdown_a / (125 + breakdown_a * 20 * z_start)
    assert train == pytest.approx(min(515.97 / 20, breakdown_train_a), rel=1e-4)
    assert train < single


def test_breakdown_still_comes_from_the_next_longer_curve(modelled_part):
    # at 90 V the reference part's 1 ms curve is second breakdown: 10 (V/40)^-1.756
    got = allowed_current(90.0, modelled_part, pulse_s=5e-4)
    m = math.log(2 / 10) / math.log(100 / 40)
    assert got.limit[0] == "second_breakdown"
    assert got.current_a[0] == pytest.approx(10 * (90 / 40) ** m, rel=1e-9)
    assert got.curve_pulse_s[0] == pytest.approx(1e-3)


def test_i_pulse_max_caps_modelled_pulses(modelled_part):
    got = allowed_current(1.0, modelled_part, pulse_s=1e-4)
    assert got.current_a[0] == pytest.approx(40.0) and got.limit[0] == "current"  # ratings.i_pulse_max


def test_without_a_model_a_train_is_checked_against_dc(reference_part):
    got = allowed_current(20.0, reference_part, pulse_s=1e-3, duty=0.1)
    assert got.curve_pulse_s[0] == math.inf and not got.modelled[0]
    check = check_points(20.0, 1.0, reference_part, pulse_s=1e-3, duty=0.1)
    assert any("repetitive train without a thermal model" in note for note in check.assumptions)


def test_zth_csv_is_fitted_when_no_terms_are_given(tmp_path):
    folder = write_part(tmp_path / "fitted")
    t = np.geomspace(1e-5, 1.0, 21)
    rows = "\n".join(f"{a:.6g},{b:.5g}" for a, b in zip(t, zth_closed_form(t), strict=True))
    (folder / "zth.csv").write_text("time,zth\n" + rows + "\n")
    part = read_part(folder)
    model = thermal_model(part)
    assert model is not None and "zth.csv" in model.origin
    assert model.fit_error < 0.02
    # second breakdown not derated, so that the power line of the fit bounds the train at 20 V
    got = allowed_current(20.0, part, pulse_s=5e-4, duty=0.2, breakdown="none")
    assert got.limit[0] == "power"
    assert got.current_a[0] == pytest.approx(125 / zth_train_closed_form(5e-4, 0.2) / 20, rel=0.02)


def test_model_and_curves_that_disagree_are_reported(tmp_path):
    wrong = "[thermal]\nfoster_r = [0.05, 0.15, 0.30, 0.80]\nfoster_tau = [1e-4, 1e-3, 1e-2, 1e-1]\n"
    part = read_part(write_part(tmp_path / "wrong", extra=wrong))
    findings = model_consistency(part)
    assert any("differs from rth_jc" in f for f in findings)
    check = check_points(20.0, 1.0, part, pulse_s=3e-3)
    assert any(note.startswith("warning: thermal model") for note in check.assumptions)


def test_bundled_models_agree_with_their_pulse_curves(bundled_part):
    # the demo curves were drawn from their Foster terms: nothing to report
    assert model_consistency(bundled_part) == []


@pytest.mark.parametrize(
    ("content", "fragment"),
    [
        ("time,zth\n0.001,0.2\n0.001,0.3\n", "does not rise"),
        ("time,zth\n0.001,0.2\n0.01,0.1\n", "zth falls"),
        ("time,zth\n0.001,0.2\n0.01,nan\n", "'nan'"),
    ],
)
def test_bad_zth_file_exits_2(tmp_path, content, fragment):
    folder = write_part(tmp_path / "badzth", soa=REFERENCE_SOA)
    (folder / "zth.csv").write_text(content)
    result = runner.invoke(app, ["check", str(folder), "-v", "10", "-i", "1"])
    assert result.exit_code == 2 and "zth.csv" in result.stderr and fragment in result.stderr, result.output


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--pulse", "1ms", "--duty", "0"], "--duty is 0"),
        (["--pulse", "1ms", "--duty", "1.5"], "--duty is 1.5"),
        (["--duty", "0.5"], "needs a pulse width"),
    ],
)
def test_bad_duty_exits_2(args, fragment):
    result = runner.invoke(app, ["check", "demo-npn-to3-250w", "-v", "10", "-i", "1", *args])
    assert result.exit_code == 2 and fragment in result.stderr, result.output
