"""A long CSV trace parsed in blocks on several threads gives what pandas' own chunked reader gives.

The reference is pandas (``pandas.read_csv(..., chunksize=...)``, a general-purpose reader):
the same chunk lengths and the same float64 values, bit for bit, for files written in every
way the trace reader accepts. Blocks are made a few hundred bytes long here, so that a small
file spans many of them and every block edge, held partial chunk and serial fallback is met.
"""

from __future__ import annotations

import threading

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

from soacheck import csvblocks
from soacheck.cli import app
from soacheck.errors import SoacheckError
from soacheck.tracefiles import TRACE_COLUMNS, iter_trace

runner = CliRunner()


@pytest.fixture
def small_blocks(monkeypatch):
    """Blocks of about 300 bytes (about 12 rows), and lines searched for over 200 bytes at most."""
    monkeypatch.setattr(csvblocks, "BLOCK_BYTES", (300, 300))
    monkeypatch.setattr(csvblocks, "LONGEST_LINE", 200)


def rows(n: int = 997) -> list[str]:
    rng = np.random.default_rng(3)
    t = np.cumsum(rng.uniform(1e-6, 2e-5, n))
    v, i = rng.uniform(0, 50, n), rng.uniform(0, 5, n)
    return [f"{a:.9g},{b:.6g},{c:.7g}" for a, b, c in zip(t, v, i, strict=True)]


def reference(path, chunk_rows: int, sep: str = ",") -> list[tuple[np.ndarray, ...]]:
    """pandas' serial chunked reader: the chunks and values the trace reader must reproduce."""
    decimal = "," if sep == ";" else "."
    chunks = []
    with pd.read_csv(path, sep=sep, decimal=decimal, chunksize=chunk_rows, encoding="utf-8-sig") as reader:
        for frame in reader:
            frame.columns = [c.strip().lower() for c in frame.columns]
            chunks.append(tuple(frame[name].to_numpy(float) for name in TRACE_COLUMNS))
    return chunks


def written(tmp_path, name: str, text: str, *, newline: str = "\n", encoding: str = "utf-8"):
    path = tmp_path / name
    with open(path, "w", newline=newline, encoding=encoding) as handle:
        handle.write(text)
    return path


def variants(tmp_path) -> dict[str, tuple]:
    lines = rows()
    header = "time,voltage,current"
    quoted = list(lines)
    quoted[600] = '"' + quoted[600].replace(",", '","') + '"'
    blanks = [line + ("\n" if k % 97 == 0 else "") for k, line in enumerate(lines)]
    semicolon = [line.replace(",", ";").replace(".", ",") for line in lines]
    shuffled = [",".join(np.array(line.split(","))[[2, 0, 1]]) for line in lines]
    return {
        "plain": (written(tmp_path, "plain.csv", header + "\n" + "\n".join(lines) + "\n"), ","),
        "crlf": (written(tmp_path, "crlf.csv", header + "\r\n" + "\r\n".join(lines) + "\r\n", newline=""), ","),
        "bare cr": (written(tmp_path, "cr.csv", header + "\r" + "\r".join(lines) + "\r", newline=""), ","),
        "bom, blank lines": (
            written(tmp_path, "bom.csv", "\n\n" + header + "\n" + "\n".join(blanks) + "\n", encoding="utf-8-sig"),
            ",",
        ),
        "decimal comma": (written(tmp_path, "semi.csv", header.replace(",", ";") + "\n" + "\n".join(semicolon)), ";"),
        "columns in another order": (
            written(tmp_path, "order.csv", "current,time,voltage\n" + "\n".join(shuffled) + "\n"),
            ",",
        ),
        "a quoted row late": (written(tmp_path, "quoted.csv", header + "\n" + "\n".join(quoted) + "\n"), ","),
        "no last line end": (written(tmp_path, "noend.csv", header + "\n" + "\n".join(lines)), ","),
    }


@pytest.mark.parametrize("chunk_rows", [1, 7, 40, 5000])
def test_chunks_equal_pandas_chunked_reader_bit_for_bit(tmp_path, small_blocks, chunk_rows):
    for name, (path, sep) in variants(tmp_path).items():
        expected = reference(path, chunk_rows, sep)
        got = [chunk[:3] for chunk in iter_trace(path, chunk_rows=chunk_rows)]
        assert [c[0].size for c in got] == [c[0].size for c in expected], name
        for mine, theirs in zip(got, expected, strict=True):
            for a, b in zip(mine, theirs, strict=True):
                assert a.tobytes() == b.tobytes(), name


def test_one_thread_and_four_give_the_same_chunks(tmp_path, small_blocks):
    path, sep = variants(tmp_path)["plain"]
    layout = csvblocks.CsvLayout(sep, ".", list(TRACE_COLUMNS))
    one = list(csvblocks.numeric_chunks(path, layout, TRACE_COLUMNS, 50, threads=1))
    four = list(csvblocks.numeric_chunks(path, layout, TRACE_COLUMNS, 50, threads=4))
    assert [np.concatenate(c).tobytes() for c in one] == [np.concatenate(c).tobytes() for c in four]


@pytest.mark.parametrize("row", [0, 1, 11, 12, 13, 700, 996])
@pytest.mark.parametrize("block", [300, 10**6])
def test_a_line_with_too_many_fields_names_its_file_line(tmp_path, monkeypatch, row, block):
    """Wherever the wide row falls (first of the file, first of a block, inside one), it is refused:
    pandas itself takes a wide first row as an index and shifts the columns, silently."""
    monkeypatch.setattr(csvblocks, "BLOCK_BYTES", (block, block))
    lines = rows()
    lines[row] += ",5"
    path = written(tmp_path, "wide.csv", "time,voltage,current\n" + "\n".join(lines) + "\n")
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path)])
    assert result.exit_code == 2, result.output
    assert f"wide.csv: line {row + 2} has 4 fields where the header has 3" in result.stderr  # header: line 1
    assert "Traceback" not in result.output


def test_after_a_quote_the_file_is_read_serially_and_still_names_a_wide_line(tmp_path, small_blocks):
    lines = rows()
    lines[300] = '"' + lines[300].replace(",", '","') + '"'
    lines[800] += ",5"
    path = written(tmp_path, "late.csv", "time,voltage,current\n" + "\n".join(lines) + "\n")
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path)])
    assert result.exit_code == 2, result.output
    assert "late.csv: line 802 has 4 fields where the header has 3" in result.stderr


def test_a_cell_that_is_not_a_number_in_a_late_block_names_its_data_row(tmp_path, small_blocks):
    lines = rows()
    lines[650] = lines[650].rsplit(",", 1)[0] + ",1.2A"  # data row 651
    path = written(tmp_path, "unit.csv", "time,voltage,current\n" + "\n".join(lines) + "\n")
    seen = 0
    with pytest.raises(SoacheckError, match="data row 651: current '1.2A' is not a number"):
        for t, *_ in iter_trace(path, chunk_rows=100):
            seen += t.size
    assert seen == 600  # every whole chunk before the bad row was handed on first


def test_bytes_that_are_not_utf8_exit_2(tmp_path, small_blocks):
    path = tmp_path / "latin.csv"
    path.write_bytes(("time,voltage,current\n" + "\n".join(rows()[:400]) + "\n").encode() + b"0.5,1\xb5,2\n")
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path)])
    assert result.exit_code == 2, result.output
    assert "latin.csv" in result.stderr and "Traceback" not in result.output


def test_leaving_early_stops_every_parsing_thread(tmp_path, small_blocks):
    path, _ = variants(tmp_path)["plain"]
    chunks = iter_trace(path, chunk_rows=10)
    next(chunks)
    chunks.close()
    assert not [thread for thread in threading.enumerate() if thread.name.startswith("soacheck-csv")]
