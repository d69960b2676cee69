"""soacheck's mark on the files it writes, so that a re-run may replace them without ``--force``.

A plot carries it in the image's own metadata (PNG ``Software`` text chunk, SVG
``dc:creator``, PDF ``/Creator``); a CSV file begins with a ``#`` comment line and a C
header with a ``/* */`` comment line. JSON has no comments, so a JSON file carries it in
its data: its object's first key is ``written_by`` (:data:`JSON_MARK`), the program and
its version. A file without the mark is the user's: it is never replaced without ``--force``.
"""

from __future__ import annotations

import re
import struct
from pathlib import Path
from typing import Any

from soacheck import __version__

CREATOR = f"soacheck {__version__}"
"""The text of the mark: the program and its version."""

JSON_MARK = "written_by"
"""The key that marks a JSON object soacheck wrote; it comes first and its value is :data:`CREATOR`."""

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
_SVG_CREATOR = re.compile(r"<dc:creator>\s*<cc:Agent>\s*<dc:title>soacheck[ <]")
_PDF_CREATOR = re.compile(rb"/Creator\s*\(soacheck[ )]")
_PDF_TAIL_BYTES = 16384
_JSON_MARKED = re.compile(rf'^\ufeff?\s*\{{\s*"{JSON_MARK}"\s*:\s*"soacheck[ "]')


def figure_metadata(path: str | Path) -> dict[str, Any]:
    """The ``metadata=`` for matplotlib's ``savefig`` that marks a plot file as soacheck's."""
    suffix = Path(path).suffix.lower()
    return {"Software": CREATOR} if suffix == ".png" else {"Creator": CREATOR}


def save_figure(figure: Any, path: str | Path) -> None:
    """Save a matplotlib figure to ``path`` (.png, .svg or .pdf) with soacheck's mark."""
    figure.savefig(path, metadata=figure_metadata(path))


def json_mark() -> dict[str, str]:
    """The mark of a JSON object soacheck writes, to put first: ``{"written_by": "soacheck X.Y"}``."""
    return {JSON_MARK: CREATOR}


def first_line(suffix: str) -> str:
    """The comment line that begins a marked text file of this kind (``.csv``, ``.h`` or ``.c``), with newline."""
    if suffix.lower() in (".h", ".c"):
        return f"/* written by {CREATOR} */\n"
    return f"# written by {CREATOR}\n"


def _png_marked(data: bytes) -> bool:
    """True when a tEXt chunk before the image data names soacheck as the software."""
    if not data.startswith(_PNG_SIGNATURE):
        return False
    at = len(_PNG_SIGNATURE)
    while at + 8 <= len(data):
        (length,) = struct.unpack(">I", data[at : at + 4])
        kind = data[at + 4 : at + 8]
        body = data[at + 8 : at + 8 + length]
        if kind == b"tEXt" and body.startswith(b"Software\x00soacheck"):
            return True
        if kind in (b"IDAT", b"IEND"):
            return False
        at += 12 + length
    return False


def written_by_soacheck(path: str | Path) -> bool:
    """True when ``path`` is a file soacheck wrote (it carries the mark); False for anything else.

    Only the head of the file is read (and the tail of a PDF, where its information
    dictionary lives); a folder, an unreadable file or a file of another kind is False.
    """
    path = Path(path)
    if not path.is_file():
        return False
    suffix = path.suffix.lower()
    try:
        with path.open("rb") as handle:
            head = handle.read(65536)
            if suffix == ".pdf":
                handle.seek(max(0, path.stat().st_size - _PDF_TAIL_BYTES))
                tail = handle.read()
    except OSError:
        return False
    if suffix == ".png":
        return _png_marked(head)
    if suffix == ".svg":
        return bool(_SVG_CREATOR.search(head.decode("utf-8", errors="replace")))
    if suffix == ".pdf":
        return head.startswith(b"%PDF") and bool(_PDF_CREATOR.search(tail))
    if suffix == ".json":  # the first key of the object; a user's file that merely mentions soacheck is not ours
        return bool(_JSON_MARKED.match(head.decode("utf-8", errors="replace")))
    if suffix in (".csv", ".h", ".c"):
        line = head.split(b"\n", 1)[0].decode("utf-8", errors="replace").strip()
        return line in (first_line(".csv").strip(), first_line(".h").strip()) or line.startswith(
            ("# written by soacheck ", "/* written by soacheck ")
        )
    return False
