"""What a trace check found: :class:`TraceResult`, the summary of :class:`soacheck.trace.TraceChecker`."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from soacheck.points import overload_of
from soacheck.policy import NO_POLICY


@dataclass(frozen=True, eq=False)
class TraceResult:
    """What a trace check found. Times in s, temperatures in °C; None where not defined."""

    part_id: str
    passed: bool
    samples: int
    duration_s: float
    tj_peak_c: float | None
    tj_peak_time_s: float | None
    tc_peak_c: float
    first_violation_time_s: float | None
    limit: str | None
    margin: float | None
    margin_time_s: float | None
    time_outside_s: float
    time_over_tj_max_s: float
    excursions: int
    assumptions: tuple[str, ...]
    plot: dict[str, np.ndarray] = field(default_factory=dict)
    # thinned excursions for the plot: start, end [s] (first and last sample), margin against the
    # boundary that judged each (fraction), margin_time [s] (see soacheck.thinning.SpanThinner)
    excursion_spans: dict[str, np.ndarray] = field(default_factory=dict)
    margin_to_rating: float | None = None
    policy: dict[str, object] = field(default_factory=lambda: NO_POLICY.to_dict())

    @property
    def verdict(self) -> str:
        return "pass" if self.passed else "fail"

    def summary(self) -> dict[str, object]:
        """The result as the plain fields of the JSON output."""
        return {
            "part": self.part_id,
            "verdict": self.verdict,
            "samples": self.samples,
            "duration": self.duration_s,
            "tj_peak": self.tj_peak_c,
            "tj_peak_time": self.tj_peak_time_s,
            "case_peak": self.tc_peak_c,
            "first_violation_time": self.first_violation_time_s,
            "limit": self.limit,
            "margin": self.margin,
            "overload": overload_of(self.margin),
            "margin_to_rating": self.margin_to_rating,
            "policy": self.policy,
            "margin_time": self.margin_time_s,
            "time_outside": self.time_outside_s,
            "time_over_tj_max": self.time_over_tj_max_s,
            "excursions": self.excursions,
            "assumptions": list(self.assumptions),
        }
