"""Reading and writing the user's files: CSV tables, TOML, traces, images, atomic writes.

The one place where text becomes numbers. Every problem is raised as a
:class:`~soacheck.errors.SoacheckError` whose message names the file, the line or key,
and the fix. Writes are atomic and never replace what the user wrote without ``force``.
Part folders are :mod:`soacheck.partfiles`; envelopes, discharges, points and OCV tables
are :mod:`soacheck.jobfiles`.
"""

from __future__ import annotations

import contextlib
import csv
import functools
import math
import os
import re
import shutil
import tempfile
import tomllib
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from soacheck.battery import Trajectory
from soacheck.errors import SoacheckError, did_you_mean
from soacheck.filemarks import written_by_soacheck
from soacheck.quantities import SAMPLE_CURRENT, SAMPLE_VOLTAGE, TIME

if TYPE_CHECKING:
    import pandas as pd


@dataclass(frozen=True, eq=False)
class Table:
    """A CSV table with its columns checked and its numbers parsed.

    ``frame`` holds one canonical column per requested name (numbers as float64,
    text as str); ``line(i)`` gives the file line of row ``i`` for messages.
    """

    path: Path
    frame: pd.DataFrame

    @functools.cached_property
    def lines(self) -> np.ndarray:
        """File line (1-based) of every data row, blank lines skipped, shape ``(rows,)``."""
        return np.array(_data_lines(self.path), dtype=int)

    def line(self, row: int) -> int:
        """File line (1-based, header is the first non-blank line) of data row ``row``."""
        return int(self.lines[row])

    def where(self, row: int) -> str:
        return f"{self.path} line {self.line(row)}"


def _data_lines(path: Path) -> list[int]:
    with open(path, encoding="utf-8-sig", errors="replace") as handle:
        lines = [n for n, text in enumerate(handle, start=1) if text.strip()]
    return lines[1:]


def _sniff(path: Path) -> tuple[str, list[str]]:
    """Return the column separator and the header names of a CSV file."""
    try:
        with open(path, encoding="utf-8-sig") as handle:
            header = next((text for text in handle if text.strip()), None)
    except FileNotFoundError:
        raise SoacheckError(f"{path}: no such file; check the path") from None
    except IsADirectoryError:
        raise SoacheckError(f"{path}: is a folder, not a CSV file") from None
    except UnicodeDecodeError:
        raise SoacheckError(f"{path}: is not a UTF-8 text file; save it as CSV (UTF-8)") from None
    if header is None:
        raise SoacheckError(f"{path}: the file is empty; it needs a header line naming the columns")
    # Spreadsheets in locales with decimal commas export with ';' between columns.
    sep = ";" if ";" in header else ("\t" if "\t" in header else ",")
    # a quoted header ("time","voltage") is valid CSV (RFC 4180, section 2): read it as CSV, not by splitting
    names = [name.strip().lower() for name in next(csv.reader([header.strip()], delimiter=sep))]
    return sep, names


def read_table(
    path: str | Path,
    *,
    numeric: Sequence[str],
    text: Sequence[str] = (),
    optional: Sequence[str] = (),
    positive: Sequence[str] = (),
) -> Table:
    """Read a CSV table whose columns are named in its header.

    Parameters
    ----------
    path
        The CSV file. Columns separated by ``,``; a header with ``;`` marks a spreadsheet
        export with decimal commas, which is read as such; tab-separated files are read too.
    numeric, text
        Columns that hold numbers and text. All are required unless named in ``optional``.
    optional
        Columns that may be missing; they are absent from the frame then.
    positive
        Numeric columns whose values must be above zero (they go on log axes).

    Raises
    ------
    SoacheckError
        Empty file, missing or unknown columns (with the nearest known name), rows with
        the wrong number of fields, cells that are not finite numbers, values not above
        zero where required.
    """
    import pandas as pd  # deferred: a command that reads no table starts without it

    path = Path(path)
    sep, names = _sniff(path)
    known = list(numeric) + list(text)
    for name in names:
        if name not in known:
            raise SoacheckError(
                f"{path}: unknown column '{name}'{did_you_mean(name, known)}; the columns are {', '.join(known)}"
            )
    if len(set(names)) != len(names):
        raise SoacheckError(f"{path}: a column name appears twice in the header; keep one")
    for name in known:
        if name not in names and name not in optional:
            needed = ", ".join(n for n in known if n not in optional)
            raise SoacheckError(f"{path}: missing column '{name}'; the header must name {needed}")
    try:
        # numbers parsed by pandas' C reader; a column it cannot parse as plain numbers is
        # read again as text below, to name the first bad cell
        raw = pd.read_csv(
            path,
            sep=sep,
            dtype={name: str for name in names if name not in numeric},
            keep_default_na=False,
            skipinitialspace=True,
            decimal="," if sep == ";" else ".",
            encoding="utf-8-sig",
        )
    except pd.errors.ParserError as err:
        found = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", str(err))
        detail = (
            f"line {found.group(2)} has {found.group(3)} fields where the header has {found.group(1)}"
            if found
            else "a row has more fields than the header"
        )
        hint = "; a spreadsheet export with decimal commas must separate columns with ';'" if sep == "," else ""
        raise SoacheckError(f"{path}: {detail}{hint}") from None
    raw.columns = [c.strip().lower() for c in raw.columns]
    if raw.empty:
        raise SoacheckError(f"{path}: the file has a header but no rows; add at least one row")

    frame = pd.DataFrame(index=raw.index)
    table = Table(path, frame)
    for name in known:
        if name not in raw.columns:
            continue
        if name in numeric and pd.api.types.is_numeric_dtype(raw[name]) and not pd.api.types.is_bool_dtype(raw[name]):
            values = raw[name].to_numpy(float)
            if np.all(np.isfinite(values)) and (name not in positive or np.all(values > 0)):
                frame[name] = values
                continue
            raw[name] = _column_text(path, sep, name)  # name the bad cell as written
        codes, distinct = pd.factorize(raw[name].astype(str))  # each distinct cell stripped once
        cells = pd.Series(distinct.str.strip().to_numpy(object)[codes], index=raw.index)
        if name in text:
            empty = np.flatnonzero((cells == "").to_numpy())
            if empty.size:
                raise SoacheckError(f"{table.where(int(empty[0]))}: column '{name}' is empty; fill it in")
            frame[name] = cells
            continue
        values = pd.to_numeric(cells.str.replace(",", ".", regex=False), errors="coerce").to_numpy(float)
        bad = np.flatnonzero(~np.isfinite(values))
        if bad.size:
            row = int(bad[0])
            cell = cells.iloc[row]
            what = "is empty" if cell == "" else f"'{cell}' is not a finite number"
            raise SoacheckError(f"{table.where(row)}: {name} {what}; write a plain number")
        if name in positive:
            low = np.flatnonzero(values <= 0)
            if low.size:
                row = int(low[0])
                raise SoacheckError(
                    f"{table.where(row)}: {name} is {values[row]:g}; it must be above zero (SOA axes are logarithmic)"
                )
        frame[name] = values
    return table


def _column_text(path: Path, sep: str, name: str):
    """One column of a CSV file as the text written in it (for messages about bad cells)."""
    import pandas as pd

    raw = pd.read_csv(path, sep=sep, dtype=str, keep_default_na=False, skipinitialspace=True, encoding="utf-8-sig")
    raw.columns = [c.strip().lower() for c in raw.columns]
    return raw[name]


def check_keys(where: str, table: dict[str, Any], allowed: Sequence[str], required: Sequence[str]) -> None:
    for key in table:
        if key not in allowed:
            raise SoacheckError(
                f"{where}: unknown key '{key}'{did_you_mean(key, allowed)}; the keys are {', '.join(allowed)}"
            )
    for key in required:
        if key not in table:
            raise SoacheckError(f"{where}: missing key '{key}'; add it")


def toml_number(where: str, value: Any, *, positive: bool = True) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise SoacheckError(f"{where} is {value!r}; write a finite number")
    if positive and value <= 0:
        raise SoacheckError(f"{where} is {value!r}; it must be above zero")
    return float(value)


def toml_text(where: str, value: Any) -> str:
    if not isinstance(value, str) or not value.strip():
        raise SoacheckError(f"{where} must be a non-empty string in quotes")
    return value.strip()


TRACE_COLUMNS = ("time", "voltage", "current")


def iter_trace(path: str | Path, *, chunk_rows: int = 1_000_000):
    """Read a V–I trace in chunks: columns ``time,voltage,current`` in s, V and A.

    CSV (with the same separator rules as :func:`read_table`), or Parquet when pyarrow is
    installed. Yields ``(time_s, voltage_v, current_a, first_row)`` arrays chunk by chunk,
    so a trace larger than memory can be checked. Times must rise strictly, across chunk
    borders too; voltage and current must be finite and not negative.
    """
    path = Path(path)
    if path.suffix.lower() in (".parquet", ".pq"):
        chunks = _parquet_chunks(path, chunk_rows)
    else:
        chunks = _csv_chunks(path, chunk_rows)
    with contextlib.closing(chunks):
        yield from _checked_chunks(path, chunks)


def iter_trace_frame(frame: pd.DataFrame, *, where: str = "trace", chunk_rows: int = 1_000_000):
    """A trace already in memory, columns ``time,voltage,current``, checked and yielded like :func:`iter_trace`.

    ``where`` names the trace in messages (``trace data row 7: ...``).
    """
    missing = [name for name in TRACE_COLUMNS if name not in frame.columns]
    if missing:
        raise SoacheckError(f"{where}: missing column '{missing[0]}'; a trace has the columns time,voltage,current")
    pieces = (frame.iloc[k : k + chunk_rows] for k in range(0, len(frame), max(chunk_rows, 1)))
    yield from _checked_chunks(where, pieces)


def _checked_chunks(path: Path | str, chunks):
    last_t = None
    first_row = 0
    for frame in chunks:
        t, v, i = (frame[name].to_numpy(dtype=float) for name in TRACE_COLUMNS)
        if t.size == 0:
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
    import pandas as pd  # deferred: a command that reads no table starts without it

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
    decimal = "," if sep == ";" else "."
    offset = 0
    with pd.read_csv(path, sep=sep, decimal=decimal, chunksize=chunk_rows, encoding="utf-8-sig") as reader:
        for raw in reader:
            raw.columns = [c.strip().lower() for c in raw.columns]
            frame = raw.copy()
            for name in TRACE_COLUMNS:
                if pd.api.types.is_numeric_dtype(raw[name]):
                    continue
                frame[name] = pd.to_numeric(raw[name], errors="coerce")
                bad = np.flatnonzero(frame[name].isna().to_numpy() & raw[name].notna().to_numpy())
                if bad.size:
                    k = int(bad[0])
                    raise SoacheckError(
                        f"{path} data row {offset + k + 1}: {name} '{raw[name].iloc[k]}' is not a number; "
                        "write a plain number"
                    )
            offset += len(frame)
            yield frame


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
        frame = batch.to_pandas()
        frame.columns = list(TRACE_COLUMNS)
        yield frame


_TOML_ESCAPES = {"\\": "\\\\", '"': '\\"', "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def toml_string(text: str) -> str:
    """``text`` as a TOML basic string, quotes included, valid for any Unicode text.

    Backslash, quote and control characters are escaped as TOML 1.0 (section "String")
    asks; every other character is written as itself in UTF-8, emoji included (a JSON
    escape of an emoji is a surrogate pair, which TOML refuses). Lone surrogates, which
    no UTF-8 file can hold, become U+FFFD.
    """
    out = []
    for ch in text:
        code = ord(ch)
        if ch in _TOML_ESCAPES:
            out.append(_TOML_ESCAPES[ch])
        elif code < 0x20 or code == 0x7F:
            out.append(f"\\u{code:04X}")
        elif 0xD800 <= code <= 0xDFFF:
            out.append("\ufffd")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def read_toml(path: str | Path, what: str) -> dict[str, Any]:
    """Parse a TOML file, turning a missing file or a syntax error into a clear message."""
    path = Path(path)
    try:
        with open(path, "rb") as handle:
            return tomllib.load(handle)
    except FileNotFoundError:
        raise SoacheckError(f"{path}: no such {what} file; check the path") from None
    except IsADirectoryError:
        raise SoacheckError(f"{path}: is a folder, not a {what} file; give the path of the .toml file") from None
    except PermissionError:
        raise SoacheckError(f"{path}: not readable (permission denied); check the file's permissions") from None
    except UnicodeDecodeError:
        raise SoacheckError(f"{path}: is not a UTF-8 text file; a {what} file is TOML text") from None
    except tomllib.TOMLDecodeError as err:
        raise SoacheckError(f"{path}: invalid TOML: {err}; fix the syntax") from None


def read_trace(path: str | Path) -> Trajectory:
    """A whole trace in memory, as the load's trajectory (for comparisons and plans)."""
    chunks = list(iter_trace(path))
    t, v, i = (np.concatenate([c[k] for c in chunks]) for k in range(3))
    return Trajectory(t, v, i, f"trace {Path(path).name}", (f"recorded trace {path}",))


_STAGING = ".soacheck-staging-"
_OLD = ".soacheck-old-"
LOCK_WAIT_S = 30.0
"""How long a run waits for another run writing the same folder before giving up. [s]"""


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


@contextlib.contextmanager
def folder_lock(folder: Path, *, wait_s: float | None = None):
    """Hold ``.NAME.lock`` beside ``folder`` while writing it; one writer at a time.

    The lock file holds the writer's process id. A lock whose process is gone (a run that
    was killed) is taken over. While another live run holds it, wait up to ``wait_s``
    seconds, then raise a :class:`SoacheckError` naming the folder; the other run's
    report is left as it is.
    """
    import time

    lock = folder.parent / f".{folder.name}.lock"
    deadline = time.monotonic() + (LOCK_WAIT_S if wait_s is None else wait_s)
    while True:
        try:
            handle = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            try:
                holder = int(lock.read_text().strip() or "0")
            except (OSError, ValueError):
                holder = 0
            if holder and holder != os.getpid() and _alive(holder):
                if time.monotonic() >= deadline:
                    raise SoacheckError(
                        f"{folder}: another soacheck run (process {holder}) is writing this folder; wait for it to "
                        "finish or choose another --out (its report is left as it is)"
                    ) from None
                time.sleep(0.2)
                continue
            with contextlib.suppress(FileNotFoundError):
                lock.unlink()  # the run that held it is gone
            continue
        break
    try:
        with os.fdopen(handle, "w") as out:
            out.write(f"{os.getpid()}\n")
        yield
    finally:
        with contextlib.suppress(FileNotFoundError):
            lock.unlink()


def _leftovers(folder: Path) -> list[Path]:
    """Staging folders an interrupted write of ``folder`` left beside it (this version's and the older form)."""
    name = re.escape(folder.name)
    pattern = re.compile(rf"^\.{name}(\.soacheck-(staging|old)-|\.(old\.)?)[a-z0-9_]{{8}}$")
    if not folder.parent.is_dir():
        return []
    return [p for p in folder.parent.iterdir() if p.is_dir() and pattern.match(p.name)]


def write_folder(
    folder: Path, files: dict[str, str | bytes], *, force: bool = False, marker: str | None = None
) -> None:
    """Write a folder atomically: all its files appear at once, or none.

    The files (relative paths, text or bytes) are written into a hidden folder beside the
    target and renamed into place. An existing folder is replaced only with ``force``, or
    when it holds ``marker`` (a file this program left there, so the folder is its own).
    One writer at a time (:func:`folder_lock`); staging folders that an interrupted
    earlier write left beside the target are removed first.
    """
    folder = Path(folder)
    folder.parent.mkdir(parents=True, exist_ok=True)
    with folder_lock(folder):
        for leftover in _leftovers(folder):
            kept = leftover / folder.name  # a report moved aside by a write interrupted before the swap
            if kept.is_dir() and not folder.exists():
                os.replace(kept, folder)
            shutil.rmtree(leftover, ignore_errors=True)
        ours = marker is not None and (folder / marker).is_file()
        if folder.exists() and not (force or ours):
            raise SoacheckError(f"{folder}: exists and is not ours to replace; choose another name or add --force")
        staging = Path(tempfile.mkdtemp(prefix=f".{folder.name}{_STAGING}", dir=folder.parent))
        try:
            for name, content in {
                **files,
                **({marker: "written by soacheck; it may replace this folder\n"} if marker else {}),
            }.items():
                target = staging / name
                target.parent.mkdir(parents=True, exist_ok=True)
                if isinstance(content, bytes):
                    target.write_bytes(content)
                else:
                    target.write_text(content, encoding="utf-8")
            if folder.exists():
                old = Path(tempfile.mkdtemp(prefix=f".{folder.name}{_OLD}", dir=folder.parent))
                os.replace(folder, old / folder.name)
                os.replace(staging, folder)
                shutil.rmtree(old)
            else:
                os.replace(staging, folder)
        finally:
            if staging.exists():
                shutil.rmtree(staging)


def check_output(path: str | Path, *, force: bool = False, folder: bool = False, suffixes: Sequence[str] = ()) -> Path:
    """Check an output path before any computation, so that a long run never fails at its last step.

    The one check of every file or folder soacheck writes: the suffix is one of
    ``suffixes`` (when given); the path is not a folder where a file is wanted, nor a file
    where a folder is wanted; nothing there is replaced without ``force``, except a file
    soacheck wrote earlier (it carries soacheck's mark, :mod:`soacheck.filemarks`); the nearest
    existing parent is a folder this process may write into. Missing parent folders are
    made here, so the write that follows the computation finds them.

    Parameters
    ----------
    path
        The file or folder to be written.
    force
        Allow replacing what is there.
    folder
        The output is a folder (a report), not a file.
    suffixes
        Accepted suffixes, lower case with the dot (``.png``); any when empty.

    Returns
    -------
    pathlib.Path
        The path.

    Raises
    ------
    SoacheckError
        Naming the path and what is wrong with it.
    """
    path = Path(path)
    if folder and path.exists() and not path.is_dir():
        raise SoacheckError(f"{path}: is a file, not a folder; choose another name for the output folder")
    if not folder and path.is_dir():
        raise SoacheckError(f"{path}: is a folder; give the name of a file to write")
    if suffixes and path.suffix.lower() not in suffixes:
        raise SoacheckError(
            f"'{path}' must end in {', '.join(suffixes[:-1])} or {suffixes[-1]}"
            if len(suffixes) > 1
            else f"'{path}' must end in {suffixes[0]}"
        )
    if not folder and path.exists() and not force and not written_by_soacheck(path):
        raise SoacheckError(
            f"{path}: exists and was not written by soacheck; choose another name or add --force to replace it"
        )
    parent = path.absolute().parent
    existing = parent
    while not existing.exists() and existing != existing.parent:
        existing = existing.parent
    if not existing.is_dir():
        raise SoacheckError(f"{path}: '{existing}' is a file, so no folder can be made there; choose another path")
    if not os.access(existing, os.W_OK | os.X_OK):
        raise SoacheckError(f"{path}: the folder '{existing}' is not writable; choose another path")
    try:
        parent.mkdir(parents=True, exist_ok=True)
        with tempfile.TemporaryFile(dir=parent):  # the one test that also holds for root and read-only mounts
            pass
    except OSError as err:
        raise SoacheckError(
            f"{path}: cannot write into the folder '{parent}' ({err.strerror}); choose another path"
        ) from None
    return path


def replace_text(path: Path, text: str | bytes) -> None:
    """Write a file (text, or bytes such as a PNG) through a temporary file and an atomic rename."""
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(handle, "wb") if isinstance(text, bytes) else os.fdopen(handle, "w", encoding="utf-8") as out:
            out.write(text)
        os.replace(temporary, path)
    finally:
        if os.path.exists(temporary):
            os.remove(temporary)


def significant(value: float, digits: int = 4) -> str:
    """A digitized value written to ``digits`` significant digits (more would be false precision)."""
    return f"{float(f'{value:.{digits}g}'):g}"


def read_image(path: str | Path) -> np.ndarray:
    """A PNG or JPEG (or another format Pillow reads) as RGB, shape ``(rows, columns, 3)``, 0-1."""
    from PIL import Image, UnidentifiedImageError

    try:
        with Image.open(path) as picture:
            rgb = picture.convert("RGB")
    except FileNotFoundError:
        raise SoacheckError(f"{path}: no such image; check the path") from None
    except (OSError, UnidentifiedImageError, ValueError) as err:
        raise SoacheckError(f"{path}: not an image Pillow can read ({err}); save the plot as PNG or JPEG") from None
    return np.asarray(rgb, dtype=float) / 255.0
