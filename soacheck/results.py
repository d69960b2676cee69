"""Result objects of the public API: one shape for every check.

Every result has ``verdict`` (``pass`` / ``fail``), ``passed``, ``margin`` (the least margin
over everything checked, 1 − I/I_allowed), ``limit`` (what bounds the current where the
margin is least), ``assumptions`` (in words), and three ways out:

- ``to_dict()``: exactly the object that the command's ``--json`` prints (plain JSON values:
  NaN and infinities become ``None``);
- ``to_frame()``: a :class:`pandas.DataFrame`, one row per point checked, columns named as
  in the JSON (SI units: V, A, W, °C, s);
- ``plot(ax=None)``: draws and returns the matplotlib axes (a new figure when ``ax`` is
  None); nothing is shown or saved.

The objects are thin shells: the computation lives in the domain modules and the result
only keeps what it needs to report.
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from types import ModuleType
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from soacheck.compare import Candidate
from soacheck.derating import BreakdownDerating
from soacheck.envelope import Envelope, EnvelopeCheck, SafeEnvelope
from soacheck.errors import SoacheckError
from soacheck.jsonvalues import json_chunks, json_text, jsonable
from soacheck.limit_table import LimitTable, export_writer
from soacheck.lint import Finding
from soacheck.parts import Part
from soacheck.plan import Plan
from soacheck.points import PointCheck
from soacheck.policy import Policy, least_margin, policy_of
from soacheck.sharing import SharingSpread, sharing_margins
from soacheck.stage import Stage
from soacheck.stage_run import StageRun
from soacheck.trace import TraceResult

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes

    from soacheck.runner import JobResult


def _pd() -> ModuleType:
    """pandas, imported when a table is first asked for."""
    import pandas

    return pandas


def _plots() -> ModuleType:
    """soacheck.plots (matplotlib), imported when a plot is first asked for."""
    from soacheck import plots

    return plots


Verdict = Literal["pass", "fail"]
"""A result's verdict: ``pass`` when everything checked is safe."""


def _least(margin: np.ndarray, limit: np.ndarray) -> tuple[float, str | None, int | None]:
    """The least margin (−inf where nothing is allowed or a point is not evaluated), its limit and flat index."""
    flat = np.ravel(margin).astype(float)
    if flat.size == 0:
        return math.nan, None, None
    filled = np.where(np.isnan(flat), -np.inf, flat)
    k = int(np.argmin(filled))
    return float(filled[k]), str(np.ravel(limit)[k]), k


class Result(ABC):
    """What every result object offers; see the module docstring."""

    @property
    @abstractmethod
    def passed(self) -> bool:
        """True when everything checked is safe."""

    @property
    def verdict(self) -> Verdict:
        """``pass`` when everything checked is safe, else ``fail``."""
        return "pass" if self.passed else "fail"

    @property
    @abstractmethod
    def margin(self) -> float:
        """The least margin 1 − I/I_allowed over everything checked; −inf where nothing is allowed. [1]"""

    @property
    @abstractmethod
    def limit(self) -> str | None:
        """What bounds the current where the margin is least (the shared ``limit`` names), or None."""

    @property
    @abstractmethod
    def assumptions(self) -> tuple[str, ...]:
        """The assumptions the answer rests on, in words."""

    @property
    def margin_to_rating(self) -> float:
        """The least margin against the absolute ratings; the ``margin`` itself without a design-margin policy. [1]"""
        value = self.to_dict().get("margin_to_rating")
        return -math.inf if value is None else float(value)

    @abstractmethod
    def to_dict(self) -> dict[str, Any]:
        """Exactly the command's ``--json`` object: plain JSON values, None for NaN."""

    @abstractmethod
    def to_frame(self) -> pd.DataFrame:
        """One row per point checked, columns named as in the JSON."""

    @abstractmethod
    def plot(self, ax: Axes | None = None) -> Axes:
        """Draw the result on ``ax`` (a new figure when None) and return the axes."""

    def to_json(self) -> str:
        """``to_dict()`` as the JSON text the command prints."""
        return "".join(self.json_chunks())

    def json_chunks(self) -> Iterator[str]:
        """``to_json()`` in pieces, as the command prints it; results with many rows stream them."""
        yield json_text(self.to_dict())

    def __repr__(self) -> str:
        margin = "—" if not math.isfinite(self.margin) else f"{self.margin:+.1%}"
        return f"<{type(self).__name__} {self.verdict}, margin {margin}, limit {self.limit}>"


# --------------------------------------------------------------------------- operating points


@dataclass(frozen=True, eq=False, repr=False)
class CheckResult(Result):
    """Operating points checked against a part's derated SOA (``soacheck check``).

    Attributes
    ----------
    part
        The part checked.
    points
        The per-point arrays (voltage, current, allowed current, margin, limit ...), each ``(n,)``.
    breakdown
        The second-breakdown derating used, for the plot.
    """

    part: Part
    points: PointCheck
    breakdown: BreakdownDerating = "auto"

    @property
    def passed(self) -> bool:
        return self.points.passed

    @property
    def margin(self) -> float:
        return _least(self.points.margin, self.points.limit)[0]

    @property
    def limit(self) -> str | None:
        return _least(self.points.margin, self.points.limit)[1]

    @property
    def assumptions(self) -> tuple[str, ...]:
        return tuple(self.points.assumptions)

    @property
    def margin_to_rating(self) -> float:
        worst = least_margin(self.to_frame()["margin_to_rating"].to_numpy(dtype=float))
        return -math.inf if worst is None else worst

    def to_frame(self) -> pd.DataFrame:
        """One row per point: voltage [V], current [A], case_temp [°C], pulse, duty, inside,
        allowed_current [A], margin (fraction, NaN where nothing is allowed), limit, curve, extrapolated."""
        return self.points.to_frame()

    def _payload(self, points: Any) -> dict[str, Any]:
        return {
            "part": self.points.part_id,
            "verdict": self.verdict,
            "policy": policy_of(self.points.policy).to_dict(),
            "points": points,
            "assumptions": list(self.assumptions),
        }

    def to_dict(self) -> dict[str, Any]:
        return jsonable(self._payload(self.to_frame().to_dict(orient="records")))

    def json_chunks(self) -> Iterator[str]:
        """The JSON text with the points streamed one compact row a line (a million in seconds)."""
        return json_chunks(self._payload(self.to_frame()))

    def plot(self, ax: Axes | None = None) -> Axes:
        """The points over the boundary at the case temperatures and the pulse width they were checked at."""
        return _plots().plot_point_check(self.part, self.points, breakdown=self.breakdown, ax=ax)


# --------------------------------------------------------------------------- traces


def _trajectory_on_soa(
    ax: Axes,
    part: Part,
    v: np.ndarray,
    i: np.ndarray,
    t: np.ndarray,
    temps: list[float],
    breakdown: BreakdownDerating,
    title: str,
) -> Axes:
    """A (V, I) path coloured by time over the part's SOA derated at ``temps``, on ``ax``."""
    _plots().plot_soa(part, case_temps_c=temps, breakdown=breakdown, ax=ax)
    shown = i > 1e-3 * max(float(np.max(i)), 1e-12)  # log axes: skip ~0 A
    dots = ax.scatter(v[shown], i[shown], c=t[shown], cmap="viridis", s=6, zorder=5)
    ax.figure.colorbar(dots, ax=ax, label="time [s]")
    ax.set_title(title, fontsize=10)
    return ax


@dataclass(frozen=True, eq=False, repr=False)
class TraceCheckResult(Result):
    """A waveform checked sample by sample (``soacheck trace``).

    Attributes
    ----------
    part
        The part checked.
    trace
        What the check found: peaks, first violation, time outside, excursions, and a thinned
        copy of the waveform (about 20 000 samples) for tables and plots.
    breakdown
        The second-breakdown derating used, for the plot.
    """

    part: Part
    trace: TraceResult
    breakdown: BreakdownDerating = "auto"

    @property
    def passed(self) -> bool:
        return self.trace.passed

    @property
    def margin(self) -> float:
        worst = self.trace.margin
        return -math.inf if worst is None else float(worst)

    @property
    def limit(self) -> str | None:
        return self.trace.limit

    @property
    def assumptions(self) -> tuple[str, ...]:
        return tuple(self.trace.assumptions)

    def to_dict(self) -> dict[str, Any]:
        return jsonable(self.trace.summary())

    def to_frame(self) -> pd.DataFrame:
        """The thinned waveform, one row per kept sample: time [s], voltage [V], current [A],
        case_temp [°C], tj [°C] (with a thermal model), margin to the DC boundary (fraction)."""
        return _pd().DataFrame({name: values for name, values in self.trace.plot.items()})

    def plot(self, ax: Axes | None = None) -> Axes:
        """Without ``ax``: the trajectory on the SOA and Tj(t) with the margin, side by side; the SOA
        axes is returned (its ``.figure`` holds both). With ``ax``: the trajectory on the SOA only."""
        if ax is None:
            return _plots().plot_trace(self.part, self.trace, breakdown=self.breakdown).axes[0]
        data = self.trace.plot
        temps = sorted({float(data["case_temp"].min()), self.trace.tc_peak_c})
        title = f"{self.part.id}: trajectory ({self.verdict})"
        return _trajectory_on_soa(
            ax, self.part, data["voltage"], data["current"], data["time"], temps, self.breakdown, title
        )


# --------------------------------------------------------------------------- a stage along a trajectory


@dataclass(frozen=True, eq=False, repr=False)
class StageRunResult(Result):
    """A discharge or a sweep through a stage, every device checked along it (``discharge``, ``sweep``).

    Attributes
    ----------
    run
        The trajectory through the stage, per device: arrays ``(devices, samples)``.
    test
        What the test is, in words (``CC discharge at 5 A, ...``).
    extra
        Further figures of the JSON, such as ``max_safe_setpoint``.
    breakdown
        The second-breakdown derating used, for the plot.
    setpoint_unit
        The unit of the discharge's setpoint (``A``, ``W`` or ``Ω``), for marking the most
        demanding safe setpoint on the plot; empty for a sweep.
    """

    run: StageRun
    test: str
    extra: dict[str, Any] = field(default_factory=dict)
    breakdown: BreakdownDerating = "auto"
    setpoint_unit: str = ""

    @property
    def passed(self) -> bool:
        return self.run.passed

    @property
    def margin(self) -> float:
        return _least(self.run.margin, self.run.limit)[0]

    @property
    def limit(self) -> str | None:
        return self.run.summary()["limit"] or _least(self.run.margin, self.run.limit)[1]  # type: ignore[return-value]

    @property
    def assumptions(self) -> tuple[str, ...]:
        return tuple(self.run.assumptions)

    @property
    def max_safe_setpoint(self) -> float | None:
        """The most demanding safe setpoint, when it was searched for (``find_max``). [A, W or Ω]"""
        return self.extra.get("max_safe_setpoint")

    def to_dict(self) -> dict[str, Any]:
        return jsonable({"test": self.test, **self.run.summary(), **self.extra, "assumptions": list(self.assumptions)})

    def to_frame(self) -> pd.DataFrame:
        """One row per device and sample (long format): time [s], device (from 1, as Q1), source_voltage [V],
        total_current [A], voltage [V] and current [A] of the device, power [W], case_temp, tj,
        heatsink_temp [°C], allowed_current [A], margin (fraction), limit."""
        run = self.run
        n, m = run.device_a.shape
        return _pd().DataFrame(
            {
                "time": np.tile(run.time_s, n),
                "device": np.repeat(np.arange(1, n + 1), m),
                "source_voltage": np.tile(run.source_v, n),
                "total_current": np.tile(run.total_a, n),
                "voltage": run.device_v.ravel(),
                "current": run.device_a.ravel(),
                "power": run.device_w.ravel(),
                "case_temp": run.case_c.ravel(),
                "tj": run.junction_c.ravel(),
                "heatsink_temp": np.tile(run.sink_c, n),
                "allowed_current": run.allowed_a.ravel(),
                "margin": run.margin.ravel(),
                "limit": run.limit.ravel(),
            }
        )

    def plot(self, ax: Axes | None = None) -> Axes:
        """Without ``ax``: the worst device on its SOA beside the test over time; the SOA axes is
        returned. With ``ax``: the worst device's path on its SOA only."""
        if ax is None:
            found = (self.max_safe_setpoint, self.setpoint_unit) if "max_safe_setpoint" in self.extra else None
            figure = _plots().plot_stage_run(self.run, title=self.test, breakdown=self.breakdown, max_setpoint=found)
            return figure.axes[0]
        run = self.run
        d = run.worst_device
        temps = sorted({float(run.case_c[d, 0]), float(run.case_c[d].max())})
        title = f"{self.test}: device {d} (worst)"
        return _trajectory_on_soa(
            ax, run.stage.part, run.device_v[d], run.device_a[d], run.time_s, temps, self.breakdown, title
        )


# --------------------------------------------------------------------------- sharing


@dataclass(frozen=True, eq=False, repr=False)
class SharingResult(Result):
    """How unevenly the devices of a stage share a current, over random V_BE offsets (``sharing``).

    The verdict fails when any draw runs away thermally; ``margin`` is then −inf and
    ``limit`` is ``runaway``. Otherwise the margin is the worst device's current against its
    continuous rating at the percentile reported.
    """

    stage: Stage
    stage_label: str
    current_a: float
    voltage_v: float
    seed: int
    spread: SharingSpread

    @property
    def passed(self) -> bool:
        return not self.spread.runaway_fraction

    @property
    def margin(self) -> float:
        if not self.passed:
            return -math.inf
        return float(sharing_margins(self.stage.part, self.spread.worst_share * self.current_a)["margin"])  # type: ignore[arg-type]

    @property
    def limit(self) -> str | None:
        return "runaway" if not self.passed else "current"

    @property
    def assumptions(self) -> tuple[str, ...]:
        return (
            f"V_BE offsets uniform in a band of {self.stage.vbe_spread_v * 1e3:g} mV, {self.spread.draws} draws, "
            f"seed {self.seed}",
            "each draw at its electro-thermal steady state; junctions at the heatsink (or case) plus P·(rth_jc + R_cs)",
        )

    def to_dict(self) -> dict[str, Any]:
        s = self.spread
        return jsonable(
            {
                "stage": self.stage_label,
                "count": self.stage.count,
                "equal_share": s.equal_share,
                "worst_share": s.worst_share,
                "percentile": s.percentile,
                "mean_worst_share": s.mean_share,
                "worst_device_current": s.worst_share * self.current_a,
                "runaway_fraction": s.runaway_fraction,
                "draws": s.draws,
                "seed": self.seed,
                **sharing_margins(self.stage.part, s.worst_share * self.current_a),
            }
        )

    def to_frame(self) -> pd.DataFrame:
        """One row: the figures of the JSON."""
        return _pd().DataFrame([self.to_dict()])

    def plot(self, ax: Axes | None = None) -> Axes:
        """Bars: the equal share, the mean worst share and the worst share at the percentile, in %."""
        ax = _plots().new_axes(6, 4) if ax is None else ax
        s = self.spread
        labels = ["equal", "mean worst", f"worst, {s.percentile:g}th pct."]
        ax.bar(labels, [100 * s.equal_share, 100 * s.mean_share, 100 * s.worst_share], color="#1f5fa8")
        ax.set_ylabel("share of the total current [%]")
        ax.set_title(f"{self.stage.part.id} × {self.stage.count}: {self.current_a:g} A at {self.voltage_v:g} V")
        ax.grid(True, axis="y", lw=0.3, alpha=0.6)
        return ax


# --------------------------------------------------------------------------- envelopes


@dataclass(frozen=True, eq=False, repr=False)
class EnvelopeResult(Result):
    """A stage checked along an envelope's upper edge, every device (``envelope --check``).

    Attributes
    ----------
    check
        Per device and edge point, arrays ``(devices, points)``; ``outside`` lists the stretches
        of source voltage not covered.
    breakdown
        The second-breakdown derating used, for the plot.
    """

    check: EnvelopeCheck
    breakdown: BreakdownDerating = "auto"

    @property
    def envelope(self) -> Envelope:
        return self.check.envelope

    @property
    def passed(self) -> bool:
        return self.check.passed

    @property
    def margin(self) -> float:
        return _least(self.check.margin, self.check.limit)[0]

    @property
    def limit(self) -> str | None:
        return _least(self.check.margin, self.check.limit)[1]

    @property
    def assumptions(self) -> tuple[str, ...]:
        return tuple(self.check.assumptions)

    def to_dict(self) -> dict[str, Any]:
        return jsonable(self.check.summary())

    def to_frame(self) -> pd.DataFrame:
        """One row per device and edge point: source_voltage [V], total_current [A], device (from 1, as Q1),
        voltage [V], current [A], case_temp, tj [°C], allowed_current [A], margin, limit."""
        c = self.check
        n, m = c.margin.shape
        return _pd().DataFrame(
            {
                "source_voltage": np.tile(c.source_v, n),
                "total_current": np.tile(c.total_a, n),
                "device": np.repeat(np.arange(1, n + 1), m),
                "voltage": c.state.device_v.ravel(),
                "current": c.state.device_a.ravel(),
                "case_temp": c.state.case_c.ravel(),
                "tj": c.state.junction_c.ravel(),
                "allowed_current": c.allowed_a.ravel(),
                "margin": c.margin.ravel(),
                "limit": c.limit.ravel(),
            }
        )

    def plot(self, ax: Axes | None = None) -> Axes:
        """Without ``ax``: one panel per device (the four worst); the worst device's axes is returned.
        With ``ax``: the worst device's panel only."""
        if ax is None:
            return _plots().plot_envelope_check(self.check, breakdown=self.breakdown).axes[0]
        c = self.check
        d = int(np.argmin(np.min(c.margin, axis=1)))
        _plots().plot_soa(
            c.stage.part,
            case_temps_c=[float(c.state.case_c[d].max())],
            pulse_s=c.envelope.pulse_s,
            breakdown=self.breakdown,
            ax=ax,
        )
        v, i = c.state.device_v[d], c.state.device_a[d]
        ok = c.margin[d] >= 0
        ax.plot(v, i, color="#444444", lw=1.0, zorder=5, label="envelope edge, this device")
        ax.scatter(v[~ok], i[~ok], color="#c0392b", s=10, zorder=6, label="outside")
        ax.legend(fontsize=7, loc="lower left")
        ax.set_title(f"{c.stage.part.id}, device {d}: {c.envelope.label}", fontsize=9)
        return ax


@dataclass(frozen=True, eq=False, repr=False)
class SafeEnvelopeResult(Result):
    """The largest safe envelope of a stage: the highest total current at each source voltage (``envelope``).

    ``passed`` is True when every voltage admits some current; ``margin`` is 0 by
    construction (each current is at the edge), −inf where a voltage admits none; ``limit``
    is what bounds the lowest current.

    Attributes
    ----------
    table
        The limit table: currents rounded down to its resolution (1 mA), as exported.
    safe
        The bisection's answer before rounding, with the stage.
    """

    table: LimitTable
    safe: SafeEnvelope

    @property
    def passed(self) -> bool:
        return all(i > 0 for i in self.table.max_current_a)

    @property
    def margin(self) -> float:
        return 0.0 if self.passed else -math.inf

    @property
    def limit(self) -> str | None:
        if not self.table.limit:
            return None
        return self.table.limit[int(np.argmin(self.table.max_current_a))]

    @property
    def assumptions(self) -> tuple[str, ...]:
        return tuple(self.table.assumptions)

    def to_dict(self) -> dict[str, Any]:
        return jsonable(self.table.to_dict())

    def to_frame(self) -> pd.DataFrame:
        """One row per source voltage: voltage [V], max_current [A] (rounded down), limit."""
        return _pd().DataFrame(
            {"voltage": self.table.voltage_v, "max_current": self.table.max_current_a, "limit": self.table.limit}
        )

    def export_text(self, suffix: str) -> str:
        """The limit table as the text of a ``.csv``, ``.json`` or ``.h`` (C header) file.

        Raises
        ------
        SoacheckError
            For another suffix.
        """
        return export_writer(suffix)(self.table)

    def export(self, path: str | Path, *, force: bool = False) -> Path:
        """Write the limit table: ``.csv``, ``.json`` (the ``to_dict()`` object) or ``.h`` by the path's suffix.

        Raises
        ------
        SoacheckError
            For another suffix, or when the file exists, is not one soacheck wrote, and
            ``force`` is False.
        """
        from soacheck.files import check_output

        path = Path(path)
        text = self.export_text(path.suffix)
        check_output(path, force=force)
        path.write_text(text, encoding="utf-8")
        return path

    def plot(self, ax: Axes | None = None) -> Axes:
        """The largest safe total current against source voltage, log-log."""
        ax = _plots().new_axes() if ax is None else ax
        table = self.table
        ax.plot(table.voltage_v, table.max_current_a, marker="o", color="#1f5fa8")
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlabel("source voltage [V]")
        ax.set_ylabel("largest safe total current [A]")
        ax.set_title(f"{table.part} × {table.count}: largest safe envelope", fontsize=10)
        ax.grid(True, which="both", lw=0.3, alpha=0.6)
        return ax


# --------------------------------------------------------------------------- comparing candidates


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
        return (
            "each candidate in the stage's place" if self.stage is not None else "each candidate alone",
            "sorted: passing first, then by least margin; fewest devices and cooling headroom by search",
        )

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


# --------------------------------------------------------------------------- plans


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
        from soacheck.files import write_folder
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


# --------------------------------------------------------------------------- part folders


@dataclass(frozen=True, eq=False, repr=False)
class LintResult(Result):
    """A part folder checked for digitizing mistakes (``soacheck lint``).

    ``passed`` is False when any finding is an error (warnings pass); ``margin`` is NaN and
    ``limit`` None, since no operating point is checked.

    Attributes
    ----------
    folder
        The part folder.
    findings
        Each finding's severity (``error`` / ``warning``), file, line (0 when the whole file) and message with its fix.
    """

    folder: Path
    findings: tuple[Finding, ...]

    @property
    def passed(self) -> bool:
        return not any(f.severity == "error" for f in self.findings)

    @property
    def margin(self) -> float:
        return math.nan

    @property
    def limit(self) -> str | None:
        return None

    @property
    def assumptions(self) -> tuple[str, ...]:
        return ()

    def to_dict(self) -> dict[str, Any]:
        return jsonable({"part": self.folder.name, "findings": [f.as_dict() for f in self.findings]})

    def to_frame(self) -> pd.DataFrame:
        """One row per finding, errors first: severity, file, row, message."""
        return _pd().DataFrame([f.as_dict() for f in self.findings], columns=["severity", "file", "row", "message"])

    def plot(self, ax: Axes | None = None) -> Axes:
        """The part's digitized curves, each segment coloured by the mechanism its slope implies.

        Raises
        ------
        SoacheckError
            When the part cannot be read (fix the errors first).
        """
        from soacheck.partfiles import read_part

        return _plots().plot_soa(read_part(self.folder), ax=ax)
