"""The power stage: parallel pass devices with ballast resistors, and the heatsink they share.

A :class:`Stage` holds what the load is built from; :mod:`soacheck.sharing` splits the
current between its devices, :mod:`soacheck.stage_run` follows a trajectory through it
and :mod:`soacheck.steady_state` finds its settled operating points.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from soacheck.bipolar import base_current, junctions
from soacheck.errors import SoacheckError
from soacheck.parts import Part
from soacheck.quantities import DEVICE_COUNT, HEAT_CAPACITY, INTERFACE_RESISTANCE, TEMPERATURE, THERMAL_RESISTANCE
from soacheck.sharing import VBE_TEMPCO_V_PER_K, jacobian_eigenvalues, loop_gain, share_current, sharing_known

SETTLED_K = 1e-4
"""The electro-thermal fixed point counts as settled when no junction moves more than this. [K]"""

RUNAWAY_C = 1000.0
"""A junction temperature no iteration needs to pass: beyond it the fixed point is abandoned. [°C]"""


def sharing_assumption(part: Part) -> str | None:
    """What paralleled devices of ``part`` are judged under where nothing tells how they share; None where it is known.

    A FET or IGBT without ``transfer.csv`` (see :func:`~soacheck.sharing.sharing_known`): one
    device is taken to carry the whole current and the others none. No device of a set carries
    more than the whole current, so this bounds every split the set could take; and it is the
    state of one device alone, whose answer does not depend on the curves (common practice, no
    source). The words name the file and what it must hold, for every stage job's assumptions.
    """
    if sharing_known(bipolar=part.is_bipolar, transfer=part.transfer):
        return None
    return (
        f"no transfer characteristic: {part.id}/transfer.csv is missing, so how paralleled devices of this part "
        "share cannot be judged (their transconductance and ∂I_D/∂T_j come from it); one device, the lowest in "
        "the V_GS band (Q1 in the worst case), is taken to carry the whole current and the others none "
        "(conservative: no sharing credited, loop and stage gains not computed); to credit sharing, add "
        "transfer.csv with columns temp,vgs,current (I_D against V_GS at two or more junction temperatures)"
    )


@dataclass(frozen=True)
class Cooling:
    """A heatsink the case sits on: interface, heatsink and ambient.

    Attributes
    ----------
    case_sink_k_per_w
        Interface resistance from case to heatsink. [K/W]
    sink_ambient_k_per_w
        Heatsink to ambient. [K/W]
    sink_j_per_k
        Heat capacity of the heatsink. [J/K]
    ambient_c
        Ambient temperature. [°C]
    """

    case_sink_k_per_w: float
    sink_ambient_k_per_w: float
    sink_j_per_k: float
    ambient_c: float = 25.0

    def __post_init__(self) -> None:
        for key, quantity, value in (
            ("interface_rth", INTERFACE_RESISTANCE, self.case_sink_k_per_w),
            ("heatsink_rth", THERMAL_RESISTANCE, self.sink_ambient_k_per_w),
            ("heatsink_capacity", HEAT_CAPACITY, self.sink_j_per_k),
            ("ambient", TEMPERATURE, self.ambient_c),
        ):
            quantity.check(value, key)


@dataclass(frozen=True, eq=False)
class Stage:
    """Parallel pass devices of one part type.

    Attributes
    ----------
    part
        The pass device.
    count
        Devices in parallel.
    ballast_ohm
        Emitter (source) resistor of each device. [Ω]
    series_ohm
        Shared sense and wiring resistance in the current path. [Ω]
    vbe_spread_v
        Spread of V_BE (V_GS) between devices at equal current and temperature, as a
        tolerance band: the worst case puts one device at the bottom of the band and the
        others at the top. [V]
    vbe_tempco_v_per_k
        Temperature coefficient of V_BE (V_GS). [V/K]
    cooling
        Heatsink shared by all devices (each with its own interface), or None.
    case_temp_c
        A fixed case temperature instead of a heatsink. [°C]
    drive_limit_a
        The most base current the driver can supply to all devices together, or None. [A]
    """

    part: Part
    count: int
    ballast_ohm: float = 0.0
    series_ohm: float = 0.0
    vbe_spread_v: float = 0.0
    vbe_tempco_v_per_k: float = VBE_TEMPCO_V_PER_K
    cooling: Cooling | None = None
    case_temp_c: float | None = None
    name: str = "stage"
    drive_limit_a: float | None = None

    def __post_init__(self) -> None:
        DEVICE_COUNT.check(self.count, f"{self.name}: count")
        if self.case_temp_c is not None:
            TEMPERATURE.check(self.case_temp_c, f"{self.name}: case_temp")
        for key, value in (
            ("ballast", self.ballast_ohm),
            ("series_resistance", self.series_ohm),
            ("vbe_spread", self.vbe_spread_v),
        ):
            if not (math.isfinite(value) and value >= 0):
                raise SoacheckError(f"{self.name}: {key} is {value:g}; it must be zero or more")
        if (self.cooling is None) == (self.case_temp_c is None):
            raise SoacheckError(f"{self.name}: give either [cooling] or case_temp")

    @property
    def offsets_v(self) -> np.ndarray:
        """Worst-case V_BE offsets, shape ``(count,)``: device 0 at the bottom of the band. [V]"""
        offsets = np.zeros(self.count)
        offsets[0] = -self.vbe_spread_v
        return offsets

    @property
    def sharing_assumption(self) -> str | None:
        """What the devices are judged under where nothing tells how they share; None for one device or where it is
        known. See :func:`sharing_assumption`."""
        return None if self.count == 1 else sharing_assumption(self.part)

    def rated_current_a(self) -> float:
        """Sum of the devices' continuous current ratings; the load should stay well below it. [A]"""
        return self.count * self.part.ratings.i_max_a

    def share(
        self,
        total_a: np.ndarray,
        tj_c: np.ndarray,
        offsets_v: np.ndarray | None = None,
        *,
        start_a: np.ndarray | None = None,
        counts: np.ndarray | None = None,
    ) -> np.ndarray:
        """Each device's current, shape ``(n, m)`` (rows standing for ``counts`` devices each); see
        :func:`share_current`. [A]"""
        return share_current(
            total_a,
            tj_c,
            self.offsets_v if offsets_v is None else offsets_v,
            start_a=start_a,
            counts=counts,
            **self._law(),
        )

    def device_voltage(self, source_v: np.ndarray, total_a: np.ndarray, device_a: np.ndarray) -> np.ndarray:
        """V_CE of each device: the source less the sense-resistor and ballast drops. [V]"""
        return source_v - total_a * self.series_ohm - device_a * self.ballast_ohm

    def loop_gain(
        self, device_a: np.ndarray, vce_v: np.ndarray, rth_k_per_w: float, tj_c: np.ndarray | float = 25.0
    ) -> np.ndarray:
        """Electro-thermal loop gain of each device; see :func:`loop_gain`."""
        return loop_gain(device_a, vce_v, rth_k_per_w, tj_c=tj_c, **self._law())

    def stability_gain(
        self,
        device_a: np.ndarray,
        vce_v: np.ndarray,
        tj_c: np.ndarray,
        *,
        z_self_k_per_w: float,
        z_shared_k_per_w: float = 0.0,
        counts: np.ndarray | None = None,
    ) -> np.ndarray:
        """The whole set's electro-thermal stability gain at each point, ``(m,)``; see :func:`stability_gain`."""
        eigenvalues = self.jacobian_eigenvalues(
            device_a, vce_v, tj_c, z_self_k_per_w=z_self_k_per_w, z_shared_k_per_w=z_shared_k_per_w, counts=counts
        )
        return eigenvalues.real.max(axis=1)

    def jacobian_eigenvalues(
        self,
        device_a: np.ndarray,
        vce_v: np.ndarray,
        tj_c: np.ndarray,
        *,
        z_self_k_per_w: float,
        z_shared_k_per_w: float = 0.0,
        counts: np.ndarray | None = None,
    ) -> np.ndarray:
        """The distinct eigenvalues of the electro-thermal Jacobian at each point, ``(m, k)``, complex.

        Their largest real part is the stability gain (below 1: a stable state); their largest
        modulus is below 1 where plain relaxation of the fixed point converges as well, which is
        not needed of a stable state. See :func:`jacobian_eigenvalues`.
        """
        return jacobian_eigenvalues(
            device_a,
            vce_v,
            tj_c,
            z_self_k_per_w=z_self_k_per_w,
            z_shared_k_per_w=z_shared_k_per_w,
            counts=counts,
            **self._law(),
        )

    def drive_current_a(self, device_a: np.ndarray) -> np.ndarray | None:
        """Base current the driver supplies to all devices at each point, Σ I_E/(h_FE + 1), ``(m,)``. [A]

        0 for FETs and IGBTs (the gate draws no steady current); None for a bipolar part without
        a ``[gain]`` table, whose drive cannot be known. See :func:`~soacheck.bipolar.base_current`.
        """
        if not self.part.is_bipolar:
            return np.zeros(np.shape(device_a)[1:])
        if self.part.gain is None:
            return None
        return base_current(device_a, self.part.gain).sum(axis=0)

    def drive_current_peak_a(self, device_a: np.ndarray) -> float | None:
        """The most base current the driver supplies at any point; None where it cannot be known. [A]"""
        drive = self.drive_current_a(device_a)
        return None if drive is None else float(np.max(drive))

    def _law(self) -> dict:
        """The device law's keywords for :mod:`soacheck.sharing`."""
        return {
            "ballast_ohm": self.ballast_ohm,
            "bipolar": self.part.is_bipolar,
            "tempco_v_per_k": self.vbe_tempco_v_per_k,
            "transfer": self.part.transfer,
            "junctions": junctions(self.part.darlington),
        }

    def with_part(self, part: Part) -> Stage:
        """The same stage with another pass device in place."""
        return dataclasses.replace(self, part=part)
