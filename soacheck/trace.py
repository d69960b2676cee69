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

from soacheck.boundary import BoundaryPolyline, envelope_polyline, evaluate_lines, pulse_lines
from soacheck.derating import BreakdownDerating, breakdown_note, mechanism_factors, policy_note
from soacheck.errors import SoacheckError
from soacheck.excursions import OpenRun, excess_margin, merge_runs, run_edges
from soacheck.instability import instability_line, instability_notes
from soacheck.mechanisms import MechanismLine, mechanism_lines
from soacheck.parts import Part
from soacheck.points import overload_of
from soacheck.policy import NO_POLICY, policy_of
from soacheck.quantities import TEMPERATURE
from soacheck.stage import Cooling
from soacheck.thermal import Foster, chain
from soacheck.thermal_model import thermal_model
from soacheck.thermal_response import ThermalState, temperature_rise
from soacheck.thinning import PeakThinner
from soacheck.units import format_duration


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


@dataclass
class _Worst:
    """Running extremes over the samples seen so far."""

    margin: float = math.inf
    margin_time: float = math.nan
    violation_time: float = math.inf
    violation_sample: tuple[float, float, float, float, int] | None = None  # v, i, tc, Tj at pulse start, boundary
    violation_limit: str | None = None

    def margin_candidate(self, margin: float, time: float) -> None:
        if margin < self.margin:
            self.margin, self.margin_time = margin, time

    def violation(self, time: float, sample=None, limit: str | None = None) -> None:
        if time < self.violation_time:
            self.violation_time, self.violation_sample, self.violation_limit = time, sample, limit


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
    breakdown
        Derating of second breakdown or instability.
    plot_points
        At most how many samples to keep for plots: bins over the whole trace, each keeping
        the samples where a plotted quantity is at its lowest or highest (0: none).
    """

    def __init__(
        self,
        part: Part,
        *,
        tc_c: float | None = None,
        cooling: Cooling | None = None,
        breakdown: BreakdownDerating = "auto",
        plot_points: int = 20000,
    ) -> None:
        if (tc_c is None) == (cooling is None):
            raise SoacheckError("give either a fixed case temperature or a heatsink, not both or neither")
        if tc_c is not None:
            tc_c = TEMPERATURE.check(tc_c, "case temperature")
        self.part, self.breakdown, self.cooling = part, breakdown, cooling
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
        # the DC thermal instability cap (transfer.csv) sees the whole path the case sits on
        beyond_k_per_w = cooling.case_sink_k_per_w + cooling.sink_ambient_k_per_w if cooling else 0.0
        for curve in part.curves:
            if curve.is_dc:
                dc = mechanism_lines(part, curve)
                self.lines.append((*dc, *instability_line(part, part.ratings.rth_jc_k_per_w + beyond_k_per_w)))
            elif self.model is not None:
                bound = pulse_lines(part, pulse_s=curve.pulse_s)
                self.lines.append(tuple(line for line in bound.lines if line.mechanism != "power"))
            else:
                self.lines.append(mechanism_lines(part, curve))
        self.dc = len(self.lines) - 1
        self.polylines: list[BoundaryPolyline] | None = None
        if cooling is None:  # one case temperature: evaluate on exact polylines, the fast path
            v_lo = min(c.voltage_v[0] for c in part.curves) * 1e-3
            self.polylines = [
                envelope_polyline(part, lines, tc_c=self.reference_c, breakdown=breakdown, v_min_v=v_lo)
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
        self.start_tj_peak = -math.inf  # the hottest junction any excursion started from
        self.open: OpenRun | None = None
        self.worst = _Worst()
        names = ("time", "voltage", "current", "case_temp", *(("tj",) if self.junction is not None else ()), "margin")
        # each bin keeps the samples of highest voltage, current and junction temperature and of least margin
        keys = 3 + (self.junction is not None)
        self.thinner = PeakThinner(plot_points // keys, names, keys) if plot_points >= keys else None
        # under a policy, a twin judges the same samples against the absolute ratings
        self.rated = (
            None
            if part.policy is None
            else TraceChecker(part.rated, tc_c=tc_c, cooling=cooling, breakdown=breakdown, plot_points=0)
        )

    # ----------------------------------------------------------------- evaluation

    def _excess_from_start(
        self, index: int, v: np.ndarray, i: np.ndarray, start_c: np.ndarray, lengths: np.ndarray
    ) -> np.ndarray:
        """ln(I / I_allowed) under pulse boundary ``index``, each run's lines derated where its junction started.

        ``start_c`` holds one temperature per run, ``lengths`` the samples of each run in order;
        the derating factors are computed once per run, the lines once per sample.
        """
        factors = mechanism_factors(start_c, self.part, self.breakdown)
        log_v = np.log(np.maximum(v, 1e-300))
        with np.errstate(divide="ignore"):
            stacked = [
                line(log_v) + (np.repeat(np.log(factors[line.mechanism]), lengths) if line.derated else 0.0)
                for line in self.lines[index]
            ]
        blocked = (v > self.part.v_limit_v) | np.repeat(start_c >= self.part.tj_limit_c, lengths)
        log_allowed = np.where(blocked, -np.inf, np.min(stacked, axis=0))
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.log(i) - log_allowed

    def _excess(self, index: int, v: np.ndarray, i: np.ndarray, tc: np.ndarray | None) -> np.ndarray:
        """ln(I / I_allowed) under boundary ``index``: above 0 outside, −inf at zero current.

        The margin is 1 − exp(excess); working in logs saves a pass over every sample.
        ``tc`` is the case temperature the lines are derated at (None: the fixed one).
        """
        if self.polylines is not None:
            log_allowed = self.polylines[index].log_current_at(v)
        else:
            allowed, _ = evaluate_lines(
                np.maximum(v, 1e-300), self.part, self.lines[index], tc_c=tc, breakdown=self.breakdown
            )
            blocked = (v > self.part.v_limit_v) | (tc >= self.part.tj_limit_c)
            with np.errstate(divide="ignore"):
                log_allowed = np.where(blocked, -np.inf, np.log(allowed))
        with np.errstate(divide="ignore", invalid="ignore"):
            excess = np.log(i) - log_allowed
        return excess  # NaN only for zero current where nothing is allowed: compares as inside

    # ----------------------------------------------------------------- feeding

    def feed(self, t_s: np.ndarray, v_v: np.ndarray, i_a: np.ndarray) -> None:
        """Check the next chunk of samples. Times must continue to rise from the last chunk. [s, V, A]"""
        t = np.asarray(t_s, dtype=float)
        v = np.asarray(v_v, dtype=float)
        i = np.asarray(i_a, dtype=float)
        if t.size == 0:
            return
        if self.rated is not None:
            self.rated.feed(t, v, i)
        if self.last_t is not None and t[0] <= self.last_t:
            raise SoacheckError(f"time {t[0]:g} s does not rise after {self.last_t:g} s")
        if self.first_t is None:
            self.first_t = float(t[0])
        p = v * i
        before = {} if self.last_t is None else {"p_before_w": self.last_p, "t_before_s": self.last_t}
        tc = None
        if self.case is not None:
            rise_c, self.state_c = temperature_rise(t, p, self.case, state=self.state_c, **before)
            tc = self.reference_c + rise_c
            self.tc_peak = max(self.tc_peak, float(tc.max()))
        else:
            self.tc_peak = self.reference_c
        rise_j = None
        if self.junction is not None:
            rise_j, self.state_j = temperature_rise(t, p, self.junction, state=self.state_j, **before)
            self._temperature(t, rise_j)

        excess = self._excess(self.dc, v, i, tc)
        # fail safe: a sample that carries current but could not be evaluated is never inside
        unevaluated = np.isnan(excess) & (i > 0)
        if tc is not None:
            unevaluated |= ~np.isfinite(tc)
        if rise_j is not None:
            unevaluated |= ~np.isfinite(rise_j)
        if unevaluated.any():
            self.worst.violation(float(t[int(np.argmax(unevaluated))]), None, "invalid")
        k = int(np.argmax(excess))  # one pass decides the common case: every sample inside
        has_nan = bool(np.isnan(excess[k]))  # argmax finds a NaN first if there is one
        if excess[k] > 0 or np.isnan(excess[k]):
            outside = excess > 0
            worst_inside = np.fmax.reduce(excess, where=~outside, initial=-np.inf)
            k = int(np.argmax(np.where(outside, -np.inf, excess))) if np.isfinite(worst_inside) else 0
        else:
            outside = None
            worst_inside = excess[k]
        if self.open is not None and (outside is None or not outside[0]):  # it ended at this chunk's first sample
            self._close(self.open, float(t[0]))
            self.open = None
        if outside is not None and outside.any():
            tj = None if rise_j is None else self.reference_c + rise_j
            self._excursions(t, v, i, tc, tj, outside, excess)
        if np.isfinite(worst_inside):
            self.worst.margin_candidate(float(-np.expm1(worst_inside)), float(t[k]))
        self._keep_for_plot(t, v, i, tc, rise_j, excess, nan_excess=has_nan)
        self.samples += t.size
        self.last_t, self.last_p = float(t[-1]), float(p[-1])

    def _temperature(self, t: np.ndarray, rise: np.ndarray) -> None:
        k = int(np.argmax(rise))
        if self.reference_c + rise[k] > self.tj_peak:
            self.tj_peak, self.tj_peak_time = float(self.reference_c + rise[k]), float(t[k])
        over = rise > self.part.tj_limit_c - self.reference_c
        if self.over_pending:  # the last sample of the previous chunk was over, held until now
            self.time_over += float(t[0] - self.last_t)
        if over.any():
            held = np.diff(t, append=t[-1])  # the chunk's last hold is added with the next chunk
            self.time_over += float(np.sum(held[over]))
            self.worst.violation(float(t[int(np.argmax(over))]), None, self.part.tj_limit)
        self.over_pending = bool(over[-1])

    def _excursions(self, t, v, i, tc, tj, outside, excess) -> None:
        """Reduce each run of samples above the DC boundary per boundary, and judge the runs that ended.

        With a thermal model the pulse curves' lines (second breakdown, instability, current) are
        derated at the junction temperature at the excursion's first sample, where the pulse
        starts, not at the case temperature: single-pulse curves hold for a junction that
        starts at the case temperature (common practice, no source), and a pulse that follows
        others or a standing current starts hotter.
        """
        n_b = len(self.lines)
        rows = np.flatnonzero(outside)
        starts, ends = run_edges(outside)
        lengths = ends - starts
        offsets = np.r_[0, np.cumsum(lengths)[:-1]]
        start_tj = np.full(starts.size, np.nan) if tj is None else tj[starts]
        if self.open is not None and starts.size and starts[0] == 0:  # the open excursion started in a past chunk
            start_tj[0] = self.open.start_tj_c
        start_rows = np.repeat(start_tj, lengths)
        if np.isfinite(start_tj).any():
            self.start_tj_peak = max(self.start_tj_peak, float(np.nanmax(start_tj)))
        margins = np.empty((n_b, rows.size))
        for b in range(n_b):
            if b == self.dc:
                sub = excess[rows]
            elif tj is not None:
                sub = self._excess_from_start(b, v[rows], i[rows], start_tj, lengths)
            else:
                sub = self._excess(b, v[rows], i[rows], None if tc is None else tc[rows])
            margins[b] = excess_margin(sub)
        t_rows = t[rows]
        nxt = rows + 1
        hold = np.zeros(rows.size)
        known = nxt < t.size  # the hold of the chunk's last sample is known only with the next chunk
        hold[known] = t[nxt[known]] - t_rows[known]
        negative = margins < 0
        position = np.arange(rows.size)
        min_margin = np.minimum.reduceat(margins, offsets, axis=1)  # (boundaries, runs)
        # the first sample of each run at its least margin: linear, where a sort per run was not
        at_min = margins == np.repeat(min_margin, lengths, axis=1)
        arg_min = np.minimum.reduceat(np.where(at_min, position, rows.size), offsets, axis=1)
        first_negative = np.minimum.reduceat(np.where(negative, position, rows.size), offsets, axis=1)
        negative_s = np.add.reduceat(np.where(negative, hold, 0.0), offsets, axis=1)
        case_rows = np.full(rows.size, self.reference_c) if tc is None else tc[rows]
        vit = np.column_stack([v[rows], i[rows], case_rows, start_rows])

        def run_state(r: int) -> OpenRun:
            has_negative = first_negative[:, r] < rows.size
            k = np.where(has_negative, first_negative[:, r], 0)
            return OpenRun(
                start_s=float(t[starts[r]]),
                min_margin=min_margin[:, r].copy(),
                min_time=t_rows[arg_min[:, r]],
                first_negative_s=np.where(has_negative, t_rows[k], np.inf),
                first_negative_sample=[(*map(float, vit[k[b]]), b) if has_negative[b] else None for b in range(n_b)],
                negative_s=negative_s[:, r].copy(),
                pending_negative=negative[:, offsets[r] + lengths[r] - 1] if ends[r] == t.size else np.zeros(n_b, bool),
                last_t=float(t[ends[r] - 1]),
                start_tj_c=float(start_tj[r]),
            )

        closed = np.arange(starts.size)
        if self.open is not None:  # the first run continues the excursion left open by the last chunk
            merged = merge_runs(self.open, run_state(0), float(t[0]))
            self.open = None
            if ends[0] < t.size:
                self._close(merged, float(t[ends[0]]))
            else:
                self.open = merged
            closed = closed[1:]
        if closed.size and ends[closed[-1]] == t.size:
            self.open = run_state(int(closed[-1]))
            closed = closed[:-1]
        if closed.size:
            self._judge_many(
                t[ends[closed]] - t[starts[closed]],
                min_margin[:, closed],
                t_rows[arg_min[:, closed]],
                np.where(
                    first_negative[:, closed] < rows.size,
                    t_rows[np.minimum(first_negative[:, closed], rows.size - 1)],
                    np.inf,
                ),
                np.minimum(first_negative[:, closed], rows.size - 1),
                negative_s[:, closed],
                vit,
            )

    def _boundary_for(self, duration_s: np.ndarray) -> np.ndarray:
        """Which boundary judges an excursion of this duration: the next longer pulse curve, or DC."""
        if self.model is None:
            return np.full(np.shape(duration_s), self.dc)
        index = np.searchsorted(self.widths_s, np.asarray(duration_s, dtype=float) * (1 - 1e-9))
        return np.minimum(index, self.dc)

    def _judge_many(self, duration_s, min_margin, min_time, first_negative_s, first_k, negative_s, vit) -> None:
        """Judge excursions that ended, all at once; arrays are (boundaries, runs)."""
        runs = np.arange(duration_s.size)
        b = self._boundary_for(duration_s)
        self.excursions += runs.size
        worst = int(np.argmin(min_margin[b, runs]))
        self.worst.margin_candidate(float(min_margin[b[worst], worst]), float(min_time[b[worst], worst]))
        failed = np.isfinite(first_negative_s[b, runs])
        self.time_outside += float(np.sum(negative_s[b, runs][failed]))
        if failed.any():
            first = int(np.argmin(np.where(failed, first_negative_s[b, runs], np.inf)))
            sample = (*map(float, vit[first_k[b[first], first]]), int(b[first]))
            self.worst.violation(float(first_negative_s[b[first], first]), sample)

    def _close(self, run: OpenRun, end_s: float) -> None:
        """An excursion ended at ``end_s`` (the first sample back inside): judge it."""
        run.negative_s = run.negative_s + run.pending_negative * (end_s - run.last_t)
        self._judge(run, end_s - run.start_s)

    def _judge(self, run: OpenRun, duration_s: float) -> None:
        self.excursions += 1
        b = int(self._boundary_for(duration_s))
        self.worst.margin_candidate(float(run.min_margin[b]), float(run.min_time[b]))
        if math.isfinite(run.first_negative_s[b]):
            self.time_outside += float(run.negative_s[b])
            self.worst.violation(float(run.first_negative_s[b]), run.first_negative_sample[b])

    def _keep_for_plot(self, t, v, i, tc, rise_j, excess, *, nan_excess: bool) -> None:
        if self.thinner is None:
            return
        if nan_excess:  # zero current where nothing is allowed: margin 1, never the least
            excess = np.where(np.isnan(excess), -np.inf, excess)
        heat = [] if rise_j is None else [rise_j]

        def columns_at(k: np.ndarray) -> list[np.ndarray]:
            case = np.full(k.size, self.reference_c) if tc is None else tc[k]
            tj = [] if rise_j is None else [self.reference_c + rise_j[k]]
            return [t[k], v[k], i[k], case, *tj, excess_margin(excess[k])]

        self.thinner.add([v, i, *heat, excess], columns_at)

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
            v, i, tc, start_tj, b = self.worst.violation_sample
            from_start = b != self.dc and math.isfinite(start_tj)  # a pulse curve judged where the pulse started
            if v > self.part.v_limit_v:
                limit = "voltage" if v > self.part.ratings.v_max_v else self.part.v_limit
            elif tc >= self.part.tj_limit_c:
                limit = "case_at_tj_max" if tc >= self.part.ratings.tj_max_c else self.part.tj_limit
            elif from_start and start_tj >= self.part.tj_limit_c:
                limit = self.part.tj_limit
            else:
                at_c = start_tj if from_start else tc
                limit = str(
                    evaluate_lines(
                        np.array([max(v, 1e-300)]), self.part, self.lines[b], tc_c=at_c, breakdown=self.breakdown
                    )[1][0]  # 0 V: the boundary's left end (the current limit), as the check itself reads it
                )
        violated = math.isfinite(self.worst.violation_time)
        worst = self.worst.margin
        plot = self.thinner.result() if self.thinner is not None else {}
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
            margin=worst if math.isfinite(worst) else None,
            margin_time_s=self.worst.margin_time if math.isfinite(worst) else None,
            time_outside_s=self.time_outside,
            time_over_tj_max_s=self.time_over,
            excursions=self.excursions,
            assumptions=tuple(notes),
            plot=plot,
            margin_to_rating=(worst if math.isfinite(worst) else None)
            if self.rated is None
            else self.rated.result().margin,
            policy=policy_of(self.part.policy).to_dict(),
        )

    def _assumptions(self) -> list[str]:
        part = self.part
        notes = [
            "power held constant between samples (zero-order hold)",
            breakdown_note(part, self.breakdown),
            policy_note(part),
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
                f"junction temperature from the {self.model.origin}; it must stay at or below "
                f"{part.tj_limit} = {part.tj_limit_c:g} °C"
            )
            notes.append(
                "an excursion above the DC boundary is allowed when it ends within the width of a digitized pulse "
                "curve whose second-breakdown, instability and current limits contain it (the next longer width), "
                "those limits derated at the junction temperature at the excursion's first sample, where the pulse "
                "starts, not at the case temperature"
                + (
                    f" (excursions started from junctions up to {self.start_tj_peak:.1f} °C)"
                    if math.isfinite(self.start_tj_peak)
                    else ""
                )
            )
        else:
            notes.append(
                "no thermal model (add [thermal] terms or zth.csv): junction temperature not computed, and no "
                "excursion above the DC boundary is credited with a pulse curve, since repetition cannot be "
                "accounted for (conservative)"
            )
        notes.extend(instability_notes(part))
        widths = ", ".join(format_duration(w) for w in self.widths_s[:-1])
        notes.append(f"digitized pulse curves: {widths or 'none'}")
        return notes
