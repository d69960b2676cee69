"""V–I traces (CSV or Parquet) read and checked in chunks, so a trace larger than memory can be checked."""

from __future__ import annotations

import contextlib
import queue
import threading
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from soacheck.battery import Trajectory
from soacheck.csvtables import _sniff, decimal_mark
from soacheck.errors import SoacheckError, did_you_mean
from soacheck.quantities import SAMPLE_CURRENT, SAMPLE_VOLTAGE, TIME
from soacheck.thermal_response import step_range
from soacheck.tracechunks import DEFAULT_CHUNK_ROWS

if TYPE_CHECKING:
    import pandas as pd


TRACE_COLUMNS = ("time", "voltage", "current")


def iter_trace(path: str | Path, *, chunk_rows: int = DEFAULT_CHUNK_ROWS):
    """Read a V–I trace in chunks: columns ``time,voltage,current`` in s, V and A.

    CSV (with the same separator rules as :func:`read_table`; parsed in blocks on every
    core, :mod:`soacheck.csvblocks`), or Parquet when pyarrow is installed. Yields
    ``(time_s, voltage_v, current_a, first_row)`` arrays chunk by chunk, so a trace larger
    than memory can be checked. Times must rise strictly, across chunk borders too; voltage
    and current must be finite and not negative.
    """
    path = Path(path)
    if path.suffix.lower() in (".parquet", ".pq"):
        read = _parquet_chunks(path, chunk_rows)
    else:
        read = _csv_chunks(path, chunk_rows)
    chunks = _read_ahead(_vetted(path, read))  # read and vetted ahead of the caller's work on the chunk before
    with contextlib.closing(chunks):
        yield from chunks


def _vetted(path: Path, read):
    """:func:`_checked_chunks` of ``read``, which is closed with it (a reading thread stops)."""
    with contextlib.closing(read):
        yield from _checked_chunks(path, read)


def iter_trace_frame(frame: pd.DataFrame, *, where: str = "trace", chunk_rows: int = DEFAULT_CHUNK_ROWS):
    """A trace already in memory, columns ``time,voltage,current``, checked and yielded like :func:`iter_trace`.

    ``where`` names the trace in messages (``trace data row 7: ...``).
    """
    missing = [name for name in TRACE_COLUMNS if name not in frame.columns]
    if missing:
        raise SoacheckError(f"{where}: missing column '{missing[0]}'; a trace has the columns time,voltage,current")
    pieces = (
        tuple(frame[name].iloc[k : k + chunk_rows].to_numpy(dtype=float) for name in TRACE_COLUMNS)
        for k in range(0, len(frame), max(chunk_rows, 1))
    )
    yield from _checked_chunks(where, pieces)


def _read_ahead(chunks):
    """The same chunks, the next one made in a thread while the caller works on this one.

    Parsing CSV and decoding Parquet release the GIL, as does the array work of vetting the
    samples, so on two cores reading and checking overlap (the check's thermal filters,
    scipy's ``lfilter``, hold it). At most one chunk waits in the queue, so memory stays at
    a few chunks whatever the length of the file. An error while reading is raised in the
    caller at the chunk where it happened; closing the generator stops the thread.
    """
    slot: queue.Queue = queue.Queue(maxsize=1)
    stop = threading.Event()
    done = object()

    def offer(item) -> bool:
        """Put ``item`` for the caller; False once the caller has stopped listening."""
        while not stop.is_set():
            try:
                slot.put(item, timeout=0.1)
                return True
            except queue.Full:
                continue
        return False

    def read() -> None:
        try:
            for chunk in chunks:
                if not offer((chunk, None)):
                    return
            offer((done, None))
        except BaseException as err:  # handed to the caller, which raises it
            offer((done, err))
        finally:
            with contextlib.suppress(Exception):
                chunks.close()

    worker = threading.Thread(target=read, name="soacheck-trace-reader", daemon=True)
    worker.start()
    try:
        while True:
            chunk, err = slot.get()
            if chunk is done:
                if err is not None:
                    raise err
                return
            yield chunk
    finally:
        stop.set()
        with contextlib.suppress(queue.Empty):
            slot.get_nowait()  # free a reader waiting to put
        worker.join()


def _clean(t: np.ndarray, v: np.ndarray, i: np.ndarray, last_t: float | None) -> bool:
    """Whether a chunk passes every check of :func:`_checked_chunks`, decided from the least and
    greatest value of each column and of the time steps: a few passes, where finding the first
    bad row takes many (done only when this says no)."""
    quantities = (TIME, SAMPLE_VOLTAGE, SAMPLE_CURRENT)  # their ranges exclude negative voltage and current
    if not all(q.holds(x) for q, x in zip(quantities, (t, v, i), strict=True)):
        return False
    rising = t.size < 2 or step_range(t)[0] > 0  # a block at a time, no array of every step (a NaN step is not > 0)
    return bool(rising and (last_t is None or t[0] > last_t))


def _checked_chunks(path: Path | str, chunks):
    last_t = None
    first_row = 0
    for t, v, i in chunks:
        if t.size == 0:
            continue
        if _clean(t, v, i, last_t):
            yield t, v, i, first_row
            last_t = float(t[-1])
            first_row += t.size
            continue
        for name, values in (("time", t), ("voltage", v), ("current", i)):
            bad = np.flatnonzero(~np.isfinite(values))
            if bad.size:
                raise SoacheckError(
                    f"{path} data row {first_row + int(bad[0]) + 1}: {name} is not a finite number; remove or fix "
                    "the sample"
                )
        for name, values in (("voltage", v), ("current", i)):
            bad = np.flatnonzero(values < 0)
            if bad.size:
                raise SoacheckError(
                    f"{path} data row {first_row + int(bad[0]) + 1}: {name} {values[bad[0]]:g} is negative; "
                    "soacheck checks forward operation (record the magnitude, or leave out reverse conduction)"
                )
        for quantity, name, values in (
            (TIME, "time", t),
            (SAMPLE_VOLTAGE, "voltage", v),
            (SAMPLE_CURRENT, "current", i),
        ):
            quantity.check_array(values, lambda k, n=name, r=first_row: f"{path} data row {r + k + 1}: {n}")
        previous = np.r_[last_t if last_t is not None else -np.inf, t[:-1]]
        bad = np.flatnonzero(t <= previous)
        if bad.size:
            k = int(bad[0])
            what = "repeats" if t[k] == previous[k] else "goes backwards"
            raise SoacheckError(
                f"{path} data row {first_row + k + 1}: time {t[k]:g} s {what} after {previous[k]:g} s; "
                "time stamps must rise strictly"
            )
        yield t, v, i, first_row
        last_t = float(t[-1])
        first_row += t.size
    if first_row == 0:
        raise SoacheckError(f"{path}: the trace has a header but no samples")


def _csv_chunks(path: Path, chunk_rows: int):
    from soacheck.csvblocks import CsvLayout, numeric_chunks

    sep, names = _sniff(path)
    for name in names:
        if name not in TRACE_COLUMNS:
            raise SoacheckError(
                f"{path}: unknown column '{name}'{did_you_mean(name, TRACE_COLUMNS)}; a trace has the columns "
                "time,voltage,current"
            )
    for name in TRACE_COLUMNS:
        if name not in names:
            raise SoacheckError(f"{path}: missing column '{name}'; a trace has the columns time,voltage,current")
    return numeric_chunks(path, CsvLayout(sep, decimal_mark(sep), names), TRACE_COLUMNS, chunk_rows)


def _parquet_chunks(path: Path, chunk_rows: int):
    try:
        import pyarrow.parquet as pq
    except ImportError:
        raise SoacheckError(
            f"{path}: reading Parquet needs pyarrow; `pip install pyarrow`, or save the trace as CSV"
        ) from None
    try:
        # without pre-buffering: the reader then holds only the batch being read, not every one
        handle = pq.ParquetFile(path, pre_buffer=False, buffer_size=1 << 20)
    except (OSError, ValueError) as err:
        raise SoacheckError(f"{path}: not a readable Parquet file ({err})") from None
    names = [n.lower() for n in handle.schema_arrow.names]
    for name in TRACE_COLUMNS:
        if name not in names:
            raise SoacheckError(f"{path}: missing column '{name}'; a trace has the columns time,voltage,current")
    columns = [handle.schema_arrow.names[names.index(n)] for n in TRACE_COLUMNS]
    for batch in handle.iter_batches(batch_size=chunk_rows, columns=columns):
        # straight to numpy, no frame in between; nulls become NaN, which the checks then name
        yield tuple(column.to_numpy(zero_copy_only=False).astype(float, copy=False) for column in batch.columns)


def read_trace(path: str | Path) -> Trajectory:
    """A whole trace in memory, as the load's trajectory (for comparisons and plans)."""
    chunks = list(iter_trace(path))
    t, v, i = (np.concatenate([c[k] for c in chunks]) for k in range(3))
    return Trajectory(t, v, i, f"trace {Path(path).name}", (f"recorded trace {path}",))
