"""Writing outputs safely: output paths checked before any computation, atomic writes, one writer a folder.

Writes are atomic and never replace what the user wrote without ``force``.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import tempfile
from collections.abc import Sequence
from pathlib import Path

from soacheck.errors import SoacheckError
from soacheck.filemarks import written_by_soacheck

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
