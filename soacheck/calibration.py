"""Pixel calibration of a plot's axes: from reference pixels, or from the frame and the axis range.

A pixel coordinate maps to a value through two reference points per axis, on a
logarithmic axis by default (SOA and Zth plots are log-log):
log v = log v₁ + (p − p₁)·(log v₂ − log v₁)/(p₂ − p₁). Image rows count downward; the
calibration takes care of the direction. Pixel coordinates are array indices: pixel
column 0 is the leftmost column, as an image viewer shows it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from soacheck.errors import SoacheckError


@dataclass(frozen=True)
class AxisCalibration:
    """Two reference pixels on one axis and the values they stand for.

    Attributes
    ----------
    pixel_1, pixel_2
        Pixel coordinates of the two references (columns for x, rows for y). [px]
    value_1, value_2
        Their values on the plot's axis (V, A, s or K/W). Above zero on a log axis.
    log
        True for a logarithmic axis.
    """

    pixel_1: float
    value_1: float
    pixel_2: float
    value_2: float
    log: bool = True

    def __post_init__(self) -> None:
        if not all(math.isfinite(v) for v in (self.pixel_1, self.value_1, self.pixel_2, self.value_2)):
            raise SoacheckError("calibration: pixels and values must be finite numbers")
        if self.pixel_1 == self.pixel_2:
            raise SoacheckError("calibration: the two reference pixels must differ")
        if self.value_1 == self.value_2:
            raise SoacheckError("calibration: the two reference values must differ")
        if self.log and (self.value_1 <= 0 or self.value_2 <= 0):
            raise SoacheckError("calibration: values on a logarithmic axis must be above zero (or use --linear-x/-y)")

    def value(self, pixel: np.ndarray) -> np.ndarray:
        """Axis value at pixel coordinates (any shape)."""
        p = np.asarray(pixel, dtype=float)
        frac = (p - self.pixel_1) / (self.pixel_2 - self.pixel_1)
        if self.log:
            a, b = math.log10(self.value_1), math.log10(self.value_2)
            return 10.0 ** (a + frac * (b - a))
        return self.value_1 + frac * (self.value_2 - self.value_1)

    def pixel(self, value: np.ndarray) -> np.ndarray:
        """Pixel coordinate of axis values (any shape); the inverse of :meth:`value`."""
        v = np.asarray(value, dtype=float)
        if self.log:
            a, b = math.log10(self.value_1), math.log10(self.value_2)
            with np.errstate(divide="ignore", invalid="ignore"):
                frac = (np.log10(v) - a) / (b - a)
        else:
            frac = (v - self.value_1) / (self.value_2 - self.value_1)
        return self.pixel_1 + frac * (self.pixel_2 - self.pixel_1)

    @property
    def decades(self) -> float:
        """Decades between the two reference values (a log axis)."""
        return abs(math.log10(self.value_2 / self.value_1))

    @classmethod
    def parse(cls, text: str, *, log: bool, option: str) -> AxisCalibration:
        """From ``PX1=V1,PX2=V2``, such as ``112=1,842=100``."""
        try:
            pairs = [item.split("=") for item in text.split(",")]
            (p1, v1), (p2, v2) = ((float(p), float(v)) for p, v in pairs)
        except ValueError:
            raise SoacheckError(f"{option}: '{text}' is not two pixel=value pairs, such as 112=1,842=100") from None
        return cls(p1, v1, p2, v2, log)


def parse_range(text: str, *, log: bool, option: str) -> tuple[float, float]:
    """An axis range ``LOW:HIGH`` (the values at the frame's edges), such as ``1:100``."""
    try:
        low, high = (float(part) for part in text.split(":"))
    except ValueError:
        raise SoacheckError(f"{option}: '{text}' is not a range LOW:HIGH such as 1:100") from None
    if not (math.isfinite(low) and math.isfinite(high) and low < high):
        raise SoacheckError(f"{option}: '{text}' must be two finite numbers, the lower first, such as 1:100")
    if log and low <= 0:
        raise SoacheckError(f"{option}: '{text}' starts at {low:g}; a logarithmic axis starts above zero")
    return low, high


def range_calibration(
    low_edge_px: float, high_edge_px: float, value_range: tuple[float, float], *, log: bool
) -> AxisCalibration:
    """The calibration that puts ``value_range`` at the frame's edges (low value first)."""
    return AxisCalibration(low_edge_px, value_range[0], high_edge_px, value_range[1], log)


def decades_disagree(axis: AxisCalibration, seen: float | None, option: str) -> str | None:
    """A sentence when the decades a range spans differ from those the grid shows, else None.

    Two readings agree within a tenth of a decade or 5 %, whichever is larger (a grid line
    is found to a pixel or two; a decade is rarely under 50 px).
    """
    if seen is None or not axis.log:
        return None
    given = axis.decades
    if abs(given - seen) <= max(0.1, 0.05 * seen):
        return None
    return (
        f"{option} spans {given:.2g} decade(s), but the grid shows {seen:.2g} across the frame; check the "
        "range (the values at the frame's edges), or give pixel ticks with --x/--y instead"
    )


@dataclass(frozen=True)
class Seed:
    """A point on or near a curve, in the plot's values, and the curve's name (its pulse width)."""

    x: float
    y: float
    name: str

    @property
    def label(self) -> str:
        """The seed as the user wrote it, such as ``20:5 (dc)``."""
        return f"{self.x:g}:{self.y:g}" + (f" ({self.name})" if self.name else "")
