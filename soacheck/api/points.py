"""Parts and operating points: ``load_part``, ``allowed_current`` and ``check`` with its result."""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, overload

import numpy as np

from soacheck.api.base import CheckedResult, _plots
from soacheck.api.libraries import _folders
from soacheck.api.options import (
    ArrayLike,
    Library,
    PartLike,
    PathLike,
    PolicyLike,
    Pulse,
    _breakdown,
    _check_all,
    _duty,
    _pulse_s,
    _under,
)
from soacheck.boundary import allowed_current as boundary_allowed_current
from soacheck.derating import BreakdownDerating
from soacheck.errors import SoacheckError
from soacheck.jobfiles import parse_each_once, read_points
from soacheck.jsonvalues import Columns, json_bytes, json_chunks, jsonable
from soacheck.library import find_part
from soacheck.parts import Part
from soacheck.points import PointCheck, check_points
from soacheck.policy import least_margin, policy_of
from soacheck.quantities import CURRENT, IDLE_CURRENT, TEMPERATURE, VOLTAGE

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes


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


@overload
def allowed_current(
    part: PartLike,
    voltage: float,
    *,
    case_temp: float = ...,
    pulse: Pulse = ...,
    duty: float | None = ...,
    idle_current: float = ...,
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
    idle_current: ArrayLike = ...,
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
    idle_current: ArrayLike = 0.0,
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
    idle_current
        Current standing between the pulses, at the same voltage, broadcast against
        ``voltage``; 0 for none (``check --idle-current``). Ignored for DC and a duty of 1. [A]
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
        The allowed pulse current [A]: a float for scalar inputs, otherwise an array of the
        broadcast shape of ``voltage``, ``case_temp`` and ``idle_current``. 0 above ``v_max``,
        with the case at or above ``tj_max``, or where the standing current alone lies outside
        the DC boundary; NaN where the point cannot be evaluated (a voltage not above zero, a
        non-finite case temperature, a negative or non-finite standing current).

    Notes
    -----
    Below the lowest digitized voltage the first segment extends, capped by the rated
    current; a pulse width between two digitized curves takes the longer one (without a
    thermal model). See :func:`check` for the limit and the margin of each point.

    With a standing current I_idle and the part's thermal model the junction peaks at
    Tj = Tc + P_idle·Rth + (P − P_idle)·Zth(tp, D), P_idle = V·I_idle (superposition in
    the linear thermal network; the Foster form: JEDEC JESD51-14), and the constant-power
    limit is the largest P with Tj ≤ tj_max; second-breakdown and instability lines are
    derated at the junction temperature where each pulse starts. Without a thermal model a
    pulse on a standing current is judged as DC (conservative).
    """
    loaded = _under(load_part(part, library=library), policy)
    pulse_s = _pulse_s(pulse)
    shape = np.broadcast_shapes(np.shape(voltage), np.shape(case_temp), np.shape(idle_current))
    found = boundary_allowed_current(
        np.asarray(voltage, dtype=float),
        loaded,
        tc_c=np.asarray(case_temp, dtype=float),
        pulse_s=pulse_s,
        duty=_duty(duty, pulse_s),
        idle_current_a=np.asarray(idle_current, dtype=float),
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
    v: Any  # an array from the points, or what the caller gave
    i: Any
    if points is not None:
        if voltage is not None or current is not None:
            raise SoacheckError("give either --points FILE or --voltage and --current, not both")
        given = _points_columns(points)
        v, i = given["voltage"], given["current"]
        tc = given["case_temp"] if "case_temp" in given else np.asarray(case_temp, dtype=float)
        tp = given["pulse_s"] if "pulse_s" in given else pulse_s
        d = given["duty"] if "duty" in given else duty_value
        idle = given["idle_current"] if "idle_current" in given else np.asarray(idle_current, dtype=float)
    else:
        if voltage is None or current is None:
            raise SoacheckError("give --voltage and --current (in V and A), or --points FILE")
        _check_all(VOLTAGE, voltage, "--voltage")
        _check_all(CURRENT, current, "--current")
        v, i, tc, tp, d = voltage, current, np.asarray(case_temp, dtype=float), pulse_s, duty_value
        idle = np.asarray(idle_current, dtype=float)
    if points is not None and "idle_current" in given:
        IDLE_CURRENT.check_array(np.ravel(idle), lambda k: f"points row {k + 1}: idle_current")
    loaded = _under(load_part(part, library=library), policy)
    result = check_points(v, i, loaded, tc_c=tc, pulse_s=tp, duty=d, idle_current_a=idle, breakdown=chosen)
    return CheckResult(loaded, result, chosen)


def _points_columns(points: PathLike | pd.DataFrame) -> dict[str, np.ndarray]:
    """The columns of a points file or frame as arrays ``(n,)``, ``pulse_s`` [s] parsed from ``pulse``."""
    if isinstance(points, str | Path):
        return read_points(points).columns
    for name in ("voltage", "current"):
        if name not in points:
            raise SoacheckError(f"points: missing column '{name}'; points have the columns voltage,current")
        bad = np.flatnonzero(~(np.isfinite(points[name].to_numpy(dtype=float)) & (points[name].to_numpy() > 0)))
        if bad.size:
            raise SoacheckError(f"points row {int(bad[0]) + 1}: {name} must be a number above zero")
    names = ("voltage", "current", "case_temp", "duty", "idle_current")
    columns = {name: points[name].to_numpy() for name in names if name in points}
    if "pulse" in points:
        columns["pulse_s"] = parse_each_once(points["pulse"], _pulse_s, lambda k: f"points row {k + 1}: pulse")
    return columns


@dataclass(frozen=True, eq=False, repr=False)
class CheckResult(CheckedResult):
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

    _checked = "points"

    part: Part
    points: PointCheck
    breakdown: BreakdownDerating = "auto"

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
        return json_chunks(self._payload(Columns(self.points.columns())))

    def json_bytes(self) -> Iterator[bytes]:
        """:meth:`json_chunks` as UTF-8 bytes, the rows written without decoding."""
        return json_bytes(self._payload(Columns(self.points.columns())))

    def plot(self, ax: Axes | None = None) -> Axes:
        """The points over the boundary at the case temperatures and the pulse width they were checked at."""
        return _plots().plot_point_check(self.part, self.points, breakdown=self.breakdown, ax=ax)
