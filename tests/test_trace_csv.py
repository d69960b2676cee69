"""Bad lines in a CSV trace are bad input (exit 2, one line naming the file line), wherever they fall.

A row with more fields than the header used to stop the trace command with an internal
error; as the first data row it was worse: pandas takes a first row wider than the header
as an index and shifts the columns (its "implicit index", pandas' read_csv documentation),
so the trace was read wrong without a word.
"""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from soacheck import csvblocks
from soacheck.cli import app
from soacheck.errors import SoacheckError
from soacheck.tracefiles import iter_trace

from .helpers import trace_rows, written

runner = CliRunner()


@pytest.fixture(autouse=True, params=["one block", "300-byte blocks"])
def blocks(request, monkeypatch):
    """Every test twice: the file parsed as one block, and in blocks of about 300 bytes (about
    12 rows), so that a bad line falls first in a block, inside one, or after a held partial chunk."""
    if request.param == "300-byte blocks":
        monkeypatch.setattr(csvblocks, "BLOCK_BYTES", (300, 300))
        monkeypatch.setattr(csvblocks, "LONGEST_LINE", 200)


@pytest.mark.parametrize("row", [0, 1, 11, 12, 13, 700, 996])
@pytest.mark.parametrize("chunk_rows", [12, 1_000_000])
def test_a_line_with_too_many_fields_names_its_file_line(tmp_path, row, chunk_rows):
    lines = trace_rows()
    lines[row] += ",5"
    path = written(tmp_path, "wide.csv", "time,voltage,current\n" + "\n".join(lines) + "\n")
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path), "--chunk-rows", str(chunk_rows)])
    assert result.exit_code == 2, result.output
    assert f"wide.csv: line {row + 2} has 4 fields where the header has 3" in result.stderr  # header: line 1
    assert "Traceback" not in result.output


def test_a_wide_first_row_after_blank_lines_names_its_file_line(tmp_path):
    lines = trace_rows(20)
    lines[0] += ",5"
    path = written(tmp_path, "wide.csv", "\ntime,voltage,current\n\n" + "\n".join(lines) + "\n")
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path)])
    assert result.exit_code == 2, result.output
    assert "wide.csv: line 4 has 4 fields where the header has 3" in result.stderr


def test_a_cell_that_is_not_a_number_in_a_late_chunk_names_its_data_row(tmp_path):
    lines = trace_rows()
    lines[650] = lines[650].rsplit(",", 1)[0] + ",1.2A"  # data row 651
    path = written(tmp_path, "unit.csv", "time,voltage,current\n" + "\n".join(lines) + "\n")
    seen = 0
    with pytest.raises(SoacheckError, match="data row 651: current '1.2A' is not a number"):
        for t, *_ in iter_trace(path, chunk_rows=100):
            seen += t.size
    assert seen == 600  # every whole chunk before the bad row was handed on first


def test_bytes_that_are_not_utf8_exit_2(tmp_path):
    path = tmp_path / "latin.csv"
    path.write_bytes(("time,voltage,current\n" + "\n".join(trace_rows()[:400]) + "\n").encode() + b"0.5,1\xb5,2\n")
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path)])
    assert result.exit_code == 2, result.output
    assert "latin.csv" in result.stderr and "Traceback" not in result.output
