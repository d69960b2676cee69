"""What a stage can safely promise: ``envelope``, its check or its largest safe envelope, and the
limit-table export.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any, overload

import numpy as np

from soacheck.api.base import CheckedResult, Result, _pd, _plots
from soacheck.api.options import (
    ArrayLike,
    Library,
    PathLike,
    PolicyLike,
    Pulse,
    StageLike,
    _breakdown,
    _duty,
    _pulse_s,
    _stage_under,
)
from soacheck.api.stages import load_stage
from soacheck.derating import BreakdownDerating
from soacheck.envelope import Envelope, EnvelopeCheck, SafeEnvelope, check_envelope, largest_safe_envelope
from soacheck.jobfiles import read_envelope
from soacheck.jsonvalues import jsonable
from soacheck.limit_table import LimitTable, export_writer, limit_table
from soacheck.quantities import IDLE_CURRENT, TEMPERATURE

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes


DEFAULT_ENVELOPE_VOLTAGES = 25
"""Source voltages of the largest safe envelope when none are given: log-spaced from 1 V to v_max."""


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


@dataclass(frozen=True, eq=False, repr=False)
class EnvelopeResult(CheckedResult):
    """A stage checked along an envelope's upper edge, every device (``envelope --check``).

    Attributes
    ----------
    check
        Per device and edge point, arrays ``(devices, points)``; ``outside`` lists the stretches
        of source voltage not covered.
    breakdown
        The second-breakdown derating used, for the plot.
    """

    _checked = "check"

    check: EnvelopeCheck
    breakdown: BreakdownDerating = "auto"

    @property
    def envelope(self) -> Envelope:
        return self.check.envelope

    @property
    def limit(self) -> str | None:
        """What bounds the current where the margin is least; for a check failing with every current inside
        its boundary, the junction limit passed (``tj_max`` or ``tj_ceiling``), as the JSON's ``limit``."""
        return self.check.failed_limit

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
        """Without ``ax``: one panel per device (the four that fail first, then by least margin); the first
        device's axes is returned. With ``ax``: that device's panel only."""
        plots = _plots()
        if ax is None:
            return plots.plot_envelope_check(self.check, breakdown=self.breakdown).axes[0]
        first = int(plots.envelope_devices(self.check)[0])
        plots.envelope_device_panel(ax, self.check, first, breakdown=self.breakdown)
        ax.legend(fontsize=7, loc="lower left")
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
        from soacheck.outputs import check_output

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
