"""Ranking candidate parts for a job: pass or fail, margin, fewest devices, cooling headroom.

Each candidate takes the stage's place (its count, resistors and cooling), or stands alone
at the envelope's case temperature when no stage is given. For each it finds the minimum
margin along the envelope's edge and its limit, the fewest devices in parallel that pass
(a search over the count; equal sharing with no stage), and how much worse the cooling
may get: the highest heatsink resistance at which it still passes, or, alone at a fixed
case temperature, the highest case temperature.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np

from soacheck.envelope import Envelope, check_envelope
from soacheck.errors import SoacheckError
from soacheck.parts import Part
from soacheck.soa import BreakdownDerating, allowed_current, max_case_temp
from soacheck.stage import Stage

MAX_COUNT = 256
SEARCH_POINTS = 100
"""Points along the envelope's edge for the searches over count and cooling (the verdict uses all)."""


@dataclass(frozen=True)
class Candidate:
    """How one part does on the job. ``max_heatsink_rth`` [K/W] with a stage's heatsink;
    ``max_case_temp`` [°C] for a single device at a fixed case temperature."""

    part: str
    passes: bool
    min_margin: float | None
    limit: str
    min_count: int | None
    max_heatsink_rth: float | None
    max_case_temp: float | None
    worst_voltage: float

    def as_dict(self) -> dict[str, object]:
        return {
            "part": self.part,
            "passes": self.passes,
            "min_margin": self.min_margin,
            "limit": self.limit,
            "min_count": self.min_count,
            "max_heatsink_rth": self.max_heatsink_rth,
            "max_case_temp": self.max_case_temp,
            "worst_voltage": self.worst_voltage,
        }


def _fewest(passes: Callable[[int], bool], start: int) -> int | None:
    """The smallest count in [1, MAX_COUNT] that passes, by doubling then bisecting (monotone)."""
    lo, hi = 0, max(1, start)  # lo fails (0 devices), hi to be found passing
    while not passes(hi):
        lo, hi = hi, hi * 2
        if hi > MAX_COUNT:
            return None if not passes(MAX_COUNT) else _bisect_count(passes, lo, MAX_COUNT)
    return _bisect_count(passes, lo, hi)


def _bisect_count(passes: Callable[[int], bool], lo: int, hi: int) -> int:
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if passes(mid):
            hi = mid
        else:
            lo = mid
    return hi


def _alone(part: Part, envelope: Envelope, policy: BreakdownDerating, points: int) -> Candidate:
    """One device at the envelope's case temperature, no resistors: closed forms, no iteration."""
    if envelope.case_temp_c is None:
        raise SoacheckError("compare without --stage needs a case_temp in the envelope (one device at that case)")
    v, i = envelope.edge(points)
    pulsed = not math.isinf(envelope.pulse_s)
    duty = envelope.duty if pulsed else 0.0
    allowed = allowed_current(v, part, tc_c=envelope.case_temp_c, pulse_s=envelope.pulse_s, duty=duty, policy=policy)
    with np.errstate(divide="ignore", invalid="ignore"):
        margin = np.where(allowed.current_a > 0, 1.0 - i / allowed.current_a, -np.inf)
    k = int(np.argmin(margin))
    # equal sharing at a fixed case temperature: n devices pass when I/n <= I_allowed(V) everywhere
    need = (
        float(np.max(i / np.where(allowed.current_a > 0, allowed.current_a, 0.0)))
        if np.all(allowed.current_a > 0)
        else math.inf
    )
    min_count = max(1, math.ceil(need * (1 - 1e-12))) if math.isfinite(need) and need <= MAX_COUNT else None
    hottest = max_case_temp(v, i, part, pulse_s=envelope.pulse_s, duty=duty, policy=policy)
    return Candidate(
        part.id,
        bool(margin[k] >= 0),
        float(margin[k]) if np.isfinite(margin[k]) else None,
        str(allowed.limit[k]),
        min_count,
        None,
        hottest,
        float(v[k]),
    )


def _in_stage(part: Part, stage: Stage, envelope: Envelope, policy: BreakdownDerating, points: int) -> Candidate:
    placed = stage.with_part(part)
    check = check_envelope(placed, envelope, policy=policy, points=points)
    summary = check.summary()

    coarse = min(points, SEARCH_POINTS)

    def passes(count: int) -> bool:
        return check_envelope(replace(placed, count=count), envelope, policy=policy, points=coarse).passed

    min_count = _fewest(passes, placed.count)
    max_rth = None
    if placed.cooling is not None and envelope.case_temp_c is None and check.passed:
        max_rth = _highest(
            lambda r: (
                check_envelope(
                    replace(placed, cooling=replace(placed.cooling, sink_ambient_k_per_w=r)),
                    envelope,
                    policy=policy,
                    points=points,
                ).passed
            ),
            placed.cooling.sink_ambient_k_per_w,
        )
    return Candidate(
        part.id,
        check.passed,
        summary["min_margin"],
        summary["limit"],
        min_count,
        max_rth,
        None,
        float(summary["worst_voltage"]),
    )


def _highest(passes: Callable[[float], bool], start: float, *, rel_tol: float = 1e-3) -> float:
    """The largest x > 0 that passes, given that ``start`` passes and larger x never helps."""
    lo, hi = start, start * 2
    for _ in range(30):
        if not passes(hi):
            break
        lo, hi = hi, hi * 2
    else:
        return lo
    while hi / lo > 1 + rel_tol:
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if passes(mid) else (lo, mid)
    return lo


def compare(
    parts: Sequence[Part],
    envelope: Envelope,
    *,
    stage: Stage | None = None,
    policy: BreakdownDerating = "auto",
    points: int = 400,
) -> list[Candidate]:
    """Every candidate on the job, best first: passing before failing, then by margin.

    Raises
    ------
    SoacheckError
        When the envelope's voltage range starts above every candidate's v_max.
    """
    usable = [p for p in parts if p.ratings.v_max_v >= envelope.v_min_v]
    if not usable:
        raise SoacheckError(
            f"envelope: {envelope.v_min_v:g} V and up is past every candidate's v_max "
            f"(highest {max(p.ratings.v_max_v for p in parts):g} V); lower the range or add parts"
        )
    results = [
        _alone(p, envelope, policy, points) if stage is None else _in_stage(p, stage, envelope, policy, points)
        for p in parts
    ]
    return sorted(results, key=lambda c: (not c.passes, -(c.min_margin if c.min_margin is not None else -math.inf)))
