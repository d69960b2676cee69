"""CSV tables read with line-exact errors; digitized numbers written to their significant digits.

The one place where a CSV table's text becomes numbers. Every problem is raised as a
:class:`~soacheck.errors.SoacheckError` whose message names the file, the line and the fix.
Part folders are :mod:`soacheck.partfiles`; envelopes, discharges, points and OCV tables
are :mod:`soacheck.jobfiles`; traces are :mod:`soacheck.tracefiles`.
"""

from __future__ import annotations

import csv
import functools
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from soacheck.errors import SoacheckError, did_you_mean
from soacheck.plaintext import plain_lines

if TYPE_CHECKING:
    import pandas as pd


@dataclass(frozen=True, eq=False)
class Table:
    """A CSV table with its columns checked and its numbers parsed.

    ``columns`` holds one canonical column per requested name, shape ``(rows,)``
    (numbers as float64, text as Python str); ``coded`` the text columns as codes into
    their distinct texts where the reader had them; ``frame`` is the same as a
    :class:`pandas.DataFrame`, made when first asked for; ``line(i)`` gives the file
    line of row ``i`` for messages.
    """

    path: Path
    columns: dict[str, np.ndarray]
    coded: dict[str, tuple[np.ndarray, np.ndarray]] = field(default_factory=dict)
    """Text columns read by pandas, each as the index of every row ``(rows,)`` into its distinct texts."""

    @functools.cached_property
    def frame(self) -> pd.DataFrame:
        """The columns as a DataFrame (pandas is imported here, not for a part's small tables)."""
        import pandas as pd

        return pd.DataFrame(self.columns)

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
    return list(data_line_numbers(path))


def data_line_numbers(path: Path) -> Iterator[int]:
    """File line (1-based) of each data row, in order: the non-blank lines after the first (the header)."""
    with open(path, encoding="utf-8-sig", errors="replace") as handle:
        lines = (n for n, text in enumerate(handle, start=1) if text.strip())
        next(lines, None)
        yield from lines


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


def decimal_mark(sep: str) -> str:
    """The decimal mark of a CSV file separated by ``sep``: ``,`` in a spreadsheet export separated
    by ``;`` (the form of locales that write decimal commas), else ``.``."""
    return "," if sep == ";" else "."


def fields_message(path: Path, sep: str, error: str, lines_before: int = 0) -> str:
    """The message for pandas' complaint ``error`` about a line with more fields than the header;
    ``lines_before`` lines of the file came before the text pandas was given."""
    found = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", error)
    detail = (
        f"line {int(found.group(2)) + lines_before} has {found.group(3)} fields where the header has {found.group(1)}"
        if found
        else "a row has more fields than the header"
    )
    hint = "; a spreadsheet export with decimal commas must separate columns with ';'" if sep == "," else ""
    return f"{path}: {detail}{hint}"


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
    plain = _plain_columns(path, sep, names, known, numeric, positive)
    if plain is not None:
        return Table(path, plain)
    import pandas as pd  # deferred: a part's small, plainly written tables are read without it

    try:
        # numbers parsed by pandas' C reader; a column it cannot parse as plain numbers is
        # read again as text below, to name the first bad cell
        raw = pd.read_csv(
            path,
            sep=sep,
            # text as categories: each distinct cell is one Python string, each row a code
            dtype={name: "category" for name in names if name not in numeric},
            keep_default_na=False,
            skipinitialspace=True,
            decimal=decimal_mark(sep),
            encoding="utf-8-sig",
        )
    except pd.errors.ParserError as err:
        raise SoacheckError(fields_message(path, sep, str(err))) from None
    raw.columns = [c.strip().lower() for c in raw.columns]
    if raw.empty:
        raise SoacheckError(f"{path}: the file has a header but no rows; add at least one row")

    frame: dict[str, np.ndarray] = {}
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
        if name in text:
            table.coded[name] = _text_codes(table, name, raw[name])
            codes, texts = table.coded[name]
            frame[name] = texts[codes]
            continue
        codes, distinct = pd.factorize(raw[name].astype(str))  # each distinct cell stripped once
        cells = pd.Series(distinct.str.strip().to_numpy(object)[codes], index=raw.index)
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


PLAIN_FILE_BYTES = 200_000
"""Files up to this size that are written plainly are read without pandas (see :func:`_plain_columns`)."""

_PLAIN_NUMBER = re.compile(r"[+]?(?:\d+\.?\d*|\.\d+)|-(?:0*[1-9]\d*\.?\d*|0*\.0*[1-9]\d*)")


def _plain_columns(
    path: Path, sep: str, names: list[str], known: list[str], numeric: Sequence[str], positive: Sequence[str]
) -> dict[str, np.ndarray] | None:
    """The columns of a small CSV file written plainly, read in Python; None for any other file.

    Plainly written: comma-separated, no quotes, no spaces, no lines of only spaces, every
    row with as many cells as the header, every number in decimal notation with at most 15
    digits (no exponent, no negative zero) and above zero where it must be, no empty text.
    Such numbers are read to the same float by Python and by pandas' C reader (both are
    correctly rounded there), so the table is the same; any other file, and every file
    with a problem to report, goes through pandas and its messages. Common practice, no source.
    """
    if sep != "," or path.stat().st_size > PLAIN_FILE_BYTES:
        return None
    lines = plain_lines(path)
    if lines is None:
        return None
    if len(lines) < 2 or [name.lower() for name in lines[0].split(",")] != names:
        return None
    rows = [line.split(",") for line in lines[1:]]
    if any(len(row) != len(names) for row in rows):
        return None
    columns: dict[str, np.ndarray] = {}
    for k, name in enumerate(names):
        cells = [row[k] for row in rows]
        if name not in numeric:
            if not all(cells):
                return None
            columns[name] = np.array(cells, dtype=object)
            continue
        if not all(_PLAIN_NUMBER.fullmatch(cell) and sum(c.isdigit() for c in cell) <= 15 for cell in cells):
            return None
        values = np.array([float(cell) for cell in cells])
        if name in positive and not np.all(values > 0):
            return None
        columns[name] = values
    return {name: columns[name] for name in known if name in columns}


def _text_codes(table: Table, name: str, cells: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """A text column read as categories: the index of each row ``(rows,)`` into the distinct
    texts, stripped (Python strings); each distinct cell is stripped once.

    A cell left empty, or missing from a short row (code -1), is an error naming its line.
    """
    codes = cells.cat.codes.to_numpy()
    stripped = [str(text).strip() for text in cells.cat.categories]
    blank = np.array([text == "" for text in stripped] + [True])  # the last entry answers code -1
    if blank[codes].any():
        row = int(np.argmax(blank[codes]))
        raise SoacheckError(f"{table.where(row)}: column '{name}' is empty; fill it in")
    texts = list(dict.fromkeys(stripped))  # cells apart only by trailing spaces are one text
    index = np.array([texts.index(text) for text in stripped], dtype=np.intp)
    return index[codes], np.array(texts, dtype=object)


def _column_text(path: Path, sep: str, name: str):
    """One column of a CSV file as the text written in it (for messages about bad cells)."""
    import pandas as pd

    raw = pd.read_csv(path, sep=sep, dtype=str, keep_default_na=False, skipinitialspace=True, encoding="utf-8-sig")
    raw.columns = [c.strip().lower() for c in raw.columns]
    return raw[name]


def significant(value: float, digits: int = 4) -> str:
    """A digitized value written to ``digits`` significant digits (more would be false precision)."""
    return f"{float(f'{value:.{digits}g}'):g}"
