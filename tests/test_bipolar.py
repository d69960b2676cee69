"""Bipolar current gain, base drive and the Darlington flag, read from part.toml."""

from __future__ import annotations

import math

import numpy as np
import pytest

from soacheck.bipolar import Gain, base_current, current_gain
from soacheck.errors import SoacheckError
from soacheck.partfiles import read_part

from .conftest import write_part

# invented gain table: h_FE 100 up to 1 A, falling to 20 at 10 A (high-level injection)
GAIN = Gain(np.array([0.1, 1.0, 10.0]), np.array([100.0, 100.0, 20.0]))


def test_gain_is_straight_between_rows_on_log_log_axes():
    """At √10 A, halfway between 1 A and 10 A on a log axis, h_FE is √(100·20) = 44.72 (hand value)."""
    assert current_gain(math.sqrt(10.0), GAIN) == pytest.approx(math.sqrt(100 * 20), rel=1e-12)


def test_gain_outside_the_table_is_its_lowest_value():
    """Outside the digitized currents the driver is asked for the most: h_FE = min of the table (20)."""
    np.testing.assert_allclose(current_gain([0.01, 30.0], GAIN), [20.0, 20.0])


def test_base_current_is_emitter_current_over_gain_plus_one():
    """I_B = I_E/(h_FE + 1) (Sedra & Smith): 10 A at h_FE 20 needs 10/21 A."""
    np.testing.assert_allclose(base_current([10.0, 0.5], GAIN), [10 / 21, 0.5 / 101], rtol=1e-12)


def test_gain_and_darlington_are_read_from_part_toml(tmp_path):
    extra = "[gain]\ncurrent = [0.1, 1, 10]\nhfe = [1000, 2000, 400]\n"
    toml = (
        'id = "dar"\nkind = "npn"\ndarlington = true\ndescription = "d"\nsource = "s"\n'
        "[ratings]\nv_max = 100\ni_max = 15\np_max = 125\ntj_max = 150\nrth_jc = 1.0\n" + extra
    )
    part = read_part(write_part(tmp_path / "dar", toml=toml))
    assert part.darlington
    assert current_gain(1.0, part.gain) == pytest.approx(2000.0)


@pytest.mark.parametrize(
    ("kind", "extra", "fragment"),
    [
        ("npn", "[gain]\ncurrent = [1, 0.5]\nhfe = [50, 40]\n", "does not rise"),
        ("npn", "[gain]\ncurrent = [1, 2]\nhfe = [50]\n", "one h_FE per current"),
        ("npn", "[gain]\ncurrent = [1, 2]\nhfe = [50, 0]\n", "above zero"),
        ("nmos", "[gain]\ncurrent = [1, 2]\nhfe = [50, 40]\n", "bipolar part"),
    ],
)
def test_bad_gain_tables_name_the_key(tmp_path, kind, extra, fragment):
    folder = write_part(tmp_path / "bad", kind=kind, extra=extra)
    with pytest.raises(SoacheckError, match=fragment):
        read_part(folder)
