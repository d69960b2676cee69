"""Pulses that repeat, or stand on a current between them: the lines that bound them, derated.

Datasheet pulse curves are single pulses from a junction at the case temperature. A pulse
train, or a pulse on a standing current, heats the junction between pulses too: its
peak follows from superposition in the linear thermal network, and it starts each pulse
hotter than the case, where second breakdown and instability are judged.

References
----------
- Superposition of the standing power and the pulse train's exact periodic impedance:
  elementary, for any linear thermal network (the Foster form: JEDEC JESD51-14).
- Single-pulse second-breakdown curves hold for a junction that starts at the case
  temperature (common practice, no source).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from soacheck.derating import BreakdownDerating, mechanism_factors
from soacheck.parts import Part
from soacheck.search import highest_each
from soacheck.thermal_model import thermal_model

if TYPE_CHECKING:
    from soacheck.boundary import PulseLines


def repeated_pulse_lines(
    voltage_v: np.ndarray,
    tc_c: np.ndarray,
    idle_current_a: np.ndarray,
    part: Part,
    bound: PulseLines,
    pulse_s: float,
    duty: float,
    *,
    breakdown: BreakdownDerating,
) -> np.ndarray:
    """ln I of every derated line of a modelled pulse condition, shape ``(lines, points)``.

    Parameters
    ----------
    voltage_v, tc_c, idle_current_a
        Voltage, case temperature and current standing between pulses, shape ``(n,)``. [V], [°C], [A]
    bound
        The pulse condition's lines (:func:`pulse_lines` with the thermal model).
    pulse_s, duty
        The pulse width and duty cycle (0 for a single pulse). [s], [1]

    Notes
    -----
    The thermal network is linear, so with P_idle = V·I_idle standing between pulses of
    power P the junction peaks, in the periodic steady state, at

        Tj = Tc + P_idle·Rth + (P − P_idle)·Zth(tp, D)

    and starts each pulse at Tc + P_idle·Rth + (P − P_idle)·Z_start(tp, D) (superposition;
    see :func:`~soacheck.thermal.pulse_train_zth_start`). The constant-power line
    P = (tj_max − 25 °C)/Zth(tp, D) derated at Tc + P_idle·(Rth − Zth(tp, D)) gives exactly
    the largest P with Tj ≤ tj_max (under a policy, its junction ceiling). Second-breakdown,
    instability and unclassified lines hold for a junction that starts the pulse at the case
    temperature (common practice, no source), so they are derated at the junction
    temperature where each pulse starts, which rises with the pulse current itself: the
    allowed current is the largest I with I ≤ I_line(V)·f(T_start(I)), found by bisection.
    A single pulse with no standing current starts at Tc, which leaves these lines as they are.
    """
    model = thermal_model(part)
    rth = model.foster.rth_k_per_w
    z_peak = float(model.pulse_zth(pulse_s, duty))
    z_start = float(model.pulse_zth_start(pulse_s, duty))
    p_idle = voltage_v * idle_current_a
    tc_power = tc_c + p_idle * (rth - z_peak)
    start_base = tc_c + p_idle * (rth - z_start)
    start_per_a = voltage_v * z_start
    log_v = np.log(voltage_v)
    stacked = []
    for line in bound.lines:
        log_i = line(log_v)
        if not line.derated:
            stacked.append(log_i)
            continue
        if line.mechanism in ("current", "on_resistance", "power"):
            # the one place derating (and a policy) scales a line: mechanism_factors
            at_c = tc_power if line.mechanism == "power" else tc_c
            with np.errstate(divide="ignore"):
                stacked.append(log_i + np.log(mechanism_factors(at_c, part, breakdown)[line.mechanism]))
            continue

        def factor(t_c: np.ndarray, name: str = line.mechanism) -> np.ndarray:
            return mechanism_factors(t_c, part, breakdown)[name]

        line_a = np.exp(log_i)
        first = line_a * factor(start_base)
        if z_start > 0:
            first = highest_each(
                lambda i, a=line_a: i <= a * factor(start_base + start_per_a * i), np.zeros_like(first), first
            )
        with np.errstate(divide="ignore"):
            stacked.append(np.log(first))
    return np.stack(stacked)
