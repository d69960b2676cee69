"""Batteries and the planned tests that draw from them: discharges and V–I sweeps.

A battery is its open-circuit voltage (OCV) against state of charge (SoC) per cell, cells
in series, a capacity and an internal resistance. A discharge at constant current, power
or resistance is integrated exactly in SoC (the current is an explicit function of SoC in
every mode), then laid on a uniform time grid for the thermal model.

References
----------
- Terminal voltage V_t = OCV(SoC) − I·R_int, dSoC/dt = −I/Q; constant power at the
  terminals I = (E − √(E² − 4 R P))/(2R); constant resistance I = E/(R + R_int):
  elementary circuit analysis.
- OCV tables: see each preset's ``source``; all are typical rested values at about 25 °C,
  recalled, not measured (from memory). Use your cell's own data where you have it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np

from soacheck.errors import SoacheckError, did_you_mean

Mode = Literal["cc", "cp", "cr"]
MODES: tuple[Mode, ...] = ("cc", "cp", "cr")


@dataclass(frozen=True, eq=False)
class Chemistry:
    """OCV of one cell against state of charge, with its provenance.

    Attributes
    ----------
    name
        Preset name or file.
    soc
        State of charge, rising from 0 to 1, shape ``(k,)``. [1]
    ocv_v
        Open-circuit voltage per cell, rising with SoC, shape ``(k,)``. [V]
    cutoff_v
        Customary end-of-discharge voltage per cell. [V]
    source
        Where the table comes from.
    """

    name: str
    soc: np.ndarray
    ocv_v: np.ndarray
    cutoff_v: float
    source: str

    def ocv(self, soc: np.ndarray | float) -> np.ndarray:
        """OCV per cell at ``soc`` (linear between table rows, held at the ends). [V]"""
        return np.interp(soc, self.soc, self.ocv_v)


_SOC = np.linspace(0.0, 1.0, 11)
PRESETS: dict[str, Chemistry] = {
    "nmc": Chemistry(
        "nmc",
        _SOC,
        np.array([3.30, 3.50, 3.60, 3.65, 3.70, 3.75, 3.82, 3.89, 3.97, 4.06, 4.18]),
        3.0,
        "typical Li-ion NMC cell, rested, about 25 °C (from memory); cut-off 3.0 V per cell (common practice)",
    ),
    "lfp": Chemistry(
        "lfp",
        _SOC,
        np.array([2.80, 3.15, 3.22, 3.25, 3.27, 3.29, 3.30, 3.32, 3.33, 3.35, 3.40]),
        2.5,
        "typical LiFePO4 cell, rested, about 25 °C (from memory); cut-off 2.5 V per cell (common practice)",
    ),
    "lead-acid": Chemistry(
        "lead-acid",
        _SOC,
        0.84 + np.linspace(1.10, 1.28, 11),
        1.75,
        "lead-acid cell, OCV = specific gravity + 0.84 V with the gravity from 1.10 empty to 1.28 full "
        "(a handbook rule, from memory); cut-off 1.75 V per cell (common practice)",
    ),
    "nimh": Chemistry(
        "nimh",
        _SOC,
        np.array([1.00, 1.18, 1.22, 1.24, 1.25, 1.26, 1.27, 1.28, 1.30, 1.32, 1.35]),
        1.0,
        "NiMH cell, plateau about 1.2-1.3 V, 1.35 V rested full (from memory); cut-off 1.0 V per cell "
        "(common practice)",
    ),
}
ALIASES = {"li-ion": "nmc", "liion": "nmc", "lifepo4": "lfp", "lead": "lead-acid", "pb": "lead-acid", "ni-mh": "nimh"}


def chemistry(name: str) -> Chemistry:
    """A preset by name (``nmc``, ``lfp``, ``lead-acid``, ``nimh``, or an alias)."""
    key = ALIASES.get(name.lower(), name.lower())
    if key not in PRESETS:
        raise SoacheckError(
            f"--battery: unknown chemistry '{name}'{did_you_mean(key, list(PRESETS) + list(ALIASES))}; use one of "
            f"{', '.join(PRESETS)} or a CSV file with columns soc,voltage"
        )
    return PRESETS[key]


@dataclass(frozen=True, eq=False)
class Battery:
    """A pack: cells in series of one chemistry.

    Attributes
    ----------
    chemistry
        OCV per cell.
    cells
        Cells in series.
    capacity_ah
        Capacity. [Ah]
    r_int_ohm
        Internal resistance of the whole pack. [Ω]
    """

    chemistry: Chemistry
    cells: int
    capacity_ah: float
    r_int_ohm: float = 0.0

    def __post_init__(self) -> None:
        if self.cells < 1:
            raise SoacheckError(f"--cells is {self.cells}; a pack has at least one cell")
        if not (math.isfinite(self.capacity_ah) and self.capacity_ah > 0):
            raise SoacheckError(f"--capacity is {self.capacity_ah:g} Ah; it must be above zero")
        if not (math.isfinite(self.r_int_ohm) and self.r_int_ohm >= 0):
            raise SoacheckError(f"--internal-resistance is {self.r_int_ohm:g} Ω; it must be zero or more")

    def emf_v(self, soc: np.ndarray | float) -> np.ndarray:
        """Open-circuit pack voltage at ``soc``. [V]"""
        return self.cells * self.chemistry.ocv(soc)

    @property
    def full_v(self) -> float:
        return float(self.emf_v(1.0))


def discharge_current(emf_v: np.ndarray, battery: Battery, mode: Mode, setpoint: float) -> np.ndarray:
    """Current of the load at each open-circuit voltage, for a load mode and setpoint. [A]

    ``cc``: the setpoint in A. ``cp``: the setpoint in W at the battery terminals,
    I = (E − √(E² − 4RP))/(2R) (NaN where the pack cannot deliver it). ``cr``: the setpoint
    in Ω, I = E/(R + R_int).
    """
    e = np.asarray(emf_v, dtype=float)
    r = battery.r_int_ohm
    if mode == "cc":
        return np.full(e.shape, float(setpoint))
    if mode == "cr":
        return e / (setpoint + r)
    if r == 0:
        return setpoint / e
    disc = e * e - 4 * r * setpoint
    with np.errstate(invalid="ignore"):
        return np.where(disc >= 0, (e - np.sqrt(np.maximum(disc, 0))) / (2 * r), np.nan)


@dataclass(frozen=True, eq=False)
class Trajectory:
    """What a planned test asks of the load: source voltage and total current over time.

    Attributes
    ----------
    time_s, source_v, total_a
        Uniform time grid and the load's input voltage and current, shape ``(m,)``. [s], [V], [A]
    label
        What the test is, for reports.
    notes
        Assumptions made in building it.
    """

    time_s: np.ndarray
    source_v: np.ndarray
    total_a: np.ndarray
    label: str
    notes: tuple[str, ...] = ()


def discharge(
    battery: Battery,
    mode: Mode,
    setpoint: float,
    *,
    cutoff_v: float | None = None,
    samples: int = 2000,
) -> Trajectory:
    """The trajectory of a discharge from full to the cut-off voltage (under load).

    Time is integrated exactly in SoC, t(SoC) = ∫ 3600·Q / I(SoC') dSoC', on a fine SoC grid
    (trapezoids, with I an explicit function of SoC), then resampled on ``samples``
    uniform times.

    Raises
    ------
    SoacheckError
        A cut-off at or above the full-charge voltage; a setpoint the pack cannot give at
        full charge; a mode that is not cc, cp or cr; a setpoint not above zero.
    """
    if mode not in MODES:
        raise SoacheckError(f"--mode: '{mode}' is not one of {', '.join(MODES)}")
    if not (math.isfinite(setpoint) and setpoint > 0):
        raise SoacheckError(f"--setpoint is {setpoint:g}; it must be above zero")
    cutoff = battery.cells * battery.chemistry.cutoff_v if cutoff_v is None else float(cutoff_v)
    if cutoff >= battery.full_v:
        raise SoacheckError(
            f"--cutoff {cutoff:g} V is at or above the full-charge voltage {battery.full_v:g} V of "
            f"{battery.cells} cells; lower it"
        )
    soc = np.linspace(1.0, 0.0, 20001)
    emf = battery.emf_v(soc)
    current = discharge_current(emf, battery, mode, setpoint)
    terminal = emf - current * battery.r_int_ohm
    if not np.isfinite(current[0]) or terminal[0] <= cutoff:
        unit = {"cc": "A", "cp": "W", "cr": "Ω"}[mode]
        raise SoacheckError(
            f"--setpoint {setpoint:g} {unit}: the pack cannot give it at full charge above the cut-off "
            f"{cutoff:g} V (internal resistance {battery.r_int_ohm:g} Ω); lower the setpoint"
        )
    below = ~(np.isfinite(current) & (terminal > cutoff))
    end = int(np.argmax(below)) if below.any() else soc.size - 1
    if below.any():
        # the cut-off lies between end - 1 and end: find SoC there by linear interpolation
        a, b = end - 1, end
        ta, tb = terminal[a] - cutoff, (terminal[b] - cutoff) if np.isfinite(terminal[b]) else -1.0
        frac = ta / (ta - tb) if ta != tb else 1.0
        soc_end = soc[a] + frac * (soc[b] - soc[a])
        soc = np.r_[soc[:b], soc_end]
        emf = battery.emf_v(soc)
        current = discharge_current(emf, battery, mode, setpoint)
    seconds_per_soc = 3600.0 * battery.capacity_ah / current
    t_of_soc = np.r_[0.0, np.cumsum(0.5 * (seconds_per_soc[1:] + seconds_per_soc[:-1]) * -np.diff(soc))]
    time = np.linspace(0.0, t_of_soc[-1], samples)
    soc_t = np.interp(time, t_of_soc, soc)
    emf_t = battery.emf_v(soc_t)
    current_t = discharge_current(emf_t, battery, mode, setpoint)
    unit = {"cc": "A", "cp": "W", "cr": "Ω"}[mode]
    return Trajectory(
        time,
        emf_t - current_t * battery.r_int_ohm,
        current_t,
        f"{mode.upper()} discharge at {setpoint:g} {unit}, {battery.cells} × {battery.chemistry.name}, "
        f"{battery.capacity_ah:g} Ah",
        (
            f"battery: {battery.chemistry.source}",
            f"pack internal resistance {battery.r_int_ohm:g} Ω; discharge from full to {cutoff:g} V under load",
            "capacity independent of current (no Peukert correction)",
        ),
    )


SweepKind = Literal["current", "voltage", "power"]


def sweep(
    kind: SweepKind,
    start: float,
    stop: float,
    *,
    at: float,
    ramp_s: float,
    samples: int = 2000,
) -> Trajectory:
    """A linear ramp the load runs: of current at a fixed source voltage ``at`` (V), of
    voltage at a fixed current ``at`` (A), or of voltage at a constant power ``at`` (W).

    The ramp runs from ``start`` to ``stop`` (A for current ramps, V otherwise) in ``ramp_s``
    seconds, sampled uniformly.
    """
    if kind not in ("current", "voltage", "power"):
        raise SoacheckError(f"--ramp: '{kind}' is not one of current, voltage, power")
    for name, value in (("--from", start), ("--to", stop), ("--at", at), ("--time", ramp_s)):
        if not (math.isfinite(value) and value > 0) and not (name == "--from" and value == 0 and kind == "current"):
            raise SoacheckError(f"{name} is {value:g}; it must be above zero")
    time = np.linspace(0.0, ramp_s, samples)
    ramp = start + (stop - start) * time / ramp_s
    if kind == "current":
        return Trajectory(
            time, np.full(samples, at), ramp, f"current ramp {start:g}→{stop:g} A at {at:g} V in {ramp_s:g} s"
        )
    if kind == "voltage":
        return Trajectory(
            time, ramp, np.full(samples, at), f"voltage ramp {start:g}→{stop:g} V at {at:g} A in {ramp_s:g} s"
        )
    return Trajectory(
        time, ramp, at / ramp, f"constant-power sweep {at:g} W from {start:g} to {stop:g} V in {ramp_s:g} s"
    )
