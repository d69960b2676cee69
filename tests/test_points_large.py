"""Large point sets: the worst rows and a summary, streamed JSON, one condition for all.

The constructed reference part (invented numbers, see conftest): at 20 V the DC boundary is
the 125 W constant-power line, so 6.25 A is allowed at 25 °C (125 W / 20 V, by hand).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from typer.testing import CliRunner

from soacheck.boundary import distinct_rows
from soacheck.cli import app
from soacheck.jsonvalues import json_chunks, jsonable

from .conftest import write_part

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})


@pytest.fixture
def many_points(tmp_path):
    """60 points at 20 V: 3 A (inside) except rows 11, 31 and 51 at 9, 7 and 8 A (outside)."""
    currents = np.full(60, 3.0)
    currents[[10, 30, 50]] = [9.0, 7.0, 8.0]
    path = tmp_path / "points.csv"
    path.write_text("voltage,current\n" + "".join(f"20,{c:g}\n" for c in currents))
    return write_part(tmp_path / "ref-bjt"), path


def test_a_long_table_shows_the_worst_rows_first_and_a_summary(many_points):
    part, points = many_points
    result = runner.invoke(app, ["check", str(part), "--points", str(points)])
    assert result.exit_code == 1, result.output
    lines = result.stdout.splitlines()
    rows = [line for line in lines if line.startswith("│")]
    assert len(rows) == 20  # the 20 worst of 60
    # 9 A: margin 1 - 9/6.25 = -44.0 %, then 8 A (-28.0 %), then 7 A (-12.0 %); by hand
    assert [row.split("│")[1].strip() for row in rows[:3]] == ["11", "51", "31"]
    assert "-44.0" in rows[0] and "-28.0" in rows[1] and "-12.0" in rows[2]  # under the heading "margin (%)"
    assert "60 points: 3 outside (3 power); margin -44.0% (the least)" in result.stdout


def test_all_rows_shows_every_point_in_file_order(many_points):
    part, points = many_points
    result = runner.invoke(app, ["check", str(part), "--points", str(points), "--all-rows"])
    assert result.exit_code == 1, result.output
    rows = [line for line in result.stdout.splitlines() if line.startswith("│")]
    assert len(rows) == 60 and "-44.0" in rows[10]


def test_streamed_json_equals_the_plain_encoder(many_points):
    """The fast writer against the obvious one: json.dumps of the rows as dicts."""
    part, points = many_points
    result = runner.invoke(app, ["check", str(part), "--points", str(points), "--json"])
    assert result.exit_code == 1, result.output
    payload = json.loads(result.stdout)
    assert [p["current"] for p in payload["points"]][10] == 9.0
    assert payload["points"][10]["margin"] == pytest.approx(1 - 9 / 6.25, rel=1e-4)  # by hand, as above
    assert payload["points"][0]["duty"] is None and payload["points"][0]["inside"] is True


def test_json_chunks_give_the_same_values_as_json_dumps():
    import pandas as pd

    frame = pd.DataFrame(
        {
            "x": [1 / 3, math.nan, math.inf, -0.0, 1e-300, 3.7499933717408562],
            "ok": [True, False, True, True, False, True],
            "name": ["dc", "1ms", "°C", 'a"b', "", "x"],
            "maybe": pd.Series([None, 0.1, None, None, 2.0, None], dtype=object),
        }
    )
    payload = {"part": "p", "rows": frame, "notes": ["n"]}
    fast = json.loads("".join(json_chunks(payload)))
    slow = json.loads(json.dumps(jsonable({**payload, "rows": frame.to_dict(orient="records")})))
    assert fast == slow


def test_distinct_rows_agrees_with_numpy_unique():
    rng = np.random.default_rng(4)
    for keys in (np.tile([[1e-3, 0.1]], (1000, 1)), rng.choice([1e-3, 1e-2, np.inf], (1000, 2))):
        distinct, group = distinct_rows(keys.T)
        want, inverse = np.unique(keys, axis=0, return_inverse=True)
        np.testing.assert_array_equal(distinct, want)
        np.testing.assert_array_equal(group, np.ravel(inverse))


def test_distinct_rows_of_flags_widths_and_many_values_agree_with_numpy_unique():
    """Few-valued columns (coded by comparisons), flags, and a column of many values (sorted) alike."""
    rng = np.random.default_rng(5)
    widths = rng.choice([1e-2, 1e-3, np.inf, 0.5], 5000)
    flags = rng.random(5000) < 0.3
    many = np.round(rng.random(5000), 2)  # about a hundred distinct values
    for columns in ([widths, flags], [flags, widths, widths * 2], [widths, many], [many, flags]):
        distinct, group = distinct_rows(columns)
        want, inverse = np.unique(np.column_stack(columns).astype(float), axis=0, return_inverse=True)
        np.testing.assert_array_equal(distinct, want)
        np.testing.assert_array_equal(group, np.ravel(inverse))


def test_a_bad_pulse_is_named_at_its_first_row(tmp_path):
    part = write_part(tmp_path / "ref-bjt")
    points = tmp_path / "points.csv"
    points.write_text("voltage,current,pulse\n20,1,dc\n20,1,1ms\n20,1,5 parsecs\n20,1,dc\n20,1,5 parsecs\n")
    result = runner.invoke(app, ["check", str(part), "--points", str(points)])
    assert result.exit_code == 2, result.output
    assert "line 4" in result.stderr, result.stderr


def test_of_two_bad_pulses_the_first_in_the_file_is_named(tmp_path):
    """'zz' (line 4) comes before 'aa' (line 5) in the file, though not in sorted order."""
    part = write_part(tmp_path / "ref-bjt")
    points = tmp_path / "points.csv"
    points.write_text("voltage,current,pulse\n20,1,dc\n20,1, 1ms \n20,1,zz\n20,1,aa\n20,1,1ms\n")
    result = runner.invoke(app, ["check", str(part), "--points", str(points)])
    assert result.exit_code == 2, result.output
    assert "line 4" in result.stderr and "'zz'" in result.stderr, result.stderr


def test_a_bad_number_is_named_with_its_text(tmp_path):
    part = write_part(tmp_path / "ref-bjt")
    points = tmp_path / "points.csv"
    points.write_text("voltage,current\n20,1\n20,1\n20,three\n")
    result = runner.invoke(app, ["check", str(part), "--points", str(points)])
    assert result.exit_code == 2, result.output
    assert "line 4" in result.stderr and "'three'" in result.stderr, result.stderr


def test_decimal_commas_read_as_before(tmp_path):
    part = write_part(tmp_path / "ref-bjt")
    points = tmp_path / "points.csv"
    points.write_text("voltage;current\n20;3,5\n")
    result = runner.invoke(app, ["check", str(part), "--points", str(points), "--json"])
    assert result.exit_code == 0, result.output
    assert json.loads(result.stdout)["points"][0]["current"] == 3.5


def _rows_one_by_one(columns: dict) -> bytes:
    """The obvious writer: each row a dict, encoded by orjson, joined as json_rows joins them."""
    import orjson

    names = list(columns)
    lists = [np.asarray(columns[name]).tolist() for name in names]
    return b"    " + b",\n    ".join(
        orjson.dumps(dict(zip(names, row, strict=True))) for row in zip(*lists, strict=True)
    )


@pytest.mark.parametrize("rows_per_chunk", [1, 7, 1000])
def test_json_rows_equal_a_dict_per_row(rows_per_chunk):
    """The column-at-once writer against the one-dict-a-row one, byte for byte, across chunk edges."""
    import orjson

    from soacheck.jsonrows import json_rows

    rng = np.random.default_rng(7)
    n = 120
    edge = np.array([math.nan, math.inf, -math.inf, -0.0, 1e-300, 5e-324, 1e16, 1 / 3, 123456789.0, 0.1])
    columns = {
        "many": np.concatenate([edge, rng.normal(size=n - edge.size) * 10.0 ** rng.integers(-8, 8, n - edge.size)]),
        "constant": np.full(n, 40.0),
        "few": rng.choice([25.0, 60.0, math.nan], n),
        "count": rng.integers(-5, 10**12, n),
        "flag": rng.random(n) < 0.5,
        "all_false": np.zeros(n, dtype=bool),
        "limit": rng.choice(["power", "current", "second_breakdown", "°C", 'a"b'], n),
        "names": np.array([f"row {k}" for k in range(n)]),  # more distinct texts than FEW_DISTINCT
        "maybe": np.array([None if k % 3 else k / 7 for k in range(n)], dtype=object),
        "single": np.float32(np.linspace(0.1, 2.0, n)),
        "all_nan": np.full(n, math.nan),
        "nan_and_inf": np.where(np.arange(n) % 2, math.nan, math.inf),
        "one_text": np.full(n, "dc"),
        "all_true": np.ones(n, dtype=bool),
        "one_count": np.full(n, 7),
    }
    columns["again"] = columns["many"]  # one array under two names, as margin and margin_to_rating
    fast = b"".join(json_rows(columns, rows_per_chunk=rows_per_chunk))
    reference = {**columns, "single": columns["single"].astype(float)}  # float32 written as its float64 value
    assert fast == _rows_one_by_one(reference)
    assert [orjson.loads(line.rstrip(b",")) for line in fast.split(b"\n")][2]["count"] == columns["count"][2]
    assert b"".join(json_rows({"x": np.array([])})) == b""
