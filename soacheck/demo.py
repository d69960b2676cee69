"""The bundled demo scenario: an invented bench that discharges used e-bike packs.

A community bicycle workshop wants to test the capacity of donated 10-cell Li-ion
e-bike packs (42 V full, 30 V at cut-off) on a home-built linear load with two pass
transistors in parallel, each on its own heatsink. They plan a 6 A discharge (3 A per
device, allowing for uneven sharing) and a 10 ms, 16 A internal-resistance pulse at
full charge, and weigh four candidate devices from the demo library. The numbers are
invented; they exercise the checks, not a real design.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from soacheck.battery import PRESETS, Battery
from soacheck.parts import Part
from soacheck.stage import Stage
from soacheck.trace import Cooling

DEMO_FOLDER = "soacheck-demo"
DEMO_MARKER = ".soacheck-demo"
"""A file the demo leaves in its folder, so that it may rewrite that folder next time."""

CANDIDATES = ("demo-npn-to3-250w", "demo-npn-to247-125w", "demo-npn-to220-62w", "demo-nmos-to247-300w")

DEVICES = 2
SHARE_WORST = 0.55
"""Fraction of the total current taken by the hotter device (assumed uneven sharing)."""


def demo_points() -> pd.DataFrame:
    """Per-device operating points of the planned test, as a points table.

    The discharge runs from 42 V to 30 V at 6 A total; the hotter device takes 55 % of
    it (3.3 A) and sees the pack voltage less 0.5 V of sense and ballast drops, with its
    case warming from 35 °C to 70 °C over the discharge. The pulse puts 16 A total
    (8.8 A in the hotter device) on the full pack for 10 ms.
    """
    pack_v = np.linspace(42.0, 30.0, 7)
    progress = (42.0 - pack_v) / 12.0
    discharge = pd.DataFrame(
        {
            "voltage": np.round(pack_v - 0.5, 2),
            "current": SHARE_WORST * 6.0,
            "case_temp": np.round(35.0 + 35.0 * np.sqrt(progress), 1),
            "pulse": "dc",
        }
    )
    pulse = pd.DataFrame({"voltage": [41.0], "current": [SHARE_WORST * 16.0], "case_temp": [35.0], "pulse": ["10ms"]})
    return pd.concat([discharge, pulse], ignore_index=True)


PACK_CELLS = 10
PACK_AH = 10.0
PACK_R_OHM = 0.15
DISCHARGE_A = 6.0


def demo_battery() -> Battery:
    """The donated pack: 10 NMC cells in series, 10 Ah, 0.15 Ω (invented)."""
    return Battery(PRESETS["nmc"], PACK_CELLS, PACK_AH, PACK_R_OHM)


def demo_stage(part: Part) -> Stage:
    """The bench's two pass devices on one heatsink (invented): 0.1 Ω ballasts, a 20 mΩ
    sense resistor, a 20 mV V_BE band, 0.3 K/W pads, a 0.15 K/W finned heatsink of
    1500 J/K (about 1.7 kg of aluminium) in a 25 °C room."""
    return Stage(
        part,
        2,
        ballast_ohm=0.1,
        series_ohm=0.02,
        vbe_spread_v=0.02,
        cooling=Cooling(0.3, 0.15, 1500.0, 25.0),
        name="demo bench",
    )
