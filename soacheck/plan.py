"""A test plan: one stage and any number of jobs, read and validated before anything runs.

The plan is a TOML file (``examples/plan.toml`` is the commented reference). Every file it
names is read, every part found and every key checked first, so that a mistake anywhere
stops the run with one clear line before any result is written.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

from soacheck.battery import sweep
from soacheck.envelope import Envelope
from soacheck.errors import SoacheckError, did_you_mean
from soacheck.files import check_keys, read_toml, read_trace, toml_number, toml_text
from soacheck.jobfiles import discharge_from_table, envelope_from_table, read_points
from soacheck.library import find_part, list_parts, read_stage, stage_from_table
from soacheck.parts import Part
from soacheck.quantities import IDLE_CURRENT
from soacheck.stage import Stage
from soacheck.units import parse_duration

JobKind = Literal["points", "envelope", "discharge", "sweep", "trace", "compare"]
JOB_KINDS: tuple[JobKind, ...] = ("points", "envelope", "discharge", "sweep", "trace", "compare")
_TOP_KEYS = ("title", "stage", *JOB_KINDS)
_JOB_KEYS: dict[str, tuple[str, ...]] = {
    "points": ("name", "file", "part", "case_temp", "pulse", "duty", "idle_current"),
    "envelope": ("name", "file", "voltage", "current", "power", "pulse", "duty", "ambient", "case_temp"),
    "discharge": (
        "name",
        "file",
        "battery",
        "cells",
        "capacity",
        "mode",
        "setpoint",
        "cutoff",
        "internal_resistance",
        "samples",
        "find_max",
    ),
    "sweep": ("name", "ramp", "from", "to", "at", "time", "samples"),
    "trace": ("name", "file", "part", "case_temp"),
    "compare": ("name", "parts", "all", "envelope", "discharge", "use_stage"),
}


@dataclass(frozen=True, eq=False)
class Job:
    """One validated job of a plan; ``data`` holds what it needs, already read from files."""

    kind: JobKind
    name: str
    data: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True, eq=False)
class Plan:
    title: str
    path: Path
    stage: Stage
    jobs: tuple[Job, ...]


def read_plan(path: str | Path, folders: Sequence[Path]) -> Plan:
    """Read a plan and everything it refers to; raise one clear error naming the plan and the job."""
    path = Path(path)
    data = read_toml(path, "plan")
    base = path.parent
    for key in data:
        if key not in _TOP_KEYS:
            hint = did_you_mean(key, _TOP_KEYS)
            raise SoacheckError(
                f"{path}: unknown key or job kind '{key}'{hint}; jobs are [[{']], [['.join(JOB_KINDS)}]]"
            )
    if "stage" not in data:
        raise SoacheckError(f'{path}: no stage; add stage = "stage.toml" or a [stage] table')
    if isinstance(data["stage"], str):
        stage = read_stage(base / data["stage"], folders)
    elif isinstance(data["stage"], dict):
        stage = stage_from_table(data["stage"], folders, where=f"{path} [stage]", base=base)
    else:
        raise SoacheckError(f"{path}: stage must be the path of a stage file or a [stage] table")
    jobs: list[Job] = []
    for kind in JOB_KINDS:
        entries = data.get(kind, [])
        if isinstance(entries, dict):
            raise SoacheckError(f"{path}: write [[{kind}]] (two brackets) for each {kind} job")
        for n, entry in enumerate(entries, start=1):
            name = str(entry.get("name", f"{kind} {n}"))
            where = f"{path} [[{kind}]] '{name}'"
            check_keys(where, entry, _JOB_KEYS[kind], ())
            jobs.append(Job(kind, name, _prepare(kind, entry, where=where, base=base, stage=stage, folders=folders)))
    if not jobs:
        raise SoacheckError(f"{path}: the plan has no jobs; add [[points]], [[discharge]], [[envelope]] ...")
    return Plan(str(data.get("title", path.stem)), path, stage, tuple(jobs))


def _file(where: str, entry: dict[str, Any], base: Path) -> Path:
    target = base / toml_text(f"{where}: file", entry["file"])
    if not target.is_file():
        raise SoacheckError(f"{where}: file '{entry['file']}' not found next to the plan ({target})")
    return target


def _part(where: str, entry: dict[str, Any], stage: Stage, folders: Sequence[Path], base: Path) -> Part:
    if "part" not in entry:
        return stage.part
    ref = toml_text(f"{where}: part", entry["part"])
    local = base / ref
    try:
        return find_part(str(local) if local.is_dir() else ref, folders)
    except SoacheckError as err:
        raise SoacheckError(f"{where}: {err}") from None


def _prepare(kind: str, entry: dict[str, Any], *, where: str, base: Path, stage: Stage, folders) -> dict[str, Any]:
    """Read and check what a job needs, so that running it cannot fail on input."""
    try:
        if kind == "points":
            if "file" not in entry:
                raise SoacheckError(f'{where}: give file = "points.csv" (columns voltage,current[,case_temp,pulse])')
            frame = read_points(_file(where, entry, base)).frame
            default_pulse = parse_duration(str(entry.get("pulse", "dc")), where=f"{where}: pulse")
            return {
                "part": _part(where, entry, stage, folders, base),
                "voltage": frame["voltage"].to_numpy(),
                "current": frame["current"].to_numpy(),
                "case_temp": frame["case_temp"].to_numpy()
                if "case_temp" in frame
                else toml_number(f"{where}: case_temp", entry.get("case_temp", 25.0), positive=False),
                "pulse": frame["pulse_s"].to_numpy() if "pulse_s" in frame else default_pulse,
                "duty": frame["duty"].to_numpy() if "duty" in frame else float(entry.get("duty", 0.0)),
                "idle_current": frame["idle_current"].to_numpy()
                if "idle_current" in frame
                else IDLE_CURRENT.check(entry.get("idle_current", 0.0), f"{where}: idle_current"),
            }
        if kind == "envelope":
            return {"envelope": _envelope(entry, where, base)}
        if kind == "discharge":
            table, origin, folder = _discharge_table(entry, where, base)
            trajectory = discharge_from_table(table, where=origin, base=folder)
            return {
                "trajectory": trajectory,
                "find_max": bool(entry.get("find_max", False)),
                "table": table,
                "origin": origin,
                "base": folder,
            }
        if kind == "sweep":
            check_keys(where, entry, _JOB_KEYS["sweep"], ("ramp", "from", "to", "at"))
            seconds = parse_duration(str(entry.get("time", "10s")), where=f"{where}: time")
            if math.isinf(seconds):
                raise SoacheckError(f'{where}: time must be a duration such as "30s"')
            return {
                "trajectory": sweep(
                    toml_text(f"{where}: ramp", entry["ramp"]),
                    toml_number(f"{where}: from", entry["from"], positive=False),
                    toml_number(f"{where}: to", entry["to"]),
                    at=toml_number(f"{where}: at", entry["at"]),
                    ramp_s=seconds,
                    samples=int(entry.get("samples", 1000)),
                )
            }
        if kind == "trace":
            if "file" not in entry:
                raise SoacheckError(f'{where}: give file = "trace.csv" (columns time,voltage,current of one device)')
            trace = read_trace(_file(where, entry, base))
            case = entry.get("case_temp")
            return {
                "part": _part(where, entry, stage, folders, base),
                "trajectory": trace,
                "case_temp": None if case is None else toml_number(f"{where}: case_temp", case, positive=False),
            }
        if kind == "compare":
            if bool(entry.get("all", False)) == bool(entry.get("parts")):
                raise SoacheckError(f'{where}: give parts = ["id", ...] or all = true')
            parts = (
                [find_part(e.folder.name, folders) for e in list_parts(folders)]
                if entry.get("all")
                else [_part(where, {"part": p}, stage, folders, base) for p in entry["parts"]]
            )
            if ("envelope" in entry) == ("discharge" in entry):
                raise SoacheckError(
                    f'{where}: give the job as envelope = "envelope.toml" or discharge = "discharge.toml"'
                )
            use_stage = bool(entry.get("use_stage", True))
            if "envelope" in entry:
                job = envelope_from_table(
                    read_toml(base / entry["envelope"], "envelope"), where=str(base / entry["envelope"])
                )
            else:
                if not use_stage:
                    raise SoacheckError(f"{where}: a discharge runs through the stage; set use_stage = true")
                target = base / entry["discharge"]
                job = discharge_from_table(read_toml(target, "discharge"), where=str(target), base=target.parent)
            return {"parts": parts, "job": job, "use_stage": use_stage}
    except SoacheckError as err:
        text = str(err)
        raise SoacheckError(text if text.startswith(where) else f"{where}: {text}") from None
    raise AssertionError(kind)


def _without(entry: dict[str, Any], *keys: str) -> dict[str, Any]:
    return {k: v for k, v in entry.items() if k not in keys}


def _envelope(entry: dict[str, Any], where: str, base: Path) -> Envelope:
    if "file" in entry:
        if len(entry) > 2 or (len(entry) == 2 and "name" not in entry):
            raise SoacheckError(f"{where}: give the envelope either as file = ... or inline, not both")
        target = _file(where, entry, base)
        return envelope_from_table(read_toml(target, "envelope"), where=str(target))
    return envelope_from_table(_without(entry, "name"), where=where)


def _discharge_table(entry: dict[str, Any], where: str, base: Path) -> tuple[dict[str, Any], str, Path]:
    """The discharge's keys (from its file or inline), where they came from, and their folder."""
    if "file" in entry:
        target = _file(where, entry, base)
        return read_toml(target, "discharge"), str(target), target.parent
    return _without(entry, "name", "find_max"), where, base
