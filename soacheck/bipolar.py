"""The bipolar pass device: current gain, base drive, and the base-emitter law of one or two junctions.

The driver of a bipolar linear stage must supply I_B = I_E/(h_FE + 1) to every device, and
h_FE falls steeply at high collector current (high-level injection), so the worst point of
a test for the driver is rarely the worst point for the devices. A Darlington pair is one
device with two base-emitter junctions in series: twice the V_BE, twice its slope per
e-fold of current and twice its temperature coefficient, and the product of the gains.

References
----------
- V_BE = V_T ln(I_C/I_S) with V_T = kT/q, dV_BE/dT ≈ −2 mV/K at constant current, and
  I_B = I_E/(β + 1): Sedra & Smith, *Microelectronic Circuits*, the BJT chapter (from memory).
- h_FE falling at high current by high-level injection (the Webster effect): W. M. Webster,
  "On the variation of junction-transistor current-amplification factor with emitter
  current", Proc. IRE 42 (1954) 914–920 (from memory).
- The Darlington pair: S. Darlington, US patent 2,663,806 (1953); gain ≈ β₁β₂ and two
  junctions in series (common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

THERMAL_VOLTAGE_V = 0.02569
"""kT/q at 25 °C. [V]"""

VBE_TEMPCO_V_PER_K = -0.002
"""dV_BE/dT of one junction at constant current, about −2 mV/K (Sedra & Smith, from memory). [V/K]"""


@dataclass(frozen=True, eq=False)
class Gain:
    """DC current gain h_FE against collector current at 25 °C, as ``part.toml [gain]`` gives it.

    Attributes
    ----------
    current_a
        Collector currents, strictly rising, shape ``(k,)``. [A]
    hfe
        h_FE at those currents (for a Darlington, the pair's overall gain), shape ``(k,)``. [1]
    """

    current_a: np.ndarray
    hfe: np.ndarray


def current_gain(current_a: np.ndarray | float, gain: Gain) -> np.ndarray:
    """h_FE at collector currents of any shape.

    Straight between the table's rows on log-log axes; outside the table's currents the
    lowest h_FE in the table (conservative: the driver is asked for the most it could need).
    A single-row table is that h_FE everywhere.
    """
    i = np.asarray(current_a, dtype=float)
    lowest = float(gain.hfe.min())
    if gain.current_a.size == 1:
        return np.full(i.shape, lowest)
    with np.errstate(divide="ignore", invalid="ignore"):
        inside = (i >= gain.current_a[0]) & (i <= gain.current_a[-1])
        log_h = np.interp(np.log(np.where(inside, i, gain.current_a[0])), np.log(gain.current_a), np.log(gain.hfe))
    return np.where(inside, np.exp(log_h), lowest)


def base_current(emitter_a: np.ndarray | float, gain: Gain) -> np.ndarray:
    """Base current I_B = I_E/(h_FE + 1) a device needs at its emitter current (any shape). [A]

    h_FE is read at the collector current I_C = I_E·h_FE/(h_FE + 1); taking it at I_E instead
    reads the gain at a slightly higher current, where it is not higher on the falling side
    of a gain curve and differs by under 1/h_FE in current on the rising side (common
    practice, no source).
    """
    i = np.maximum(np.asarray(emitter_a, dtype=float), 0.0)
    return i / (current_gain(i, gain) + 1.0)


def junctions(darlington: bool) -> int:
    """Base-emitter junctions in series: 2 for a Darlington, else 1."""
    return 2 if darlington else 1
