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
as one pass. The boundaries and the evaluation of samples under them live in
:mod:`soacheck.trace_boundaries`, the answer in :mod:`soacheck.trace_result`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from soacheck.boundary import evaluate_lines
from soacheck.derating import BreakdownDerating, breakdown_note, policy_note
from soacheck.errors import SoacheckError
from soacheck.excursions import OpenRun, excess_margin, first_at_max, merge_runs, run_edges, run_maxima
from soacheck.instability import instability_notes
from soacheck.parts import Part
from soacheck.policy import policy_of
from soacheck.quantities import TEMPERATURE
from soacheck.stage import Cooling
from soacheck.thermal import Foster, chain
from soacheck.thermal_model import thermal_model
from soacheck.thermal_response import ThermalState, temperature_rise
from soacheck.thinning import PeakThinner, SpanThinner
from soacheck.trace_boundaries import JudgingBoundaries
from soacheck.trace_result import TraceResult
from soacheck.units import format_duration


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


class Scratch:
    """Arrays of a chunk's size reused from chunk to chunk: a fresh array that large is handed
    back to the system when freed, and each of its pages costs a fault when written again."""

    def __init__(self) -> None:
        self.arrays: dict[str, np.ndarray] = {}

    def get(self, name: str, n: int, dtype: type = float) -> np.ndarray:
        """An uninitialized array of ``n`` values named ``name``, valid until the next ``get`` of that name."""
        kept = self.arrays.get(name)
        if kept is None or kept.size < n:
            kept = self.arrays[name] = np.empty(n, dtype)
        return kept[:n]


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
        # the pulse curves, then DC (see soacheck.trace_boundaries)
        self.boundaries = JudgingBoundaries(
            part, self.model, cooling=cooling, tc_c=self.reference_c, breakdown=breakdown
        )
        self.lines, self.dc, self.widths_s = self.boundaries.lines, self.boundaries.dc, self.boundaries.widths_s
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
        self.scratch = Scratch()
        names = ("time", "voltage", "current", "case_temp", *(("tj",) if self.junction is not None else ()), "margin")
        # each bin keeps the samples of highest voltage, current and junction temperature and of least margin
        keys = 3 + (self.junction is not None)
        self.thinner = PeakThinner(plot_points // keys, names, keys) if plot_points >= keys else None
        # each excursion's span and its margin against the boundary that judged it, for the plot's margin line
        self.spans = SpanThinner(plot_points // keys) if plot_points >= keys else None
        # under a policy, a twin judges the same samples against the absolute ratings
        self.rated = (
            None
            if part.policy is None
            else TraceChecker(part.rated, tc_c=tc_c, cooling=cooling, breakdown=breakdown, plot_points=0)
        )

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
        p = np.multiply(v, i, out=self.scratch.get("p", t.size))
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

        excess = self.boundaries.excess(
            self.dc, v, i, tc, out=self.scratch.get("excess", t.size), work=self.scratch.get("allowed", t.size)
        )
        k = int(np.argmax(excess))  # one pass decides the common case: every sample inside
        has_nan = bool(np.isnan(excess[k]))  # argmax finds a NaN first if there is one
        # fail safe: a sample that carries current but could not be evaluated is never inside
        # (a sum is NaN or infinite when any term is: one pass finds out whether to look closer)
        unevaluated = (np.isnan(excess) & (i > 0)) if has_nan else None
        for temps in (tc, rise_j):
            if temps is not None and not np.isfinite(np.sum(temps)):
                unevaluated = ~np.isfinite(temps) if unevaluated is None else unevaluated | ~np.isfinite(temps)
        if unevaluated is not None and unevaluated.any():
            self.worst.violation(float(t[int(np.argmax(unevaluated))]), None, "invalid")
        if excess[k] > 0 or has_nan:
            outside = np.greater(excess, 0, out=self.scratch.get("outside", t.size, bool))
            # the DC excess between excursions, NaN (margin 1) as −inf: the worst inside, and the plot's key
            between = self.scratch.get("between", t.size)
            np.copyto(between, excess)
            np.copyto(between, -np.inf, where=outside | np.isnan(excess) if has_nan else outside)
            k = int(np.argmax(between))
            worst_inside = between[k]
        else:
            outside = None
            between = excess
            worst_inside = excess[k]
        if self.open is not None and (outside is None or not outside[0]):  # it ended at this chunk's first sample
            self._close(self.open, float(t[0]))
            self.open = None
        if outside is not None and outside.any():
            self._excursions(t, v, i, tc, rise_j, outside, excess)
        if np.isfinite(worst_inside):
            self.worst.margin_candidate(float(-np.expm1(worst_inside)), float(t[k]))
        self._keep_for_plot(t, v, i, tc, rise_j, excess, between)
        self.samples += t.size
        self.last_t, self.last_p = float(t[-1]), float(p[-1])

    def _temperature(self, t: np.ndarray, rise: np.ndarray) -> None:
        k = int(np.argmax(rise))
        if self.reference_c + rise[k] > self.tj_peak:
            self.tj_peak, self.tj_peak_time = float(self.reference_c + rise[k]), float(t[k])
        if self.over_pending:  # the last sample of the previous chunk was over, held until now
            self.time_over += float(t[0] - self.last_t)
        if rise[k] <= self.part.tj_limit_c - self.reference_c:  # the hottest decides the common case (NaN: look on)
            self.over_pending = False
            return
        over = rise > self.part.tj_limit_c - self.reference_c
        if over.any():
            held = np.diff(t, append=t[-1])  # the chunk's last hold is added with the next chunk
            self.time_over += float(np.sum(held[over]))
            self.worst.violation(float(t[int(np.argmax(over))]), None, self.part.tj_limit)
        self.over_pending = bool(over[-1])

    def _excursions(self, t, v, i, tc, rise_j, outside, excess) -> None:
        """Reduce each run above the DC boundary under the boundary that judges it; judge the runs that ended.

        With a thermal model the pulse curves' lines (second breakdown, instability, current) are
        derated at the junction temperature at the excursion's first sample, where the pulse
        starts, not at the case temperature: single-pulse curves hold for a junction that
        starts at the case temperature (common practice, no source), and a pulse that follows
        others or a standing current starts hotter.

        A run that ends in this chunk is evaluated under its judging boundary only (known from
        its duration); the run still open at the chunk's end under every boundary that may
        still judge it (those at least as long as it is so far). Each run is reduced in one
        linear pass over its log excess (see :mod:`soacheck.excursions`).
        """
        rows = np.flatnonzero(outside)
        starts, ends = run_edges(rows)
        lengths = ends - starts
        offsets = np.r_[0, np.cumsum(lengths)[:-1]]
        start_tj = np.full(starts.size, np.nan) if rise_j is None else self.reference_c + rise_j[starts]
        start_s = t[starts]
        start_row = self.samples + starts
        # an excursion open since a past chunk goes on in the first run (feed closed it otherwise)
        continued, self.open = self.open, None
        if continued is not None:
            start_tj[0], start_s[0], start_row[0] = continued.start_tj_c, continued.start_s, continued.start_row
        if np.isfinite(start_tj).any():
            self.start_tj_peak = max(self.start_tj_peak, float(np.nanmax(start_tj)))
        still_open = bool(ends[-1] == t.size)
        closed = starts.size - still_open
        # the judging boundary of each run that ended; of the open run, the shortest that may still judge it
        boundary = self.boundaries.judging(t[np.minimum(ends, t.size - 1)] - start_s)
        v_rows, i_rows = v[rows], i[rows]
        judged = excess[rows]
        closed_rows = int(offsets[-1]) if still_open else rows.size
        for b in np.unique(boundary[:closed]):
            if b == self.dc:
                continue
            runs = boundary[:closed] == b
            sel = slice(0, closed_rows) if runs.all() else np.flatnonzero(np.repeat(runs, lengths[:closed]))
            judged[sel] = self.boundaries.excess_from_start(
                int(b), v_rows[sel], i_rows[sel], start_tj[:closed][runs], lengths[:closed][runs]
            )

        def case_at(k: int) -> float:
            return self.reference_c if tc is None else float(tc[rows[k]])

        def sample_at(k: int, r: int) -> tuple:  # what names the limit of a violation (see result)
            return (float(v_rows[k]), float(i_rows[k]), case_at(k), float(start_tj[r]), int(boundary[r]))

        if closed:
            head = judged[:closed_rows]
            top = run_maxima(head, offsets[:closed])
            margin = excess_margin(top)
            margin_time = np.full(closed, np.nan)
            if continued is not None:  # run 0 ends the open excursion: its earlier chunks count too
                b0 = int(boundary[0])
                if continued.min_margin[b0] <= margin[0]:
                    margin[0], margin_time[0] = continued.min_margin[b0], continued.min_time[b0]
                self.time_outside += float(
                    continued.negative_s[b0] + continued.pending_negative[b0] * (t[0] - continued.last_t)
                )
                if math.isfinite(continued.first_negative_s[b0]):
                    self.worst.violation(float(continued.first_negative_s[b0]), continued.first_negative_sample[b0])
            positive = head > 0
            if positive.any():
                at = rows[:closed_rows][positive]
                self.time_outside += float(np.sum(t[at + 1] - t[at]))  # a run that ended: every hold is known
                k = int(np.argmax(positive))
                r = int(np.searchsorted(offsets[:closed], k, side="right") - 1)
                self.worst.violation(float(t[rows[k]]), sample_at(k, r))
            # the time of each run's least margin, found only where it is needed: the worst run, and spans to plot
            worst = int(np.argmin(margin))
            if self.spans is not None:  # every run's: the first sample at its highest excess (linear, no sort)
                at_top = np.minimum.reduceat(
                    np.where(head == np.repeat(top, lengths[:closed]), np.arange(closed_rows), closed_rows),
                    offsets[:closed],
                )
                at_top = np.where(at_top < closed_rows, at_top, offsets[:closed])  # all NaN: the first sample
                margin_time = np.where(np.isnan(margin_time), t[rows[at_top]], margin_time)
            elif math.isnan(margin_time[worst]):
                lo = offsets[worst]
                margin_time[worst] = t[rows[lo + first_at_max(head[lo : lo + lengths[worst]])]]
            self.excursions += closed
            self.worst.margin_candidate(float(margin[worst]), float(margin_time[worst]))
            if self.spans is not None:
                self.spans.add(start_row[:closed], start_s[:closed], t[ends[:closed] - 1], margin, margin_time)
        if still_open:
            self.open = self._open_run(t, rows, v_rows, i_rows, judged, int(offsets[-1]), start_s[-1], start_tj[-1],
                                       int(start_row[-1]), int(boundary[-1]), case_at)  # fmt: skip
            if continued is not None and closed == 0:
                self.open = merge_runs(continued, self.open, float(t[0]))

    def _open_run(
        self, t, rows, v_rows, i_rows, judged, lo, start_s, start_tj, start_row, shortest, case_at
    ) -> OpenRun:
        """The run still open at the chunk's end, reduced under each boundary from ``shortest`` to DC."""
        n_b = len(self.lines)
        at = rows[lo:]
        t_run = t[at]
        hold = np.r_[np.diff(t_run), 0.0]  # the last sample's hold is known only with the next chunk
        run = OpenRun(
            start_s=float(start_s),
            min_margin=np.full(n_b, np.nan),
            min_time=np.full(n_b, np.nan),
            first_negative_s=np.full(n_b, np.inf),
            first_negative_sample=[None] * n_b,
            negative_s=np.zeros(n_b),
            pending_negative=np.zeros(n_b, dtype=bool),
            last_t=float(t_run[-1]),
            start_tj_c=float(start_tj),
            start_row=start_row,
        )
        for b in range(shortest, n_b):
            if b == self.dc:
                x = judged[lo:]
            else:
                x = self.boundaries.excess_from_start(
                    b, v_rows[lo:], i_rows[lo:], np.array([start_tj]), np.array([at.size])
                )
            run.min_margin[b] = float(excess_margin(np.fmax.reduce(x)))
            run.min_time[b] = t_run[first_at_max(x)]
            positive = x > 0
            if positive.any():
                k = int(np.argmax(positive))
                run.first_negative_s[b] = t_run[k]
                run.first_negative_sample[b] = (
                    float(v_rows[lo + k]),
                    float(i_rows[lo + k]),
                    case_at(lo + k),
                    float(start_tj),
                    b,
                )
                run.negative_s[b] = float(np.sum(hold[positive]))
                run.pending_negative[b] = bool(positive[-1])
        return run

    def _close(self, run: OpenRun, end_s: float) -> None:
        """An excursion ended at ``end_s`` (the first sample back inside): judge it."""
        run.negative_s = run.negative_s + run.pending_negative * (end_s - run.last_t)
        self._judge(run, end_s - run.start_s)

    def _judge(self, run: OpenRun, duration_s: float) -> None:
        self.excursions += 1
        b = int(self.boundaries.judging(duration_s))
        self.worst.margin_candidate(float(run.min_margin[b]), float(run.min_time[b]))
        if math.isfinite(run.first_negative_s[b]):
            self.time_outside += float(run.negative_s[b])
            self.worst.violation(float(run.first_negative_s[b]), run.first_negative_sample[b])
        if self.spans is not None:
            self.spans.add([run.start_row], [run.start_s], [run.last_t], [run.min_margin[b]], [run.min_time[b]])

    def _keep_for_plot(self, t, v, i, tc, rise_j, excess, between) -> None:
        """Thin the chunk for the plot: each bin keeps its highest V, I, Tj and its least DC margin
        between excursions (``between``: the DC excess there, −inf in excursions and where the
        margin is 1); an excursion's margin, against the boundary that judged it, is kept with
        its span."""
        if self.thinner is None:
            return
        heat = [] if rise_j is None else [rise_j]

        def columns_at(k: np.ndarray) -> list[np.ndarray]:
            case = np.full(k.size, self.reference_c) if tc is None else tc[k]
            tj = [] if rise_j is None else [self.reference_c + rise_j[k]]
            return [t[k], v[k], i[k], case, *tj, excess_margin(excess[k])]

        self.thinner.add([v, i, *heat, between], columns_at)

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
                limit = self.part.case_limit(tc)
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
        spans = self.spans.result() if self.spans is not None else {}
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
            excursion_spans=spans,
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
