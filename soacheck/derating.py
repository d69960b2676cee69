"""Temperature derating of each SOA mechanism with case temperature.

The thermal (constant-power) limit falls as (tj_max − Tc)/(tj_max − 25 °C), since
P = (tj_max − Tc)/Rth_jc (JEDEC JESD51-1 defines Rth_jc). Second breakdown (bipolar) and
linear-mode instability (FET, IGBT) follow the part's own table, or, where it gives none,
the thermal factor (conservative; published guidance says only that they do not derate
like the thermal limit). The current and voltage limits are not derated (common practice).
"""

from __future__ import annotations

from typing import Literal

import numpy as np

from soacheck.parts import REFERENCE_CASE_C, Part

BreakdownDerating = Literal["auto", "thermal", "none"]
"""How second breakdown (bipolar) or instability (FET, IGBT) is derated with case temperature.

``auto``: the part's ``[derating] second_breakdown`` table where it has one, else like the
thermal limit (conservative). ``thermal``: always like the thermal limit. ``none``: not at
all (non-conservative; for comparison only)."""


def thermal_factor(tc_c: np.ndarray | float, tj_max_c: float) -> np.ndarray:
    """Fraction of the 25 °C thermal (constant-power) limit left at case temperature ``tc_c``.

    f = (tj_max − Tc)/(tj_max − 25 °C), clipped to [0, 1]: no extra allowance is taken
    below 25 °C, and nothing is allowed at or above tj_max.

    References
    ----------
    P = (tj_max − Tc)/Rth_jc, the definition of junction-to-case thermal resistance
    (JEDEC JESD51-1); the linear derating line printed on datasheets (common practice).
    """
    tc = np.asarray(tc_c, dtype=float)
    return np.clip((tj_max_c - tc) / (tj_max_c - REFERENCE_CASE_C), 0.0, 1.0)


def ceiling_factor(tc_c: np.ndarray | float, tj_max_c: float, tj_ceiling_c: float) -> np.ndarray:
    """Fraction of the 25 °C constant-power limit left at ``tc_c`` for a junction kept at or below ``tj_ceiling_c``.

    f = (T_ceiling − max(Tc, 25 °C))/(tj_max − 25 °C), clipped to [0, 1]: the allowed
    power (T_ceiling − Tc)/Rth as a fraction of the 25 °C rating (tj_max − 25 °C)/Rth. With
    the ceiling at tj_max it is :func:`thermal_factor`; nothing is allowed at or above the
    ceiling, and no extra allowance is taken below 25 °C.

    References
    ----------
    P = (T_j − Tc)/Rth_jc, the definition of junction-to-case thermal resistance (JEDEC
    JESD51-1), with the ceiling as T_j.
    """
    tc = np.asarray(tc_c, dtype=float)
    return np.clip((tj_ceiling_c - np.maximum(tc, REFERENCE_CASE_C)) / (tj_max_c - REFERENCE_CASE_C), 0.0, 1.0)


def breakdown_factor(tc_c: np.ndarray | float, part: Part, breakdown: BreakdownDerating = "auto") -> np.ndarray:
    """Fraction of the 25 °C second-breakdown (or instability) limit left at ``tc_c``.

    With the part's table (``auto``): linear between its rows, never rising with
    temperature (a rising table is read as its running minimum), the first row's
    fraction below the table, and beyond the last row the smaller of the last fraction
    and the thermal factor. Without a table, or with ``thermal``: the thermal
    factor (conservative; published guidance says only that second breakdown does not
    derate like the thermal limit). ``none``: 1 (non-conservative).
    """
    tc = np.asarray(tc_c, dtype=float)
    thermal = thermal_factor(tc, part.ratings.tj_max_c)
    if breakdown == "none":
        return np.where(tc >= part.ratings.tj_max_c, 0.0, 1.0)
    if breakdown == "thermal" or part.breakdown_case_c.size == 0:
        return thermal
    fraction = np.minimum.accumulate(part.breakdown_fraction)
    table = np.interp(tc, part.breakdown_case_c, fraction)
    beyond = tc > part.breakdown_case_c[-1]
    table = np.where(beyond, np.minimum(table, thermal), table)
    return np.where(tc >= part.ratings.tj_max_c, 0.0, np.minimum(table, 1.0))


def mechanism_factors(tc_c: np.ndarray, part: Part, breakdown: BreakdownDerating) -> dict[str, np.ndarray]:
    """Derating factor of each mechanism at ``tc_c`` (any shape), under the part's policy if it has one.

    Without a policy: the thermal factor on constant-power lines, the breakdown factor on
    steep lines, 1 on the current limit and the on-resistance line. Under a
    :class:`~soacheck.policy.Policy` (the one place a policy shapes the boundary):
    constant-power lines take :func:`ceiling_factor` with the policy's junction ceiling
    times its ``power_fraction``, and then every line is scaled by its ``current_fraction``,
    so the whole derated boundary is that fraction of itself.
    """
    thermal = thermal_factor(tc_c, part.ratings.tj_max_c)
    steep = breakdown_factor(tc_c, part, breakdown)
    ones = np.ones_like(thermal)
    policy = part.policy
    if policy is not None:
        thermal = ceiling_factor(tc_c, part.ratings.tj_max_c, part.tj_limit_c) * policy.power_factor
    factors = {
        "on_resistance": ones,
        "current": ones,
        "power": thermal,
        "second_breakdown": steep,
        "thermal_instability": steep,
        "unclassified": np.minimum(thermal, steep),
    }
    if policy is not None and policy.current_fraction is not None:
        factors = {name: factor * policy.current_fraction for name, factor in factors.items()}
    return factors


def breakdown_note(part: Part, breakdown: BreakdownDerating) -> str:
    """One sentence on how the steep (breakdown or instability) segments were derated."""
    name = part.steep_mechanism.replace("_", " ")
    if breakdown == "none":
        return f"{name} not derated with case temperature (chosen by the user; NOT conservative)"
    if breakdown == "thermal" or part.breakdown_case_c.size == 0:
        why = "chosen by the user" if breakdown == "thermal" else "the part gives no derating table"
        return f"{name} derated like the thermal limit ({why}; conservative)"
    return f"{name} derated by the part's table [derating] second_breakdown"


def policy_note(part: Part) -> str:
    """One sentence on the design-margin policy the part is judged under, or that there is none."""
    if part.policy is None:
        return (
            "no design-margin policy: judged against the absolute ratings (the edge of the ratings; "
            "--policy bench or a policy file keeps a margin)"
        )
    return (
        part.policy.describe()
        + f"; constant-power lines (T_ceiling − Tc)/Rth with T_ceiling = {part.tj_limit_c:g} °C, junction checks "
        f"against {part.tj_limit_c:g} °C"
    )
