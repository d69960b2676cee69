"""The transfer characteristic, α(I), the ZTC point and the instability cap, against a square-law device.

The reference device is written here, independently of soacheck:

    I_D = K(T)·(V_GS − V_th(T))²,  K(T) = K₃₀₀·(T/300 K)^−1.5,  V_th(T) = V_th,25 + θ·(T − 25 °C)

- the square law of the saturated MOSFET: Sedra & Smith, *Microelectronic Circuits*, the
  MOSFET chapter (from memory);
- mobility falling as T^−1.5 (lattice scattering): S. M. Sze, *Physics of Semiconductor
  Devices*, the mobility section (from memory);
- θ = dV_th/dT = −5 mV/K, inside the −2 … −7 mV/K usual for power MOSFETs (from memory).

The stability criterion V_DS·α·Z < 1 is Spirito, Breglio, d'Alessandro, Rinaldi, MIEL 2002.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.optimize

from soacheck.errors import SoacheckError
from soacheck.lint import lint_part
from soacheck.mosfet import (
    gate_voltage_at,
    instability_cap,
    temperature_coefficient,
    transconductance,
    ztc_point,
)
from soacheck.partfiles import read_part, read_transfer
from soacheck.points import check_points

from .conftest import write_part

K300 = 8.0  # A/V², invented
VTH25 = 3.5  # V, invented
THETA = -0.005  # V/K, from memory (see the module docstring)
T_COOL, T_HOT = 25.0, 125.0  # °C, the two curves a datasheet draws (invented)


def k_of(t_c):
    return K300 * ((t_c + 273.15) / 300.0) ** -1.5


def vth_of(t_c):
    return VTH25 + THETA * (t_c - 25.0)


def drain(vgs, t_c):
    return k_of(t_c) * np.maximum(vgs - vth_of(t_c), 0.0) ** 2


def alpha_reference(i_a):
    """The finite difference of the two square-law curves at the cooler curve's V_GS (closed form)."""
    vgs = vth_of(T_COOL) + np.sqrt(i_a / k_of(T_COOL))
    return (drain(vgs, T_HOT) - i_a) / (T_HOT - T_COOL)


def write_transfer(path, temps=(T_COOL, T_HOT), points=12, i_lo=0.1, i_hi=100.0):
    """transfer.csv digitized from the square-law device, ``points`` per curve from i_lo to i_hi."""
    rows = ["temp,vgs,current"]
    for t in temps:
        currents = np.geomspace(i_lo, i_hi, points)
        vgs = vth_of(t) + np.sqrt(currents / k_of(t))
        rows += [f"{t:g},{float(v)!r},{float(i)!r}" for v, i in zip(vgs, currents, strict=True)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


@pytest.fixture
def transfer(tmp_path):
    return read_transfer(write_transfer(tmp_path / "transfer.csv"))


def test_alpha_is_the_finite_difference_of_the_square_law(transfer):
    """Straight in √I between points is exact for the square law, so α agrees to rounding."""
    currents = np.array([0.2, 1.0, 5.0, 20.0, 60.0])
    np.testing.assert_allclose(temperature_coefficient(currents, transfer), alpha_reference(currents), rtol=1e-9)


def test_ztc_current_is_where_the_two_square_laws_cross(transfer):
    """√K₁(v − a₁) = √K₂(v − a₂) gives v = (√K₁a₁ − √K₂a₂)/(√K₁ − √K₂), I = K₁(v − a₁)² (closed form)."""
    s1, s2 = math.sqrt(k_of(T_COOL)), math.sqrt(k_of(T_HOT))
    v = (s1 * vth_of(T_COOL) - s2 * vth_of(T_HOT)) / (s1 - s2)
    expected = k_of(T_COOL) * (v - vth_of(T_COOL)) ** 2  # about 34 A
    ztc = ztc_point(transfer)
    assert ztc.side == "within"
    # grid refinement by linear interpolation of α between log-spaced points 1.2 % apart
    assert ztc.current_a == pytest.approx(expected, rel=1e-4)


def test_ztc_beyond_the_digitized_range_is_said(tmp_path):
    """Curves digitized only up to 10 A never cross (the ZTC point is near 34 A)."""
    short = read_transfer(write_transfer(tmp_path / "transfer.csv", i_hi=10.0))
    assert ztc_point(short).side == "above"
    assert instability_cap(short, 0.5).capped_above


@pytest.mark.parametrize("voltage_v", [60.0, 80.0, 100.0])
def test_instability_cap_matches_an_independent_root_of_the_square_law(transfer, voltage_v):
    """Smallest I with V·α(I)·Z = 1, by scipy's brentq on the closed-form α, below its peak."""
    z = 0.5  # K/W, invented: a DC rth_jc
    peak = scipy.optimize.minimize_scalar(
        lambda i: -alpha_reference(i), bounds=(0.1, 34.0), method="bounded", options={"xatol": 1e-10}
    ).x
    assert voltage_v * z * alpha_reference(peak) > 1  # each voltage is past the onset
    expected = scipy.optimize.brentq(lambda i: voltage_v * z * alpha_reference(i) - 1.0, 0.1, peak, xtol=1e-12)
    cap = instability_cap(transfer, z)
    got = math.exp(np.interp(math.log(voltage_v), np.log(cap.voltage_v), np.log(cap.current_a)))
    # log-log interpolation between tabulated points 1.2 % apart in current
    assert got == pytest.approx(expected, rel=1e-3)


def test_no_cap_below_the_onset_voltage(transfer):
    """Below V = 1/(Z·max α) the gain V·α·Z stays under 1 at every current (closed form via scipy)."""
    z = 0.5
    peak = scipy.optimize.minimize_scalar(lambda i: -alpha_reference(i), bounds=(0.1, 34.0), method="bounded").x
    onset_v = 1.0 / (z * alpha_reference(peak))
    cap = instability_cap(transfer, z)
    assert cap.voltage_v.min() == pytest.approx(onset_v, rel=1e-4)


def test_transconductance_is_two_root_k_i(transfer):
    """g_m = 2√(K·I_D) for the square law (Sedra & Smith), at both curve temperatures."""
    for t in (T_COOL, T_HOT):
        for i in (1.0, 10.0):
            assert transconductance(i, t, transfer) == pytest.approx(2 * math.sqrt(k_of(t) * i), rel=1e-6)


def test_gate_voltage_is_linear_in_temperature_between_curves(transfer):
    """Halfway between the curves, V_GS is the mean of the two curves' V_GS at the same current (the model)."""
    i = 5.0
    v1 = vth_of(T_COOL) + math.sqrt(i / k_of(T_COOL))
    v2 = vth_of(T_HOT) + math.sqrt(i / k_of(T_HOT))
    assert gate_voltage_at(i, 75.0, transfer) == pytest.approx(0.5 * (v1 + v2), rel=1e-12)


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("temp,vgs,current\n25,4,1\n25,5,10\n", "two or more junction temperatures"),
        ("temp,vgs,current\n25,4,1\n25,5,10\n125,4,2\n125,3.9,5\n", "does not rise"),
        ("temp,vgs,current\n25,4,1\n25,5,10\n125,4,2\n", "one point"),
        ("temp,vgs,current\n25,4,1\n25,5,0\n125,4,2\n125,5,5\n", "above zero"),
    ],
)
def test_bad_transfer_files_name_the_problem(tmp_path, text, fragment):
    path = tmp_path / "transfer.csv"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SoacheckError, match=fragment):
        read_transfer(path)


def _nmos_folder(tmp_path, **transfer_kwargs):
    folder = write_part(tmp_path / "fet", kind="nmos")
    write_transfer(folder / "transfer.csv", **transfer_kwargs)
    return folder


def test_lint_says_when_the_ztc_point_lies_beyond_the_curves(tmp_path):
    """Digitized to 10 A the square-law curves do not cross (their ZTC point is near 34 A)."""
    found = [f for f in lint_part(_nmos_folder(tmp_path, i_hi=10.0)) if f.file == "transfer.csv"]
    assert len(found) == 1 and found[0].severity == "warning" and "beyond the digitized range" in found[0].message


def test_lint_is_quiet_when_the_curves_cross(tmp_path):
    assert not [f for f in lint_part(_nmos_folder(tmp_path)) if f.file == "transfer.csv"]


def test_a_transfer_file_on_a_bipolar_part_is_refused(tmp_path):
    folder = write_part(tmp_path / "bjt", kind="npn")
    write_transfer(folder / "transfer.csv")
    with pytest.raises(SoacheckError, match="FET or IGBT"):
        read_part(folder)


# a FET curve with no steep segment (constructed): 15 A to 8.33 V, then 125 W to 100 V
FET_SOA = "pulse,voltage,current\ndc,1,15\ndc,8.3333,15\ndc,100,1.25\n"


def test_check_caps_the_current_where_the_square_law_device_runs_away(tmp_path):
    """At 60 V with the case held, Z = rth_jc = 1.0 K/W: the cap is the smallest I with 60·α(I)·1.0 = 1.

    Reference: brentq on the closed-form α of the square-law device below its peak; the
    DC power line allows 2.08 A there, so the cap is what bounds the point.
    """
    folder = write_part(tmp_path / "fet", soa=FET_SOA, kind="nmos")
    write_transfer(folder / "transfer.csv", i_lo=0.01)
    part = read_part(folder)
    peak = scipy.optimize.minimize_scalar(lambda i: -alpha_reference(i), bounds=(0.01, 34.0), method="bounded").x
    expected = scipy.optimize.brentq(lambda i: 60.0 * 1.0 * alpha_reference(i) - 1.0, 0.01, peak, xtol=1e-12)
    got = check_points(60.0, 1.0, part, tc_c=75.0)
    assert got.limit[0] == "thermal_instability" and not got.inside[0]
    # not derated with case temperature; log-log interpolation between points 1.6 % apart in current
    assert got.allowed_current_a[0] == pytest.approx(expected, rel=2e-3)
    assert any("transfer.csv" in note for note in got.assumptions)


def test_a_fet_without_transfer_curves_says_no_instability_check_was_possible(tmp_path):
    part = read_part(write_part(tmp_path / "fet", soa=FET_SOA, kind="nmos"))
    got = check_points(50.0, 1.0, part)
    assert any("no thermal-instability check beyond the digitized SOA curve" in n for n in got.assumptions)


def test_show_draws_the_ztc_current_and_the_instability_cap(tmp_path):
    """The plot carries a horizontal line at the ZTC current (closed form, about 34 A) and the DC cap."""
    from soacheck.plots import plot_soa

    folder = write_part(tmp_path / "fet", soa=FET_SOA, kind="nmos")
    write_transfer(folder / "transfer.csv", i_lo=0.01)
    ax = plot_soa(read_part(folder))
    labels = {line.get_label(): line for line in ax.get_lines()}
    ztc = next(line for label, line in labels.items() if label.startswith("ZTC current"))
    s1, s2 = math.sqrt(k_of(T_COOL)), math.sqrt(k_of(T_HOT))
    v = (s1 * vth_of(T_COOL) - s2 * vth_of(T_HOT)) / (s1 - s2)
    assert ztc.get_ydata()[0] == pytest.approx(k_of(T_COOL) * (v - vth_of(T_COOL)) ** 2, rel=1e-3)
    cap = labels["instability cap (DC, case held)"]
    # at 60 V the drawn cap is the brentq root of 60·α(I)·1.0 = 1 (as in the check above)
    volts, amps = cap.get_xdata(), cap.get_ydata()
    peak = scipy.optimize.minimize_scalar(lambda i: -alpha_reference(i), bounds=(0.01, 34.0), method="bounded").x
    expected = scipy.optimize.brentq(lambda i: 60.0 * alpha_reference(i) - 1.0, 0.01, peak, xtol=1e-12)
    got = math.exp(np.interp(math.log(60.0), np.log(volts), np.log(amps)))
    assert got == pytest.approx(expected, rel=2e-2)  # the plot samples 300 voltages
