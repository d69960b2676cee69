"""A long numeric CSV file parsed in blocks of whole lines on several threads, handed on in order.

The data after the header is cut into byte ranges that end at a line end; each range is
parsed by pandas' C reader on a thread of its own (its tokenizer and number conversion
release the GIL), and the rows come back in file order, regrouped into chunks of exactly
``chunk_rows`` rows: the same chunks, and the same numbers, as pandas' own chunked reader
gives, at the speed of parsing on every core. At most a few blocks are in memory at once,
whatever the length of the file.

A line end inside a quoted field cannot be found by looking at bytes alone, so from the
first block that holds a quote on, the rest of the file is read by pandas' serial chunked
reader; so is a file whose lines end with a bare carriage return.
"""

from __future__ import annotations

import io
import os
from collections import deque
from collections.abc import Iterator, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from soacheck.csvtables import fields_message
from soacheck.errors import SoacheckError

BLOCK_BYTES = (1 << 20, 24 << 20)
"""Least and greatest size of a block parsed at once [bytes]. The first block is about a chunk's
rows, so that the caller's work starts early; each next one twice the one before, up to the
greatest (or :data:`PARSING_BYTES` shared among the threads, if less); the last few shrink again,
so that the threads finish together. Every call of the parser allocates fresh buffers, which the
system hands back and faults in anew: blocks of a few megabytes take about a third longer to
parse than blocks of 24 MB (measured with ``perf stat`` on two cores)."""

PARSING_BYTES = 48 << 20
"""Bytes being parsed at once over all threads [bytes]: a thread parsing a block holds a few
times its bytes, so this bounds the reader's memory whatever the number of cores."""

_threads: int | None = None

LONGEST_LINE = 1 << 20
"""A line longer than this [bytes] is not looked for in bytes: the rest is read serially."""


@dataclass(frozen=True)
class CsvLayout:
    """How a CSV file is written: its separator, decimal mark and header names (in file order)."""

    sep: str
    decimal: str
    names: Sequence[str]

    def options(self) -> dict:
        """``pandas.read_csv`` options for data without its header."""
        return {"sep": self.sep, "decimal": self.decimal, "header": None, "names": list(self.names)}


@dataclass
class _Parsed:
    """One block parsed: its columns (float64, the rows before the first bad one); if one was
    met, the first cell that is not a number as (row in the block, column name, text); if the
    block could not be parsed, pandas' message (or ``"utf-8"``) in ``error``."""

    columns: dict[str, np.ndarray]
    rows: int
    bad: tuple[int, str, str] | None = None
    error: str | None = None


def set_parse_threads(threads: int | None) -> None:
    """Parse with this many threads from now on in this process (None: :func:`parse_threads`'
    default); for a process that shares the machine's cores with others checking files beside it."""
    global _threads
    _threads = None if threads is None else max(int(threads), 1)


def parse_threads() -> int:
    """Threads to parse with: as set by :func:`set_parse_threads`, else the cores this process may
    use, at most four."""
    if _threads is not None:
        return _threads
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # not on every platform
        cores = os.cpu_count() or 1
    return max(1, min(cores, 4))


def numeric_chunks(
    path: Path, layout: CsvLayout, wanted: Sequence[str], chunk_rows: int, *, threads: int | None = None
) -> Iterator[tuple[np.ndarray, ...]]:
    """The ``wanted`` columns of a numeric CSV file as float64 arrays, ``chunk_rows`` rows at a time.

    Parameters
    ----------
    path
        The CSV file, UTF-8 (a byte-order mark allowed), its first non-blank line the header.
    layout
        Separator, decimal mark and header names, as found in the header.
    wanted
        The columns to hand on, in this order (names in lower case).
    chunk_rows
        Rows per chunk (the last one shorter).
    threads
        Threads parsing at once; :func:`parse_threads` when None.

    Yields one tuple of arrays, each of shape ``(chunk_rows,)``, per chunk in file order. Blank
    lines are skipped, as pandas does. A cell that is not a number raises a
    :class:`SoacheckError` naming its data row (1-based, blank lines not counted) after the
    chunks before it were handed on; a line with more fields than the header names its file line.
    """
    chunk_rows = max(int(chunk_rows), 1)
    threads = parse_threads() if threads is None else max(int(threads), 1)
    regroup = _Regroup(path, wanted, chunk_rows)
    start = _data_start(path)
    if start is None:  # lines that end with a bare carriage return: pandas finds them
        yield from _serial(path, None, layout, wanted, chunk_rows, regroup)
        yield from regroup.rest()
        return
    serial_from = yield from _parallel(path, start, layout, wanted, chunk_rows, threads, regroup)
    if serial_from is not None:
        yield from _serial(path, serial_from, layout, wanted, chunk_rows, regroup)
    yield from regroup.rest()


def _parallel(path, start, layout, wanted, chunk_rows, threads, regroup):
    """Parse the data from byte ``start`` in blocks on ``threads`` threads and hand on their rows in
    order; returns the offset from which the rest must be read serially (a quote, a line longer
    than a block), or None when the file is done."""
    size = path.stat().st_size
    first = _first_block_bytes(path, start, chunk_rows)
    pending: deque[tuple[int, Future]] = deque()
    pool = ThreadPoolExecutor(max_workers=threads, thread_name_prefix="soacheck-csv")
    try:
        with open(path, "rb") as handle:
            greatest = max(BLOCK_BYTES[0], min(BLOCK_BYTES[1], PARSING_BYTES // threads))
            for begin, end in _ranges(handle, start, size, min(first, greatest), greatest, threads):
                if end is None:  # no line end within a block: read on serially from here
                    pending.append((begin, None))
                    break
                pending.append((begin, pool.submit(_parse_range, path, begin, end, layout, wanted)))
                while len(pending) > threads:
                    if (serial_from := (yield from _hand_on(path, pending.popleft(), regroup, layout))) is not None:
                        return serial_from
        while pending:
            if (serial_from := (yield from _hand_on(path, pending.popleft(), regroup, layout))) is not None:
                return serial_from
        return None
    finally:
        for _, future in pending:
            if future is not None:
                future.cancel()
        pool.shutdown(wait=True)


def _hand_on(path: Path, item: tuple[int, Future | None], regroup: _Regroup, layout: CsvLayout):
    """Hand on a parsed block's chunks; the block's offset if the rest must be read serially from there, else None."""
    begin, future = item
    if future is None:
        return begin
    parsed = future.result()
    if parsed is None:  # it holds a quote
        return begin
    if parsed.error is not None:
        raise SoacheckError(_error_message(path, layout, parsed.error, _lines_before(path, begin))) from None
    yield from regroup.add(parsed)
    return None


def _parse_range(path: Path, begin: int, end: int, layout: CsvLayout, wanted: Sequence[str]) -> _Parsed | None:
    """Parse bytes ``begin`` to ``end`` of the file (whole lines); None if they hold a quote."""
    with open(path, "rb") as handle:
        handle.seek(begin)
        data = handle.read(end - begin)
    if b'"' in data:
        return None
    blank = data[: len(data) - len(data.lstrip())].count(b"\n")  # blank lines before the first row
    return _parse(io.BytesIO(data), layout, wanted, first_line=1 + blank)


def _parse(source, layout: CsvLayout, wanted: Sequence[str], first_line: int) -> _Parsed:
    """Parse data lines into float columns, up to the first cell that is not a number; the first
    row is line ``first_line`` of ``source``."""
    import pandas as pd

    try:
        raw = _read_numbers(pd, source, layout)
    except pd.errors.EmptyDataError:
        return _Parsed({name: np.empty(0) for name in wanted}, 0)
    except pd.errors.ParserError as err:
        return _Parsed({}, 0, error=str(err))
    except UnicodeDecodeError:
        return _Parsed({}, 0, error="utf-8")
    return _columns(raw, wanted, first_line)


def _read_numbers(pd, source, layout: CsvLayout):
    """Read as float64 straight away (the common case, and the fastest); where a cell is not a
    number, read again as pandas infers, so that the cell can be named."""
    try:
        return pd.read_csv(source, encoding="utf-8", dtype=np.float64, **layout.options())
    except (pd.errors.ParserError, pd.errors.EmptyDataError):
        raise
    except ValueError:
        source.seek(0)
        return pd.read_csv(source, encoding="utf-8", **layout.options())


def _columns(raw, wanted: Sequence[str], first_line: int = 1) -> _Parsed:
    """The float columns of a parsed frame whose first row is line ``first_line`` of what pandas read."""
    import pandas as pd

    if not isinstance(raw.index, pd.RangeIndex):
        # the first row has more fields than the header: pandas takes the extra ones as an index
        # (its "implicit index") instead of refusing the row, so refuse it here, in its words
        wide = len(raw.columns) + raw.index.nlevels
        return _Parsed({}, 0, error=f"Expected {len(raw.columns)} fields in line {first_line}, saw {wide}")
    raw.columns = [str(c).strip().lower() for c in raw.columns]
    columns = {}
    bad = None
    for name in wanted:
        if pd.api.types.is_numeric_dtype(raw[name]):
            columns[name] = raw[name].to_numpy(dtype=float)
            continue
        numbers = pd.to_numeric(raw[name], errors="coerce")
        rows = np.flatnonzero(numbers.isna().to_numpy() & raw[name].notna().to_numpy())
        if rows.size and (bad is None or rows[0] < bad[0]):
            bad = (int(rows[0]), name, str(raw[name].iloc[int(rows[0])]))
        columns[name] = numbers.to_numpy(dtype=float)
    rows = len(raw) if bad is None else bad[0]
    return _Parsed({name: values[:rows] for name, values in columns.items()}, rows, bad)


def _serial(path, offset, layout, wanted, chunk_rows, regroup):
    """The rest of the file from byte ``offset`` (the whole file, header included, when None) by
    pandas' serial chunked reader."""
    import pandas as pd

    if offset is None:  # the header too, with a byte-order mark if there is one
        options, encoding, first_line = {"sep": layout.sep, "decimal": layout.decimal}, "utf-8-sig", 2
    else:  # from the start of a data line
        options, encoding, first_line = layout.options(), "utf-8", 1
    with open(path, "rb") as handle:
        handle.seek(offset or 0)
        try:
            with pd.read_csv(handle, chunksize=chunk_rows, encoding=encoding, **options) as reader:
                for raw in reader:
                    parsed = _columns(raw, wanted, first_line)
                    if parsed.error is not None:
                        raise pd.errors.ParserError(parsed.error)
                    yield from regroup.add(parsed)
        except pd.errors.ParserError as err:
            before = 0 if offset is None else _lines_before(path, offset)
            raise SoacheckError(_error_message(path, layout, str(err), before)) from None
        except UnicodeDecodeError:
            raise SoacheckError(_error_message(path, layout, "utf-8", 0)) from None


def _error_message(path: Path, layout: CsvLayout, error: str, lines_before: int) -> str:
    if error == "utf-8":
        return f"{path}: is not a UTF-8 text file; save it as CSV (UTF-8)"
    return fields_message(path, layout.sep, error, lines_before)


def _data_start(path: Path) -> int | None:
    """Byte offset of the first data line: after the first non-blank line (the header). None when
    the lines end with a bare carriage return (the header line then holds one)."""
    with open(path, "rb") as handle:
        while True:
            line = handle.readline(LONGEST_LINE)
            if not line:
                return handle.tell()
            text = line.removeprefix(b"\xef\xbb\xbf") if handle.tell() == len(line) else line
            if not line.endswith(b"\n") and handle.tell() < path.stat().st_size:
                return None  # a line longer than LONGEST_LINE: no plain header
            if b"\r" in line.rstrip(b"\r\n"):
                return None
            if text.strip():
                return handle.tell()


def _first_block_bytes(path: Path, start: int, chunk_rows: int) -> int:
    """Bytes the first block should span: about ``chunk_rows`` rows, from the lines near the start."""
    with open(path, "rb") as handle:
        handle.seek(start)
        sample = handle.read(1 << 16)
    per_row = len(sample) / max(sample.count(b"\n"), 1)
    return int(np.clip(chunk_rows * per_row, *BLOCK_BYTES))


def _ranges(handle, start: int, size: int, first: int, greatest: int, threads: int) -> Iterator[tuple[int, int | None]]:
    """Byte ranges that end at a line end, from ``start`` to ``size``: ``first`` bytes, then each twice
    the one before up to ``greatest``, and no more than a ``threads``-th of what is left (nor less
    than the least of :data:`BLOCK_BYTES`). A range whose end is None has no line end within
    reach (the rest is read otherwise)."""
    least = BLOCK_BYTES[0]
    begin, want = start, first
    while begin < size:
        block = min(want, max(least, -(-(size - begin) // threads)))
        want = min(2 * want, greatest)
        if begin + block >= size:
            yield begin, size
            return
        handle.seek(begin + block)
        tail = handle.readline(LONGEST_LINE)
        if not tail.endswith(b"\n") and handle.tell() < size:
            yield begin, None
            return
        end = handle.tell()
        yield begin, end
        begin = end


def _lines_before(path: Path, offset: int) -> int:
    """Line ends in the file before byte ``offset`` (read again only to name a bad line)."""
    count = 0
    with open(path, "rb") as handle:
        while offset > 0:
            piece = handle.read(min(offset, 16 << 20))
            if not piece:
                break
            count += piece.count(b"\n")
            offset -= len(piece)
    return count


class _Regroup:
    """Rows of blocks of any length regrouped into chunks of exactly ``chunk_rows`` rows."""

    def __init__(self, path: Path, wanted: Sequence[str], chunk_rows: int) -> None:
        self.path = path
        self.wanted = list(wanted)
        self.chunk_rows = chunk_rows
        self.held: list[tuple[np.ndarray, ...]] = []  # rows not yet handed on, fewer than a chunk
        self.held_rows = 0
        self.rows = 0  # rows handed on

    def add(self, parsed: _Parsed) -> Iterator[tuple[np.ndarray, ...]]:
        """Hand on every whole chunk the rows so far make; raise at a bad cell, naming its data row."""
        columns = tuple(parsed.columns[name] for name in self.wanted)
        n, k = parsed.rows, 0
        if self.held_rows:  # fill the held partial chunk first
            k = min(self.chunk_rows - self.held_rows, n)
            self._hold(tuple(c[:k] for c in columns), k)
            if self.held_rows == self.chunk_rows:
                yield self._emit_held()
        while n - k >= self.chunk_rows:
            yield tuple(c[k : k + self.chunk_rows] for c in columns)
            self.rows += self.chunk_rows
            k += self.chunk_rows
        if k < n:
            self._hold(tuple(c[k:] for c in columns), n - k)
        if parsed.bad is not None:
            _, name, text = parsed.bad
            raise SoacheckError(
                f"{self.path} data row {self.rows + self.held_rows + 1}: {name} '{text}' is not a number; "
                "write a plain number"
            )

    def _hold(self, columns: tuple[np.ndarray, ...], rows: int) -> None:
        if rows:
            self.held.append(columns)
            self.held_rows += rows

    def _emit_held(self) -> tuple[np.ndarray, ...]:
        if len(self.held) == 1:
            out = self.held[0]
        else:
            out = tuple(np.concatenate([part[j] for part in self.held]) for j in range(len(self.wanted)))
        self.rows += self.held_rows
        self.held, self.held_rows = [], 0
        return out

    def rest(self) -> Iterator[tuple[np.ndarray, ...]]:
        """The last, shorter chunk, if rows are held."""
        if self.held_rows:
            yield self._emit_held()
