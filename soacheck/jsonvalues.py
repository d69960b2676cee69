"""Plain JSON values: what every ``--json`` output and ``to_dict()`` is made of.

NaN and infinities become ``null`` (JSON has no NaN), numpy scalars and arrays become
Python numbers and lists, paths become strings.
"""

from __future__ import annotations

import json
import math
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
