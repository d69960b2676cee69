"""Candidate parts ranked for a job: ``compare`` and its result."""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

from soacheck.api.base import Result, _pd, _plots
from soacheck.api.libraries import _folders
from soacheck.api.options import Library, PartLike, PathLike, PolicyLike, StageLike, _breakdown
from soacheck.api.stages import load_stage
from soacheck.battery import Trajectory
from soacheck.compare import Candidate, TrajectoryJob, compare_notes
from soacheck.compare import compare as compare_parts
from soacheck.derating import BreakdownDerating
from soacheck.envelope import Envelope
from soacheck.errors import SoacheckError
from soacheck.jobfiles import discharge_from_table, read_envelope
from soacheck.jsonvalues import jsonable
from soacheck.library import find_part, list_parts
from soacheck.partfiles import read_part
from soacheck.parts import Part
from soacheck.policy import Policy, policy_of, resolve_policy
from soacheck.quantities import TEMPERATURE
from soacheck.stage import Stage
from soacheck.tomlfiles import read_toml
from soacheck.tracefiles import read_trace

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes


def compare(
    parts: Sequence[PartLike] | Literal["all"],
    *,
    envelope: Envelope | PathLike | None = None,
    discharge: PathLike | None = None,
    trace: PathLike | Trajectory | None = None,
    case_temp: float = 25.0,
    stage: StageLike | None = None,
    breakdown: BreakdownDerating = "auto",
    policy: PolicyLike = None,
    library: Library = None,
    progress: Callable[[int, int], None] | None = None,
) -> CompareResult:
    """Rank candidate parts for a job: verdict, least margin, limit, fewest devices, cooling headroom.

    Parameters
    ----------
    parts
        The candidates (parts, ids or folders), or ``"all"`` for every part in the libraries.
    envelope, discharge, trace
        The job, exactly one: an envelope (or its file), a discharge file (needs ``stage``),
        or a trace file.
    case_temp
        Case temperature of a single device on a trace. [°C]
    stage
        The stage each candidate takes its place in; each stands alone when None.
    breakdown
        Second-breakdown derating: ``auto``, ``thermal`` or ``none``.
    policy
        Design margins to judge against: a :class:`~soacheck.policy.Policy`, a preset name
        (``"none"``, ``"bench"``) or a policy file; None: the stage file's own ``[policy]``,
        else the absolute ratings. Verdict and ``margin`` are then the policy's and
        ``margin_to_rating`` is the margin to the absolute ratings.
    progress
        Called with ``(candidates done, candidates)`` after each candidate.

    Returns
    -------
    CompareResult
        The candidates, best first: passing before failing, then by least margin.
    """
    chosen = _breakdown(breakdown)
    folders = _folders(library)
    if parts == "all":
        candidates = [read_part(e.folder) for e in list_parts(folders)]
    elif not parts:
        raise SoacheckError("name the candidate parts, or give --all (not both)")
    else:
        candidates = [p if isinstance(p, Part) else find_part(str(p), folders) for p in parts]
    jobs = [f for f in (envelope, discharge, trace) if f is not None]
    if len(jobs) != 1:
        raise SoacheckError("give the job as one of --envelope FILE, --discharge FILE or --trace FILE")
    if discharge is not None and stage is None:
        raise SoacheckError("--discharge needs --stage: a battery discharges through a stage")
    TEMPERATURE.check(case_temp, "--case-temp")
    loaded_stage = load_stage(stage, library=library) if stage is not None else None
    env: Envelope | None = None
    if envelope is not None:
        env = envelope if isinstance(envelope, Envelope) else read_envelope(envelope)
        job: Envelope | TrajectoryJob = env
        label = env.label
    elif discharge is not None:
        path = Path(discharge)
        job = TrajectoryJob(discharge_from_table(read_toml(path, "discharge"), where=str(path), base=path.parent))
        label = job.trajectory.label
    else:
        assert trace is not None
        trajectory = trace if isinstance(trace, Trajectory) else read_trace(trace)
        job = TrajectoryJob(trajectory, case_temp_c=case_temp)
        label = trajectory.label
    chosen_policy = None if policy is None else resolve_policy(policy)
    ranked = compare_parts(
        candidates, job, stage=loaded_stage, breakdown=chosen, policy=chosen_policy, progress=progress
    )
    if chosen_policy is None and loaded_stage is not None:
        chosen_policy = loaded_stage.part.policy
    return CompareResult(
        tuple(ranked),
        label,
        loaded_stage.name if loaded_stage is not None else None,
        tuple(part.under(chosen_policy) for part in candidates),
        env,
        loaded_stage,
        chosen,
        chosen_policy,
    )


@dataclass(frozen=True, eq=False, repr=False)
class CompareResult(Result):
    """Candidate parts ranked for a job, best first (``compare``).

    Attributes
    ----------
    candidates
        Each part's verdict, least margin, limit, fewest devices and cooling headroom, best first.
    job
        The job in words.
    stage_label
        The stage file each candidate took its place in, or None (each alone).
    parts, envelope, stage, breakdown
        What the plot needs: the candidate parts, the envelope (None for a trajectory job), the stage.
    policy
        The design-margin policy the candidates were ranked under, or None (the absolute ratings).
    """

    candidates: tuple[Candidate, ...]
    job: str
    stage_label: str | None
    parts: tuple[Part, ...] = ()
    envelope: Envelope | None = None
    stage: Stage | None = None
    breakdown: BreakdownDerating = "auto"
    policy: Policy | None = None

    @property
    def passed(self) -> bool:
        """True when the best candidate passes."""
        return bool(self.candidates) and self.candidates[0].passes

    @property
    def best(self) -> str | None:
        """Id of the best candidate."""
        return self.candidates[0].part if self.candidates else None

    @property
    def margin(self) -> float:
        best = self.candidates[0].margin if self.candidates else None
        return -math.inf if best is None else float(best)

    @property
    def limit(self) -> str | None:
        return self.candidates[0].limit if self.candidates else None

    @property
    def assumptions(self) -> tuple[str, ...]:
        return compare_notes(self.parts, in_stage=self.stage is not None)

    def to_dict(self) -> dict[str, Any]:
        return jsonable(
            {
                "job": self.job,
                "stage": self.stage_label,
                "policy": policy_of(self.policy).to_dict(),
                "candidates": [c.as_dict() for c in self.candidates],
            }
        )

    def to_frame(self) -> pd.DataFrame:
        """One row per candidate, best first: part, passes, margin, limit, min_count,
        max_heatsink_rth [K/W], max_case_temp [°C], worst_voltage [V]."""
        return _pd().DataFrame([c.as_dict() for c in self.candidates])

    @property
    def plot_case_temp(self) -> float:
        """The case temperature the candidates are drawn at: the envelope's, else the stage's, else the ambient. [°C]"""
        if self.envelope is None:
            raise SoacheckError("--plot draws the candidates over an envelope; use it with --envelope")
        if self.envelope.case_temp_c is not None:
            return self.envelope.case_temp_c
        if self.stage is not None and self.stage.case_temp_c is not None:
            return self.stage.case_temp_c
        return float(self.envelope.ambient_c if self.envelope.ambient_c is not None else 25.0)

    def plot(self, ax: Axes | None = None) -> Axes:
        """The candidates' SOAs derated at :attr:`plot_case_temp`, with the envelope's edge.

        Raises
        ------
        SoacheckError
            For a trajectory job: the overlay needs an envelope.
        """
        tc: float | dict[str, float] = self.plot_case_temp
        by_id = {p.id: p for p in self.parts}
        assert self.envelope is not None
        drawn = [by_id[c.part] for c in self.candidates if c.part in by_id]
        if self.stage is not None and self.envelope.case_temp_c is None and self.stage.cooling is not None:
            from soacheck.compare import case_temps_in_stage

            tc = case_temps_in_stage(drawn, self.stage, self.envelope, breakdown=self.breakdown)
        return _plots().plot_compare(
            drawn,
            self.envelope,
            case_temp_c=tc,
            count=self.stage.count if self.stage is not None else 1,
            breakdown=self.breakdown,
            ax=ax,
        )
