"""The public API: every job of the ``soacheck`` command, as a function that returns a result.

Each function here is what one command does, without the printing: the command parses
its options, calls the function and prints ``result.to_dict()`` (``--json``) or a table.
Nothing here prints, exits or writes a file unless asked (``out=``, ``export``).

Arguments use the names of the command line and the files (``case_temp`` in °C,
``pulse`` as ``"dc"``, ``"1ms"`` or seconds, ``duty`` as a fraction); a part is a
:class:`~soacheck.parts.Part`, a part id or a part folder; a stage is a
:class:`~soacheck.stage.Stage` or a stage file. Every problem a user can fix raises
:class:`~soacheck.errors.SoacheckError` with the line the command prints.
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Callable, Iterator, Sequence
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal, TypeAlias, overload

import numpy as np
import numpy.typing as npt

from soacheck.battery import MODES, Mode, SweepKind, Trajectory
from soacheck.battery import discharge as battery_discharge
from soacheck.battery import sweep as battery_sweep
from soacheck.boundary import allowed_current as boundary_allowed_current
from soacheck.compare import TrajectoryJob
from soacheck.compare import compare as compare_parts
from soacheck.derating import BreakdownDerating
from soacheck.envelope import Envelope, check_envelope, largest_safe_envelope
from soacheck.errors import SoacheckError, choose
from soacheck.files import check_output, iter_trace, iter_trace_frame, read_toml, read_trace
from soacheck.jobfiles import battery_from, discharge_from_table, read_envelope, read_points
from soacheck.library import find_part, find_part_folder, library_folders, list_parts, read_stage
from soacheck.limit_table import limit_table
from soacheck.lint import lint_part
from soacheck.partfiles import PART_FILE, read_part
from soacheck.parts import Part
from soacheck.plan import read_plan
from soacheck.points import check_points
from soacheck.policy import Policy, resolve_policy
from soacheck.quantities import (
    CAPACITY,
    CELL_COUNT,
    CHUNK_ROWS,
    CURRENT,
    DRAWS,
    DUTY,
    IDLE_CURRENT,
    PERCENTILE,
    POWER,
    RESISTANCE,
    SAMPLES,
    SEED,
    SETPOINT,
    TEMPERATURE,
    VOLTAGE,
    Quantity,
)
from soacheck.results import (
    CheckResult,
    CompareResult,
    EnvelopeResult,
    LintResult,
    PlanResult,
    SafeEnvelopeResult,
    SharingResult,
    StageRunResult,
    TraceCheckResult,
    refuse_report_folder,
)
from soacheck.search import max_safe_setpoint
from soacheck.sharing import sharing_monte_carlo
from soacheck.stage import Cooling, Stage
from soacheck.stage_run import StageRun, passes_at, run_stage
from soacheck.trace import TraceChecker
from soacheck.units import parse_duration

if TYPE_CHECKING:
    import pandas as pd

PathLike: TypeAlias = str | Path
"""A file or folder path."""
Library: TypeAlias = PathLike | Sequence[PathLike] | None
"""Folders of user part folders, searched before ``SOACHECK_LIBRARY`` and the bundled parts."""
PartLike: TypeAlias = Part | str | Path
"""A part, a part id in the libraries, or the path of a part folder."""
StageLike: TypeAlias = Stage | str | Path
"""A stage, or the path of a stage file (TOML)."""
Pulse: TypeAlias = str | float
"""``"dc"``, a width with a unit such as ``"1ms"``, or a width in seconds (``math.inf`` for DC)."""
ArrayLike: TypeAlias = npt.ArrayLike
TraceData: TypeAlias = "PathLike | pd.DataFrame | tuple[ArrayLike, ArrayLike, ArrayLike]"
"""A trace file (CSV, or Parquet with pyarrow), a DataFrame with columns ``time,voltage,current``
(s, V, A), or a tuple of three equal-length arrays (time, voltage, current)."""
Ramp: TypeAlias = SweepKind
PolicyLike: TypeAlias = "Policy | str | Path | None"
"""A design-margin policy, a preset name (``"none"``, ``"bench"``) or the path of a policy file (TOML)."""
DEFAULT_ENVELOPE_VOLTAGES = 25
"""Source voltages of the largest safe envelope when none are given: log-spaced from 1 V to v_max."""

__all__ = [
    "DEFAULT_ENVELOPE_VOLTAGES",
    "allowed_current",
    "check",
    "compare",
    "default_voltages",
    "discharge",
    "envelope",
    "load_part",
    "lint",
    "load_stage",
    "parts",
    "run_plan",
    "sharing",
    "sweep",
    "trace",
]


# --------------------------------------------------------------------------- parts and stages


def _folders(library: Library) -> list[Path]:
    if library is None:
        extra: list[PathLike] = []
    elif isinstance(library, str | Path):
        extra = [library]
    else:
        extra = list(library)
    return library_folders(extra)


def load_part(part: PartLike, *, library: Library = None) -> Part:
    """Load a part by id or by the path of its folder.

    Parameters
    ----------
    part
        A part id, searched in ``library``, then ``SOACHECK_LIBRARY``, then the bundled demo
        parts; or the path of a folder holding ``part.toml`` and ``soa.csv``. A
        :class:`Part` is returned as it is.
    library
        A folder of part folders, or several; searched first, in order.

    Returns
    -------
    Part
        The part, its curves sorted shortest pulse first, DC last.

    Raises
    ------
    SoacheckError
        An unknown id (naming the nearest ids), a folder without ``part.toml``, or a
        malformed part file (naming the file, row and fix).
    """
    if isinstance(part, Part):
        return part
    return find_part(str(part), _folders(library))


def parts(*, library: Library = None) -> pd.DataFrame:
    """Every part in the libraries (the first of each id), sorted by id.

    Parameters
    ----------
    library
        Folders of user part folders, searched before ``SOACHECK_LIBRARY`` and the bundled parts.

    Returns
    -------
    pandas.DataFrame
        One row per part: ``id``, ``kind``, ``v_max`` [V], ``i_max`` [A], ``p_max`` [W],
        ``tj_max`` [°C], ``rth_jc`` [K/W], ``curves`` (list of pulse labels, DC last),
        ``description``, ``folder``. ``soacheck parts --json`` prints
        ``{"parts": frame.to_dict(orient="records")}``.
    """
    import pandas as pd

    loaded = [read_part(entry.folder) for entry in list_parts(_folders(library))]
    columns = ["id", "kind", "v_max", "i_max", "p_max", "tj_max", "rth_jc", "curves", "description", "folder"]
    return pd.DataFrame(
        [
            {
                "id": p.id,
                "kind": p.kind,
                "v_max": p.ratings.v_max_v,
                "i_max": p.ratings.i_max_a,
                "p_max": p.ratings.p_max_w,
                "tj_max": p.ratings.tj_max_c,
                "rth_jc": p.ratings.rth_jc_k_per_w,
                "curves": [c.label for c in p.curves],
                "description": p.description,
                "folder": str(p.folder),
            }
            for p in loaded
        ],
        columns=columns,
    )


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


# --------------------------------------------------------------------------- options


def _pulse_s(pulse: Pulse, where: str = "--pulse") -> float:
    if isinstance(pulse, str):
        return parse_duration(pulse, where=where)
    value = float(pulse)
    if not value > 0:
        raise SoacheckError(f"{where}: {value:g} s must be longer than zero; give 'dc' or a width such as '1ms'")
    return value


def _duty(duty: float | None, pulse_s: float) -> float:
    """The duty cycle: 0 (a single pulse) when None."""
    if duty is None:
        return 0.0
    DUTY.check(duty, "--duty")
    if math.isinf(pulse_s):
        raise SoacheckError("--duty needs a pulse width: add --pulse, such as --pulse 3ms --duty 0.1")
    return float(duty)


def _check_all(quantity: Quantity, values: ArrayLike, where: str) -> None:
    """Every value of a number or an array in the quantity's range, or the command's one-line error."""
    if np.ndim(values) == 0 and not isinstance(values, np.ndarray):
        quantity.check(values, where)
    else:
        quantity.check_array(np.ravel(np.asarray(values, dtype=float)), lambda k: where)


def _under(part: Part, policy: PolicyLike) -> Part:
    """The part judged under ``policy``; None leaves the part as it is."""
    return part if policy is None else part.under(resolve_policy(policy))


def _stage_under(stage: Stage, policy: PolicyLike) -> Stage:
    """The stage with its part judged under ``policy`` (in place of the stage file's); None leaves it."""
    return stage if policy is None else stage.with_part(stage.part.rated.under(resolve_policy(policy)))


def _breakdown(breakdown: str) -> BreakdownDerating:
    return choose(breakdown, ("auto", "thermal", "none"), "--breakdown-derating")  # type: ignore[return-value]


def default_voltages(v_max_v: float) -> np.ndarray:
    """The source voltages of a largest safe envelope when none are given.

    Parameters
    ----------
    v_max_v
        The part's voltage rating. [V]

    Returns
    -------
    numpy.ndarray
        :data:`DEFAULT_ENVELOPE_VOLTAGES` voltages log-spaced from 1 V to ``v_max_v``, shape ``(25,)``. [V]
    """
    return np.geomspace(1.0, v_max_v, DEFAULT_ENVELOPE_VOLTAGES)


# --------------------------------------------------------------------------- operating points


@overload
def allowed_current(
    part: PartLike,
    voltage: float,
    *,
    case_temp: float = ...,
    pulse: Pulse = ...,
    duty: float | None = ...,
    breakdown: BreakdownDerating = ...,
    policy: PolicyLike = ...,
    library: Library = ...,
) -> float: ...
@overload
def allowed_current(
    part: PartLike,
    voltage: ArrayLike,
    *,
    case_temp: ArrayLike = ...,
    pulse: Pulse = ...,
    duty: float | None = ...,
    breakdown: BreakdownDerating = ...,
    policy: PolicyLike = ...,
    library: Library = ...,
) -> float | np.ndarray: ...
def allowed_current(
    part: PartLike,
    voltage: ArrayLike,
    *,
    case_temp: ArrayLike = 25.0,
    pulse: Pulse = "dc",
    duty: float | None = None,
    breakdown: BreakdownDerating = "auto",
    policy: PolicyLike = None,
    library: Library = None,
) -> float | np.ndarray:
    """The highest current a part may carry at each voltage: its SOA derated at the case temperature.

    Parameters
    ----------
    part
        The part, its id or its folder.
    voltage
        Voltage across the device, any shape. [V]
    case_temp
        Case temperature, broadcast against ``voltage``. [°C]
    pulse
        ``"dc"``, or the width of a single pulse (``duty`` None) or of a pulse train.
    duty
        Duty cycle tp/T of a pulse train in (0, 1]; None for DC or a single pulse. [1]
    breakdown
        How second breakdown (or a FET's linear-mode instability) derates: ``auto`` (the
        part's table, else like the constant-power limit), ``thermal``, ``none``.
    policy
        Design margins to judge against: a :class:`~soacheck.policy.Policy`, a preset name
        (``"none"``, ``"bench"``) or a policy file; None: the stage file's own ``[policy]``,
        else the absolute ratings. Verdict and ``margin`` are then the policy's and
        ``margin_to_rating`` is the margin to the absolute ratings.
    library
        Folders of user part folders, for a part given by id.

    Returns
    -------
    float or numpy.ndarray
        The allowed current [A]: a float for scalar inputs, otherwise an array of the
        broadcast shape of ``voltage`` and ``case_temp``. 0 above ``v_max`` or with the case
        at or above ``tj_max``; NaN where the point cannot be evaluated (a voltage not
        above zero, a non-finite case temperature).

    Notes
    -----
    Below the lowest digitized voltage the first segment extends, capped by the rated
    current; a pulse width between two digitized curves takes the longer one (without a
    thermal model). See :func:`check` for the limit and the margin of each point.
    """
    loaded = _under(load_part(part, library=library), policy)
    pulse_s = _pulse_s(pulse)
    shape = np.broadcast_shapes(np.shape(voltage), np.shape(case_temp))
    found = boundary_allowed_current(
        np.asarray(voltage, dtype=float),
        loaded,
        tc_c=np.asarray(case_temp, dtype=float),
        pulse_s=pulse_s,
        duty=_duty(duty, pulse_s),
        breakdown=_breakdown(breakdown),
    )
    current = found.current_a.reshape(shape)
    return float(current) if current.ndim == 0 else current


def check(
    part: PartLike,
    voltage: ArrayLike | None = None,
    current: ArrayLike | None = None,
    *,
    points: PathLike | pd.DataFrame | None = None,
    case_temp: ArrayLike = 25.0,
    pulse: Pulse = "dc",
    duty: float | None = None,
    idle_current: ArrayLike = 0.0,
    breakdown: BreakdownDerating = "auto",
    policy: PolicyLike = None,
    library: Library = None,
) -> CheckResult:
    """Check operating points against a part's SOA derated at their case temperature (``soacheck check``).

    Parameters
    ----------
    part
        The part, its id or its folder.
    voltage, current
        Operating points, broadcast together, any shape (flattened to ``(n,)``). [V], [A]
    points
        Instead of ``voltage`` and ``current``: a CSV file or a DataFrame with columns
        ``voltage,current`` and optional ``case_temp`` [°C], ``pulse`` (``dc``, ``1ms`` ...) and
        ``duty``; where a column is absent the keyword below applies.
    case_temp
        Case temperature of the points, broadcast. [°C]
    pulse, duty
        ``"dc"``, or a pulse width; ``duty`` in (0, 1] for a pulse train, None for a single pulse.
    idle_current
        Current standing between pulses at the same voltage, broadcast; 0 for none. With a
        thermal model the junction peak is the exact periodic steady state by superposition;
        without one such a pulse is judged as DC. [A]
    breakdown
        Second-breakdown derating: ``auto``, ``thermal`` or ``none``.
    policy
        Design margins to judge against: a :class:`~soacheck.policy.Policy`, a preset name
        (``"none"``, ``"bench"``) or a policy file; None: the stage file's own ``[policy]``,
        else the absolute ratings. Verdict and ``margin`` are then the policy's and
        ``margin_to_rating`` is the margin to the absolute ratings.
    library
        Folders of user part folders, for a part given by id.

    Returns
    -------
    CheckResult
        ``verdict`` ``pass`` when every point is inside (a point on the boundary is inside);
        ``to_frame()`` one row per point with ``allowed_current``, ``margin`` and ``limit``.

    Raises
    ------
    SoacheckError
        Points given both ways or neither; a voltage or current not above zero; an unknown
        part; a malformed points file (naming the row).
    """
    chosen = _breakdown(breakdown)
    pulse_s = _pulse_s(pulse)
    duty_value = _duty(duty, pulse_s)
    _check_all(TEMPERATURE, case_temp, "--case-temp")
    _check_all(IDLE_CURRENT, idle_current, "--idle-current")
    if points is not None:
        if voltage is not None or current is not None:
            raise SoacheckError("give either --points FILE or --voltage and --current, not both")
        frame = _points_frame(points)
        v, i = frame["voltage"].to_numpy(), frame["current"].to_numpy()
        tc = frame["case_temp"].to_numpy() if "case_temp" in frame else np.asarray(case_temp, dtype=float)
        tp = frame["pulse_s"].to_numpy() if "pulse_s" in frame else pulse_s
        d = frame["duty"].to_numpy() if "duty" in frame else duty_value
        idle = frame["idle_current"].to_numpy() if "idle_current" in frame else np.asarray(idle_current, dtype=float)
    else:
        if voltage is None or current is None:
            raise SoacheckError("give --voltage and --current (in V and A), or --points FILE")
        _check_all(VOLTAGE, voltage, "--voltage")
        _check_all(CURRENT, current, "--current")
        v, i, tc, tp, d = voltage, current, np.asarray(case_temp, dtype=float), pulse_s, duty_value
        idle = np.asarray(idle_current, dtype=float)
    if points is not None and "idle_current" in frame:
        IDLE_CURRENT.check_array(np.ravel(idle), lambda k: f"points row {k + 1}: idle_current")
    loaded = _under(load_part(part, library=library), policy)
    result = check_points(v, i, loaded, tc_c=tc, pulse_s=tp, duty=d, idle_current_a=idle, breakdown=chosen)
    return CheckResult(loaded, result, chosen)


def _points_frame(points: PathLike | pd.DataFrame) -> pd.DataFrame:
    if isinstance(points, str | Path):
        return read_points(points).frame
    frame = points.copy()
    for name in ("voltage", "current"):
        if name not in frame:
            raise SoacheckError(f"points: missing column '{name}'; points have the columns voltage,current")
        bad = np.flatnonzero(~(np.isfinite(frame[name].to_numpy(dtype=float)) & (frame[name].to_numpy() > 0)))
        if bad.size:
            raise SoacheckError(f"points row {int(bad[0]) + 1}: {name} must be a number above zero")
    if "pulse" in frame:
        frame["pulse_s"] = [_pulse_s(p, where=f"points row {k + 1}: pulse") for k, p in enumerate(frame["pulse"])]
    return frame


# --------------------------------------------------------------------------- traces


def _trace_chunks(data: TraceData, chunk_rows: int) -> tuple[str, Iterator[tuple[Any, Any, Any, int]]]:
    import pandas as pd

    if isinstance(data, str | Path):
        return Path(data).name, iter_trace(data, chunk_rows=chunk_rows)
    if isinstance(data, pd.DataFrame):
        frame = data
    else:
        t, v, i = (np.ravel(np.asarray(a, dtype=float)) for a in data)
        if not (t.size == v.size == i.size):
            raise SoacheckError(f"trace: time, voltage and current differ in length ({t.size}, {v.size}, {i.size})")
        frame = pd.DataFrame({"time": t, "voltage": v, "current": i})
    return "trace", iter_trace_frame(frame, where="trace", chunk_rows=chunk_rows)


def trace(
    part: PartLike | Stage,
    data: TraceData,
    *,
    case_temp: float | None = None,
    cooling: Cooling | None = None,
    breakdown: BreakdownDerating = "auto",
    policy: PolicyLike = None,
    chunk_rows: int = 1_000_000,
    library: Library = None,
    progress: Callable[[int], None] | None = None,
) -> TraceCheckResult:
    """Check a V–I waveform sample by sample: the SOA at the case temperature, pulses, and Tj (``soacheck trace``).

    Parameters
    ----------
    part
        The part (its id or folder), or a stage whose part and surroundings (its heatsink or
        its fixed case temperature) apply.
    data
        A trace file (CSV, or Parquet with pyarrow), a DataFrame with columns
        ``time,voltage,current``, or a tuple of arrays ``(time, voltage, current)``, each
        shape ``(m,)``. [s], [V], [A] Times must rise strictly; voltage and current must be
        finite and not negative.
    case_temp
        A fixed case temperature. [°C] 25 °C when neither this nor ``cooling`` is given.
    cooling
        A heatsink instead: the case then follows the part, interface and heatsink network.
    breakdown
        Second-breakdown derating: ``auto``, ``thermal`` or ``none``.
    policy
        Design margins to judge against: a :class:`~soacheck.policy.Policy`, a preset name
        (``"none"``, ``"bench"``) or a policy file; None: the stage file's own ``[policy]``,
        else the absolute ratings. Verdict and ``margin`` are then the policy's and
        ``margin_to_rating`` is the margin to the absolute ratings.
    chunk_rows
        Samples read and checked at a time; the answer does not depend on it.
    progress
        Called with the number of samples checked so far after each chunk.

    Returns
    -------
    TraceCheckResult
        Peaks, first violation and its ``limit``, least ``margin``, time outside, excursions;
        ``to_frame()`` a thinned copy of the waveform (about 20 000 rows).

    Raises
    ------
    SoacheckError
        A malformed trace (naming the data row), both a case temperature and a heatsink, a
        heatsink on a part without a thermal model.
    """
    chosen = _breakdown(breakdown)
    if case_temp is not None:
        TEMPERATURE.check(case_temp, "--case-temp")
    CHUNK_ROWS.check(chunk_rows, "--chunk-rows")
    if isinstance(part, Stage):
        loaded = part.part if policy is None else part.part.rated.under(resolve_policy(policy))
        if case_temp is None and cooling is None:
            cooling, case_temp = part.cooling, part.case_temp_c
    else:
        loaded = _under(load_part(part, library=library), policy)
    if cooling is not None and case_temp is not None:
        raise SoacheckError("give either --case-temp or a heatsink, not both")
    checker = TraceChecker(
        loaded, tc_c=None if cooling else (25.0 if case_temp is None else case_temp), cooling=cooling, breakdown=chosen
    )
    name, chunks = _trace_chunks(data, chunk_rows)
    done = 0
    with contextlib.closing(chunks):  # type: ignore[type-var]
        for t, v, i, first_row in chunks:
            try:
                checker.feed(t, v, i)
            except SoacheckError as err:
                where = data if isinstance(data, str | Path) else name
                raise SoacheckError(f"{where} near data row {first_row + 1}: {err}") from None
            done += t.size
            if progress is not None:
                progress(done)
    return TraceCheckResult(loaded, checker.result(), chosen)


# --------------------------------------------------------------------------- a stage along a trajectory


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

    def run_at(value: float) -> StageRun:
        path = battery_discharge(pack, mode, value, cutoff_v=cutoff, samples=samples)
        run = run_stage(loaded, path.time_s, path.source_v, path.total_a, breakdown=chosen)
        return replace(run, assumptions=run.assumptions + path.notes)

    run = run_at(setpoint)
    label = battery_discharge(pack, mode, setpoint, cutoff_v=cutoff, samples=10).label
    extra: dict[str, Any] = {}
    if find_max:
        extra["max_safe_setpoint"] = max_safe_setpoint(passes_at(run_at), setpoint, mode)
        extra["max_setpoint_at_rating"] = extra["max_safe_setpoint"]
        if loaded.part.policy is not None:  # the same search against the absolute ratings, beside it
            rated = loaded.with_part(loaded.part.rated)

            def rated_run_at(value: float) -> StageRun:
                path = battery_discharge(pack, mode, value, cutoff_v=cutoff, samples=samples)
                return run_stage(rated, path.time_s, path.source_v, path.total_a, breakdown=chosen)

            extra["max_setpoint_at_rating"] = max_safe_setpoint(passes_at(rated_run_at), setpoint, mode)
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
    policy
        Design margins: the worst device's current is judged against the policy's current
        fraction of ``i_max`` (see :func:`check` for the forms accepted).
    progress
        Called with ``(draws done, draws)`` after each batch.

    Returns
    -------
    SharingResult
        ``verdict`` ``fail`` when any draw runs away thermally.
    """
    CURRENT.check(current, "--current")
    VOLTAGE.check(voltage, "--voltage")
    DRAWS.check(draws, "--draws")
    PERCENTILE.check(percentile, "--percentile")
    SEED.check(seed, "--seed")
    loaded = _stage_under(load_stage(stage, library=library), policy)
    spread = sharing_monte_carlo(
        loaded, current, voltage, draws=draws, percentile=percentile, seed=seed, progress=progress
    )
    return SharingResult(loaded, loaded.name, float(current), float(voltage), seed, spread)


# --------------------------------------------------------------------------- envelopes and comparisons


@overload
def envelope(
    stage: StageLike,
    check: None = ...,
    *,
    case_temp: float | None = ...,
    voltages: ArrayLike | None = ...,
    pulse: Pulse = ...,
    duty: float | None = ...,
    idle_current: float = ...,
    breakdown: BreakdownDerating = ...,
    policy: PolicyLike = ...,
    library: Library = ...,
    progress: Callable[[int, int], None] | None = ...,
) -> SafeEnvelopeResult: ...
@overload
def envelope(
    stage: StageLike,
    check: Envelope | PathLike,
    *,
    case_temp: float | None = ...,
    voltages: ArrayLike | None = ...,
    pulse: Pulse = ...,
    duty: float | None = ...,
    idle_current: float = ...,
    breakdown: BreakdownDerating = ...,
    policy: PolicyLike = ...,
    library: Library = ...,
    progress: Callable[[int, int], None] | None = ...,
) -> EnvelopeResult: ...
def envelope(
    stage: StageLike,
    check: Envelope | PathLike | None = None,
    *,
    case_temp: float | None = None,
    voltages: ArrayLike | None = None,
    pulse: Pulse = "dc",
    duty: float | None = None,
    idle_current: float = 0.0,
    breakdown: BreakdownDerating = "auto",
    policy: PolicyLike = None,
    library: Library = None,
    progress: Callable[[int, int], None] | None = None,
) -> EnvelopeResult | SafeEnvelopeResult:
    """What a stage can safely promise (``soacheck envelope``).

    With ``check``, whether the stage covers that envelope along its upper edge; without it,
    the largest safe envelope: the highest total current at each source voltage.

    Parameters
    ----------
    stage
        The stage or its file.
    check
        An :class:`Envelope` or an envelope file (TOML) to check the stage against.
    case_temp
        Hold the cases at this temperature instead of the stage's own cooling. [°C]
    voltages
        Source voltages of the largest safe envelope, above zero, shape ``(k,)``; sorted, each once. [V]
        :func:`default_voltages` (25 log-spaced from 1 V to v_max) when None.
    pulse, duty
        For the largest safe envelope: DC, or pulses of a width at a duty in (0, 1] (a single
        pulse when ``duty`` is None).
    idle_current
        For the largest safe envelope: total current standing between pulses, at the same
        source voltage (an envelope file gives its own ``idle_current``). [A]
    breakdown
        Second-breakdown derating: ``auto``, ``thermal`` or ``none``.
    policy
        Design margins to judge against: a :class:`~soacheck.policy.Policy`, a preset name
        (``"none"``, ``"bench"``) or a policy file; None: the stage file's own ``[policy]``,
        else the absolute ratings. Verdict and ``margin`` are then the policy's and
        ``margin_to_rating`` is the margin to the absolute ratings.
    progress
        Called with ``(bisection steps done, steps)`` while the largest safe envelope is searched.

    Returns
    -------
    EnvelopeResult or SafeEnvelopeResult
        The check, or the limit table: currents rounded down to 1 mA (``export`` writes it as
        CSV, JSON or a C header).
    """
    chosen = _breakdown(breakdown)
    loaded = _stage_under(load_stage(stage, library=library), policy)
    if case_temp is not None:
        loaded = replace(loaded, cooling=None, case_temp_c=TEMPERATURE.check(case_temp, "--case-temp"))
    if check is not None:
        env = check if isinstance(check, Envelope) else read_envelope(check)
        return EnvelopeResult(check_envelope(loaded, env, breakdown=chosen), chosen)
    pulse_s = _pulse_s(pulse)
    duty_value = 1.0 if math.isinf(pulse_s) else _duty(duty, pulse_s) if duty is not None else 0.0
    if voltages is None:
        grid = default_voltages(loaded.part.v_limit_v)
    else:
        grid = np.unique(np.asarray(voltages, dtype=float))
    safe = largest_safe_envelope(
        loaded,
        grid,
        pulse_s=pulse_s,
        duty=duty_value,
        idle_current_a=IDLE_CURRENT.check(idle_current, "--idle-current"),
        breakdown=chosen,
        progress=progress,
    )
    return SafeEnvelopeResult(limit_table(safe), safe)


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


def run_plan(
    path: PathLike,
    out: PathLike | None = None,
    *,
    force: bool = False,
    library: Library = None,
    progress: Callable[[int, int, str], None] | None = None,
) -> PlanResult:
    """Read a plan, check everything it names, run every job; write the report only when asked.

    Parameters
    ----------
    path
        The plan file (TOML): a stage and its jobs.
    out
        A folder to write report.html, report.json and the plots into; nothing is written
        when None. A folder holding an earlier soacheck report is replaced; any other
        existing folder only with ``force``.
    force
        Replace an existing ``out`` that is not a soacheck report.
    library
        Folders of user part folders.
    progress
        Called with ``(jobs done, jobs, name of the job)`` after each job.

    Returns
    -------
    PlanResult
        Every job's verdict, summary, assumptions and figures; ``to_dict()`` is report.json.

    Raises
    ------
    SoacheckError
        Anything wrong in the plan or the files it names, before any job runs; an ``out``
        that is not ours to replace.
    """
    plan = read_plan(Path(path), _folders(library))
    if out is not None:
        refuse_report_folder(Path(out), force)
        try:
            check_output(out, force=True, folder=True)
        except SoacheckError as err:
            raise SoacheckError(f"--out: {err}") from None
    from soacheck.runner import run_plan as run_plan_jobs  # matplotlib: only when a plan runs

    result = PlanResult(plan, tuple(run_plan_jobs(plan, progress=progress)))
    if out is not None:
        result.write_report(out, force=force)
    return result


def lint(part: str | Path, *, library: Library = None) -> LintResult:
    """Check a part folder for digitizing mistakes, each finding with its file, line and fix (``soacheck lint``).

    Parameters
    ----------
    part
        The path of a part folder, or a part id in the libraries.
    library
        Folders of user part folders, for a part given by id.

    Returns
    -------
    LintResult
        The findings, errors first; ``verdict`` ``fail`` when any is an error.

    Raises
    ------
    SoacheckError
        An unknown id or a folder without ``part.toml``; a malformed file is a finding, not an error.
    """
    folder = Path(part)
    if not (folder / PART_FILE).is_file():
        folder = find_part_folder(str(part), _folders(library))
    return LintResult(folder, tuple(lint_part(folder)))
