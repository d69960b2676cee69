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
from soacheck.errors import SoacheckError, did_you_mean
from soacheck.jobfiles import discharge_from_table, envelope_from_table, read_points
from soacheck.library import find_part, list_parts, read_stage, stage_from_table
from soacheck.parts import Part
from soacheck.policy import Policy, policy_from_value
from soacheck.quantities import CURRENT, POWER, VOLTAGE
from soacheck.stage import Stage
from soacheck.tomlfiles import read_toml
from soacheck.tomlschemas import (
    CompareJob,
    DischargeFileJob,
    DischargeJob,
    EnvelopeFileJob,
    EnvelopeJob,
    PointsJob,
    SweepJob,
    TraceJob,
    validate,
)
from soacheck.tracefiles import read_trace
from soacheck.units import parse_duration

JobKind = Literal["points", "envelope", "discharge", "sweep", "trace", "compare"]
JOB_KINDS: tuple[JobKind, ...] = ("points", "envelope", "discharge", "sweep", "trace", "compare")
_TOP_KEYS = ("title", "stage", "policy", *JOB_KINDS)


@dataclass(frozen=True, eq=False)
class Job:
    """One validated job of a plan; ``data`` holds what it needs, already read from files."""

    kind: JobKind
    name: str
    data: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True, eq=False)
class Plan:
    """A validated plan. ``policy``: the design-margin policy every job is judged under (None: the ratings)."""

    title: str
    path: Path
    stage: Stage
    jobs: tuple[Job, ...]
    policy: Policy | None = None


def read_plan(path: str | Path, folders: Sequence[Path]) -> Plan:
    """Read a plan and everything it refers to; raise one clear error naming the plan and the job.

    Every job's keys are checked against its schema (:mod:`soacheck.tomlschemas`): types,
    physical ranges, unknown keys. Job names must be unique: each names a section, an
    anchor and plot files of the report.
    """
    path = Path(path)
    data = read_toml(path, "plan")
    base = path.parent
    for key in data:
        if key not in _TOP_KEYS:
            hint = did_you_mean(key, _TOP_KEYS)
            raise SoacheckError(
                f"{path}: unknown key or job kind '{key}'{hint}; jobs are [[{']], [['.join(JOB_KINDS)}]]"
            )
    title = data.get("title", path.stem)
    if not isinstance(title, str):
        raise SoacheckError(f'{path}: title is {title!r}; write text in quotes, such as "Bench test"')
    if "stage" not in data:
        raise SoacheckError(f'{path}: no stage; add stage = "stage.toml" or a [stage] table')
    if isinstance(data["stage"], str):
        stage = read_stage(base / data["stage"], folders)
    elif isinstance(data["stage"], dict):
        stage = stage_from_table(data["stage"], folders, where=f"{path} [stage]", base=base)
    else:
        raise SoacheckError(f"{path}: stage must be the path of a stage file or a [stage] table")
    # the plan's policy, else the stage's own; every part of every job is judged under it
    policy = stage.part.policy
    if "policy" in data:
        policy = policy_from_value(data["policy"], f"{path}: policy", base=base)
        stage = stage.with_part(stage.part.rated.under(policy))
    jobs: list[Job] = []
    seen: dict[str, str] = {}
    for kind in JOB_KINDS:
        entries = data.get(kind, [])
        if isinstance(entries, dict):
            raise SoacheckError(f"{path}: write [[{kind}]] (two brackets) for each {kind} job")
        if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
            raise SoacheckError(f"{path}: {kind} is {entries!r}; write each {kind} job as a [[{kind}]] table")
        for n, entry in enumerate(entries, start=1):
            name = entry.get("name", f"{kind} {n}")
            if not isinstance(name, str) or not name.strip():
                raise SoacheckError(f'{path} [[{kind}]] {n}: name is {name!r}; write a name in quotes, such as "hot"')
            where = f"{path} [[{kind}]] '{name}'"
            if name.strip().lower() in seen:
                raise SoacheckError(
                    f"{where}: the name '{name}' is also the name of {seen[name.strip().lower()]}; give each job its "
                    "own name (names tell jobs apart in the report, its plots and its links)"
                )
            seen[name.strip().lower()] = f"a [[{kind}]] job"
            prepared = _prepare(kind, entry, where=where, base=base, stage=stage, folders=folders)
            try:
                if "part" in prepared:
                    prepared["part"] = prepared["part"].under(policy)
                if "parts" in prepared:
                    prepared["parts"] = [part.under(policy) for part in prepared["parts"]]
            except SoacheckError as err:
                raise SoacheckError(f"{where}: {err}") from None
            jobs.append(Job(kind, name, prepared))
    if not jobs:
        raise SoacheckError(f"{path}: the plan has no jobs; add [[points]], [[discharge]], [[envelope]] ...")
    return Plan(title, path, stage, tuple(jobs), policy)


def _file(where: str, file: str, base: Path) -> Path:
    target = base / file
    if not target.is_file():
        raise SoacheckError(f"{where}: file '{file}' not found next to the plan ({target})")
    return target


def _part(where: str, ref: str | None, stage: Stage, folders: Sequence[Path], base: Path) -> Part:
    if ref is None:
        return stage.part
    local = base / ref.strip()
    try:
        return find_part(str(local) if local.is_dir() else ref.strip(), folders)
    except SoacheckError as err:
        raise SoacheckError(f"{where}: {err}") from None


def _prepare(kind: str, entry: dict[str, Any], *, where: str, base: Path, stage: Stage, folders) -> dict[str, Any]:
    """Read and check what a job needs, so that running it cannot fail on input."""
    try:
        return _PREPARE[kind](entry, where=where, base=base, stage=stage, folders=folders)
    except SoacheckError as err:
        text = str(err)
        raise SoacheckError(text if text.startswith(where) else f"{where}: {text}") from None


def _points(entry, *, where, base, stage, folders) -> dict[str, Any]:
    job = validate(PointsJob, entry, where)
    frame = read_points(_file(where, job.file, base)).frame
    default_pulse = parse_duration(job.pulse, where=f"{where}: pulse")
    return {
        "part": _part(where, job.part, stage, folders, base),
        "voltage": frame["voltage"].to_numpy(),
        "current": frame["current"].to_numpy(),
        "case_temp": frame["case_temp"].to_numpy() if "case_temp" in frame else job.case_temp,
        "pulse": frame["pulse_s"].to_numpy() if "pulse_s" in frame else default_pulse,
        "duty": frame["duty"].to_numpy() if "duty" in frame else job.duty,
        "idle_current": frame["idle_current"].to_numpy() if "idle_current" in frame else job.idle_current,
    }


def _envelope(entry, *, where, base, stage, folders) -> dict[str, Any]:
    if "file" in entry:
        if len(entry) > 2 or (len(entry) == 2 and "name" not in entry):
            raise SoacheckError(f"{where}: give the envelope either as file = ... or inline, not both")
        target = _file(where, validate(EnvelopeFileJob, entry, where).file, base)
        return {"envelope": envelope_from_table(read_toml(target, "envelope"), where=str(target))}
    validate(EnvelopeJob, entry, where)
    return {"envelope": envelope_from_table(_without(entry, "name"), where=where)}


def _discharge(entry, *, where, base, stage, folders) -> dict[str, Any]:
    if "file" in entry:
        job = validate(DischargeFileJob, entry, where)
        target = _file(where, job.file, base)
        table, origin, folder = read_toml(target, "discharge"), str(target), target.parent
    else:
        job = validate(DischargeJob, entry, where)
        table, origin, folder = _without(entry, "name", "find_max"), where, base
    return {
        "trajectory": discharge_from_table(table, where=origin, base=folder),
        "find_max": job.find_max,
        "table": table,
        "origin": origin,
        "base": folder,
    }


def _sweep(entry, *, where, base, stage, folders) -> dict[str, Any]:
    job = validate(SweepJob, entry, where)
    seconds = parse_duration(job.time, where=f"{where}: time")
    if math.isinf(seconds):
        raise SoacheckError(f'{where}: time must be a duration such as "30s"')
    ramp = job.ramp.strip().lower()
    ramped = CURRENT if ramp == "current" else VOLTAGE
    ramped.check(job.to, f"{where}: to")
    if not (ramp == "current" and job.start == 0):
        ramped.check(job.start, f"{where}: from")
    {"current": VOLTAGE, "voltage": CURRENT, "power": POWER}.get(ramp, VOLTAGE).check(job.at, f"{where}: at")
    return {"trajectory": sweep(ramp, job.start, job.to, at=job.at, ramp_s=seconds, samples=job.samples)}


def _trace(entry, *, where, base, stage, folders) -> dict[str, Any]:
    job = validate(TraceJob, entry, where)
    return {
        "part": _part(where, job.part, stage, folders, base),
        "trajectory": read_trace(_file(where, job.file, base)),
        "case_temp": job.case_temp,
    }


def _compare(entry, *, where, base, stage, folders) -> dict[str, Any]:
    job = validate(CompareJob, entry, where)
    if job.all == bool(job.parts):
        raise SoacheckError(f'{where}: give parts = ["id", ...] or all = true')
    parts = (
        [find_part(e.folder.name, folders) for e in list_parts(folders)]
        if job.all
        else [_part(where, p, stage, folders, base) for p in job.parts or []]
    )
    if (job.envelope is None) == (job.discharge is None):
        raise SoacheckError(f'{where}: give the job as envelope = "envelope.toml" or discharge = "discharge.toml"')
    if job.envelope is not None:
        target = _file(where, job.envelope, base)
        target_job = envelope_from_table(read_toml(target, "envelope"), where=str(target))
    else:
        if not job.use_stage:
            raise SoacheckError(f"{where}: a discharge runs through the stage; set use_stage = true")
        target = _file(where, job.discharge, base)
        target_job = discharge_from_table(read_toml(target, "discharge"), where=str(target), base=target.parent)
    return {"parts": parts, "job": target_job, "use_stage": job.use_stage}


_PREPARE = {
    "points": _points,
    "envelope": _envelope,
    "discharge": _discharge,
    "sweep": _sweep,
    "trace": _trace,
    "compare": _compare,
}


def _without(entry: dict[str, Any], *keys: str) -> dict[str, Any]:
    return {k: v for k, v in entry.items() if k not in keys}
