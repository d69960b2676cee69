"""Checking a recorded or planned V–I waveform sample by sample.

Every sample is checked against the DC boundary derated at its case temperature. A run
of samples above it, an *excursion*, is a pulse: it is allowed when it ends within the
width of a digitized pulse curve that still contains all of its samples (the next longer
width, as for points). With a thermal model the junction temperature is followed along
the whole waveform and must stay below tj_max; the pulse curves then only contribute
their non-thermal limits (second breakdown, instability, current), since the model
accounts for heat, repetition included. Without a thermal model repetition cannot be
accounted for, so no excursion is credited with a pulse curve (conservative).

The checker is fed in chunks and carries its state across chunk borders (thermal
branches, an excursion still open), so a trace larger than memory gives the same answer
as one pass.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from soacheck.errors import SoacheckError
from soacheck.parts import Part
from soacheck.soa import (
    BoundaryPolyline,
    BreakdownDerating,
    MechanismLine,
    breakdown_policy_note,
    envelope_polyline,
    evaluate_lines,
    mechanism_lines,
    pulse_lines,
)
from soacheck.thermal import Foster, ThermalState, chain, temperature_rise, thermal_model
from soacheck.units import format_duration


@dataclass(frozen=True)
class Cooling:
    """A heatsink the case sits on: interface, heatsink and ambient.

    Attributes
    ----------
    case_sink_k_per_w
        Interface resistance from case to heatsink. [K/W]
    sink_ambient_k_per_w
        Heatsink to ambient. [K/W]
    sink_j_per_k
        Heat capacity of the heatsink. [J/K]
    ambient_c
        Ambient temperature. [°C]
    """

    case_sink_k_per_w: float
    sink_ambient_k_per_w: float
    sink_j_per_k: float
    ambient_c: float = 25.0


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
    worst_margin: float | None
    worst_margin_time_s: float | None
    time_outside_s: float
    time_over_tj_max_s: float
    excursions: int
    assumptions: tuple[str, ...]
    plot: dict[str, np.ndarray] = field(default_factory=dict)

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
            "tc_peak": self.tc_peak_c,
            "first_violation_time": self.first_violation_time_s,
            "limit": self.limit,
            "worst_margin": self.worst_margin,
            "worst_margin_time": self.worst_margin_time_s,
            "time_outside": self.time_outside_s,
            "time_over_tj_max": self.time_over_tj_max_s,
            "excursions": self.excursions,
            "assumptions": list(self.assumptions),
        }


@dataclass
class _Worst:
    """Running extremes over the samples seen so far."""

    margin: float = math.inf
    margin_time: float = math.nan
    violation_time: float = math.inf
    violation_sample: tuple[float, float, float, int] | None = None  # v, i, tc, boundary index
    violation_limit: str | None = None

    def margin_candidate(self, margin: float, time: float) -> None:
        if margin < self.margin:
            self.margin, self.margin_time = margin, time

    def violation(self, time: float, sample=None, limit: str | None = None) -> None:
        if time < self.violation_time:
            self.violation_time, self.violation_sample, self.violation_limit = time, sample, limit


@dataclass
class _OpenRun:
    """An excursion above the DC boundary that has not ended yet, reduced per boundary."""

    start_s: float
    min_margin: np.ndarray  # (boundaries,)
    min_time: np.ndarray
    first_negative_s: np.ndarray
    first_negative_sample: list
    negative_s: np.ndarray
    pending_negative: np.ndarray  # flags of the last sample, whose hold time is not known yet
    last_t: float


class TraceChecker:
    """Check a waveform fed in chunks of (time, voltage, current) samples.

    Parameters
    ----------
    part
        The part.
    tc_c
        A fixed case temperature. [°C] Give this or ``cooling``.
    cooling
        A heatsink: the case temperature then follows the chained Cauer network
        (junction–case of the part, interface, heatsink) driven by the device's power.
    policy
        Derating of second breakdown or instability.
    plot_points
        About how many samples to keep for plots.
    """

    def __init__(
        self,
        part: Part,
        *,
        tc_c: float | None = None,
        cooling: Cooling | None = None,
        policy: BreakdownDerating = "auto",
        plot_points: int = 20000,
    ) -> None:
        if (tc_c is None) == (cooling is None):
            raise SoacheckError("give either a fixed case temperature or a heatsink, not both or neither")
        self.part, self.policy, self.cooling = part, policy, cooling
        self.model = thermal_model(part)
        if cooling is not None:
            if self.model is None:
                raise SoacheckError(
                    f"{part.id}: a heatsink needs the part's thermal model; add [thermal] Foster terms or a zth.csv"
                )
            ladder, weights = chain(
                self.model.foster,
                case_sink_k_per_w=cooling.case_sink_k_per_w,
                sink_ambient_k_per_w=cooling.sink_ambient_k_per_w,
                sink_j_per_k=cooling.sink_j_per_k,
            )
            self.junction: Foster | None = ladder.to_foster()
            self.case: Foster | None = ladder.modes(weights)
            self.reference_c = cooling.ambient_c
        else:
            self.junction = self.model.foster if self.model else None
            self.case = None
            self.reference_c = float(tc_c)
        # boundary 0..n-2: pulse curves (non-thermal lines when a model follows Tj); n-1: DC
        self.widths_s = part.pulse_widths_s
        self.lines: list[tuple[MechanismLine, ...]] = []
        for curve in part.curves:
            if curve.is_dc:
                self.lines.append(mechanism_lines(part, curve))
            elif self.model is not None:
                bound = pulse_lines(part, pulse_s=curve.pulse_s)
                self.lines.append(tuple(line for line in bound.lines if line.mechanism != "thermal"))
            else:
                self.lines.append(mechanism_lines(part, curve))
        self.dc = len(self.lines) - 1
        self.polylines: list[BoundaryPolyline] | None = None
        if cooling is None:  # one case temperature: evaluate on exact polylines, the fast path
            v_lo = min(c.voltage_v[0] for c in part.curves) * 1e-3
            self.polylines = [
                envelope_polyline(part, lines, tc_c=self.reference_c, policy=policy, v_min_v=v_lo)
                for lines in self.lines
            ]
        # running state
        self.state_j: ThermalState | None = None
        self.state_c: ThermalState | None = None
        self.last_t: float | None = None
        self.last_p = 0.0
        self.first_t: float | None = None
        self.samples = 0
        self.tj_peak, self.tj_peak_time = -math.inf, math.nan
        self.tc_peak = -math.inf
        self.time_over = 0.0
        self.over_pending = False
        self.time_outside = 0.0
        self.excursions = 0
        self.open: _OpenRun | None = None
        self.worst = _Worst()
        self.plot_points = plot_points
        self.kept: list[tuple[np.ndarray, ...]] = []

    # ----------------------------------------------------------------- evaluation

    def _allowed(self, index: int, v: np.ndarray, tc: np.ndarray) -> np.ndarray:
        if self.polylines is not None:
            return self.polylines[index].current_at(v)
        allowed, _ = evaluate_lines(np.maximum(v, 1e-9), self.part, self.lines[index], tc_c=tc, policy=self.policy)
        return np.where((v > self.part.ratings.v_max_v) | (tc >= self.part.ratings.tj_max_c), 0.0, allowed)

    @staticmethod
    def _margin(i: np.ndarray, allowed: np.ndarray) -> np.ndarray:
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(i <= 0, 1.0, np.where(allowed > 0, 1.0 - i / allowed, -np.inf))

    # ----------------------------------------------------------------- feeding

    def feed(self, t_s: np.ndarray, v_v: np.ndarray, i_a: np.ndarray) -> None:
        """Check the next chunk of samples. Times must continue to rise from the last chunk. [s, V, A]"""
        t = np.asarray(t_s, dtype=float)
        v = np.asarray(v_v, dtype=float)
        i = np.asarray(i_a, dtype=float)
        if t.size == 0:
            return
        if self.last_t is not None and t[0] <= self.last_t:
            raise SoacheckError(f"time {t[0]:g} s does not rise after {self.last_t:g} s")
        if self.first_t is None:
            self.first_t = float(t[0])
        p = v * i
        before = {} if self.last_t is None else {"p_before_w": self.last_p, "t_before_s": self.last_t}
        if self.case is not None:
            rise_c, self.state_c = temperature_rise(t, p, self.case, state=self.state_c, **before)
            tc = self.reference_c + rise_c
        else:
            tc = np.full(t.size, self.reference_c)
        if self.junction is not None:
            rise_j, self.state_j = temperature_rise(t, p, self.junction, state=self.state_j, **before)
            tj = self.reference_c + rise_j
            self._temperature(t, tj)
        else:
            tj = None
        self.tc_peak = max(self.tc_peak, float(tc.max()))

        margin_dc = self._margin(i, self._allowed(self.dc, v, tc))
        outside = margin_dc < 0
        inside = ~outside
        if inside.any():
            k = int(np.argmin(np.where(inside, margin_dc, np.inf)))
            self.worst.margin_candidate(float(margin_dc[k]), float(t[k]))
        self._excursions(t, v, i, tc, outside, margin_dc)
        self._keep_for_plot(t, v, i, tc, tj, margin_dc)
        self.samples += t.size
        self.last_t, self.last_p = float(t[-1]), float(p[-1])

    def _temperature(self, t: np.ndarray, tj: np.ndarray) -> None:
        k = int(np.argmax(tj))
        if tj[k] > self.tj_peak:
            self.tj_peak, self.tj_peak_time = float(tj[k]), float(t[k])
        over = tj > self.part.ratings.tj_max_c
        held = np.diff(np.r_[self.last_t if self.last_t is not None else t[0], t])
        self.time_over += float(np.sum(held * np.r_[self.over_pending, over[:-1]]))
        self.over_pending = bool(over[-1])
        if over.any():
            self.worst.violation(float(t[int(np.argmax(over))]), None, "thermal")

    def _excursions(self, t, v, i, tc, outside, margin_dc) -> None:
        n_b = len(self.lines)
        edges = np.diff(np.r_[0, outside.astype(np.int8), 0])
        starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
        if self.open is not None and (starts.size == 0 or starts[0] != 0):
            # the open excursion ended at this chunk's first sample
            self._close(self.open, float(t[0]))
            self.open = None
        if starts.size == 0:
            return
        rows = np.concatenate([np.arange(s, e) for s, e in zip(starts, ends, strict=True)])
        margins = np.empty((n_b, rows.size))
        for b in range(n_b):
            margins[b] = margin_dc[rows] if b == self.dc else self._margin(i[rows], self._allowed(b, v[rows], tc[rows]))
        offsets = np.r_[0, np.cumsum(ends - starts)[:-1]]
        t_rows = t[rows]
        t_next = np.r_[t[1:], np.nan][rows]  # hold until the next sample (unknown past the chunk)
        hold = t_next - t_rows
        negative = margins < 0
        min_margin = np.minimum.reduceat(margins, offsets, axis=1)
        arg_local = [
            np.argmin(margins[:, o : o + (e - s)], axis=1) for o, s, e in zip(offsets, starts, ends, strict=True)
        ]
        neg_time = np.add.reduceat(np.where(negative, np.nan_to_num(hold), 0.0), offsets, axis=1)
        for r, (s, e) in enumerate(zip(starts.tolist(), ends.tolist(), strict=True)):
            o = offsets[r]
            block = slice(o, o + (e - s))
            first_neg = np.full(n_b, math.inf)
            first_sample: list = [None] * n_b
            for b in np.flatnonzero(negative[:, block].any(axis=1)):
                k = o + int(np.argmax(negative[b, block]))
                first_neg[b] = t_rows[k]
                first_sample[b] = (float(v[rows[k]]), float(i[rows[k]]), float(tc[rows[k]]), int(b))
            run = _OpenRun(
                start_s=float(t[s]),
                min_margin=min_margin[:, r],
                min_time=t_rows[o + arg_local[r]],
                first_negative_s=first_neg,
                first_negative_sample=first_sample,
                negative_s=neg_time[:, r],
                # the hold of a chunk's last sample is known only when the next chunk comes
                pending_negative=negative[:, o + (e - s) - 1] if e == t.size else np.zeros(n_b, dtype=bool),
                last_t=float(t[e - 1]),
            )
            if s == 0 and self.open is not None:
                run = self._merge(self.open, run, float(t[0]))
                self.open = None
            if e < t.size:
                self._close(run, float(t[e]))
            else:
                self.open = run

    def _merge(self, a: _OpenRun, b: _OpenRun, t_join: float) -> _OpenRun:
        take_b = b.min_margin < a.min_margin
        first_b = ~np.isfinite(a.first_negative_s)
        return _OpenRun(
            start_s=a.start_s,
            min_margin=np.where(take_b, b.min_margin, a.min_margin),
            min_time=np.where(take_b, b.min_time, a.min_time),
            first_negative_s=np.where(first_b, b.first_negative_s, a.first_negative_s),
            first_negative_sample=[
                sb if fb else sa
                for sa, sb, fb in zip(a.first_negative_sample, b.first_negative_sample, first_b, strict=True)
            ],
            negative_s=a.negative_s + b.negative_s + a.pending_negative * (t_join - a.last_t),
            pending_negative=b.pending_negative,
            last_t=b.last_t,
        )

    def _close(self, run: _OpenRun, end_s: float) -> None:
        """An excursion ended at ``end_s`` (the first sample back inside): judge it."""
        run.negative_s = run.negative_s + run.pending_negative * (end_s - run.last_t)
        self._judge(run, end_s - run.start_s)

    def _judge(self, run: _OpenRun, duration_s: float) -> None:
        self.excursions += 1
        if self.model is None or not math.isfinite(duration_s):
            b = self.dc
        else:
            b = int(min(np.searchsorted(self.widths_s, duration_s * (1 - 1e-9)), self.dc))
        self.worst.margin_candidate(float(run.min_margin[b]), float(run.min_time[b]))
        if math.isfinite(run.first_negative_s[b]):
            self.time_outside += float(run.negative_s[b])
            self.worst.violation(float(run.first_negative_s[b]), run.first_negative_sample[b])

    def _keep_for_plot(self, t, v, i, tc, tj, margin) -> None:
        stride = max(1, t.size // max(1, self.plot_points // 10))
        keep = slice(None, None, stride)
        self.kept.append((t[keep], v[keep], i[keep], tc[keep], tj[keep] if tj is not None else None, margin[keep]))

    # ----------------------------------------------------------------- result

    def result(self) -> TraceResult:
        """Finish: an excursion still open at the end is judged against DC (conservative)."""
        if self.samples == 0:
            raise SoacheckError("the trace has no samples")
        notes = self._assumptions()
        if self.open is not None:
            self._judge(self.open, math.inf)
            notes.append("the trace ends above the DC boundary: that last excursion was judged as DC (conservative)")
            self.open = None
        limit = self.worst.violation_limit
        if limit is None and self.worst.violation_sample is not None:
            v, i, tc, b = self.worst.violation_sample
            if v > self.part.ratings.v_max_v:
                limit = "voltage"
            elif tc >= self.part.ratings.tj_max_c:
                limit = "temperature"
            else:
                limit = str(evaluate_lines(np.array([v]), self.part, self.lines[b], tc_c=tc, policy=self.policy)[1][0])
        violated = math.isfinite(self.worst.violation_time)
        worst = self.worst.margin
        plot = {}
        if self.kept:
            names = ("time", "voltage", "current", "case_temp", "tj", "margin")
            for n, name in enumerate(names):
                pieces = [k[n] for k in self.kept if k[n] is not None]
                if pieces:
                    plot[name] = np.concatenate(pieces)
        return TraceResult(
            part_id=self.part.id,
            passed=not violated,
            samples=self.samples,
            duration_s=float(self.last_t - self.first_t),
            tj_peak_c=self.tj_peak if self.junction is not None else None,
            tj_peak_time_s=self.tj_peak_time if self.junction is not None else None,
            tc_peak_c=self.tc_peak,
            first_violation_time_s=self.worst.violation_time if violated else None,
            limit=limit if violated else None,
            worst_margin=worst if math.isfinite(worst) else None,
            worst_margin_time_s=self.worst.margin_time if math.isfinite(worst) else None,
            time_outside_s=self.time_outside,
            time_over_tj_max_s=self.time_over,
            excursions=self.excursions,
            assumptions=tuple(notes),
            plot=plot,
        )

    def _assumptions(self) -> list[str]:
        part = self.part
        notes = [
            "power held constant between samples (zero-order hold)",
            breakdown_policy_note(part, self.policy),
        ]
        if self.cooling is not None:
            c = self.cooling
            notes.append(
                f"case temperature follows a Cauer chain: part, interface {c.case_sink_k_per_w:g} K/W, heatsink "
                f"{c.sink_ambient_k_per_w:g} K/W with {c.sink_j_per_k:g} J/K, ambient {c.ambient_c:g} °C"
            )
        else:
            notes.append(f"case held at {self.reference_c:g} °C")
        if self.model is not None:
            notes.append(
                f"junction temperature from the {self.model.origin}; it must stay at or below tj_max = "
                f"{part.ratings.tj_max_c:g} °C"
            )
            notes.append(
                "an excursion above the DC boundary is allowed when it ends within the width of a digitized pulse "
                "curve whose second-breakdown, instability and current limits contain it (the next longer width)"
            )
        else:
            notes.append(
                "no thermal model (add [thermal] terms or zth.csv): junction temperature not computed, and no "
                "excursion above the DC boundary is credited with a pulse curve, since repetition cannot be "
                "accounted for (conservative)"
            )
        widths = ", ".join(format_duration(w) for w in self.widths_s[:-1])
        notes.append(f"digitized pulse curves: {widths or 'none'}")
        return notes
