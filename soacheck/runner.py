"""Running a plan: every job through the library, into results with figures and assumptions.

Nothing here touches files; the CLI saves the figures and the report.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from soacheck.compare import TrajectoryJob, case_temps_in_stage, compare, compare_notes
from soacheck.display import failing_device, failure_text
from soacheck.envelope import Envelope, check_envelope
from soacheck.errors import SoacheckError
from soacheck.glossary import STATE_LIMITS
from soacheck.jobfiles import discharge_from_table
from soacheck.plan import Job, Plan
from soacheck.plots import plot_compare, plot_envelope_check, plot_point_check, plot_stage_run, plot_trace
from soacheck.points import check_points, overload_of
from soacheck.policy import least_margin, policy_lines, policy_of
from soacheck.quantities import SETPOINT
from soacheck.stage import Stage
from soacheck.stage_run import run_stage, setpoint_limits
from soacheck.trace import TraceChecker

if TYPE_CHECKING:
    from matplotlib.figure import Figure

SAFETY_CAUTIONS = (
    "A linear stage turns all of its input power into heat: heatsinks, tabs and cases burn skin; sense and "
    "ballast resistors at tens of amperes run hotter still and can set fire to what touches them.",
    "Battery packs deliver hundreds of amperes into a short and can vent, burn or explode; mains-powered "
    "stages carry lethal voltages. Fuse the source, keep a way to disconnect it, never leave a test unattended.",
    "Meter the power at the load's input and enforce the limits in the load's controller.",
    "These answers rest on digitized datasheet curves and the assumptions listed with each job. They do not "
    "replace the datasheet, a prototype measured with a thermocouple, local codes or licensed practice.",
)


@dataclass(frozen=True, eq=False)
class JobResult:
    """What one job found: verdict, the figures that tell it, the assumptions behind it."""

    name: str
    kind: str
    passed: bool
    summary: dict[str, Any]
    assumptions: tuple[str, ...]
    figures: dict[str, Figure] = field(default_factory=dict)
    rows: list[dict[str, Any]] = field(default_factory=list)
    units: dict[str, str] = field(default_factory=dict)
    """The unit of a figure whose unit depends on the job (a setpoint in A, W or Ω), by its name."""
    failed_device: str | None = None
    """The device a failing stage job fails at (``Q2``), where its stage has more than one device."""

    @property
    def verdict(self) -> str:
        return "pass" if self.passed else "fail"

    @property
    def policy(self) -> list[str]:
        """The design-margin policy the job was judged under, in lines for the report; empty when it names none."""
        found = self.summary.get("policy")
        return policy_lines(found) if isinstance(found, dict) else []

    def headline(self) -> str:
        """One line: what limits, and by how much. A failing job whose least margin is 0 or more failed on
        another limit than the current boundary (a junction past tj_max, say), and one that reached a limit
        of the stage's state (runaway, drive, dropout) failed whatever its current: that limit leads, with
        the device it is at, and the margin is said to be the current's
        (:func:`~soacheck.display.failure_text`). Otherwise the least margin, the limit with the device it was
        passed at where the stage has more than one (``limit power (Q2)``), and the first violation's time."""
        s = self.summary
        margin = s.get("margin")
        if not self.passed and ((isinstance(margin, float) and margin >= 0) or s.get("limit") in STATE_LIMITS):
            subject = "the trace" if self.kind == "trace" else "a device"
            return failure_text(s, subject=subject, span_s=s.get("duration"), device=self.failed_device)
        parts = []
        if margin is not None and isinstance(margin, float) and math.isfinite(margin):
            parts.append(f"least margin {margin:+.1%}")
        if s.get("limit"):  # the device it was passed at, where the stage has more than one (as failure_text names it)
            at = f" ({self.failed_device})" if self.failed_device and s["limit"] != "runaway" else ""
            parts.append(f"limit {s['limit']}{at}")
        if s.get("first_violation_time") is not None:
            parts.append(f"first outside at {s['first_violation_time']:.4g} s")
        if s.get("best"):
            parts.append(f"best {s['best']}")
        return "; ".join(parts) or "—"


def run_job(plan: Plan, job: Job) -> JobResult:
    """Run one validated job of the plan."""
    stage = plan.stage
    d = job.data
    if job.kind == "points":
        part = d["part"]
        result = check_points(
            d["voltage"],
            d["current"],
            part,
            tc_c=d["case_temp"],
            pulse_s=d["pulse"],
            duty=d["duty"],
            idle_current_a=d["idle_current"],
        )
        margin = np.where(np.isfinite(result.margin), result.margin, -np.inf)
        k = int(np.argmin(margin))
        summary = {
            "part": part.id,
            "points_checked": int(result.voltage_v.size),
            "points_outside": int((~result.inside).sum()),
            "margin": float(margin[k]) if np.isfinite(margin[k]) else None,
            "overload": overload_of(float(margin[k])) if np.isfinite(margin[k]) else None,
            "margin_to_rating": least_margin(result.to_frame()["margin_to_rating"].to_numpy(dtype=float)),
            "policy": policy_of(result.policy).to_dict(),
            "limit": str(result.limit[k]),
            "worst_voltage": float(result.voltage_v[k]),
            "worst_current": float(result.current_a[k]),
        }
        figure = plot_point_check(part, result).figure
        return JobResult(
            job.name,
            job.kind,
            result.passed,
            summary,
            result.assumptions,
            {"soa": figure},
            result.to_frame().to_dict(orient="records"),
        )
    if job.kind == "envelope":
        check = check_envelope(stage, d["envelope"])
        summary = check.summary()
        notes = tuple(summary.pop("assumptions"))
        return JobResult(
            job.name,
            job.kind,
            check.passed,
            summary,
            notes,
            {"envelope": plot_envelope_check(check)},
            check.outside,
            failed_device=failing_device(check.failed_device, check.stage.count),
        )
    if job.kind in ("discharge", "sweep"):
        path = d["trajectory"]
        run = run_stage(stage, path.time_s, path.source_v, path.total_a)
        summary = {"test": path.label, **run.summary()}
        if job.kind == "discharge" and d["find_max"]:
            summary.update(_setpoint_limits(job, plan.stage))
        found, units = None, {}
        if "max_safe_setpoint" in summary:
            setpoint_unit = SETPOINT[str(d["table"]["mode"]).lower()].unit
            found = (summary["max_safe_setpoint"], setpoint_unit)
            units = {"max_safe_setpoint": setpoint_unit, "max_setpoint_at_rating": setpoint_unit}
        figure = plot_stage_run(run, title=f"{job.name}: {path.label}", max_setpoint=found)
        notes = run.assumptions + path.notes
        device = failing_device(run.failed_device, stage.count)
        return JobResult(
            job.name, job.kind, run.passed, summary, notes, {"run": figure}, units=units, failed_device=device
        )
    if job.kind == "trace":
        part = d["part"]
        if d["case_temp"] is not None:
            checker = TraceChecker(part, tc_c=d["case_temp"])
        elif stage.cooling is not None:
            checker = TraceChecker(part, cooling=stage.cooling)
        else:
            checker = TraceChecker(part, tc_c=stage.case_temp_c)
        path = d["trajectory"]
        checker.feed(path.time_s, path.source_v, path.total_a)
        result = checker.result()
        summary = result.summary()
        notes = tuple(summary.pop("assumptions"))
        return JobResult(job.name, job.kind, result.passed, summary, notes, {"trace": plot_trace(part, result)})
    if job.kind == "compare":
        target = d["job"]
        job_for = target if isinstance(target, Envelope) else TrajectoryJob(target)
        ranked = compare(d["parts"], job_for, stage=stage if d["use_stage"] else None, policy=plan.policy)
        rows = [c.as_dict() for c in ranked]
        best = ranked[0]
        summary = {
            "candidates": len(ranked),
            "passing": sum(c.passes for c in ranked),
            "best": best.part,
            "margin": best.margin,
            "overload": overload_of(best.margin),
            "margin_to_rating": best.margin_to_rating,
            "policy": policy_of(plan.policy).to_dict(),
            "limit": best.limit,
        }
        figures = {}
        if isinstance(target, Envelope):
            tc = (
                target.case_temp_c
                if target.case_temp_c is not None
                else (stage.case_temp_c if stage.case_temp_c is not None else target.ambient_c)
            )
            by_id = {p.id: p for p in d["parts"]}
            drawn = [by_id[c.part] for c in ranked]
            if d["use_stage"] and target.case_temp_c is None and stage.cooling is not None:
                tc = case_temps_in_stage(drawn, stage, target)  # each where its verdict was decided
            figures["candidates"] = plot_compare(
                drawn, target, case_temp_c=tc, count=stage.count if d["use_stage"] else 1
            ).figure
        notes = compare_notes(d["parts"], in_stage=d["use_stage"])
        return JobResult(job.name, job.kind, best.passes, summary, notes, figures, rows)
    raise SoacheckError(f"unknown job kind '{job.kind}'")


def _setpoint_limits(job: Job, stage: Stage) -> dict[str, float | None]:
    """The most demanding safe setpoint of a discharge job, under the plan's policy and at the ratings."""
    table, origin, base = job.data["table"], job.data["origin"], job.data["base"]

    def run_in(through: Stage, setpoint: float):
        path = discharge_from_table({**table, "setpoint": setpoint}, where=origin, base=base)
        return run_stage(through, path.time_s, path.source_v, path.total_a)

    mode = str(table["mode"]).lower()
    return setpoint_limits(run_in, stage, float(table["setpoint"]), mode, rel_tol=1e-2)


def run_plan(plan: Plan, *, progress: Callable[[int, int, str], None] | None = None) -> list[JobResult]:
    """Run every job, in the plan's order; ``progress(done, total, name)`` after each."""
    results = []
    for n, job in enumerate(plan.jobs, start=1):
        results.append(run_job(plan, job))
        if progress is not None:
            progress(n, len(plan.jobs), job.name)
    return results


def failures_first(results: list[JobResult]) -> list[JobResult]:
    """The results with every failing job before the passing ones, otherwise in plan order."""
    return sorted(results, key=lambda r: r.passed)
