"""Small comma-separated files written plainly, split into lines in Python (no numpy, no pandas).

A part's tables are a few dozen rows; reading them without pandas keeps start-up short
(``soacheck parts``, a one-point ``check``). Only files written plainly take this way;
every other file goes through pandas and its messages.
"""

from __future__ import annotations

from pathlib import Path


def plain_lines(path: Path) -> list[str] | None:
    """The non-empty lines of a plainly written comma-separated file, header first; None otherwise.

    Plainly written: UTF-8 (a byte-order mark allowed), no quotes, spaces or tabs, and no
    carriage return but as part of a CRLF line end. None also when the file cannot be read.
    """
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError):
        return None
    if '"' in text or " " in text or "\t" in text or "\r" in text.replace("\r\n", "\n"):
        return None
    return [line for line in text.replace("\r\n", "\n").split("\n") if line]
