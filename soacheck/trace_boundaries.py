"""The boundaries a trace's samples are judged against, and the log excess of samples under each.

Boundary 0..n-2 are the part's digitized pulse curves (only their non-thermal lines when a
thermal model follows the junction, since the model accounts for heat), boundary n-1 the
DC curve with the DC thermal instability cap. A sample's *log excess* under a boundary is
x = ln(I / I_allowed): above 0 outside, the margin 1 − eˣ (see :mod:`soacheck.excursions`).
:class:`soacheck.trace.TraceChecker` decides which boundary judges which sample.
"""

from __future__ import annotations

import numpy as np

from soacheck.boundary import BoundaryPolyline, envelope_polyline, pulse_lines
from soacheck.derating import BreakdownDerating, mechanism_factors
from soacheck.instability import instability_line
from soacheck.mechanisms import MechanismLine, mechanism_lines
from soacheck.parts import Part
from soacheck.stage import Cooling
from soacheck.thermal_model import ThermalModel


class JudgingBoundaries:
    """A part's boundaries for judging a trace: the pulse curves in order of width, then DC.

    Parameters
    ----------
    part
        The part.
    model
        The part's thermal model, or None: without one no excursion is credited with a
        pulse curve (every one is judged as DC).
    cooling
        A heatsink (the case temperature then moves), or None for a fixed case temperature.
    tc_c
        The fixed case temperature [°C] (with ``cooling`` None): the boundaries are then
        evaluated on exact polylines derated at it, the fast path.
    breakdown
        Derating of second breakdown or instability.
    """

    def __init__(
        self,
        part: Part,
        model: ThermalModel | None,
        *,
        cooling: Cooling | None,
        tc_c: float,
        breakdown: BreakdownDerating,
    ) -> None:
        self.part, self.model, self.breakdown = part, model, breakdown
        # boundary 0..n-2: pulse curves (non-thermal lines when a model follows Tj); n-1: DC
        self.widths_s = part.pulse_widths_s
        self.lines: list[tuple[MechanismLine, ...]] = []
        # the DC thermal instability cap (transfer.csv) sees the whole path the case sits on
        beyond_k_per_w = cooling.case_sink_k_per_w + cooling.sink_ambient_k_per_w if cooling else 0.0
        for curve in part.curves:
            if curve.is_dc:
                dc = mechanism_lines(part, curve)
                self.lines.append((*dc, *instability_line(part, part.ratings.rth_jc_k_per_w + beyond_k_per_w)))
            elif model is not None:
                bound = pulse_lines(part, pulse_s=curve.pulse_s)
                self.lines.append(tuple(line for line in bound.lines if line.mechanism != "power"))
            else:
                self.lines.append(mechanism_lines(part, curve))
        self.dc = len(self.lines) - 1
        self.polylines: list[BoundaryPolyline] | None = None
        if cooling is None:  # one case temperature: evaluate on exact polylines, the fast path
            v_lo = min(c.voltage_v[0] for c in part.curves) * 1e-3
            self.polylines = [
                envelope_polyline(part, lines, tc_c=tc_c, breakdown=breakdown, v_min_v=v_lo) for lines in self.lines
            ]

    def excess_from_start(
        self, index: int, v: np.ndarray, i: np.ndarray, start_c: np.ndarray, lengths: np.ndarray | None
    ) -> np.ndarray:
        """ln(I / I_allowed) under boundary ``index``, the lines derated at a temperature per run or per sample.

        ``start_c`` holds one temperature per run and ``lengths`` the samples of each run in
        order (the junction where each excursion started), or, with ``lengths`` None, one
        temperature per sample (a case temperature that moves). The derating factors are
        computed once per run, the lines once per sample; nothing is allowed above the
        voltage limit or at or above the junction limit.
        """
        factors = mechanism_factors(start_c, self.part, self.breakdown)

        def spread(per_run: np.ndarray) -> np.ndarray:
            return per_run if lengths is None else np.repeat(per_run, lengths)

        log_v = np.maximum(v, 1e-300)
        np.log(log_v, out=log_v)
        log_allowed = None
        for line in self.lines[index]:
            with np.errstate(divide="ignore"):
                log_factor = np.log(factors[line.mechanism]) if line.derated else np.zeros(1)
            if line.log_v.size == 1:  # a constant (a current limit): derated per run, no pass over samples
                y = spread(line.log_i[0] + log_factor) if log_factor.size > 1 else line.log_i[0] + log_factor[0]
            else:
                y = line(log_v)
                if np.any(log_factor != 0):
                    y += spread(log_factor) if log_factor.size > 1 else log_factor[0]
            log_allowed = y if log_allowed is None else np.minimum(log_allowed, y, out=y if np.ndim(y) else None)
        log_allowed = np.broadcast_to(log_allowed, v.shape).copy() if np.ndim(log_allowed) == 0 else log_allowed
        blocked_run = start_c >= self.part.tj_limit_c
        if blocked_run.any() or np.max(v) > self.part.v_limit_v:
            log_allowed[(v > self.part.v_limit_v) | spread(blocked_run)] = -np.inf
        with np.errstate(divide="ignore", invalid="ignore"):
            excess = np.log(i)
            excess -= log_allowed
        return excess

    def excess(
        self,
        index: int,
        v: np.ndarray,
        i: np.ndarray,
        tc: np.ndarray | None,
        *,
        out: np.ndarray | None = None,
        work: np.ndarray | None = None,
    ) -> np.ndarray:
        """ln(I / I_allowed) under boundary ``index``: above 0 outside, −inf at zero current.

        The margin is 1 − exp(excess); working in logs saves a pass over every sample.
        ``tc`` is the case temperature the lines are derated at (None: the fixed one, on the
        exact polyline of the boundary at that temperature). ``out``, ``work``: arrays of ``v``'s
        shape for the answer and the allowed current on that path (None: fresh ones).
        """
        if self.polylines is not None:
            log_allowed = self.polylines[index].log_current_at(v, out=work)
        else:
            return self.excess_from_start(index, v, i, tc, None)
        with np.errstate(divide="ignore", invalid="ignore"):
            excess = np.log(i, out=out)
            excess -= log_allowed  # in place: one fresh array less per chunk
        return excess  # NaN only for zero current where nothing is allowed: compares as inside

    def judging(self, duration_s: np.ndarray) -> np.ndarray:
        """Which boundary judges an excursion of this duration: the next longer pulse curve, or DC."""
        if self.model is None:
            return np.full(np.shape(duration_s), self.dc)
        index = np.searchsorted(self.widths_s, np.asarray(duration_s, dtype=float) * (1 - 1e-9))
        return np.minimum(index, self.dc)
