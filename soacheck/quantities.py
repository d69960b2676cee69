"""One validator per quantity: every number that enters soacheck passes one of these, once, at the edge.

A :class:`Quantity` knows its name, its unit and the range a physical value of it can
take; :meth:`Quantity.check` turns anything else into a :class:`~soacheck.errors.SoacheckError`
that names where the value came from (a file and key, a file and line, or the caller's
option) and the accepted range. The library speaks of the quantity; the caller says where
it came from (``where``), so the same validator serves an option, a CSV cell and a TOML key.

The ceilings are stated here and in the README ("Limits"); each lies well beyond any
real linear stage, so it only stops a mistyped exponent, an infinity or a request that
would exhaust memory or time, never a genuine design:

- temperatures above absolute zero (−273.15 °C) and at most 1000 °C (no silicon, SiC or
  GaN device survives half of that; common practice, no source);
- counts (devices, cells) from 1 to 10 000; Monte Carlo draws from 1 to 1 000 000;
  samples of a planned trajectory from 10 to 1 000 000;
- the memory a computation needs, estimated before its large arrays are made, at most
  :data:`MEMORY_BUDGET_BYTES` (1 GiB; ``SOACHECK_MEMORY_BUDGET`` in bytes overrides it).
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass
from typing import Any

import numpy as np

from soacheck.errors import SoacheckError

ABSOLUTE_ZERO_C = -273.15
"""The lowest temperature there is. [°C]"""

TEMPERATURE_CEILING_C = 1000.0
"""The highest temperature soacheck accepts anywhere. [°C]"""

MAX_COUNT = 10_000
"""Most devices in one stage, most cells in one pack."""

MAX_DRAWS = 1_000_000
"""Most Monte Carlo draws of one sharing estimate."""

MAX_DEVICE_DRAWS = 100_000_000
"""Most devices × draws of one Monte Carlo sharing estimate (about a minute of work)."""

MIN_SAMPLES = 10
MAX_SAMPLES = 1_000_000
"""Fewest and most time samples of a planned trajectory (discharge, sweep)."""

MAX_TIME_S = 1e9
"""Largest magnitude of a time stamp or a duration (about 32 years). [s]"""

MEMORY_BUDGET_BYTES = 1 << 30
"""Largest memory one computation may ask for, estimated before it starts. [bytes]"""


def memory_budget_bytes() -> int:
    """The memory budget: ``SOACHECK_MEMORY_BUDGET`` (bytes) when set to a positive whole number, else 1 GiB."""
    text = os.environ.get("SOACHECK_MEMORY_BUDGET", "").strip()
    if text.isdigit() and int(text) > 0:
        return int(text)
    return MEMORY_BUDGET_BYTES


def _fmt(value: float) -> str:
    return f"{value:,.10g}".replace(",", " ") if abs(value) >= 1e4 and float(value).is_integer() else f"{value:g}"


@dataclass(frozen=True)
class Quantity:
    """A physical quantity and the values it may take.

    Attributes
    ----------
    name
        What a message calls it: ``case temperature``.
    unit
        Its unit as written after a number: ``°C``, ``K/W``; empty for a pure number.
    low, high
        The accepted range; ``low_open``/``high_open`` exclude the end itself.
    integer
        A whole number (a count), given as one.
    """

    name: str
    unit: str
    low: float
    high: float
    low_open: bool = False
    high_open: bool = False
    integer: bool = False

    def accepted(self) -> str:
        """The accepted range in words: ``above -273.15 °C and at most 1000 °C``."""
        unit = f" {self.unit}" if self.unit else ""
        kind = ""
        if math.isinf(self.high):
            low = "above" if self.low_open else "at least"
            return f"{kind}{low} {_fmt(self.low)}{unit}"
        if self.low_open or self.high_open:
            low = "above" if self.low_open else "at least"
            high = "below" if self.high_open else "at most"
            return f"{kind}{low} {_fmt(self.low)}{unit} and {high} {_fmt(self.high)}{unit}"
        whole = ", a whole number" if self.integer else ""
        return f"{kind}from {_fmt(self.low)} to {_fmt(self.high)}{unit}{whole}"

    def _error(self, where: str, shown: str) -> SoacheckError:
        return SoacheckError(f"{where} is {shown}; give a {self.name} {self.accepted()}")

    def check(self, value: Any, where: str) -> float:
        """The value as a float (an int for a count), or a SoacheckError naming ``where`` and the range.

        Booleans and text are refused: ``true`` is not a number, nor is ``"5"``.
        """
        if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
            raise self._error(where, repr(value))
        if self.integer and not (isinstance(value, int | np.integer) or float(value).is_integer()):
            raise self._error(where, f"{value!r}")
        number = float(value)
        if not math.isfinite(number) or not self._inside(np.array([number]))[0]:
            raise self._error(where, _fmt(number) if math.isfinite(number) else str(number))
        return int(number) if self.integer else number

    def check_array(self, values: np.ndarray, where_row) -> np.ndarray:
        """Every value of an array; ``where_row(k)`` names the place of the first bad one (a file line)."""
        array = np.asarray(values, dtype=float)
        if self.holds(array):
            return array
        bad = np.flatnonzero(~(np.isfinite(array) & self._inside(array)))
        if bad.size:
            k = int(bad[0])
            raise self._error(where_row(k), _fmt(array[k]) if math.isfinite(array[k]) else str(array[k]))
        return array

    def holds(self, values: np.ndarray) -> bool:
        """Whether every value is finite and in range, from the least and the greatest (a NaN makes both NaN)."""
        array = np.asarray(values, dtype=float)
        if array.size == 0:
            return True
        ends = np.array([array.min(), array.max()])
        return bool(np.isfinite(ends).all() and self._inside(ends).all())

    def _inside(self, x: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore"):
            low = x > self.low if self.low_open else x >= self.low
            high = x < self.high if self.high_open else x <= self.high
        return low & high


def _q(name: str, unit: str, low: float, high: float, **kw) -> Quantity:
    return Quantity(name, unit, low, high, **kw)


# temperatures
TEMPERATURE = _q("temperature", "°C", ABSOLUTE_ZERO_C, TEMPERATURE_CEILING_C, low_open=True)
TJ_MAX = _q("rated junction temperature", "°C", 25.0, TEMPERATURE_CEILING_C, low_open=True)
TJ_CEILING = _q("junction ceiling", "°C", 25.0, TEMPERATURE_CEILING_C)

# electrical
VOLTAGE = _q("voltage", "V", 0.0, 1e6, low_open=True)
CURRENT = _q("current", "A", 0.0, 1e6, low_open=True)
IDLE_CURRENT = _q("current standing between pulses", "A", 0.0, 1e6)
SAMPLE_VOLTAGE = _q("voltage", "V", 0.0, 1e6)
SAMPLE_CURRENT = _q("current", "A", 0.0, 1e6)
POWER = _q("power", "W", 0.0, 1e9, low_open=True)
RESISTANCE = _q("resistance", "Ω", 0.0, 1e9)
LOAD_RESISTANCE = _q("resistance", "Ω", 0.0, 1e9, low_open=True)
VBE_SPREAD = _q("V_BE spread", "V", 0.0, 1.0)
VBE_TEMPCO = _q("V_BE temperature coefficient", "V/K", -0.1, 0.1)

# thermal
THERMAL_RESISTANCE = _q("thermal resistance", "K/W", 0.0, 1e4, low_open=True)
INTERFACE_RESISTANCE = _q("thermal resistance", "K/W", 0.0, 1e4)
HEAT_CAPACITY = _q("heat capacity", "J/K", 0.0, 1e9, low_open=True)

# batteries
CAPACITY = _q("capacity", "Ah", 0.0, 1e6, low_open=True)

# time
TIME = _q("time", "s", -MAX_TIME_S, MAX_TIME_S)
DURATION = _q("duration", "s", 0.0, MAX_TIME_S, low_open=True)

# fractions and counts
DUTY = _q("duty cycle tp/T", "", 0.0, 1.0, low_open=True)
DUTY_OR_SINGLE = _q("duty cycle tp/T (0 for a single pulse)", "", 0.0, 1.0)
FRACTION = _q("fraction", "", 0.0, 1.0)
DESIGN_FRACTION = _q("fraction", "", 0.0, 1.0, low_open=True)
PERCENTILE = _q("percentile", "", 0.0, 100.0, low_open=True)
DEVICE_COUNT = _q("number of devices", "", 1, MAX_COUNT, integer=True)
CELL_COUNT = _q("number of cells in series", "", 1, MAX_COUNT, integer=True)
DRAWS = _q("number of draws", "", 1, MAX_DRAWS, integer=True)
SAMPLES = _q("number of samples", "", MIN_SAMPLES, MAX_SAMPLES, integer=True)
CHUNK_ROWS = _q("number of rows per chunk", "", 2, 100_000_000, integer=True)
SEED = _q("random seed", "", 0, 2**63 - 1, integer=True)


SETPOINT = {"cc": CURRENT, "cp": POWER, "cr": LOAD_RESISTANCE}
"""The quantity of a discharge's setpoint in each mode: current, power or resistance."""


def check_memory(n_bytes: float, what: str, fix: str) -> None:
    """Refuse a computation whose arrays would need more than the memory budget.

    Parameters
    ----------
    n_bytes
        The estimate, made before anything large is allocated. [bytes]
    what
        What would need it: ``a run of 3 devices over 2 000 000 samples``.
    fix
        How to need less: ``use fewer samples``.
    """
    budget = memory_budget_bytes()
    if not n_bytes <= budget:
        raise SoacheckError(
            f"{what} would need about {n_bytes / 2**30:.3g} GiB of memory, more than the "
            f"{budget / 2**30:.3g} GiB soacheck allows itself (SOACHECK_MEMORY_BUDGET); {fix}"
        )
