"""Making parts: reading values off datasheet plots, and SOA curves from ratings alone.

Picked pixels map to values through :mod:`soacheck.calibration`; a curve drawn in a
colour of its own can be followed by that colour; black curves are traced from a seed
by :mod:`soacheck.tracing`.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from soacheck.calibration import AxisCalibration, Seed
from soacheck.errors import SoacheckError
from soacheck.partheader import KINDS
from soacheck.quantities import TJ_MAX
from soacheck.tomlfiles import toml_string
from soacheck.units import parse_duration

PART_ID = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._+-]*$")


def check_part_id(part_id: str) -> str:
    """A part id usable as a folder name: letters, digits, ``. _ + -``; no separators, no leading dot."""
    if not PART_ID.match(part_id or ""):
        raise SoacheckError(
            f"part id '{part_id}' is not usable as a folder name; use letters, digits and . _ + - only, "
            "starting with a letter or digit"
        )
    return part_id


# --------------------------------------------------------------------------- digitizing


def pixels_to_values(
    x_px: np.ndarray, y_px: np.ndarray, x_axis: AxisCalibration, y_axis: AxisCalibration
) -> tuple[np.ndarray, np.ndarray]:
    """Picked pixels to values, sorted by the x value (a curve is listed from left to right)."""
    x = x_axis.value(x_px)
    y = y_axis.value(y_px)
    order = np.argsort(x, kind="stable")
    return x[order], y[order]


def follow_colour(
    image: np.ndarray, colour_rgb: tuple[float, float, float], *, tolerance: float = 0.12, step_px: int = 4
) -> tuple[np.ndarray, np.ndarray]:
    """Pixels of a curve drawn in one colour: the middle row of matching pixels in each column.

    Parameters
    ----------
    image
        RGB or RGBA image, shape ``(rows, columns, 3|4)``, values 0-1.
    colour_rgb
        The curve's colour, 0-1 per channel.
    tolerance
        Largest Euclidean distance in RGB (0-1 scale) that still counts as the colour.
    step_px
        Keep every ``step_px``-th column that has the colour.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Column and row of each found point, in pixels (rows counting downward).
    """
    rgb = np.asarray(image, dtype=float)[..., :3]
    if rgb.max() > 1.0:
        rgb = rgb / 255.0
    distance = np.linalg.norm(rgb - np.asarray(colour_rgb, dtype=float), axis=-1)
    hit = distance <= tolerance
    columns = np.flatnonzero(hit.any(axis=0))
    if columns.size == 0:
        raise SoacheckError("no pixel of that colour in the image; check the colour or raise the tolerance")
    rows_idx = np.arange(hit.shape[0])[:, None]
    counts = hit[:, columns].sum(axis=0)
    mean_rows = (hit[:, columns] * rows_idx).sum(axis=0) / counts
    keep = np.arange(columns.size) % step_px == 0
    keep[-1] = True
    return columns[keep].astype(float), mean_rows[keep]


def parse_colour(text: str) -> tuple[float, float, float]:
    """``#rrggbb`` to RGB in 0-1."""
    match = re.fullmatch(r"#?([0-9a-fA-F]{6})", text.strip())
    if not match:
        raise SoacheckError(f"--colour: '{text}' is not a colour such as #d1495b")
    value = match.group(1)
    return tuple(int(value[k : k + 2], 16) / 255.0 for k in (0, 2, 4))  # type: ignore[return-value]


def parse_seed(text: str, *, zth: bool) -> Seed:
    """A tracing seed from ``V:I=PULSE`` (an SOA curve, named by its pulse) or ``T:Z`` (a Zth curve).

    The seed is a point on or near the curve in the plot's values (volts and amperes, or
    seconds and K/W), read off the picture by eye.
    """
    point, _, pulse = text.partition("=")
    example = "0.01:0.5" if zth else "20:5=dc"
    try:
        x, y = (float(part) for part in point.split(":"))
    except ValueError:
        raise SoacheckError(f"--trace: '{text}' is not a seed such as {example}") from None
    if not (math.isfinite(x) and math.isfinite(y) and x > 0 and y > 0):
        raise SoacheckError(f"--trace: '{text}': both values must be finite and above zero (log axes)")
    if zth:
        if pulse:
            raise SoacheckError(f"--trace: '{text}': a Zth curve has no pulse width; give T:Z such as {example}")
        return Seed(x, y, "")
    if not pulse:
        raise SoacheckError(f"--trace: '{text}' names no pulse width; add it, such as {example}")
    parse_duration(pulse, where=f"--trace '{text}'")
    return Seed(x, y, pulse)


def part_toml(
    part_id: str,
    *,
    kind: str,
    description: str,
    source: str,
    v_max_v: float,
    i_max_a: float,
    p_max_w: float,
    tj_max_c: float,
    rth_jc_k_per_w: float,
) -> str:
    """The text of a ``part.toml`` (format in ``docs/part-format.md``)."""
    return (
        f"id = {toml_string(part_id)}\n"
        f"kind = {toml_string(kind)}\n"
        f"description = {toml_string(description)}\n"
        f"source = {toml_string(source)}\n\n"
        "[ratings]\n"
        f"v_max = {v_max_v!r}\ni_max = {i_max_a!r}\np_max = {p_max_w!r}\ntj_max = {tj_max_c!r}\n"
        f"rth_jc = {rth_jc_k_per_w!r}\n"
    )


def curve_rows(pulse: str, voltage_v: np.ndarray, current_a: np.ndarray) -> str:
    """``soa.csv`` text holding one curve."""
    rows = "".join(f"{pulse},{float(v)!r},{float(i)!r}\n" for v, i in zip(voltage_v, current_a, strict=True))
    return "pulse,voltage,current\n" + rows


# --------------------------------------------------------------------------- from ratings


@dataclass(frozen=True)
class Synthesized:
    """A DC SOA curve built from ratings, with the warnings that go with it."""

    voltage_v: np.ndarray
    current_a: np.ndarray
    p_max_w: float
    warnings: tuple[str, ...]


def soa_from_ratings(
    *,
    kind: str,
    v_max_v: float,
    i_max_a: float,
    p_max_w: float,
    tj_max_c: float,
    rth_jc_k_per_w: float,
    sb_knee_v: float | None = None,
    sb_exponent: float | None = None,
) -> Synthesized:
    """The DC curve: the current limit, the constant-power line and, when a knee is given, a
    second-breakdown (instability) line I = (P/V_knee)·(V/V_knee)^(−exponent) above it.

    The constant-power line is exactly I = P/V with P the smaller of ``p_max`` and
    (tj_max − 25 °C)/rth_jc (they should agree; the smaller is conservative).
    """
    if kind not in KINDS:
        raise SoacheckError(f"--kind: '{kind}' is not one of {', '.join(KINDS)}")
    for name, value in (("--v-max", v_max_v), ("--i-max", i_max_a), ("--p-max", p_max_w), ("--rth-jc", rth_jc_k_per_w)):
        if not (math.isfinite(value) and value > 0):
            raise SoacheckError(f"{name} is {value:g}; it must be above zero")
    TJ_MAX.check(tj_max_c, "--tj-max")
    for name, value in (("--sb-knee", sb_knee_v), ("--sb-exponent", sb_exponent)):
        if value is not None and not math.isfinite(value):
            raise SoacheckError(f"{name} is {value:g}; give a finite number")
    warnings = []
    p_rth = (tj_max_c - 25.0) / rth_jc_k_per_w
    power = min(p_max_w, p_rth)
    if abs(p_max_w / p_rth - 1) > 0.05:
        warnings.append(
            f"p_max {p_max_w:g} W differs from (tj_max - 25)/rth_jc = {p_rth:.4g} W by more than 5 %; "
            f"the curve uses the smaller, {power:.4g} W"
        )
    knee_i = power / i_max_a  # voltage where the current limit meets constant power
    v_lo = min(1.0, knee_i / 10)
    if knee_i >= v_max_v:
        raise SoacheckError(
            f"i_max x v_max = {i_max_a * v_max_v:g} W is below the power rating: the constant-power line never "
            "bounds the curve; check the ratings"
        )
    v = [v_lo, knee_i]
    i = [i_max_a, i_max_a]
    if (sb_knee_v is None) != (sb_exponent is None):
        raise SoacheckError("give both --sb-knee (V) and --sb-exponent, or neither")
    if sb_knee_v is not None:
        if not (sb_exponent > 1):
            raise SoacheckError(
                f"--sb-exponent is {sb_exponent:g}; a second-breakdown line falls faster than "
                "constant power, so the exponent must be above 1 (typically 1.5-3)"
            )
        if not (knee_i < sb_knee_v < v_max_v):
            raise SoacheckError(f"--sb-knee {sb_knee_v:g} V must lie between {knee_i:.4g} V and v_max {v_max_v:g} V")
        v += [sb_knee_v, v_max_v]
        i += [power / sb_knee_v, power / sb_knee_v * (v_max_v / sb_knee_v) ** (-sb_exponent)]
    else:
        v.append(v_max_v)
        i.append(power / v_max_v)
        if kind in ("npn", "pnp"):
            warnings.append(
                "no second-breakdown knee given: the curve is NOT safe above the unknown knee; take it from the "
                "datasheet's SOA plot (--sb-knee, --sb-exponent)"
            )
        else:
            warnings.append(
                "a FET or IGBT DC curve computed from Rth alone is not valid for long linear-mode operation "
                "(thermal instability); take the instability bend from the datasheet (--sb-knee, --sb-exponent)"
            )
    return Synthesized(np.array(v), np.array(i), power, tuple(warnings))
