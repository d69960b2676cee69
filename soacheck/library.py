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
from typing import TYPE_CHECKING, Any

from soacheck.errors import SoacheckError, nearest
from soacheck.partheader import PART_FILE, SOA_FILE, plain_curve_labels, read_header
from soacheck.tomlfiles import read_toml, toml_text

if TYPE_CHECKING:  # numpy behind them: imported where a part or stage is loaded, so listing parts starts fast
    from soacheck.parts import Part
    from soacheck.stage import Stage

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


PART_COLUMNS = ("id", "kind", "v_max", "i_max", "p_max", "tj_max", "rth_jc", "curves", "description", "folder")
"""The columns of :func:`part_rows` (and of :func:`soacheck.parts`), in order."""


def part_rows(folders: Sequence[Path]) -> list[dict[str, Any]]:
    """Every part in ``folders`` (the first of each id, sorted by id) as one plain dict a part.

    Keys :data:`PART_COLUMNS`: ``v_max`` [V], ``i_max`` [A], ``p_max`` [W], ``tj_max`` [°C],
    ``rth_jc`` [K/W], ``curves`` (pulse labels, DC last), ``folder`` as text. What
    ``soacheck parts`` prints, without pandas, and without numpy for plainly written parts:
    read from each ``part.toml``'s header (:func:`~soacheck.partheader.read_header`) and
    the ``pulse`` column of ``soa.csv``. The curves' points and the other tables of
    ``part.toml`` are checked when a part is loaded (``check``, ``show``, ``lint`` ...),
    not here.
    """
    rows = []
    for entry in list_parts(folders):
        header = read_header(entry.folder)
        labels = plain_curve_labels(entry.folder / SOA_FILE)
        if labels is None:  # not plainly written, or wrong: read as any command reads it, with its messages
            from soacheck.partfiles import read_part

            labels = [c.label for c in read_part(entry.folder).curves]
        r = header.ratings
        rows.append(
            {
                "id": header.id,
                "kind": header.kind,
                "v_max": r["v_max"],
                "i_max": r["i_max"],
                "p_max": r["p_max"],
                "tj_max": r["tj_max"],
                "rth_jc": r["rth_jc"],
                "curves": labels,
                "description": toml_text(f"{header.where}: description", header.data["description"]),
                "folder": str(entry.folder),
            }
        )
    return rows


def find_part_folder(ref: str, folders: Sequence[Path]) -> Path:
    """The folder of a part given by id (searched in ``folders``) or by path, without reading it."""
    path = Path(ref)
    if (path / PART_FILE).is_file():
        return path
    if os.sep in ref or (os.altsep and os.altsep in ref) or path.exists():
        raise SoacheckError(f"{ref}: no {PART_FILE} in that folder; a part folder holds {PART_FILE} and soa.csv")
    for library in folders:
        if (library / ref / PART_FILE).is_file():
            return library / ref
    ids = [e.id for e in list_parts(folders)]
    close = ", ".join(f"'{i}'" for i in nearest(ref, ids))
    raise SoacheckError(
        f"unknown part '{ref}'; the nearest ids are {close}; `soacheck parts` lists all {len(ids)}, "
        "or give the path of a part folder"
    )


def find_part(ref: str, folders: Sequence[Path]) -> Part:
    """Load a part given by id (searched in ``folders``) or by the path of its folder.

    Raises
    ------
    SoacheckError
        When no part has that id, naming the nearest ids.
    """
    from soacheck.partfiles import read_part

    return read_part(find_part_folder(ref, folders))


# --------------------------------------------------------------------------- stages

_STAGE_KEYS = ("part", "count", "ballast", "series_resistance", "vbe_spread", "vbe_tempco", "case_temp", "cooling")
_COOLING_KEYS = ("interface_rth", "heatsink_rth", "heatsink_capacity", "ambient")


def stage_table(stage: Stage) -> dict[str, Any]:
    """A stage as the keys of its file (``ballast``, ``[cooling] heatsink_rth`` ...): the inverse of reading it.

    Keys the file left out appear with the values they took by default, so a report shows
    everything the answer used, under the names the user writes.
    """
    table: dict[str, Any] = {
        "part": stage.part.id,
        "count": stage.count,
        "ballast": stage.ballast_ohm,
        "series_resistance": stage.series_ohm,
        "vbe_spread": stage.vbe_spread_v,
        "vbe_tempco": stage.vbe_tempco_v_per_k,
    }
    if stage.cooling is not None:
        table["cooling"] = {
            "interface_rth": stage.cooling.case_sink_k_per_w,
            "heatsink_rth": stage.cooling.sink_ambient_k_per_w,
            "heatsink_capacity": stage.cooling.sink_j_per_k,
            "ambient": stage.cooling.ambient_c,
        }
    else:
        table["case_temp"] = stage.case_temp_c
    if stage.part.policy is not None:  # the keys of its [policy] table, as written
        table["policy"] = {k: v for k, v in stage.part.policy.to_dict().items() if v is not None and k != "source"}
    return table


def read_stage(path: str | Path, folders) -> Stage:
    """Read a stage file (TOML); the part is an id in the libraries or a folder path relative to the file.

    The keys are documented in ``examples/stage.toml``.
    """
    path = Path(path)
    data = read_toml(path, "stage")
    return stage_from_table(data, folders, where=str(path), base=path.parent)


def stage_from_table(data: dict[str, Any], folders, *, where: str, base: Path) -> Stage:
    """Build a stage from its TOML table (a stage file, or a stage inline in a plan), checked by its schema."""
    from soacheck.bipolar import VBE_TEMPCO_V_PER_K, junctions
    from soacheck.policy import policy_from_value
    from soacheck.stage import Cooling, Stage
    from soacheck.tomlschemas import StageTable, validate  # pydantic: only when a stage is read

    table = validate(StageTable, data, where)
    ref = table.part.strip()
    local = base / ref
    part = find_part(str(local) if (local / PART_FILE).is_file() else ref, folders)
    cooling = None
    if table.cooling is not None:
        if table.case_temp is not None:
            raise SoacheckError(f"{where}: give either [cooling] or case_temp, not both")
        c = table.cooling
        cooling = Cooling(c.interface_rth, c.heatsink_rth, c.heatsink_capacity, c.ambient)
    elif table.case_temp is None:
        raise SoacheckError(f"{where}: add a [cooling] table or a fixed case_temp")
    # a Darlington's two junctions in series: twice the single junction's −2 mV/K (Sedra & Smith, from memory)
    tempco = VBE_TEMPCO_V_PER_K * junctions(part.darlington) if table.vbe_tempco is None else table.vbe_tempco
    if "policy" in data:  # design margins kept with the stage they were chosen for
        part = part.under(policy_from_value(data["policy"], f"{where}: policy", base=base))
    return Stage(
        part,
        table.count,
        table.ballast,
        table.series_resistance,
        table.vbe_spread,
        tempco,
        cooling,
        table.case_temp,
        name=where,
        drive_limit_a=table.drive_limit,
    )
