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
from soacheck.tracefiles import TRACE_COLUMNS, iter_trace

from .helpers import trace_rows, written

runner = CliRunner()


@pytest.fixture
def small_blocks(monkeypatch):
    """Blocks of about 300 bytes (about 12 rows), and lines searched for over 200 bytes at most."""
    monkeypatch.setattr(csvblocks, "BLOCK_BYTES", (300, 300))
    monkeypatch.setattr(csvblocks, "LONGEST_LINE", 200)


def reference(path, chunk_rows: int, sep: str = ",") -> list[tuple[np.ndarray, ...]]:
    """pandas' serial chunked reader: the chunks and values the trace reader must reproduce."""
    decimal = "," if sep == ";" else "."
    chunks = []
    with pd.read_csv(path, sep=sep, decimal=decimal, chunksize=chunk_rows, encoding="utf-8-sig") as reader:
        for frame in reader:
            frame.columns = [c.strip().lower() for c in frame.columns]
            chunks.append(tuple(frame[name].to_numpy(float) for name in TRACE_COLUMNS))
    return chunks


def variants(tmp_path) -> dict[str, tuple]:
    lines = trace_rows()
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


def test_after_a_quote_the_file_is_read_serially_and_still_names_a_wide_line(tmp_path, small_blocks):
    lines = trace_rows()
    lines[300] = '"' + lines[300].replace(",", '","') + '"'
    lines[800] += ",5"
    path = written(tmp_path, "late.csv", "time,voltage,current\n" + "\n".join(lines) + "\n")
    result = runner.invoke(app, ["trace", "demo-npn-to3-250w", str(path)])
    assert result.exit_code == 2, result.output
    assert "late.csv: line 802 has 4 fields where the header has 3" in result.stderr


def test_leaving_early_stops_every_parsing_thread(tmp_path, small_blocks):
    path, _ = variants(tmp_path)["plain"]
    chunks = iter_trace(path, chunk_rows=10)
    next(chunks)
    chunks.close()
    assert not [thread for thread in threading.enumerate() if thread.name.startswith("soacheck-csv")]


def test_parse_threads_can_be_set_for_a_process_sharing_the_cores():
    """An archive's worker processes parse on their share of the cores; None restores the default."""
    default = csvblocks.parse_threads()
    try:
        csvblocks.set_parse_threads(1)
        assert csvblocks.parse_threads() == 1
        csvblocks.set_parse_threads(0)
        assert csvblocks.parse_threads() == 1  # at least one thread
    finally:
        csvblocks.set_parse_threads(None)
    assert csvblocks.parse_threads() == default


def test_blocks_grow_from_the_first_then_shrink_at_the_end_and_tile_the_file(tmp_path, monkeypatch):
    """Byte ranges cover the data exactly once and end at line ends; after the first they double up
    to the greatest, and none spans more than a thread's share of what is left (so the threads
    finish together), nor less than the least (but the last)."""
    monkeypatch.setattr(csvblocks, "BLOCK_BYTES", (200, 1600))
    path = written(tmp_path, "t.csv", "time,voltage,current\n" + "\n".join(trace_rows(2000)) + "\n")
    data = path.read_bytes()
    start = data.index(b"\n") + 1
    with open(path, "rb") as handle:
        ranges = list(csvblocks._ranges(handle, start, len(data), 300, 1600, threads=2))
    assert ranges[0][0] == start and ranges[-1][1] == len(data)
    assert all(a[1] == b[0] for a, b in zip(ranges, ranges[1:], strict=False))
    assert all(data[end - 1 : end] == b"\n" for _, end in ranges)
    sizes = [end - begin for begin, end in ranges]
    longest_line = max(len(line) + 1 for line in data.splitlines())
    wanted = [300, 600, 1200] + [1600] * (len(sizes) - 3)
    for (begin, _), size, want in zip(ranges[:-1], sizes, wanted, strict=False):
        share = max(200, -(-(len(data) - begin) // 2))
        assert min(want, share) <= size < min(want, share) + longest_line  # cut at the next line end
    assert sizes[-1] < 1600  # the last ones shrink
