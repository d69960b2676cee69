"""A stage of parallel devices: ``load_stage``; ``discharge`` and ``sweep`` along a trajectory, ``sharing``;
their results.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from soacheck.api.base import CheckedResult, Result, _pd, _plots, _trajectory_on_soa
from soacheck.api.libraries import _folders
from soacheck.api.options import (
    Library,
    PolicyLike,
    Pulse,
    Ramp,
    StageLike,
    _breakdown,
    _pulse_s,
    _stage_under,
)
from soacheck.battery import MODES, Mode
from soacheck.battery import discharge as battery_discharge
from soacheck.battery import sweep as battery_sweep
from soacheck.derating import BreakdownDerating, breakdown_note
from soacheck.display import device_name
from soacheck.errors import SoacheckError, choose
from soacheck.jobfiles import battery_from
from soacheck.jsonvalues import jsonable
from soacheck.library import read_stage
from soacheck.quantities import (
    CAPACITY,
    CELL_COUNT,
    CURRENT,
    DRAWS,
    PERCENTILE,
    POWER,
    RESISTANCE,
    SAMPLES,
    SEED,
    SETPOINT,
    VOLTAGE,
)
from soacheck.sharing_spread import SharingSpread, sharing_margins, sharing_monte_carlo
from soacheck.stage import Stage
from soacheck.stage_run import StageRun, run_stage, setpoint_limits

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes


def load_stage(stage: StageLike, *, library: Library = None) -> Stage:
    """Read a stage file (TOML); its part is an id in the libraries or a folder beside the file.

    Parameters
    ----------
    stage
        The stage file; a :class:`Stage` is returned as it is.
    library
        Folders of user part folders.

    Returns
    -------
    Stage
        The stage; its ``name`` is the file's path, as the JSON outputs give it.

    Raises
    ------
    SoacheckError
        A missing file, invalid TOML, an unknown key or part, or a value out of range.
    """
    if isinstance(stage, Stage):
        return stage
    return read_stage(Path(stage), _folders(library))


def discharge(
    stage: StageLike,
    *,
    battery: str | Path,
    cells: int,
    capacity: float,
    mode: Mode,
    setpoint: float,
    cutoff: float | None = None,
    internal_resistance: float = 0.0,
    samples: int = 2000,
    find_max: bool = False,
    breakdown: BreakdownDerating = "auto",
    policy: PolicyLike = None,
    library: Library = None,
    progress: Callable[[int, int | None], None] | None = None,
) -> StageRunResult:
    """Discharge a battery through the stage and check every device all the way down (``soacheck discharge``).

    Parameters
    ----------
    stage
        The stage or its file.
    battery
        A chemistry preset (``nmc``, ``lfp``, ``lead-acid``, ``nimh``) or the path of a CSV
        with columns ``soc,voltage`` (V per cell).
    cells
        Cells in series.
    capacity
        Capacity. [Ah]
    mode, setpoint
        ``cc`` at a current [A], ``cp`` at a power [W] or ``cr`` at a resistance [Ω].
    cutoff
        Pack cut-off voltage under load [V]; the chemistry's cut-off per cell when None.
    internal_resistance
        The pack's own resistance. [Ω]
    samples
        Time samples of the trajectory, at least 10.
    find_max
        Also search for the most demanding safe setpoint (the highest current or power, the
        lowest resistance), to 0.1 %; ``result.max_safe_setpoint``, None when none is safe.
    breakdown
        Second-breakdown derating: ``auto``, ``thermal`` or ``none``.
    policy
        Design margins to judge against: a :class:`~soacheck.policy.Policy`, a preset name
        (``"none"``, ``"bench"``) or a policy file; None: the stage file's own ``[policy]``,
        else the absolute ratings. Verdict and ``margin`` are then the policy's and
        ``margin_to_rating`` is the margin to the absolute ratings.
    progress
        With ``find_max``, called as ``progress(runs done, None)`` after each run of the search.

    Returns
    -------
    StageRunResult
        Per device and sample: currents, voltages, temperatures, margins, limits.

    Raises
    ------
    SoacheckError
        An unknown chemistry or mode, a setpoint the pack cannot give at full charge, a
        cut-off at or above the full voltage, fewer than 10 samples.
    """
    chosen = _breakdown(breakdown)
    mode = choose(mode, MODES, "--mode")  # type: ignore[assignment]
    CELL_COUNT.check(cells, "--cells")
    CAPACITY.check(capacity, "--capacity")
    RESISTANCE.check(internal_resistance, "--internal-resistance")
    SETPOINT[mode].check(setpoint, "--setpoint")
    if cutoff is not None:
        VOLTAGE.check(cutoff, "--cutoff")
    SAMPLES.check(samples, "--samples")
    loaded = _stage_under(load_stage(stage, library=library), policy)
    pack = battery_from(str(battery), cells, capacity, internal_resistance)

    runs: dict[tuple[Stage, float], StageRun] = {}  # the search starts where the run below was made

    def run_in(through: Stage, value: float) -> StageRun:
        if (through, value) not in runs:
            path = battery_discharge(pack, mode, value, cutoff_v=cutoff, samples=samples)
            run = run_stage(through, path.time_s, path.source_v, path.total_a, breakdown=chosen)
            runs[through, value] = replace(run, assumptions=run.assumptions + path.notes)
        return runs[through, value]

    run = run_in(loaded, setpoint)
    label = battery_discharge(pack, mode, setpoint, cutoff_v=cutoff, samples=10).label
    extra: dict[str, Any] = setpoint_limits(run_in, loaded, setpoint, mode, progress=progress) if find_max else {}
    return StageRunResult(run, label, extra, chosen, SETPOINT[mode].unit)


def sweep(
    stage: StageLike,
    *,
    ramp: Ramp,
    start: float,
    stop: float,
    at: float,
    time: Pulse = "10s",
    samples: int = 2000,
    breakdown: BreakdownDerating = "auto",
    policy: PolicyLike = None,
    library: Library = None,
) -> StageRunResult:
    """Run a V–I sweep through the stage and check every device along it (``soacheck sweep``).

    Parameters
    ----------
    stage
        The stage or its file.
    ramp
        ``current`` (a current ramp at a fixed source voltage ``at`` [V]), ``voltage`` (a voltage
        ramp at a fixed current ``at`` [A]) or ``power`` (a voltage ramp at a constant power ``at`` [W]).
    start, stop
        Ends of the ramp: [A] for a current ramp, [V] otherwise.
    at
        The fixed source voltage [V], current [A] or power [W].
    time
        Ramp duration: ``"10s"``, ``"500ms"`` or seconds.
    samples
        Time samples of the ramp, at least 10.
    breakdown
        Second-breakdown derating: ``auto``, ``thermal`` or ``none``.
    policy
        Design margins to judge against: a :class:`~soacheck.policy.Policy`, a preset name
        (``"none"``, ``"bench"``) or a policy file; None: the stage file's own ``[policy]``,
        else the absolute ratings. Verdict and ``margin`` are then the policy's and
        ``margin_to_rating`` is the margin to the absolute ratings.

    Returns
    -------
    StageRunResult
        Per device and sample: currents, voltages, temperatures, margins, limits.
    """
    chosen = _breakdown(breakdown)
    ramp = choose(ramp, ("current", "voltage", "power"), "--ramp")  # type: ignore[assignment]
    ramped = CURRENT if ramp == "current" else VOLTAGE
    ramped.check(stop, "--to")
    if not (ramp == "current" and start == 0):
        ramped.check(start, "--from")
    {"current": VOLTAGE, "voltage": CURRENT, "power": POWER}[ramp].check(at, "--at")
    loaded = _stage_under(load_stage(stage, library=library), policy)
    seconds = _pulse_s(time, where="--time")
    if math.isinf(seconds):
        raise SoacheckError("--time must be a duration such as 10s, not dc")
    SAMPLES.check(samples, "--samples")
    path = battery_sweep(ramp, start, stop, at=at, ramp_s=seconds, samples=samples)
    run = run_stage(loaded, path.time_s, path.source_v, path.total_a, breakdown=chosen)
    return StageRunResult(run, path.label, {}, chosen)


def sharing(
    stage: StageLike,
    *,
    current: float,
    voltage: float,
    draws: int = 10000,
    percentile: float = 99.0,
    seed: int = 0,
    breakdown: BreakdownDerating = "auto",
    policy: PolicyLike = None,
    library: Library = None,
    progress: Callable[[int, int], None] | None = None,
) -> SharingResult:
    """How unevenly the devices share: the worst device's share over random V_BE spreads (``soacheck sharing``).

    Parameters
    ----------
    stage
        The stage or its file.
    current
        Total current. [A]
    voltage
        Source voltage at the load's input. [V]
    draws
        Monte Carlo draws of the V_BE offsets, uniform in the stage's spread band.
    percentile
        Percentile of the worst device's share to report, in (0, 100].
    seed
        Random seed: the same seed gives the same answer.
    breakdown
        Second-breakdown derating of each device's DC SOA: ``auto``, ``thermal`` or ``none``.
    policy
        Design margins: the worst device's current is judged against the policy's current
        fraction of ``i_max`` (see :func:`check` for the forms accepted).
    progress
        Called with ``(draws done, draws)`` after each batch.

    Returns
    -------
    SharingResult
        ``verdict`` ``fail`` when any draw runs away thermally (no stable state, neither shared
        nor with one device taking the current: ``limit`` ``runaway``, ``margin`` −inf, null in the
        JSON, since there is no current to measure), or when any device of any draw is outside its
        DC SOA at its own case temperature or above the policy's fraction of i_max (``limit``
        and ``device`` name it, ``margin`` is its), or has its junction past tj_max (under a
        policy, its ceiling; with every current inside, ``limit`` names the junction limit and
        ``margin`` stays the current's, 0 or more);
        ``hogging_fraction``, the draws in which one device takes the current, and
        ``stage_gain_peak``, as the other stage jobs report it. The shares (``worst_share``,
        ``mean_worst_share``, ``worst_device_current``) are over the draws that settle: a draw that
        runs away has no settled share (NaN, null in the JSON, where no draw settles).
    """
    chosen = _breakdown(breakdown)
    CURRENT.check(current, "--current")
    VOLTAGE.check(voltage, "--voltage")
    DRAWS.check(draws, "--draws")
    PERCENTILE.check(percentile, "--percentile")
    SEED.check(seed, "--seed")
    loaded = _stage_under(load_stage(stage, library=library), policy)
    spread = sharing_monte_carlo(
        loaded, current, voltage, draws=draws, percentile=percentile, seed=seed, breakdown=chosen, progress=progress
    )
    return SharingResult(loaded, loaded.name, float(current), float(voltage), seed, spread, chosen)


@dataclass(frozen=True, eq=False, repr=False)
class StageRunResult(CheckedResult):
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

    _checked = "run"

    run: StageRun
    test: str
    extra: dict[str, Any] = field(default_factory=dict)
    breakdown: BreakdownDerating = "auto"
    setpoint_unit: str = ""

    @property
    def limit(self) -> str | None:
        return self.run.summary()["limit"] or super().limit  # type: ignore[return-value]

    @property
    def max_safe_setpoint(self) -> float | None:
        """The most demanding safe setpoint, when it was searched for (``find_max``). [A, W or Ω]"""
        return self.extra.get("max_safe_setpoint")

    def to_dict(self) -> dict[str, Any]:
        return jsonable({"test": self.test, **self.run.summary(), **self.extra, "assumptions": list(self.assumptions)})

    def to_frame(self) -> pd.DataFrame:
        """One row per device and sample (long format): time [s], device (from 1, as Q1), source_voltage [V],
        total_current [A], voltage [V] and current [A] of the device, device_power [W], case_temp, tj,
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
                "device_power": run.device_w.ravel(),
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
        title = f"{self.test}: {device_name(d + 1)} (worst)"
        return _trajectory_on_soa(
            ax, run.stage.part, run.device_v[d], run.device_a[d], run.time_s, temps, self.breakdown, title
        )


@dataclass(frozen=True, eq=False, repr=False)
class SharingResult(Result):
    """How unevenly the devices of a stage share a current, over random V_BE offsets (``sharing``).

    Each draw is settled as every stage job settles its points: where its shared state cannot
    hold (``stage_gain_peak`` 1 or more), the stable state with one device taking the current
    is taken (``hogging_fraction`` counts those draws); a draw with no stable state runs away.
    The verdict fails when any draw runs away (``runaway_fraction`` above 0); ``limit`` is then
    ``runaway``, and ``margin`` and ``margin_to_rating`` are −inf (null in the JSON): a set with no
    stable state has no current to measure a margin on. It fails too when any device of any draw that settles is
    outside its DC SOA derated at its own case temperature, past its junction limit, or above
    the policy's fraction of i_max, or could not be evaluated (see
    :func:`~soacheck.sharing_spread.judge_draws`): ``margin`` (also in the JSON) is then the least
    such margin, ``limit`` and ``device`` that device's. Where every current is inside and a
    junction is past its limit, ``margin`` and ``device`` stay the least margin's, the current's
    (0 or more), and ``limit`` names the junction limit, as a stage run does. Otherwise the
    margin is the worst device's current against its continuous rating at the percentile reported.
    ``breakdown`` is the second-breakdown derating the devices were judged with.
    """

    stage: Stage
    stage_label: str
    current_a: float
    voltage_v: float
    seed: int
    spread: SharingSpread
    breakdown: BreakdownDerating = "auto"

    @property
    def passed(self) -> bool:
        return not self.spread.runaway_fraction and not self.spread.outside

    @property
    def margin(self) -> float:
        return self._margins()["margin"]  # type: ignore[return-value]

    @property
    def limit(self) -> str | None:
        if self.spread.runaway_fraction:
            return "runaway"
        return self.spread.device_limit if self.spread.outside else "current"

    @property
    def device(self) -> int | None:
        """The device outside where the margin is least (numbered from 1), None where no device of a settled draw is."""
        return self.spread.device if self.spread.outside and not self.spread.runaway_fraction else None

    def _margins(self) -> dict[str, object]:
        """``margin``, ``margin_to_rating``, ``policy``: the worst share's; the least device's where one is outside;
        none (−inf, null in the JSON) where a draw runs away: a set with no stable state has no current to measure."""
        s = self.spread
        found = sharing_margins(self.stage.part, s.worst_share * self.current_a)
        if s.runaway_fraction:
            found.update(margin=-math.inf, margin_to_rating=-math.inf)
        elif s.outside:
            found.update(margin=s.device_margin, margin_to_rating=s.device_margin_to_rating)
        return found

    @property
    def assumptions(self) -> tuple[str, ...]:
        return (
            f"V_BE offsets uniform in a band of {self.stage.vbe_spread_v * 1e3:g} mV, {self.spread.draws} draws, "
            f"seed {self.seed}",
            "each draw at its electro-thermal steady state; junctions at the heatsink (or case) plus "
            "P·(rth_jc + R_cs), the heatsink at its steady state under the devices' total power",
            "each device judged against its DC SOA at its own case temperature; "
            + breakdown_note(self.stage.part, self.breakdown),
            *(() if self.stage.sharing_assumption is None else (self.stage.sharing_assumption,)),
            *(
                ()
                if not self.spread.hogging_fraction
                else (
                    f"in {self.spread.hogging_fraction:.1%} of draws the shared state is unstable (the whole set's "
                    "electro-thermal Jacobian has an eigenvalue ≥ 1): the state in which the device of the lowest "
                    "V_BE takes the current is reported",
                )
            ),
        )

    def to_dict(self) -> dict[str, Any]:
        s = self.spread
        return jsonable(
            {
                "stage": self.stage_label,
                "count": self.stage.count,
                "verdict": self.verdict,
                "limit": self.limit,
                "device": self.device,
                "equal_share": s.equal_share,
                "worst_share": s.worst_share,
                "percentile": s.percentile,
                "mean_worst_share": s.mean_share,
                "worst_device_current": s.worst_share * self.current_a,
                "runaway_fraction": s.runaway_fraction,
                "hogging_fraction": s.hogging_fraction,
                "stage_gain_peak": s.stage_gain_peak,
                "tj_peak": s.tj_peak_c,
                "case_peak": s.case_peak_c,
                "draws": s.draws,
                "seed": self.seed,
                **self._margins(),
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
