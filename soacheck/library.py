"""Finding parts: by id in the bundled demo library and the user's libraries, or by folder path.

Search order, first match wins: folders given with ``--library`` (in the order given),
then the folders in ``SOACHECK_LIBRARY`` (separated like PATH), then the bundled
``curves/``. A part folder is a folder holding ``part.toml``; its name is the part's id.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from soacheck.errors import SoacheckError, nearest
from soacheck.files import PART_FILE, read_part
from soacheck.parts import Part

LIBRARY_ENV = "SOACHECK_LIBRARY"


def bundled_library() -> Path:
    """The folder of the bundled demo parts.

    Installed, they are the package data ``soacheck/curves``; in a source checkout they
    are the top-level ``curves/`` folder beside the package.
    """
    package = Path(__file__).resolve().parent
    installed = package / "curves"
    return installed if installed.is_dir() else package.parent / "curves"


def library_folders(extra: Sequence[str | Path] = (), *, environ: dict[str, str] | None = None) -> list[Path]:
    """The library folders in search order: ``extra``, then ``SOACHECK_LIBRARY``, then bundled."""
    env = os.environ if environ is None else environ
    from_env = [Path(p) for p in env.get(LIBRARY_ENV, "").split(os.pathsep) if p.strip()]
    folders = [Path(p) for p in extra] + from_env
    for folder in folders:
        if not folder.is_dir():
            source = "--library" if folder in map(Path, extra) else LIBRARY_ENV
            raise SoacheckError(f"{source}: '{folder}' is not a folder; give a folder that holds part folders")
    return folders + [bundled_library()]


@dataclass(frozen=True)
class LibraryEntry:
    """A part folder found in a library."""

    id: str
    folder: Path
    library: Path


def list_parts(folders: Sequence[Path]) -> list[LibraryEntry]:
    """All part folders in ``folders``, the first of each id only, sorted by id."""
    seen: dict[str, LibraryEntry] = {}
    for library in folders:
        for candidate in sorted(library.iterdir()):
            if (candidate / PART_FILE).is_file() and candidate.name not in seen:
                seen[candidate.name] = LibraryEntry(candidate.name, candidate, library)
    return sorted(seen.values(), key=lambda e: e.id)


def find_part(ref: str, folders: Sequence[Path]) -> Part:
    """Load a part given by id (searched in ``folders``) or by the path of its folder.

    Raises
    ------
    SoacheckError
        When no part has that id, naming the nearest ids.
    """
    path = Path(ref)
    if (path / PART_FILE).is_file():
        return read_part(path)
    if os.sep in ref or (os.altsep and os.altsep in ref) or path.exists():
        raise SoacheckError(f"{ref}: no {PART_FILE} in that folder; a part folder holds {PART_FILE} and soa.csv")
    for library in folders:
        if (library / ref / PART_FILE).is_file():
            return read_part(library / ref)
    ids = [e.id for e in list_parts(folders)]
    close = ", ".join(f"'{i}'" for i in nearest(ref, ids))
    raise SoacheckError(
        f"unknown part '{ref}'; the nearest ids are {close}; `soacheck parts` lists all {len(ids)}, "
        "or give the path of a part folder"
    )
