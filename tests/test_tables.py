"""Tables a person reads at 80 columns: essential columns whole, units in headings or beside values.

The essential columns (verdict, margin, overload, limit, allowed current) must never be cut
to ``allo…`` or ``seco…``; less important columns are left out, and a line says so.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from soacheck.cli.tables import Column, fit_table

from .helpers import invoke

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
STAGE = EXAMPLES / "stage.toml"
NARROW = {"COLUMNS": "80", "SOACHECK_LIBRARY": ""}


def narrow(*args):
    result = invoke(*args, env=NARROW)
    assert result.exit_code in (0, 1), result.output
    return result.stdout


def assert_whole(text: str, *values: str) -> None:
    """Every value appears in full and no cell of the table is cut short with an ellipsis."""
    assert "…" not in text, text
    for value in values:
        assert value in text, f"{value!r} missing from\n{text}"
    assert all(len(line) <= 80 for line in text.splitlines()), text


def test_check_table_keeps_every_essential_column_whole_at_80_columns():
    text = narrow("check", "demo-npn-to3-250w", "--points", EXAMPLES / "points.csv")
    # the examples' last point at 41 V, 8 A, 35 °C, 10 ms lies under second breakdown
    assert_whole(text, "allowed", "margin", "limit", "point", "second_breakdown", "inside", "(%)", "(A)")
    assert "not shown at 80 columns" in text


def test_an_outside_point_shows_its_overload_whole():
    """60 V, 5 A at 60 °C on the 250 W part: allowed 3.334 A, so I/I_allowed = 5/3.334 = 1.5."""
    text = narrow("check", "demo-npn-to3-250w", "-v", 60, "-i", 5, "-t", 60)
    assert_whole(text, "OUTSIDE", "overload", "1.5", "-50.0", "power")


def test_the_longest_limit_name_stays_whole():
    text = narrow("check", "demo-nmos-to247-300w", "-v", 60, "-i", 5, "-t", 60, "--pulse", "1ms", "--duty", "0.1")
    assert_whole(text, "thermal_instability", "inside")


def test_duty_is_absent_for_dc_points():
    text = invoke("check", "demo-npn-to3-250w", "--points", EXAMPLES / "points.csv").stdout
    assert "duty" not in text.split("assumed")[0], text


@pytest.mark.parametrize(
    ("args", "values"),
    [
        (("parts",), ("demo-npn-to3-250w", "(V)", "(°C)")),
        (("trace", "demo-npn-to3-250w", EXAMPLES / "pulse-test.csv", "-t", 45), ("tj peak", "°C", "case peak")),
        (
            ("sweep", STAGE, "--ramp", "current", "--from", 0.1, "--to", 8, "--at", 40, "--time", "30s",
             "--samples", 60),
            ("tj peak", "°C", "energy", "Wh", "duration", "30 s"),
        ),
        (("envelope", STAGE, "--check", EXAMPLES / "envelope.toml"), ("margin", "%", "limit", "power")),
        (("envelope", STAGE, "--voltages", "5,20,40"), ("max current", "(A)", "limit", "tj_max")),
    ],
)  # fmt: skip
def test_every_table_fits_80_columns_with_units(args, values):
    assert_whole(narrow(*args), *values)


def test_a_long_discharge_reads_in_hours():
    """10 Ah at 4 A: 2.5 h, shown as hours, not as 9000 s."""
    text = narrow(
        "discharge", STAGE, "--battery", "nmc", "--cells", 10, "--capacity", 10, "--mode", "cc", "--setpoint", 4,
        "--internal-resistance", 0.15, "--samples", 60,
    )  # fmt: skip
    assert_whole(text, "duration", " h", "tj peak", "case peak", "Q1")
    assert "9000" not in text and "energy wh" not in text


def test_fit_table_drops_the_lowest_rank_first_and_never_an_essential_column():
    columns = [
        Column("name", ["a" * 30], essential=True),
        Column("low", ["b" * 30], rank=0),
        Column("high", ["c" * 20], rank=5),
    ]
    # widths + 3 each + 1: 30+3 + 30+3 + 20+3 + 1 = 90 > 80; without "low": 57
    table, dropped = fit_table("t", columns, 80)
    assert dropped == ["low"]
    assert [c.header for c in table.columns] == ["name", "high"]
    _, dropped = fit_table("t", columns, 30)
    assert dropped == ["low", "high"]  # the essential column stays even when nothing fits


def test_compare_table_fits_80_columns(tmp_path):
    env = tmp_path / "env.toml"
    env.write_text("voltage = [5, 42]\ncurrent = 10\npower = 150\ncase_temp = 60\n")
    text = narrow("compare", "--all", "--envelope", env)
    assert_whole(text, "demo-npn-to3-250w", "verdict", "margin", "limit", "FAIL")
