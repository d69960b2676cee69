"""A lab's archive of trace files: each file checked on its own, in parallel, one summary.

Files run in separate processes on this machine (``jobs``), or on an existing Dask cluster
(``dask_address``; ``pip install 'soacheck[dask]'``). A file that cannot be read is that
file's outcome, with its message; the others go on. Outcomes come back in the order the
files were given.
"""

from __future__ import annotations

import glob
import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from soacheck.derating import BreakdownDerating
from soacheck.errors import SoacheckError
from soacheck.parts import Part
from soacheck.stage import Cooling
from soacheck.tracechunks import DEFAULT_CHUNK_ROWS

TRACE_SUFFIXES = (".csv", ".tsv", ".txt", ".parquet", ".pq")
"""Files taken from a folder: traces as CSV (or tab separated) and Parquet."""


@dataclass(frozen=True)
class FileOutcome:
    """How one file of the archive did: its trace check (the ``trace --json`` fields), or why it could not be read."""

    file: str
    verdict: str  # pass, fail, or invalid when the file could not be read
    summary: dict[str, Any] | None = None
    error: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """The file's JSON object: ``file`` and the trace check's fields, or ``file``, ``verdict`` and ``error``."""
        if self.summary is None:
            return {"file": self.file, "verdict": self.verdict, "error": self.error}
        return {"file": self.file, **self.summary}


def expand_files(specs: Sequence[str | Path]) -> list[Path]:
    """The trace files named by paths, folders (their trace files, sorted) and glob patterns (sorted).

    A path that names nothing stays in the list, so that its check reports it as unreadable.

    Raises
    ------
    SoacheckError
        A folder that holds no trace file.
    """
    files: list[Path] = []
    for spec in specs:
        path = Path(spec)
        if path.is_dir():
            found = sorted(p for p in path.iterdir() if p.is_file() and p.suffix.lower() in TRACE_SUFFIXES)
            if not found:
                raise SoacheckError(
                    f"{path}: is a folder with no trace files ({', '.join(TRACE_SUFFIXES)}); give trace files or "
                    "a folder that holds them"
                )
            files.extend(found)
        elif not path.exists() and glob.has_magic(str(spec)):
            matches = sorted(Path(p) for p in glob.glob(str(spec), recursive=True))
            files.extend(matches if matches else [path])
        else:
            files.append(path)
    return files


def check_one(
    part: Part,
    path: str | Path,
    case_temp: float | None,
    cooling: Cooling | None,
    breakdown: BreakdownDerating,
    chunk_rows: int,
) -> FileOutcome:
    """Check one trace file; a file that cannot be read becomes an ``invalid`` outcome with its message."""
    from soacheck.api.traces import trace

    try:
        result = trace(
            part, Path(path), case_temp=case_temp, cooling=cooling, breakdown=breakdown, chunk_rows=chunk_rows
        )
    except SoacheckError as err:
        return FileOutcome(str(path), "invalid", error=str(err))
    return FileOutcome(str(path), result.verdict, summary=result.to_dict())


def check_archive(
    part: Part,
    files: Sequence[Path],
    *,
    case_temp: float | None = None,
    cooling: Cooling | None = None,
    breakdown: BreakdownDerating = "auto",
    chunk_rows: int = DEFAULT_CHUNK_ROWS,
    jobs: int | None = None,
    dask_address: str | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> list[FileOutcome]:
    """Check every file against the part, in parallel; outcomes in the order of ``files``.

    Parameters
    ----------
    jobs
        Worker processes on this machine; the number of cores when None; 1 runs here, in turn.
    dask_address
        The scheduler of an existing Dask cluster (``tcp://host:8786``): the files are checked
        there instead (each worker must read the paths given).
    progress
        Called as ``progress(done, total)`` as files finish.
    """
    args = (case_temp, cooling, breakdown, chunk_rows)
    total = len(files)
    done = 0

    def tick() -> None:
        nonlocal done
        done += 1
        if progress is not None:
            progress(done, total)

    if dask_address is not None:
        return _on_dask(dask_address, part, files, args, tick)
    workers = min(jobs or os.cpu_count() or 1, max(total, 1))
    if workers <= 1:
        outcomes = []
        for path in files:
            outcomes.append(check_one(part, path, *args))
            tick()
        return outcomes
    from concurrent.futures import ProcessPoolExecutor, as_completed

    from soacheck.csvblocks import set_parse_threads

    # the cores are shared among the files: each worker parses CSV on its share of them
    share = max(1, (os.cpu_count() or 1) // workers)
    with ProcessPoolExecutor(max_workers=workers, initializer=set_parse_threads, initargs=(share,)) as pool:
        futures = {pool.submit(check_one, part, path, *args): k for k, path in enumerate(files)}
        outcomes: list[FileOutcome | None] = [None] * total
        for future in as_completed(futures):
            outcomes[futures[future]] = future.result()
            tick()
    return [o for o in outcomes if o is not None]


def _on_dask(address: str, part: Part, files: Sequence[Path], args: tuple, tick: Callable[[], None]) -> list:
    try:
        from distributed import Client
    except ImportError:
        raise SoacheckError("--dask needs Dask's distributed scheduler: pip install 'soacheck[dask]'") from None
    try:
        client = Client(address, timeout="10s", set_as_default=False)
    except (OSError, TimeoutError) as err:
        raise SoacheckError(f"--dask {address}: no Dask scheduler answers there ({err})") from None
    with client:
        futures = [client.submit(check_one, part, str(path), *args, pure=False) for path in files]
        outcomes = client.gather(futures)
    for _ in outcomes:
        tick()
    return outcomes
