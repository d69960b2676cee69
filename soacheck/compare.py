"""Ranking candidate parts for a job: pass or fail, margin, fewest devices, cooling headroom.

A job is an envelope, or a trajectory of the load (a discharge, a sweep, a recorded trace).
Each candidate takes the stage's place (its count, resistors and cooling), or stands alone
at the job's case temperature when no stage is given. For each it finds the minimum
margin along the envelope's edge and its limit, the fewest devices in parallel that pass
(a search over the count; equal sharing with no stage; for a FET or IGBT without transfer
curves one device is taken to carry the whole job, so the fewest is 1 or none: see
:func:`~soacheck.stage.sharing_assumption`), and how much worse the cooling
may get: the highest heatsink resistance at which it still passes, or, alone at a fixed
case temperature, the highest case temperature.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np

from soacheck.battery import Trajectory
from soacheck.boundary import allowed_current, max_case_temp
from soacheck.derating import BreakdownDerating
from soacheck.envelope import Envelope, check_envelope, stage_for
from soacheck.errors import SoacheckError
from soacheck.glossary import STATE_LIMITS
from soacheck.parts import Part
from soacheck.points import overload_of
from soacheck.policy import Policy, least_margin
from soacheck.search import MAX_COUNT, fewest, fewest_guided, highest, highest_linear
from soacheck.stage import Stage, sharing_assumption
from soacheck.stage_run import run_stage
from soacheck.trace import TraceChecker

SEARCH_POINTS = 100
"""Points along the envelope's edge for the searches over count and cooling (the verdict uses all)."""


@dataclass(frozen=True)
class Candidate:
    """How one part does on the job. ``max_heatsink_rth`` [K/W] with a stage's heatsink;
    ``max_case_temp`` [°C] for a single device at a fixed case temperature. Under a
    design-margin policy the verdict, margin, limit and headroom are the policy's, and
    ``margin_to_rating`` is the least margin against the absolute ratings."""

    part: str
    passes: bool
    margin: float | None
    limit: str | None  # None: a trajectory that stays inside everywhere names no limit
    min_count: int | None
    max_heatsink_rth: float | None
    max_case_temp: float | None
    worst_voltage: float
    margin_to_rating: float | None = None

    def as_dict(self) -> dict[str, object]:
        return {
            "part": self.part,
            "verdict": "pass" if self.passes else "fail",
            "margin": self.margin,
            "overload": overload_of(self.margin),
            "margin_to_rating": self.margin_to_rating,
            "limit": self.limit,
            "min_count": self.min_count,
            "max_heatsink_rth": self.max_heatsink_rth,
            "max_case_temp": self.max_case_temp,
            "worst_voltage": self.worst_voltage,
        }


def _alone(part: Part, envelope: Envelope, breakdown: BreakdownDerating, points: int) -> Candidate:
    """One device at the envelope's case temperature, no resistors: closed forms, no iteration."""
    if envelope.case_temp_c is None:
        raise SoacheckError("compare without --stage needs a case_temp in the envelope (one device at that case)")
    v, i = envelope.edge(points)
    pulsed = not math.isinf(envelope.pulse_s)
    duty = envelope.duty if pulsed else 0.0
    allowed = allowed_current(
        v, part, tc_c=envelope.case_temp_c, pulse_s=envelope.pulse_s, duty=duty, breakdown=breakdown
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        margin = np.where(allowed.current_a > 0, 1.0 - i / allowed.current_a, -np.inf)
    k = int(np.argmin(margin))
    # equal sharing at a fixed case temperature: n devices pass when I/n <= I_allowed(V) everywhere
    need = (
        float(np.max(i / np.where(allowed.current_a > 0, allowed.current_a, 0.0)))
        if np.all(allowed.current_a > 0)
        else math.inf
    )
    min_count = _fewest(
        part,
        bool(margin[k] >= 0),
        lambda: max(1, math.ceil(need * (1 - 1e-12))) if math.isfinite(need) and need <= MAX_COUNT else None,
    )
    hottest = max_case_temp(v, i, part, pulse_s=envelope.pulse_s, duty=duty, breakdown=breakdown)
    to_rating = least_margin(margin)
    if part.policy is not None:
        rated = allowed_current(
            v, part.rated, tc_c=envelope.case_temp_c, pulse_s=envelope.pulse_s, duty=duty, breakdown=breakdown
        ).current_a
        with np.errstate(divide="ignore", invalid="ignore"):
            to_rating = least_margin(np.where(rated > 0, 1.0 - i / rated, -np.inf))
    return Candidate(
        part.id,
        bool(margin[k] >= 0),
        float(margin[k]) if np.isfinite(margin[k]) else None,
        str(allowed.limit[k]),
        min_count,
        None,
        hottest,
        float(v[k]),
        to_rating,
    )


@dataclass(frozen=True, eq=False)
class TrajectoryJob:
    """A planned test as a trajectory of the load: a discharge, a sweep or a recorded trace.

    ``case_temp_c`` holds a single device's case when no stage is given. [°C]
    """

    trajectory: Trajectory
    case_temp_c: float = 25.0


Job = Envelope | TrajectoryJob


def _rate(
    job: Job, stage: Stage, breakdown: BreakdownDerating, points: int, *, search: bool = False
) -> tuple[bool, float | None, str, float, float | None]:
    """(passes, least margin, limit there, source voltage there, least margin to rating) of a stage on a job;
    ``search``: only these are wanted (the notes of an envelope check are not worked out)."""
    if isinstance(job, Envelope):
        check = check_envelope(stage, job, breakdown=breakdown, points=points, verdict_only=search)
        summary = check.summary()
        return (
            check.passed,
            summary["margin"],
            str(summary["limit"]),
            float(summary["worst_voltage"]),
            summary["margin_to_rating"],
        )
    path = job.trajectory
    run = run_stage(stage, path.time_s, path.source_v, path.total_a, breakdown=breakdown)
    summary = run.summary()
    k = int(np.argmin(np.abs(path.time_s - summary["margin_time"])))
    limit = summary["limit"] or str(run.limit[summary["device"] - 1, k])
    return run.passed, summary["margin"], limit, float(path.source_v[k]), summary["margin_to_rating"]


def _fewest(part: Part, passed: bool, search: Callable[[], int | None]) -> int | None:
    """The fewest devices in parallel that pass, found by ``search``; for a part whose sharing cannot be
    judged (:func:`~soacheck.stage.sharing_assumption`: one device taken to carry it all), more devices
    change nothing: 1 where one passes (``passed``), else none."""
    if sharing_assumption(part) is not None:
        return 1 if passed else None
    return search()


def _single_trace(part: Part, job: TrajectoryJob, count: int, breakdown: BreakdownDerating):
    """One device's share of a trace at a fixed case temperature, pulses credited as in ``trace``."""
    checker = TraceChecker(part, tc_c=job.case_temp_c, breakdown=breakdown, plot_points=0)
    path = job.trajectory
    checker.feed(path.time_s, path.source_v, path.total_a / count)
    return checker.result()


def _trace_alone(part: Part, job: TrajectoryJob, breakdown: BreakdownDerating) -> Candidate:
    result = _single_trace(part, job, 1, breakdown)
    min_count = _fewest(part, result.passed, lambda: fewest(lambda n: _single_trace(part, job, n, breakdown).passed, 1))
    hottest = None
    if result.passed:
        hottest = highest_linear(
            lambda tc: _single_trace(part, replace(job, case_temp_c=tc), 1, breakdown).passed,
            job.case_temp_c,
            part.tj_limit_c,
        )
    k = int(np.argmin(np.abs(job.trajectory.time_s - (result.margin_time_s or 0.0))))
    return Candidate(
        part.id,
        result.passed,
        result.margin,
        result.limit,
        min_count,
        None,
        hottest,
        float(job.trajectory.source_v[k]),
        result.margin_to_rating,
    )


def _in_stage(part: Part, stage: Stage, job: Job, breakdown: BreakdownDerating, points: int) -> Candidate:
    placed = stage.with_part(part)
    if isinstance(job, Envelope):
        placed, _ = stage_for(placed, job)
    passed, margin, limit, worst_v, to_rating = _rate(job, placed, breakdown, points)
    coarse = min(points, SEARCH_POINTS)
    rough = job if isinstance(job, Envelope) else _thinned(job, SEARCH_POINTS)

    def count_score(n: int) -> tuple[bool, float | None]:
        passed, margin, limit, _, _ = _rate(rough, replace(placed, count=n), breakdown, coarse, search=True)
        return passed, None if limit in STATE_LIMITS else margin  # no guide: the current is not what failed

    min_count = _fewest(part, passed, lambda: fewest_guided(count_score, placed.count))
    max_rth = None
    if placed.cooling is not None and passed:
        max_rth = highest(
            lambda r: _rate(
                job,
                replace(placed, cooling=replace(placed.cooling, sink_ambient_k_per_w=r)),
                breakdown,
                points,
                search=True,
            )[0],
            placed.cooling.sink_ambient_k_per_w,
        )
    return Candidate(part.id, passed, margin, limit, min_count, max_rth, None, worst_v, to_rating)


def case_temps_in_stage(
    parts: Sequence[Part], stage: Stage, envelope: Envelope, *, breakdown: BreakdownDerating = "auto"
) -> dict[str, float]:
    """Each candidate's hottest case temperature in the stage's place on the envelope. [°C]

    The temperature its verdict used where its devices run hottest (the heatsink at the
    steady state of the envelope's worst power), so a plot can draw each candidate's
    boundary where its verdict was decided.
    """
    temps = {}
    for part in parts:
        placed, _ = stage_for(stage.with_part(part), envelope)
        temps[part.id] = float(check_envelope(placed, envelope, breakdown=breakdown).state.case_c.max())
    return temps


def _thinned(job: TrajectoryJob, samples: int) -> TrajectoryJob:
    """The job on about ``samples`` evenly picked samples, for the searches over count."""
    path = job.trajectory
    step = max(1, path.time_s.size // samples)
    keep = slice(None, None, step)
    thin = Trajectory(path.time_s[keep], path.source_v[keep], path.total_a[keep], path.label, path.notes)
    return replace(job, trajectory=thin)


def compare_notes(parts: Sequence[Part], *, in_stage: bool) -> tuple[str, ...]:
    """What a ranking of ``parts`` assumed, in words: where each candidate stood, how they are sorted, and the
    sharing taken for parts without the data to judge it (:func:`~soacheck.stage.sharing_assumption`)."""
    return (
        "each candidate in the stage's place" if in_stage else "each candidate alone",
        "sorted: passing first, then by least margin; fewest devices and cooling headroom by search",
        *(note for note in map(sharing_assumption, parts) if note is not None),
    )


def compare(
    parts: Sequence[Part],
    job: Job,
    *,
    stage: Stage | None = None,
    breakdown: BreakdownDerating = "auto",
    policy: Policy | None = None,
    points: int = 400,
    progress: Callable[[int, int], None] | None = None,
) -> list[Candidate]:
    """Every candidate on the job, best first: passing before failing, then by margin.

    Parameters
    ----------
    parts
        The candidates.
    job
        An envelope, or a trajectory (discharge, sweep, trace) of the load.
    stage
        The stage each candidate takes its place in. Without one: a single device at the
        envelope's (or the trajectory job's) case temperature, currents shared evenly
        when counting devices.
    policy
        The design-margin policy every candidate is judged and ranked under; None: the
        stage's own policy (from its file), else the absolute ratings.
    progress
        Called as ``progress(done, total)`` after each candidate.

    Raises
    ------
    SoacheckError
        When the job's voltages start above every candidate's v_max.
    """
    if policy is None and stage is not None:
        policy = stage.part.policy
    parts = [part.under(policy) for part in parts]
    lowest_v = job.v_min_v if isinstance(job, Envelope) else float(np.min(job.trajectory.source_v))
    if not any(p.ratings.v_max_v >= lowest_v for p in parts):
        raise SoacheckError(
            f"the job's {lowest_v:g} V and up is past every candidate's v_max "
            f"(highest {max(p.ratings.v_max_v for p in parts):g} V); lower the voltages or add parts"
        )

    def rate(part: Part) -> Candidate:
        if stage is not None:
            return _in_stage(part, stage, job, breakdown, points)
        if isinstance(job, Envelope):
            return _alone(part, job, breakdown, points)
        return _trace_alone(part, job, breakdown)

    results = []
    for part in parts:
        results.append(rate(part))
        if progress is not None:
            progress(len(results), len(parts))
    return sorted(results, key=lambda c: (not c.passes, -(c.margin if c.margin is not None else -math.inf)))
