"""Plain JSON values: what every ``--json`` output and ``to_dict()`` is made of.

NaN and infinities become ``null`` (JSON has no NaN), numpy scalars and arrays become
Python numbers and lists, paths become strings.
"""

from __future__ import annotations

import json
import math
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    import numpy as np


def jsonable(value: Any) -> Any:
    """``value`` as plain JSON values: NaN and infinities None, numpy values Python ones, paths strings."""
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [jsonable(v) for v in value]
    if hasattr(value, "tolist") and not isinstance(value, str):  # numpy arrays and scalars
        value = value.tolist()
        if isinstance(value, list):
            return jsonable(value)
    if isinstance(value, Path):
        return str(value)
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def json_text(payload: dict[str, Any]) -> str:
    """The JSON text soacheck prints and writes: indented, non-ASCII characters kept, NaN as null."""
    return json.dumps(jsonable(payload), indent=2, ensure_ascii=False)


def json_chunks(payload: dict[str, Any]) -> Iterator[str]:
    """The JSON text of ``payload`` in pieces, with tables written row by row.

    Like :func:`json_text`, except that a value that is a table, a
    :class:`pandas.DataFrame` or a :class:`Columns`, becomes an array with one compact
    object per row, one row a line, written by :func:`soacheck.jsonrows.json_rows` (the
    same numbers as :mod:`json`, shortest round-trip form; NaN and infinities ``null``).
    A million rows are written in a second or two and in bounded memory, where one list of
    dicts through :mod:`json` takes minutes and gigabytes.
    """
    return (piece.decode() for piece in json_bytes(payload))


def json_bytes(payload: dict[str, Any]) -> Iterator[bytes]:
    """:func:`json_chunks` as UTF-8 bytes, the rows as they come from the writer (no decoding)."""
    from soacheck.jsonrows import json_rows

    tables = {key: value for key, value in payload.items() if isinstance(value, Columns) or hasattr(value, "to_json")}
    plain = {key: (None if key in tables else value) for key, value in payload.items()}
    text = json_text(plain)
    for key, table in tables.items():  # each placeholder is the only `"key": null` at the top level
        marker = f"\n  {json.dumps(key, ensure_ascii=False)}: null"
        head, text = text.split(marker, 1)
        yield (head + marker[:-4]).encode()
        arrays = table.arrays if isinstance(table, Columns) else {str(k): table[k].to_numpy() for k in table.columns}
        rows = json_rows(arrays)
        first = next(rows, None)
        if first is None:
            yield b"[]"
            continue
        yield b"[\n" + first
        yield from rows
        yield b"\n  ]"
    yield text.encode()


@dataclass(frozen=True, eq=False)
class Columns:
    """A table for :func:`json_chunks` as its columns: name → array ``(n,)``, in the order written."""

    arrays: dict[str, np.ndarray]
