"""The arguments of the public functions: their types, and the checks shared by every function.

Each check raises :class:`~soacheck.errors.SoacheckError` with the command's option name
(``--pulse``, ``--duty``, ``--breakdown-derating``), so the function and the command say the same.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, TypeAlias

import numpy as np
import numpy.typing as npt

from soacheck.battery import SweepKind
from soacheck.derating import BreakdownDerating
from soacheck.errors import SoacheckError, choose
from soacheck.parts import Part
from soacheck.policy import Policy, resolve_policy
from soacheck.quantities import DUTY, Quantity
from soacheck.stage import Stage
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
