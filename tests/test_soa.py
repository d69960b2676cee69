"""The SOA model: mechanisms, derating, the derated boundary and point checks.

Check values come from a constructed example (conftest.REFERENCE_SOA, a curve built from
straight lines on log-log axes, so the expected numbers follow from I = P/V and
I = I0 (V/V0)^m by hand), from the derating rule P = (tj_max - Tc)/Rth (JEDEC JESD51-1
defines Rth_jc as (Tj - Tc)/P), and from shapely as a reference geometry library.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from soacheck.boundary import allowed_current, boundary_polyline
from soacheck.derating import breakdown_factor, thermal_factor
from soacheck.mechanisms import classify_slopes, interp_chunk, segment_slopes
from soacheck.points import check_points
from soacheck.region import path_crossings, region_polygon

from .conftest import read_part, write_part

REL = 1e-9  # pure arithmetic on exact power laws: only rounding error is allowed


# --------------------------------------------------------------------------- derating rules


@pytest.mark.parametrize(
    ("tc_c", "expected"),
    [
        # f = (tj_max - Tc)/(tj_max - 25): P = (tj_max - Tc)/Rth_jc, JEDEC JESD51-1 definition of Rth_jc
        (25.0, 1.0),
        (75.0, 0.6),
        (100.0, 0.4),
        (150.0, 0.0),  # at tj_max nothing is allowed
        (175.0, 0.0),  # above tj_max: clipped, never negative
        (0.0, 1.0),  # below 25 °C no extra allowance is taken (common practice, no source)
    ],
)
def test_thermal_factor_is_the_linear_derating_line(tc_c, expected):
    assert thermal_factor(tc_c, 150.0) == pytest.approx(expected, rel=REL, abs=1e-12)


def test_breakdown_factor_follows_table_then_thermal(reference_part, reference_part_with_table):
    tc = np.array([25.0, 50.0, 75.0, 112.5, 150.0])
    # no table: derated like thermal, the conservative default (common practice, no source)
    assert breakdown_factor(tc, reference_part) == pytest.approx(thermal_factor(tc, 150.0))
    # the part's table, linear between rows: 1.0 @25, 0.9 @75, 0.8 @150 -> 0.95 @50, 0.85 @112.5
    assert breakdown_factor(tc, reference_part_with_table) == pytest.approx([1.0, 0.95, 0.9, 0.85, 0.0])
    # breakdown derating "none" never derates below tj_max (non-conservative; offered for comparison)
    assert breakdown_factor(tc, reference_part, "none") == pytest.approx([1, 1, 1, 1, 0])


def test_a_rising_derating_table_is_read_as_its_running_minimum(tmp_path):
    extra = "[derating]\nsecond_breakdown = [[25, 1.0], [75, 0.7], [100, 0.9]]\n"
    part = read_part(write_part(tmp_path / "rising", extra=extra))
    # a fraction that rises with temperature is not physical; never allow the rise
    assert breakdown_factor(90.0, part) == pytest.approx(0.7)
    assert breakdown_factor(100.0, part) == pytest.approx(0.7)
    # beyond the last row: the smaller of the held fraction and thermal (150-120)/125 = 0.24
    assert breakdown_factor(120.0, part) == pytest.approx(0.24)


# --------------------------------------------------------------------------- classification


@pytest.mark.parametrize(
    ("slope", "bipolar", "expected"),
    [
        # slope bands (common practice, no source): digitizing noise of ±2 %
        (0.0, True, "current"),
        (-0.14, True, "current"),
        (-1.0, True, "power"),
        (-0.9, True, "power"),
        (-1.11, True, "power"),
        (-1.5, True, "second_breakdown"),
        (-3.0, False, "thermal_instability"),
        (-0.5, True, "unclassified"),
        (-12.0, True, "unclassified"),
    ],
)
def test_segments_are_classified_by_log_log_slope(slope, bipolar, expected):
    assert classify_slopes(np.array([slope]), bipolar=bipolar)[0] == expected


def test_on_resistance_line_only_opens_a_fet_curve():
    slopes = np.array([1.0, 0.0, -1.0, 1.0])
    assert list(classify_slopes(slopes, bipolar=False)) == ["on_resistance", "current", "power", "unclassified"]


def test_slope_is_base_independent():
    # m = ln(I2/I1)/ln(V2/V1): constant power 125 W from 8.3333 V to 40 V has slope -1
    assert segment_slopes(np.array([8.3333, 40.0]), np.array([15.0, 3.125]))[0] == pytest.approx(-1.0, abs=1e-4)


# --------------------------------------------------------------------------- the boundary at 25 °C


def test_25c_reproduces_the_digitized_polyline(bundled_part):
    """At 25 °C case the derated boundary is the digitized curve itself, at every vertex.

    A transfer characteristic's instability cap is a limit the digitized curve does not draw, so it is left out.
    """
    bundled_part = dataclasses.replace(bundled_part, transfer=None)
    for curve in bundled_part.curves:
        got = allowed_current(curve.voltage_v, bundled_part, pulse_s=curve.pulse_s, use_model=False)
        assert got.current_a == pytest.approx(curve.current_a, rel=1e-9)
        # the demo parts' pulse curves were drawn from their Foster terms, so the model
        # gives the same boundary to the 4 significant digits the curves are written in
        modelled = allowed_current(curve.voltage_v, bundled_part, pulse_s=curve.pulse_s)
        assert modelled.current_a == pytest.approx(curve.current_a, rel=1e-3)


def test_between_vertices_the_boundary_is_straight_on_log_log_axes(reference_part):
    # constructed, by hand: on the constant-power segment (8.3333 V, 15 A)-(40 V, 3.125 A)
    # log-log interpolation gives 125 W / 20 V = 6.25 A; linear interpolation in (V, I)
    # would give 10.625 A, 70 % too much.
    got = allowed_current(20.0, reference_part)
    assert got.current_a[0] == pytest.approx(6.25, rel=1e-4)
    linear = np.interp(20.0, reference_part.dc_curve.voltage_v, reference_part.dc_curve.current_a)
    assert linear == pytest.approx(10.625, rel=1e-4)
    # on the second-breakdown segment of slope -2: I = 3.125 (V/40)^-2 -> 2.0 A at 50 V
    assert allowed_current(50.0, reference_part).current_a[0] == pytest.approx(2.0, rel=1e-6)
    assert allowed_current(50.0, reference_part).limit[0] == "second_breakdown"


# --------------------------------------------------------------------------- derating of the boundary


@pytest.mark.parametrize(
    ("tc_c", "voltage_v", "expected_a", "limit"),
    [
        # constructed, by hand: f = (150 - 75)/(150 - 25) = 0.6 at 75 °C -> thermal 75 W
        (75.0, 20.0, 3.75, "power"),  # 75 W / 20 V
        (75.0, 6.0, 12.5, "power"),  # 75 W / 6 V, below the 15 A current limit: the knee moved left
        (75.0, 4.0, 15.0, "current"),  # the current limit is not derated
        (100.0, 2.0, 15.0, "current"),  # f = 0.4: knee at 50 W / 15 A = 3.33 V
        (100.0, 10.0, 5.0, "power"),
        # second breakdown without a table derates like thermal (0.6): 0.6 * 3.125 (60/40)^-2
        (75.0, 60.0, 0.6 * 3.125 * (60 / 40) ** -2, "second_breakdown"),
    ],
)
def test_derated_boundary_by_hand(reference_part, tc_c, voltage_v, expected_a, limit):
    got = allowed_current(voltage_v, reference_part, tc_c=tc_c)
    assert got.current_a[0] == pytest.approx(expected_a, rel=1e-4)  # 5-digit digitized vertex 8.3333 V
    assert got.limit[0] == limit


def test_corner_moves_when_second_breakdown_derates_less_than_thermal(reference_part_with_table):
    """At 75 °C thermal keeps 0.6 of 125 W but second breakdown keeps 0.9 of its line.

    Thermal: I = 75/V. Second breakdown: I = 0.9 * 3.125 * (V/40)^-2 = 4500/V^2. They
    cross at V = 60 V, not at the digitized 40 V corner. At 50 V the thermal line bounds
    (1.5 A); scaling the digitized points segment by segment would have allowed
    0.9 * 2.0 = 1.8 A there (not conservative).
    """
    part = reference_part_with_table
    at = allowed_current([50.0, 59.0, 61.0, 80.0], part, tc_c=75.0)
    assert at.current_a == pytest.approx([1.5, 75 / 59, 4500 / 61**2, 4500 / 80**2], rel=1e-4)
    assert list(at.limit) == ["power", "power", "second_breakdown", "second_breakdown"]
    poly = boundary_polyline(part, tc_c=75.0)
    corner = poly.voltage_v[np.flatnonzero(poly.limit == "second_breakdown")[0]]
    assert corner == pytest.approx(60.0, rel=1e-4)


def test_nothing_is_allowed_at_or_above_tj_max(reference_part):
    got = allowed_current([5.0, 50.0], reference_part, tc_c=150.0)
    assert list(got.current_a) == [0.0, 0.0]
    assert list(got.limit) == ["case_at_tj_max", "case_at_tj_max"]
    check = check_points(5.0, 0.001, reference_part, tc_c=151.0)
    assert not check.inside[0] and math.isnan(check.margin[0])


# --------------------------------------------------------------------------- out of range


def test_below_the_lowest_digitized_voltage_the_first_segment_extends(reference_part):
    got = allowed_current(0.2, reference_part)
    assert got.current_a[0] == pytest.approx(15.0) and got.limit[0] == "current" and got.extrapolated[0]


def test_a_curve_opening_with_thermal_is_capped_when_extended(tmp_path):
    # no digitized current limit: extending the -1 line to lower voltage would allow
    # ever more current; the rated i_max and the highest digitized current cap it
    soa = "pulse,voltage,current\ndc,10,12.5\ndc,100,1.25\n"
    part = read_part(write_part(tmp_path / "thermal-first", soa=soa))
    got = allowed_current([1.0, 5.0, 20.0], part)
    assert got.current_a == pytest.approx([12.5, 12.5, 6.25])


def test_above_v_max_nothing_is_allowed(reference_part):
    got = allowed_current([100.0, 100.5], reference_part)
    assert got.current_a[0] == pytest.approx(0.5)
    assert got.current_a[1] == 0.0 and got.limit[1] == "voltage"


@pytest.mark.parametrize(
    ("pulse_s", "curve_s"),
    [
        (1e-4, 1e-3),  # shorter than the shortest curve: the shortest
        (1e-3, 1e-3),
        (3e-3, math.inf),  # longer than the longest pulse curve: DC
        (math.inf, math.inf),
    ],
)
def test_pulse_widths_use_the_next_longer_curve(reference_part, pulse_s, curve_s):
    got = allowed_current(20.0, reference_part, pulse_s=pulse_s)
    assert got.curve_pulse_s[0] == curve_s


def test_a_pulse_between_two_curves_takes_the_longer_one(bundled_part):
    widths = bundled_part.pulse_widths_s
    between = math.sqrt(widths[0] * widths[1])
    v = np.geomspace(1.0, bundled_part.ratings.v_max_v, 50)
    # without the thermal model (interpolating between curves is not conservative; common practice, no source)
    mid = allowed_current(v, bundled_part, pulse_s=between, use_model=False).current_a
    longer = allowed_current(v, bundled_part, pulse_s=widths[1], use_model=False).current_a
    assert mid == pytest.approx(longer)


def test_pulse_curves_enclose_longer_ones(bundled_part):
    v = np.geomspace(bundled_part.curves[0].voltage_v[0], bundled_part.ratings.v_max_v, 200)
    table = np.stack(
        [allowed_current(v, bundled_part, pulse_s=c.pulse_s, use_model=False).current_a for c in bundled_part.curves]
    )
    # the demo curves are written to 4 significant digits, so a shared line (the FET's
    # on-resistance) may differ between curves by the rounding, 5e-4 at most
    assert np.all(np.diff(table, axis=0) <= 1e-3 * table[:-1])


# --------------------------------------------------------------------------- points


def test_points_that_cannot_be_evaluated_are_never_inside(reference_part):
    check = check_points([np.nan, 10.0, 10.0, -5.0], [1.0, np.nan, 1.0, 1.0], reference_part, tc_c=[25, 25, np.nan, 25])
    assert not check.inside.any()
    assert list(check.limit) == ["invalid"] * 4


def test_a_point_on_the_boundary_is_inside(reference_part):
    on_boundary = allowed_current(20.0, reference_part).current_a[0]
    check = check_points(20.0, on_boundary, reference_part)
    assert check.inside[0] and check.margin[0] == 0.0


def test_scalars_lists_and_arrays_give_the_same_answer(reference_part):
    scalar = check_points(20.0, 3.0, reference_part, tc_c=75.0)
    listed = check_points([20.0], [3.0], reference_part, tc_c=[75.0])
    array = check_points(np.array([20.0, 20.0]), 3.0, reference_part, tc_c=75.0)
    assert scalar.margin.shape == (1,) and array.margin.shape == (2,)
    assert scalar.margin[0] == listed.margin[0] == array.margin[1] == pytest.approx(1 - 3.0 / 3.75, rel=1e-4)


def test_all_the_power_of_a_linear_load_is_heat_in_the_pass_devices(tmp_path):
    """Facts of the trade (common practice, no source): two devices sharing 30 A from a
    20 V source dissipate 600 W, about 300 W each, less what the sense resistors take.

    A device rated 300 W at 25 °C case (thermal line I = 300 W / V) is exactly at its
    limit with 15 A at 20 V; a 0.02 ohm sense resistor in its path takes 15^2 * 0.02 =
    4.5 W and leaves 19.7 V across the device, a margin of 1 - 19.7 * 15 / 300 = 1.5 %.
    """
    soa = "pulse,voltage,current\ndc,1,30\ndc,10,30\ndc,100,3\n"
    toml = """id = "fact-300w"
kind = "npn"
description = "constructed"
source = "constructed"
[ratings]
v_max = 100
i_max = 30
p_max = 300
tj_max = 175
rth_jc = 0.5
"""
    part = read_part(write_part(tmp_path / "fact-300w", soa=soa, toml=toml))
    total_a, source_v, sense_ohm = 30.0, 20.0, 0.02
    each_a = total_a / 2
    assert source_v * total_a == pytest.approx(600.0)
    on_line = check_points(source_v, each_a, part)
    assert on_line.inside[0] and on_line.margin[0] == pytest.approx(0.0, abs=1e-12)
    device_v = source_v - each_a * sense_ohm
    check = check_points(device_v, each_a, part)
    assert check.margin[0] == pytest.approx(1 - device_v * each_a / 300.0)
    assert check.margin[0] == pytest.approx(0.015)


# --------------------------------------------------------------------------- shapely cross-checks


@settings(max_examples=60, deadline=None)
@given(
    index=st.integers(0, 4),
    tc_c=st.floats(-20, 190),
    pulse=st.sampled_from([1e-4, 1e-3, 5e-3, math.inf]),
    seed=st.integers(0, 2**32 - 1),
)
def test_polygon_agrees_with_the_numpy_boundary(index, tc_c, pulse, seed):
    """shapely's intersects_xy (inside or on the boundary) on the region polygon against numpy's I <= I_allowed(V)."""
    from .conftest import BUNDLED_IDS, bundled_library

    part = read_part(bundled_library() / BUNDLED_IDS[index])
    polygon = region_polygon(part, tc_c=tc_c, pulse_s=pulse, v_min_v=0.1, i_floor_a=1e-3)
    rng = np.random.default_rng(seed)
    x = rng.uniform(-1, math.log10(part.ratings.v_max_v), 500)
    y = rng.uniform(-3, 3, 500)
    allowed = allowed_current(10**x, part, tc_c=tc_c, pulse_s=pulse).current_a
    with np.errstate(divide="ignore"):
        gap = np.abs(y - np.log10(allowed))
    clear = gap > 1e-7  # points within rounding of the boundary may fall either way
    numpy_inside = 10**y <= allowed
    shapely_inside = shapely.intersects_xy(polygon, x, y) if not polygon.is_empty else np.zeros(x.shape, bool)
    assert np.array_equal(numpy_inside[clear], shapely_inside[clear])


def test_path_crossing_lies_on_the_boundary(reference_part):
    # a constant-current path at 5 A: enters the thermal limit at 125 W / 5 A = 25 V
    polygon = region_polygon(reference_part)
    hits = path_crossings(np.array([2.0, 60.0]), np.array([5.0, 5.0]), polygon)
    assert hits.shape == (1, 2)
    assert hits[0, 0] == pytest.approx(25.0, rel=1e-4)  # 5-digit digitized vertex 8.3333 V
    assert allowed_current(hits[0, 0], reference_part).current_a[0] == pytest.approx(hits[0, 1], rel=1e-9)


def test_digitizing_noise_along_the_current_limit_is_tolerated(tmp_path):
    # a 2 % wobble along the current limit has a slope of about +0.01: still 'current'
    # (band |m| <= 0.15, common practice, no source)
    soa = "pulse,voltage,current\ndc,1,15\ndc,4,15.3\ndc,8.3333,15\ndc,40,3.125\ndc,100,0.5\n"
    part = read_part(write_part(tmp_path / "noisy", soa=soa))
    got = allowed_current([2.0, 4.0], part)
    assert list(got.limit) == ["current", "current"]
    assert got.current_a[1] == pytest.approx(15.0)  # the rated i_max caps the wobble


def test_every_conservative_choice_is_named_in_the_assumptions(reference_part):
    check = check_points([0.5, 20.0, 20.0], [1.0, 1.0, 1.0], reference_part, pulse_s=[math.inf, 3e-3, 1e-4])
    text = "\n".join(check.assumptions)
    assert "below the lowest digitized voltage" in text
    assert "3ms pulse checked against the dc curve" in text
    assert "100us pulse checked against the 1ms curve" in text
    assert "derated like the thermal limit" in text


@settings(max_examples=40, deadline=None)
@given(index=st.integers(0, 4), tc_c=st.floats(-20, 140), pulse=st.sampled_from([1e-4, 1e-3, 5e-3, math.inf]))
def test_polyline_fast_path_agrees_with_allowed_current(index, tc_c, pulse):
    """The exact-vertex polyline (used for long traces) against the general evaluation."""
    from .conftest import BUNDLED_IDS, bundled_library

    part = read_part(bundled_library() / BUNDLED_IDS[index])
    poly = boundary_polyline(part, tc_c=tc_c, pulse_s=pulse, v_min_v=1e-3)
    v = np.geomspace(1e-4, part.ratings.v_max_v * 1.5, 400)
    expected = allowed_current(v, part, tc_c=tc_c, pulse_s=pulse).current_a
    assert poly.current_at(v) == pytest.approx(expected, rel=1e-9, abs=1e-300)


@pytest.mark.parametrize("where", ["one piece", "on a vertex", "several pieces", "beyond the last", "NaN", "few"])
def test_interpolating_a_chunk_on_one_piece_equals_numpy_interp_to_the_bit(where):
    # the fast path of a trace's chunk must not change a single answer: np.interp is the reference
    rng = np.random.default_rng(4)
    xp, fp = np.array([-7.0, 2.6, 2.7, 4.2, 4.9]), np.log([16.0, 16.0, 14.6, 3.45, 1.04])
    x = {
        "one piece": rng.uniform(2.75, 4.1, 5000),
        "on a vertex": np.r_[rng.uniform(2.7, 4.2, 5000), 2.7, 2.7],
        "several pieces": rng.uniform(2.0, 4.5, 5000),
        "beyond the last": rng.uniform(4.0, 5.5, 5000),
        "NaN": np.r_[rng.uniform(2.75, 4.1, 5000), np.nan],
        "few": rng.uniform(2.75, 4.1, 10),
    }[where]
    expected = np.interp(x, xp, fp, right=-np.inf)
    np.testing.assert_array_equal(interp_chunk(x, xp, fp, right=-np.inf), expected)
    np.testing.assert_array_equal(interp_chunk(x.copy(), xp, fp, right=-np.inf, overwrite_x=True), expected)
