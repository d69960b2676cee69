"""The part: a transistor's ratings and its digitized SOA curves.

Frozen dataclasses only; reading files is :mod:`soacheck.partfiles`' job. All values
are SI: volts, amperes, watts, degrees Celsius, kelvin per watt, seconds.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Literal

import numpy as np
from numpy.typing import ArrayLike

from soacheck.bipolar import Gain
from soacheck.mosfet import TransferCurves
from soacheck.partheader import BIPOLAR_KINDS, KINDS, Kind  # noqa: F401  (KINDS: soacheck.parts.KINDS, as before)
from soacheck.units import format_duration

if TYPE_CHECKING:
    from soacheck.policy import Policy


REFERENCE_CASE_C = 25.0
"""Case temperature at which datasheet SOA curves are drawn. [°C]"""


@dataclass(frozen=True)
class Ratings:
    """Absolute maximum ratings of a part, as the datasheet gives them.

    Attributes
    ----------
    v_max_v
        Voltage rating: VCEO, VDSS or VCES. [V]
    i_max_a
        Continuous current rating. [A]
    p_max_w
        Dissipation rating at 25 °C case. [W]
    tj_max_c
        Highest junction temperature. [°C]
    rth_jc_k_per_w
        Junction-to-case thermal resistance. [K/W]
    i_pulse_max_a
        Pulsed current rating, or None where the datasheet gives none. [A]
    """

    v_max_v: float
    i_max_a: float
    p_max_w: float
    tj_max_c: float
    rth_jc_k_per_w: float
    i_pulse_max_a: float | None = None


@dataclass(frozen=True, eq=False)
class SoaCurve:
    """One digitized SOA polyline at 25 °C case.

    Attributes
    ----------
    pulse_s
        Single-pulse width the curve is drawn for; ``math.inf`` for DC. [s]
    voltage_v, current_a
        Vertices of the polyline, voltage strictly increasing, shape ``(n,)``. [V], [A]
    lines
        File line of each vertex, shape ``(n,)``, for messages; zeros when not from a file.
    """

    pulse_s: float
    voltage_v: np.ndarray
    current_a: np.ndarray
    lines: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))

    @property
    def label(self) -> str:
        """The pulse width as a datasheet writes it: ``dc``, ``1ms``."""
        return format_duration(self.pulse_s)

    @property
    def is_dc(self) -> bool:
        return math.isinf(self.pulse_s)


@dataclass(frozen=True, eq=False)
class Part:
    """A transistor: identity, ratings, SOA curves and optional derating and thermal data.

    Attributes
    ----------
    id, kind, description, source
        As in ``part.toml``.
    ratings
        Absolute maximum ratings.
    curves
        SOA curves sorted by pulse width, shortest first; the last is DC.
    breakdown_case_c, breakdown_fraction
        Optional table derating second breakdown (bipolar) or linear-mode instability
        (FET, IGBT) with case temperature, shape ``(k,)``; empty when the part has none. [°C], [1]
    foster_r_k_per_w, foster_tau_s
        Optional Foster terms of the junction-to-case thermal impedance, shape ``(m,)``. [K/W], [s]
    zth_time_s, zth_k_per_w
        Optional digitized single-pulse Zth curve (``zth.csv``), shape ``(k,)``. [s], [K/W]
    transfer
        Optional transfer characteristic at two or more junction temperatures
        (``transfer.csv``; FET, IGBT), or None.
    gain
        Optional DC current gain against collector current (``[gain]``; bipolar), or None.
    darlington
        True for a Darlington pair (bipolar): two base-emitter junctions in series.
    folder
        Where the part was read from, or None.
    policy
        The design-margin policy the part is judged under (see :meth:`under`), or None:
        the absolute ratings.
    """

    id: str
    kind: Kind
    description: str
    source: str
    ratings: Ratings
    curves: tuple[SoaCurve, ...]
    breakdown_case_c: np.ndarray = field(default_factory=lambda: np.zeros(0))
    breakdown_fraction: np.ndarray = field(default_factory=lambda: np.zeros(0))
    foster_r_k_per_w: np.ndarray = field(default_factory=lambda: np.zeros(0))
    foster_tau_s: np.ndarray = field(default_factory=lambda: np.zeros(0))
    zth_time_s: np.ndarray = field(default_factory=lambda: np.zeros(0))
    zth_k_per_w: np.ndarray = field(default_factory=lambda: np.zeros(0))
    transfer: TransferCurves | None = None
    gain: Gain | None = None
    darlington: bool = False
    folder: Path | None = None
    policy: Policy | None = None

    @property
    def is_bipolar(self) -> bool:
        return self.kind in BIPOLAR_KINDS

    @property
    def steep_mechanism(self) -> Literal["second_breakdown", "thermal_instability"]:
        """What a segment steeper than constant power means for this kind of part."""
        return "second_breakdown" if self.is_bipolar else "thermal_instability"

    @property
    def dc_curve(self) -> SoaCurve:
        return self.curves[-1]

    @property
    def pulse_widths_s(self) -> np.ndarray:
        """Pulse widths of the digitized curves, shortest first, ``inf`` for DC. [s]"""
        return np.array([c.pulse_s for c in self.curves])

    def curve_for(self, pulse_s: float) -> SoaCurve:
        """The digitized curve that conservatively covers a single pulse of width ``pulse_s``.

        A width between two digitized widths takes the longer one; a width shorter than
        the shortest takes the shortest; a width longer than the longest pulse curve
        takes DC. Interpolating between pulse curves is not conservative (in log-log
        interpolation a 3 ms curve between 1 ms and 10 ms lies above the true one;
        common practice, no source), so none is done.
        """
        return self.curves[int(self.curve_index(pulse_s))]

    def allowed_current(
        self,
        voltage: ArrayLike,
        case_temp: ArrayLike = REFERENCE_CASE_C,
        pulse: str | float = "dc",
        duty: float | None = None,
        *,
        idle_current: ArrayLike = 0.0,
        breakdown: Literal["auto", "thermal", "none"] = "auto",
        policy: Policy | str | Path | None = None,
    ) -> float | np.ndarray:
        """The highest current allowed at each voltage; see :func:`soacheck.allowed_current`.

        Parameters
        ----------
        voltage
            Voltage across the device, any shape. [V]
        case_temp
            Case temperature, broadcast against ``voltage``. [°C]
        pulse
            ``"dc"``, a width such as ``"1ms"``, or seconds.
        duty
            Duty cycle of a pulse train in (0, 1]; None for DC or a single pulse. [1]
        idle_current
            Current standing between the pulses, at the same voltage, broadcast; 0 for none. [A]
        breakdown
            Second-breakdown derating: ``auto``, ``thermal`` or ``none``.
        policy
            A design-margin policy (a :class:`~soacheck.policy.Policy`, ``"bench"``, ``"none"`` or a
            policy file) to judge under instead of the part's own (:attr:`policy`); None keeps it.

        Returns
        -------
        float or numpy.ndarray
            The allowed current [A]: a float for scalars, else the broadcast shape; 0 above
            ``v_max`` or at ``tj_max`` (under a policy: above its voltage fraction, at its ceiling);
            NaN where a point cannot be evaluated.
        """
        from soacheck.api.points import allowed_current  # the API sits above the part; imported when called

        part = self if policy is None else self.rated
        return allowed_current(
            part,
            voltage,
            case_temp=case_temp,
            pulse=pulse,
            duty=duty,
            idle_current=idle_current,
            breakdown=breakdown,
            policy=policy,
        )

    def curve_index(self, pulse_s: np.ndarray | float) -> np.ndarray:
        """Index into :attr:`curves` of the curve :meth:`curve_for` picks, for any shape of widths. [s]"""
        widths = self.pulse_widths_s
        # a relative tolerance lets 1e-3 s written as "1ms" match the 1 ms curve exactly
        index = np.searchsorted(widths, np.asarray(pulse_s, dtype=float) * (1 - 1e-9), side="left")
        return np.minimum(index, widths.size - 1)

    def under(self, policy: Policy | None) -> Part:
        """The same part judged under a design-margin ``policy``; None or a policy taking no margin: the ratings.

        Raises
        ------
        SoacheckError
            The policy's ceiling is above this part's tj_max.
        """
        if policy is None or policy.is_none:
            return self if self.policy is None else replace(self, policy=None)
        policy.check_for(self.ratings.tj_max_c, self.id)
        return replace(self, policy=policy)

    @property
    def rated(self) -> Part:
        """The same part judged against its absolute ratings (no policy)."""
        return self.under(None)

    @property
    def tj_limit_c(self) -> float:
        """The junction temperature not to exceed: the policy's ceiling, else tj_max. [°C]"""
        return self.ratings.tj_max_c if self.policy is None else self.policy.ceiling_c(self.ratings.tj_max_c)

    @property
    def tj_limit(self) -> Literal["tj_max", "tj_ceiling"]:
        """The limit a junction above :attr:`tj_limit_c` is reported as."""
        return "tj_ceiling" if self.policy is not None and self.policy.tj_ceiling_c is not None else "tj_max"

    def case_limit(self, tc_c: float) -> Literal["case_at_tj_max", "case_at_tj_ceiling"]:
        """The limit a case at ``tc_c`` [°C], at or above :attr:`tj_limit_c`, is reported as (nothing is allowed
        there): ``case_at_tj_max`` from tj_max, below it (at or above a policy's ceiling) ``case_at_tj_ceiling``,
        as :attr:`tj_limit` names the junction's."""
        return "case_at_tj_max" if tc_c >= self.ratings.tj_max_c or self.tj_limit == "tj_max" else "case_at_tj_ceiling"

    @property
    def v_limit_v(self) -> float:
        """The highest voltage allowed: the policy's fraction of v_max, else v_max. [V]"""
        return self.ratings.v_max_v * (1.0 if self.policy is None else self.policy.voltage_factor)

    @property
    def v_limit(self) -> Literal["voltage", "policy_voltage"]:
        """The limit a voltage above :attr:`v_limit_v` (but not above v_max) is reported as."""
        return "policy_voltage" if self.policy is not None and self.policy.voltage_fraction is not None else "voltage"
