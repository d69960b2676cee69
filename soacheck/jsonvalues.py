"""Plain JSON values: what every ``--json`` output and ``to_dict()`` is made of.

NaN and infinities become ``null`` (JSON has no NaN), numpy scalars and arrays become
Python numbers and lists, paths become strings.
"""

from __future__ import annotations

import json
import math
from collections.abc import Iterator
from pathlib import Path
from typing import Any


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


RECORDS_PER_CHUNK = 50_000
"""Rows of a table turned into JSON text at a time when streaming (bounds the memory used)."""


def json_chunks(payload: dict[str, Any]) -> Iterator[str]:
    """The JSON text of ``payload`` in pieces, with tables written row by row.

    Like :func:`json_text`, except that a value that is a :class:`pandas.DataFrame` becomes an
    array with one compact object per row, one row a line, produced ``RECORDS_PER_CHUNK``
    rows at a time by orjson (the same numbers as :mod:`json`, shortest round-trip form;
    NaN and infinities ``null``). A million rows are written in seconds and in bounded
    memory, where one list of dicts through :mod:`json` takes minutes and gigabytes.
    """
    import orjson

    tables = {key: value for key, value in payload.items() if hasattr(value, "to_json")}
    plain = {key: (None if key in tables else value) for key, value in payload.items()}
    text = json_text(plain)
    for key, frame in tables.items():  # each placeholder is the only `"key": null` at the top level
        marker = f"\n  {json.dumps(key, ensure_ascii=False)}: null"
        head, text = text.split(marker, 1)
        yield head + marker[:-4]
        if len(frame) == 0:
            yield "[]"
            continue
        yield "[\n"
        for start in range(0, len(frame), RECORDS_PER_CHUNK):
            names = [str(name) for name in frame.columns]
            columns = [frame[name].iloc[start : start + RECORDS_PER_CHUNK].tolist() for name in frame.columns]
            lines = b",\n    ".join(
                orjson.dumps(dict(zip(names, row, strict=True))) for row in zip(*columns, strict=True)
            )
            yield ("    " if start == 0 else ",\n    ") + lines.decode()
        yield "\n  ]"
    yield text
