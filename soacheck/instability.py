"""The thermal instability of a FET or IGBT in linear mode, as a line of the SOA boundary.

From a part's transfer characteristic (:mod:`soacheck.mosfet`) the allowed current at each
voltage is capped below the smallest current at which V·α(I)·Z reaches 1. This module turns
that cap into a :class:`~soacheck.mechanisms.MechanismLine` the boundary can take the lower
envelope of, and says in words what it assumed.

References
----------
Spirito, Breglio, d'Alessandro, Rinaldi, "Thermal instabilities in high current power MOS
devices: experimental evidence, electro-thermal simulations and analytical modeling",
MIEL 2002.
"""

from __future__ import annotations

import numpy as np

from soacheck.mechanisms import MechanismLine
from soacheck.mosfet import instability_cap, ztc_point
from soacheck.parts import Part


def instability_line(part: Part, z_k_per_w: float) -> tuple[MechanismLine, ...]:
    """The thermal instability cap of a part with a transfer characteristic, as a line; none without one.

    The cap (:func:`~soacheck.mosfet.instability_cap`) is the smallest current at which
    V·α(I)·Z reaches 1; it is not derated with case temperature. Beyond its vertices: at
    lower voltages it rises steeply (the onset, where V·max α·Z = 1, is nearly vertical) or,
    when the zero-temperature-coefficient point lies above the digitized currents, holds at
    the highest of them (no current above is known to be stable); at higher voltages its
    last segment extends below the lowest digitized current.

    References
    ----------
    Spirito, Breglio, d'Alessandro, Rinaldi, MIEL 2002.
    """
    if part.transfer is None or part.is_bipolar:
        return ()
    cap = instability_cap(part.transfer, z_k_per_w)
    if cap.is_empty:
        return ()
    log_v, log_i = np.log(cap.voltage_v), np.log(cap.current_a)
    if cap.capped_above:  # flat to the left of the first vertex
        log_v, log_i = np.r_[log_v[0] - 1.0, log_v], np.r_[log_i[0], log_i]
    elif log_v.size == 1:  # the onset lies at the lowest digitized current: vertical there, then I ∝ V^-2
        log_v = np.r_[log_v[0] - 1e-3, log_v[0], log_v[0] + 1.0]
        log_i = np.r_[log_i[0] + 7.0, log_i[0], log_i[0] - 2.0]
    return (MechanismLine("thermal_instability", log_v, log_i, derated=False),)


def instability_notes(part: Part) -> list[str]:
    """What the thermal instability check of a FET or IGBT rests on, in words; nothing for a bipolar part."""
    if part.is_bipolar:
        return []
    if part.transfer is None:
        return [
            "no transfer characteristic (transfer.csv): no thermal-instability check beyond the digitized SOA "
            "curve was possible"
        ]
    low, high = part.transfer.current_range_a
    ztc = ztc_point(part.transfer)
    notes = [
        "thermal instability from transfer.csv: the current is capped below the smallest current where "
        "V·α(I)·Z reaches 1, α = ∂I_D/∂T_j at fixed V_GS from the curves, Z = rth_jc for DC with the case held, "
        "Zth(tp, D) for pulses, not derated with case temperature (Spirito et al., MIEL 2002)"
    ]
    if ztc.side == "within":
        notes.append(f"zero-temperature-coefficient current {ztc.current_a:.3g} A (where the transfer curves cross)")
    elif ztc.side == "above":
        notes.append(
            f"the transfer curves do not cross up to {high:g} A: the zero-temperature-coefficient point lies beyond "
            "the digitized range, so where the cap applies the current is held at that last digitized current"
        )
    else:
        notes.append(
            f"the transfer curves show no positive α down to {low:g} A: the zero-temperature-coefficient point lies "
            "below the digitized range and no instability could be found in it"
        )
    notes.append(f"below {low:g} A, the lowest current every transfer curve reaches, the cap is extended")
    return notes
