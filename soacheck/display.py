"""Numbers as a person reads them: the unit beside every value, margins in percent, times in s, min or h.

Tables in the terminal and the report both format values here, by the name the JSON
gives them, so that ``tj_peak`` reads ``178.7 °C`` and ``duration`` ``2.50 h`` wherever
it appears. Units come from :mod:`soacheck.glossary`. Nothing here computes or reads files.
"""

from __future__ import annotations

import math
from typing import Any

from soacheck.glossary import CASE_LIMITS, JUNCTION_LIMITS, LIMITS, STATE_LIMITS, heading, unit

PERCENT = frozenset(
    {
        "margin",
        "margin_to_rating",
        "equal_share",
        "worst_share",
        "mean_worst_share",
        "runaway_fraction",
        "hogging_fraction",
    }
)
"""Fractions shown as percentages in tables and plots (JSON keeps the fraction)."""

_TIME_UNITS = ((7200.0, 3600.0, "h"), (300.0, 60.0, "min"), (1.0, 1.0, "s"), (0.0, 1e-3, "ms"))


def time_unit(duration_s: float) -> tuple[float, str]:
    """The unit a person reads a span of this length in, and its size in seconds.

    From 2 h: hours; from 5 min: minutes; from 1 s: seconds; shorter: milliseconds
    (common practice, no source: a 2.5 h discharge in seconds reads 9000).
    """
    for threshold_s, size_s, name in _TIME_UNITS:
        if duration_s >= threshold_s:
            return size_s, name
    return 1e-3, "ms"


def format_time(seconds: float, *, span_s: float | None = None) -> str:
    """A time with the unit that fits ``span_s`` (or the time itself): ``9000`` → ``2.5 h``."""
    size_s, name = time_unit(abs(seconds) if span_s is None else span_s)
    return f"{seconds / size_s:.4g} {name}"


def device_name(number: int) -> str:
    """A device numbered from 1 as a person names it: ``Q1``."""
    return f"Q{number}"


def failing_device(number: int | None, count: int) -> str | None:
    """The device a failure is at as a person names it (``Q2``), where a stage has more than one device;
    None with one device (there is nothing to tell apart) or no device."""
    return device_name(number) if number and count > 1 else None


def value_text(
    name: str, value: Any, *, with_unit: bool = True, span_s: float | None = None, own_unit: str | None = None
) -> str:
    """``value`` of the JSON name ``name`` for a person: unit beside it (unless ``with_unit`` is False).

    None, NaN and infinities read ``—``; a margin reads ``+34.9 %``; an overload ``14.1``;
    a time in s, min or h as fits (``span_s``: the length of the test, so that all times of
    one test share a unit; without ``with_unit`` a time stays in seconds); a device ``Q2``.
    ``own_unit`` is the unit of a name whose unit depends on the run (a setpoint in A, W
    or Ω), in place of the glossary's.
    """
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, list | tuple):
        return ", ".join(value_text(name, v, with_unit=with_unit) for v in value)
    if isinstance(value, dict):
        return "; ".join(f"{k} {value_text(k, v, with_unit=with_unit)}" for k, v in value.items())
    if name == "device" and isinstance(value, int):
        return device_name(value)
    if not isinstance(value, int | float):
        return str(value)
    if isinstance(value, float) and not math.isfinite(value):
        return "—"
    if name in PERCENT:
        number = f"{value * 100:+.1f}" if name in ("margin", "margin_to_rating") else f"{value * 100:.1f}"
        return f"{number} %" if with_unit else number
    if name == "overload":
        return f"{value:.3g}"
    quantity_unit = own_unit or unit(name)
    if quantity_unit == "s" and with_unit:
        return format_time(float(value), span_s=span_s)
    number = f"{value:.4g}" if isinstance(value, float) else str(value)
    if not with_unit or quantity_unit in ("", "1"):
        return number
    return f"{number} %" if quantity_unit == "%" else f"{number} {quantity_unit}"


def column_heading(name: str) -> str:
    """Heading of a table column of ``name``: the glossary's words and unit; percent for margins."""
    if name in PERCENT:
        return heading(name).replace(" (%)", "") + " (%)"
    return heading(name)


def limit_text(name: str | None) -> str:
    """A limit name as tables show it (the name itself, a glossary word); ``—`` when there is none."""
    if not name:
        return "—"
    return name if name in LIMITS else str(name)


def failure_text(
    summary: dict[str, Any], *, subject: str, span_s: float | None = None, device: str | None = None
) -> str:
    """Why a failing result fails, in one line of words, from its JSON figures.

    The limit it names and its first violation's time lead: a junction limit reads ``the
    junction passes tj_max at 225 ms, peaking at 156.8 °C``; a limit of the stage's state
    (``runaway``, ``drive``, ``dropout``), or another limit passed with the current inside, its
    meaning (``drive at 3 s: the base driver ...``); a case at or above the junction's limit
    (``case_at_tj_max``, ``case_at_tj_ceiling``), where nothing is allowed, its meaning and the
    hottest case (:func:`_nothing_allowed_text`); a current outside the boundary ``SUBJECT
    leaves its safe operating area at 6.25 s (limit power)``. ``device`` names the device the
    failure is at (``Q2``; :func:`failing_device`, given where a stage has more than one):
    ``the junction of Q2 passes ...``, ``drive (Q1) at 3 s: ...``, ``Q2 leaves ...`` in place of
    ``SUBJECT``; ``runaway`` is a state of the whole set and names none. A least margin of 0 or
    more measures the current only and is said to be so, never left to read as the size of the
    failure; a negative one follows as it is. A runaway without a margin (``sharing``: no stable
    state in a draw) says that there is no current margin. A junction limit without a margin (no
    current allowed where it is least) says so (:func:`_nothing_allowed_text`).
    """
    limit, first, margin = summary.get("limit"), summary.get("first_violation_time"), summary.get("margin")
    when = "" if first is None else f" at {value_text('first_violation_time', first, span_s=span_s)}"
    inside = isinstance(margin, int | float) and math.isfinite(margin) and margin >= 0
    least = "" if margin is None else f"least margin {value_text('margin', margin)}"
    if limit == "runaway":  # the whole set's state: no device of it is singled out
        device = None
    if limit in JUNCTION_LIMITS:
        peak = summary.get("tj_peak")
        junction = "the junction" if device is None else f"the junction of {device}"
        text = f"{junction} passes {limit}{when}" + (
            "" if peak is None else f", peaking at {value_text('tj_peak', peak)}"
        )
    elif limit in CASE_LIMITS:
        text = f"{limit}{'' if device is None else f' ({device})'}{when}"
        if margin is None:
            return text + _nothing_allowed_text(summary)
    elif limit in LIMITS and (inside or limit in STATE_LIMITS):
        text = f"{limit}{'' if device is None else f' ({device})'}{when}: {LIMITS[limit]}"
        if margin is None and limit == "runaway":  # no stable state: no current to measure a margin on
            return text + "; no current margin, as no stable current exists"
        if not inside:
            return text if not least else f"{text}; {least}"
    else:
        who = subject if device is None else device
        text = f"{who} leaves its safe operating area{when}" + (f" (limit {limit})" if limit else "")
    if margin is None and limit in JUNCTION_LIMITS:  # no current allowed where the margin is least
        return text + _nothing_allowed_text(summary)
    if inside:
        return text + f"; the current stays inside the SOA boundary ({least})"
    return text if not least else f"{text}, {least}"


def _nothing_allowed_text(summary: dict[str, Any]) -> str:
    """Why a failing result has no margin, in words: where no current is allowed.

    At a case at or above the junction's limit (``case_at_tj_max``; under a policy,
    ``case_at_tj_ceiling``) the SOA allows no current at all (the constant-power line
    (T_limit − Tc)/Rth is zero or less there): the limit's meaning, with the hottest case
    (``case_peak``) and the policy's ceiling where the summary has them. The margin to the
    absolute ratings follows where it is a number.
    """
    limit, case, policy = summary.get("limit"), summary.get("case_peak"), summary.get("policy") or {}
    ceiling = policy.get("tj_ceiling")
    if limit == "case_at_tj_ceiling" and case is not None and ceiling is not None:
        text = (
            f": the case reaches {value_text('case_peak', case)}, at or above the policy's ceiling "
            f"({value_text('tj_ceiling', ceiling)}), where the policy allows no current (no margin)"
        )
    elif limit in CASE_LIMITS:
        reached = "" if case is None else f"the case reaches {value_text('case_peak', case)}; "
        text = f": {LIMITS[limit]} ({reached}no margin)"
    else:
        text = "; where the margin is least no current is allowed (no margin)"
    rated = summary.get("margin_to_rating")
    if policy.get("name") not in (None, "none") and isinstance(rated, int | float) and math.isfinite(rated):
        text += f"; against the absolute ratings, least margin {value_text('margin_to_rating', rated)}"
    return text
