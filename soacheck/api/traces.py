"""A V–I waveform checked sample by sample: ``trace`` and its result."""

from __future__ import annotations

import contextlib
import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from soacheck.api.base import Result, _pd, _plots, _trajectory_on_soa
from soacheck.api.options import Library, PartLike, PolicyLike, TraceData, _breakdown, _under
from soacheck.api.points import load_part
from soacheck.derating import BreakdownDerating
from soacheck.errors import SoacheckError
from soacheck.jsonvalues import jsonable
from soacheck.parts import Part
from soacheck.policy import resolve_policy
from soacheck.quantities import CHUNK_ROWS, TEMPERATURE
from soacheck.stage import Cooling, Stage
from soacheck.thinning import judged_margins
from soacheck.trace import TraceChecker
from soacheck.trace_result import TraceResult
from soacheck.tracechunks import DEFAULT_CHUNK_ROWS
from soacheck.tracefiles import iter_trace, iter_trace_frame

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes


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
    chunk_rows: int = DEFAULT_CHUNK_ROWS,
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
        case_temp [°C], tj [°C] (with a thermal model), margin against the boundary that judged the
        sample (fraction: the DC boundary between excursions, inside an excursion its least margin
        against the pulse curve that judged it, as the plot draws it), and dc_margin against the DC
        boundary alone (fraction)."""
        data = dict(self.trace.plot)
        if "margin" in data:
            dc_margin = data.pop("margin")
            data["margin"] = judged_margins(data["time"], dc_margin, self.trace.excursion_spans)
            data["dc_margin"] = dc_margin
        return _pd().DataFrame(data)

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
