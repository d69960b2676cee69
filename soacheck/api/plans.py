"""A plan run job by job, its report written when asked: ``run_plan`` and its result."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from soacheck.api.base import Result, _least, _pd, _plots
from soacheck.api.libraries import _folders
from soacheck.api.options import Library, PathLike
from soacheck.errors import SoacheckError
from soacheck.jsonvalues import jsonable
from soacheck.outputs import check_output
from soacheck.plan import Plan, read_plan

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes

    from soacheck.runner import JobResult


def run_plan(
    path: PathLike,
    out: PathLike | None = None,
    *,
    force: bool = False,
    library: Library = None,
    progress: Callable[[int, int, str], None] | None = None,
) -> PlanResult:
    """Read a plan, check everything it names, run every job; write the report only when asked.

    Parameters
    ----------
    path
        The plan file (TOML): a stage and its jobs.
    out
        A folder to write report.html, report.json and the plots into; nothing is written
        when None. A folder holding an earlier soacheck report is replaced; any other
        existing folder only with ``force``.
    force
        Replace an existing ``out`` that is not a soacheck report.
    library
        Folders of user part folders.
    progress
        Called with ``(jobs done, jobs, name of the job)`` after each job.

    Returns
    -------
    PlanResult
        Every job's verdict, summary, assumptions and figures; ``to_dict()`` is report.json.

    Raises
    ------
    SoacheckError
        Anything wrong in the plan or the files it names, before any job runs; an ``out``
        that is not ours to replace.
    """
    plan = read_plan(Path(path), _folders(library))
    if out is not None:
        refuse_report_folder(Path(out), force)
        try:
            check_output(out, force=True, folder=True)
        except SoacheckError as err:
            raise SoacheckError(f"--out: {err}") from None
    from soacheck.runner import run_plan as run_plan_jobs  # matplotlib: only when a plan runs

    result = PlanResult(plan, tuple(run_plan_jobs(plan, progress=progress)))
    if out is not None:
        result.write_report(out, force=force)
    return result


def _job_margin(job: JobResult) -> float:
    margin = job.summary.get("margin")
    if isinstance(margin, int | float) and math.isfinite(margin):
        return float(margin)
    return math.nan if job.passed else -math.inf


@dataclass(frozen=True, eq=False, repr=False)
class PlanResult(Result):
    """Every job of a plan, run (``soacheck run``).

    Attributes
    ----------
    plan
        The plan, validated.
    jobs
        Each job's verdict, figures (matplotlib figures, not saved), summary and assumptions, in plan order.
    """

    plan: Plan
    jobs: tuple[JobResult, ...]

    @property
    def passed(self) -> bool:
        return all(job.passed for job in self.jobs)

    @property
    def margin(self) -> float:
        margins = np.array([_job_margin(job) for job in self.jobs])
        return _least(margins, np.array([str(job.summary.get("limit")) for job in self.jobs]))[0]

    @property
    def limit(self) -> str | None:
        margins = np.array([_job_margin(job) for job in self.jobs])
        k = _least(margins, np.zeros(len(self.jobs)))[2]
        return None if k is None else self.jobs[k].summary.get("limit")

    @property
    def assumptions(self) -> tuple[str, ...]:
        """Each job's assumptions, prefixed with the job's name."""
        return tuple(f"{job.name}: {note}" for job in self.jobs for note in job.assumptions)

    def to_dict(self) -> dict[str, Any]:
        """The ``report.json`` object, failures first; the plot files named as the report writes them."""
        from soacheck.report import plot_files, report_json

        return jsonable(report_json(self.plan, list(self.jobs), plot_files(list(self.jobs))))

    def to_frame(self) -> pd.DataFrame:
        """One row per job, failures first: name, kind, verdict, margin (fraction), limit, headline."""
        from soacheck.runner import failures_first

        return _pd().DataFrame(
            [
                {
                    "name": job.name,
                    "kind": job.kind,
                    "verdict": job.verdict,
                    "margin": _job_margin(job),
                    "limit": job.summary.get("limit"),
                    "headline": job.headline(),
                }
                for job in failures_first(list(self.jobs))
            ],
            columns=["name", "kind", "verdict", "margin", "limit", "headline"],
        )

    def write_report(self, out: str | Path, *, force: bool = False) -> Path:
        """Write report.html, report.json and the plots into the folder ``out``, all at once.

        A folder that holds an earlier soacheck report is replaced; any other existing
        folder only with ``force``.
        """
        out = Path(out)
        from soacheck.outputs import write_folder
        from soacheck.report import REPORT_MARKER, report_files

        refuse_report_folder(out, force)
        plan_file = Path(self.plan.path)
        plan_text = plan_file.read_text(encoding="utf-8") if plan_file.is_file() else None
        files = report_files(self.plan, list(self.jobs), plan_text=plan_text)
        write_folder(out, files, force=True, marker=REPORT_MARKER)
        return out

    def plot(self, ax: Axes | None = None) -> Axes:
        """Each job's least margin as a bar, red where the job fails, in %."""
        ax = _plots().new_axes(8, 0.5 + 0.4 * len(self.jobs)) if ax is None else ax
        frame = self.to_frame()
        margin = np.clip(np.nan_to_num(frame["margin"].to_numpy(dtype=float), nan=0.0, neginf=-1.0), -1, 1)
        colours = ["#2e7d4f" if v == "pass" else "#b23a3a" for v in frame["verdict"]]
        ax.barh(frame["name"], 100 * margin, color=colours)
        ax.axvline(0, color="k", lw=0.6)
        ax.invert_yaxis()
        ax.set_xlabel("least margin [%] (clipped to ±100 %)")
        ax.set_title(self.plan.title, fontsize=10)
        return ax


def refuse_report_folder(out: Path, force: bool) -> None:
    """Refuse a report folder ``out`` that exists and holds no soacheck report, unless ``force``."""
    from soacheck.report import REPORT_MARKER

    if out.exists() and not (out / REPORT_MARKER).is_file() and not force:
        raise SoacheckError(f"{out}: exists and holds no soacheck report; choose another -o or add --force")
