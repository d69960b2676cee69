"""The MOSFET (and IGBT) in linear mode: its transfer characteristic and electro-thermal instability.

A datasheet's transfer characteristic gives the drain current against the gate voltage at
two or more junction temperatures (``transfer.csv``). At a fixed gate voltage the current
rises with temperature below the zero-temperature-coefficient (ZTC) point, since the
threshold voltage falls, and falls above it, since the mobility falls. Below the ZTC
point the loop power → junction temperature → current → power has positive gain
V_DS·α·Z with α = ∂I_D/∂T_j; at a gain of 1 the device, or a cell inside it, runs away
well inside a DC SOA computed from Rth alone.

Everything here is a plain function over numpy arrays, or a frozen dataclass that only
holds the curves. Currents are in A, gate voltages in V, temperatures in °C.

References
----------
- The instability criterion V_DS·α·Z_th ≥ 1 below the ZTC point: P. Spirito, G. Breglio,
  V. d'Alessandro, N. Rinaldi, "Thermal instabilities in high current power MOS devices:
  experimental evidence, electro-thermal simulations and analytical modeling", Proc. 23rd
  Int. Conf. on Microelectronics (MIEL 2002), Niš, vol. 1, pp. 23–30.
- The same criterion, dP/dT_j ≥ 1/Z_th, is the classic thermal-stability condition of any
  device with a positive temperature coefficient of dissipation (common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

GRID_POINTS = 600
"""Log-spaced currents on which α(I) is tabulated for the ZTC point and the instability cap."""


@dataclass(frozen=True, eq=False)
class TransferCurves:
    """Drain current against gate voltage at two or more junction temperatures.

    Attributes
    ----------
    temp_c
        Junction temperature of each curve, rising, shape ``(k,)``, k ≥ 2. [°C]
    vgs_v
        Gate-source voltages of each curve, strictly rising, one array per curve. [V]
    current_a
        Drain current at those voltages, strictly rising, one array per curve. [A]
    lines
        File line of each point, one array per curve, for messages (empty when not from a file).

    Notes
    -----
    Between digitized points each curve is straight in √I_D against V_GS, which is exact
    for the square-law saturation current I_D = K(V_GS − V_th)² (Sedra & Smith,
    *Microelectronic Circuits*, the MOSFET chapter); beyond its ends it continues with its
    end slopes, and below the gate voltage where √I_D reaches zero it carries nothing.
    """

    temp_c: np.ndarray
    vgs_v: tuple[np.ndarray, ...]
    current_a: tuple[np.ndarray, ...]
    lines: tuple[np.ndarray, ...] = field(default_factory=tuple)

    @property
    def current_range_a(self) -> tuple[float, float]:
        """Currents every curve carries within its digitized points: (lowest, highest). [A]"""
        low = max(float(i[0]) for i in self.current_a)
        high = min(float(i[-1]) for i in self.current_a)
        return low, high


def drain_current(vgs_v: np.ndarray | float, transfer: TransferCurves, curve: int) -> np.ndarray:
    """Drain current of curve ``curve`` at gate voltages of any shape. [A]

    Straight in √I against V_GS between points and beyond the ends; zero where the
    extension of √I falls below zero.
    """
    v = np.asarray(vgs_v, dtype=float)
    x, y = transfer.vgs_v[curve], np.sqrt(transfer.current_a[curve])
    root = _extended_interp(v, x, y)
    return np.maximum(root, 0.0) ** 2


def gate_voltage(current_a: np.ndarray | float, transfer: TransferCurves, curve: int) -> np.ndarray:
    """Gate voltage at which curve ``curve`` carries ``current_a`` (any shape, ≥ 0). [V]"""
    i = np.asarray(current_a, dtype=float)
    x, y = transfer.vgs_v[curve], np.sqrt(transfer.current_a[curve])
    return _extended_interp(np.sqrt(np.maximum(i, 0.0)), y, x)


def _extended_interp(x: np.ndarray, xp: np.ndarray, fp: np.ndarray) -> np.ndarray:
    """Piecewise-linear interpolation that continues with the end slopes beyond ``xp``."""
    y = np.interp(x, xp, fp)
    left = (fp[1] - fp[0]) / (xp[1] - xp[0])
    right = (fp[-1] - fp[-2]) / (xp[-1] - xp[-2])
    y = np.where(x < xp[0], fp[0] + left * (x - xp[0]), y)
    return np.where(x > xp[-1], fp[-1] + right * (x - xp[-1]), y)


def temperature_coefficient(current_a: np.ndarray | float, transfer: TransferCurves) -> np.ndarray:
    """α(I) = ∂I_D/∂T_j at fixed gate voltage, from adjacent pairs of curves, any shape. [A/K]

    For each pair of adjacent temperatures T₁ < T₂: α = [I_D(V_GS; T₂) − I]/(T₂ − T₁) at the
    V_GS where the cooler curve carries I. With more than two curves the largest α of the
    pairs is taken (conservative: the loop gain is overstated, never understated).

    References
    ----------
    Spirito et al., MIEL 2002 (α and the instability criterion); the finite difference
    between two datasheet curves is the plain reading of the characteristic.
    """
    i = np.asarray(current_a, dtype=float)
    temps = transfer.temp_c
    pairs = [
        (drain_current(gate_voltage(i, transfer, k), transfer, k + 1) - i) / (temps[k + 1] - temps[k])
        for k in range(temps.size - 1)
    ]
    return np.max(pairs, axis=0)


def current_grid(transfer: TransferCurves, points: int = GRID_POINTS) -> np.ndarray:
    """Log-spaced currents over the range every curve carries, shape ``(points,)``. [A]"""
    low, high = transfer.current_range_a
    return np.geomspace(low, high, points)


@dataclass(frozen=True)
class ZeroTemperatureCoefficient:
    """Where α(I) changes sign.

    Attributes
    ----------
    current_a
        The ZTC current, or None when it lies outside the digitized range. [A]
    side
        ``within``, ``above`` (α > 0 at every digitized current: the ZTC point lies above
        the highest current every curve reaches), or ``below`` (α ≤ 0 everywhere).
    """

    current_a: float | None
    side: str


def ztc_point(transfer: TransferCurves) -> ZeroTemperatureCoefficient:
    """The zero-temperature-coefficient current: the highest current at which α(I) falls through zero.

    Found on a log grid of currents and refined by linear interpolation of α between the two
    grid points around the sign change (the curves are straight in √I, so α is smooth
    between their points).
    """
    grid = current_grid(transfer)
    alpha = temperature_coefficient(grid, transfer)
    positive = alpha > 0
    if positive.all():
        return ZeroTemperatureCoefficient(None, "above")
    if not positive.any():
        return ZeroTemperatureCoefficient(None, "below")
    falls = np.flatnonzero(positive[:-1] & ~positive[1:])
    if falls.size == 0:  # α only rises through zero: negative at low currents, positive at the top
        return ZeroTemperatureCoefficient(None, "above")
    k = int(falls[-1])
    a0, a1 = alpha[k], alpha[k + 1]
    t = a0 / (a0 - a1)
    return ZeroTemperatureCoefficient(float(np.exp(np.log(grid[k]) + t * np.log(grid[k + 1] / grid[k]))), "within")


def transconductance(current_a: np.ndarray | float, tj_c: np.ndarray | float, transfer: TransferCurves) -> np.ndarray:
    """g_m = ∂I_D/∂V_GS at a current and junction temperature (broadcast together). [S]

    From the V_GS(I, T) surface of :func:`gate_voltage_at`: g_m = 1/(∂V_GS/∂I). For the
    square law g_m = 2√(K·I_D) (Sedra & Smith, the MOSFET chapter).
    """
    i = np.maximum(np.asarray(current_a, dtype=float), 1e-12)
    step = 1e-4 * i
    dv = gate_voltage_at(i + step, tj_c, transfer) - gate_voltage_at(i - step, tj_c, transfer)
    return 2 * step / np.maximum(dv, 1e-300)


def gate_voltage_at(current_a: np.ndarray | float, tj_c: np.ndarray | float, transfer: TransferCurves) -> np.ndarray:
    """V_GS(I, T): the gate voltage that carries ``current_a`` at junction temperature ``tj_c``. [V]

    Linear in temperature between the two curves around ``tj_c`` (the nearest pair beyond
    the outermost curves), so that ∂V_GS/∂T at fixed current is −α/g_m of that pair.
    """
    i = np.asarray(current_a, dtype=float)
    t = np.asarray(tj_c, dtype=float)
    temps = transfer.temp_c
    pair = np.clip(np.searchsorted(temps, t, side="right") - 1, 0, temps.size - 2)
    out = np.zeros(np.broadcast_shapes(i.shape, t.shape))
    for k in range(temps.size - 1):
        v_cool = gate_voltage(i, transfer, k)
        v_hot = gate_voltage(i, transfer, k + 1)
        w = (t - temps[k]) / (temps[k + 1] - temps[k])
        out = np.where(pair == k, v_cool + w * (v_hot - v_cool), out)
    return out


@dataclass(frozen=True, eq=False)
class InstabilityCap:
    """The largest current at each voltage before V_DS·α(I)·Z reaches 1, as a log-log polyline.

    Attributes
    ----------
    voltage_v, current_a
        Vertices, voltage rising and current falling, shape ``(k,)``: at V the cap is the
        smallest current I with V·α(I)·Z ≥ 1. [V], [A]
    z_k_per_w
        The thermal impedance used. [K/W]
    ztc
        Where α changes sign.
    capped_above
        True when the ZTC point lies beyond the digitized currents: no α is known above the
        highest digitized current, so the cap holds there at every voltage (conservative).
    """

    voltage_v: np.ndarray
    current_a: np.ndarray
    z_k_per_w: float
    ztc: ZeroTemperatureCoefficient
    capped_above: bool

    @property
    def is_empty(self) -> bool:
        return self.voltage_v.size == 0


def instability_cap(transfer: TransferCurves, z_k_per_w: float) -> InstabilityCap:
    """The electro-thermal instability cap for a thermal impedance ``z_k_per_w``.

    Parameters
    ----------
    transfer
        The transfer characteristic.
    z_k_per_w
        Thermal impedance seen by the junction: rth_jc for DC with the case held, the whole
        path to ambient when the case follows the heatsink, Zth(tp) or Zth(tp, D) for pulses. [K/W]

    Returns
    -------
    InstabilityCap
        The smallest current at which V·α(I)·Z ≥ 1, as a function of V: with
        A(I) = max over I′ ≤ I of α(I′), the cap at V is A⁻¹(1/(V·Z)), a curve that falls
        with V. Below V = 1/(Z·max α) nothing is capped; above the voltage of the lowest
        digitized current the last segment is extended (stated by the caller).

    References
    ----------
    Spirito, Breglio, d'Alessandro, Rinaldi, MIEL 2002 (the criterion V_DS·α·Z_th < 1).
    """
    grid = current_grid(transfer)
    alpha = temperature_coefficient(grid, transfer)
    ztc = ztc_point(transfer)
    running = np.maximum.accumulate(alpha)
    rises = np.r_[True, np.diff(running) > 0] & (running > 0)
    i = grid[rises]
    v = 1.0 / (z_k_per_w * running[rises])
    order = np.argsort(v, kind="stable")
    return InstabilityCap(v[order], i[order], float(z_k_per_w), ztc, ztc.side == "above")


def current_for_drive(
    drive_v: np.ndarray, tj_c: np.ndarray, transfer: TransferCurves, *, source_ohm: float
) -> tuple[np.ndarray, np.ndarray]:
    """The drain current I with V_GS(I, T) + I·R_S = ``drive_v``, and dI/d(drive), exactly.

    Parameters
    ----------
    drive_v
        Gate voltage above the source resistor's foot, any shape. [V]
    tj_c
        Junction temperature, broadcast with ``drive_v``. [°C]
    source_ohm
        Source resistor R_S. [Ω]

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        I [A] and dI/d(drive) [S]; both 0 where the drive is below the threshold.

    Notes
    -----
    V_GS(I, T) of :func:`gate_voltage_at` is straight in s = √I between the curves' points
    (their union), so on each piece V_GS = A + B·s and R_S·s² + B·s + A − drive = 0 is
    solved in closed form; dI/d(drive) = 2s/(B + 2·R_S·s).
    """
    x = np.asarray(drive_v, dtype=float)
    t = np.broadcast_to(np.asarray(tj_c, dtype=float), x.shape)
    s_grid = np.unique(np.r_[0.0, np.concatenate([np.sqrt(i) for i in transfer.current_a])])
    temps = transfer.temp_c
    pair = np.clip(np.searchsorted(temps, t, side="right") - 1, 0, temps.size - 2)
    w = (t - temps[pair]) / (temps[pair + 1] - temps[pair])
    curves = np.stack([gate_voltage(s_grid**2, transfer, k) for k in range(temps.size)])  # (k, J)
    v_grid = curves[pair] + w[..., None] * (curves[pair + 1] - curves[pair])  # (..., J)
    h = v_grid + source_ohm * s_grid**2
    piece = np.clip(np.sum(h <= x[..., None], axis=-1) - 1, 0, s_grid.size - 2)
    v0 = np.take_along_axis(v_grid, piece[..., None], axis=-1)[..., 0]
    v1 = np.take_along_axis(v_grid, piece[..., None] + 1, axis=-1)[..., 0]
    s0, s1 = s_grid[piece], s_grid[piece + 1]
    slope = np.maximum((v1 - v0) / (s1 - s0), 1e-12)
    rest = x - (v0 - slope * s0)  # drive less the piece's intercept A
    with np.errstate(invalid="ignore"):
        s = 2 * rest / (slope + np.sqrt(np.maximum(slope**2 + 4 * source_ohm * rest, 0.0)))
    s = np.maximum(s, 0.0)
    return s**2, 2 * s / (slope + 2 * source_ohm * s)
