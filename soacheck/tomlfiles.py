"""TOML files: reading with clear errors, checking keys and values, writing any text as a TOML string."""

from __future__ import annotations

import math
import tomllib
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from soacheck.errors import SoacheckError, did_you_mean


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
