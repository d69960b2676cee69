"""The words soacheck's outputs use, each with its meaning and unit: the one place they are defined.

The README's glossary, the JSON Schemas' descriptions, table headings, plot labels and the
report all draw from here, so a word means the same thing wherever a person reads it.

``LIMITS`` are the values of every ``limit`` field: what bounds the allowed current at a
point, or why a point fails. ``TERMS`` are the other names of the JSON output, each with
the unit of its value (an empty unit for names without one, ``"1"`` for a fraction or a
ratio). Inside the code every quantity is SI (V, A, W, °C, K/W, J/K, s); a unit here is
what the JSON carries.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Term:
    """A word of the output: its meaning and the unit of its value.

    Attributes
    ----------
    name
        The word as it appears in JSON, tables and the report (``margin``, ``tj_peak``).
    unit
        Unit of the value in JSON: ``"V"``, ``"°C"``, ``"1"`` for a fraction or a ratio,
        ``""`` for a name, a count or a flag.
    text
        One or two sentences a person reads in the README and the schemas.
    heading
        The column heading in tables, words without underscores and the unit in
        parentheses where there is one.
    """

    name: str
    unit: str
    text: str
    heading: str


LIMITS: dict[str, str] = {
    "current": "the current-limit segment of the SOA (bond wires, metallization); not derated with temperature",
    "power": "the constant-power (thermal) segment of the SOA, derated as (tj_max − Tc)/(tj_max − 25 °C)",
    "second_breakdown": "the second-breakdown segment of a bipolar transistor's SOA",
    "thermal_instability": (
        "the linear-mode electro-thermal instability of a MOSFET or IGBT (the steep digitized segment, or from the "
        "part's transfer curves)"
    ),
    "voltage": "the voltage rating v_max, or beyond the digitized voltage range: nothing is allowed there",
    "on_resistance": "above the on-resistance line of a MOSFET or IGBT: the point cannot be reached",
    "tj_max": "the junction would exceed its rated tj_max (thermal model, trace, stage)",
    "case_at_tj_max": "the case is at or above tj_max: nothing is allowed",
    "tj_ceiling": "the junction would exceed the design policy's temperature ceiling, below tj_max",
    "policy_voltage": "above the design policy's fraction of v_max",
    "runaway": "paralleled devices have no stable shared state: electro-thermal runaway (current hogging)",
    "dropout": "the stage's resistors alone would need more than the source voltage",
    "drive": "the base driver cannot supply the drive current the device needs",
    "unclassified": "a digitized segment whose slope names no mechanism, derated conservatively",
    "invalid": "the point could not be evaluated (not a number, negative, ...); never reported inside",
}
"""Every value a ``limit`` field can take, with its meaning."""

VERDICTS: dict[str, str] = {
    "pass": "everything checked is inside its derated safe operating area",
    "fail": "something checked is outside, or reaches a limit",
    "invalid": "the input could not be evaluated; never a pass",
}


def _t(name: str, unit: str, text: str, heading: str | None = None) -> Term:
    words = (heading or name.replace("_", " ")) + (f" ({unit})" if unit not in ("", "1") else "")
    return Term(name, unit, text, words)


_TERMS = [
    # the words of every answer
    _t("verdict", "", "pass, fail or invalid: the answer of a check (see the verdicts)"),
    _t(
        "margin",
        "1",
        "1 − I/I_allowed: the fraction of the allowed current still unused; negative outside. Per point at that "
        "point; for a whole result the least over everything checked. A fraction in JSON, a percentage in tables "
        "and plots.",
    ),
    _t(
        "overload",
        "1",
        "I/I_allowed where a point is outside (above 1), null where it is inside: how many times the allowed "
        "current flows there.",
        "overload (I/I allowed)",
    ),
    _t("limit", "", "what bounds the allowed current at that point, or why it fails (see the limits)"),
    _t("assumptions", "", "every choice made where the data did not decide, conservative unless it says otherwise"),
    # an operating point
    _t("voltage", "V", "voltage across the device (V_CE or V_DS); for a stage, the source voltage"),
    _t("current", "A", "current through the device (I_C or I_D); for a stage, the total current"),
    _t("case_temp", "°C", "case temperature the point is checked at", "case temp"),
    _t("pulse", "", "dc, or the width of a pulse such as 1ms"),
    _t("duty", "1", "duty cycle tp/T of a pulse train in (0, 1]; null for DC and for a single pulse"),
    _t("inside", "", "true when the point is inside the derated SOA"),
    _t("allowed_current", "A", "the most current the derated SOA allows at the point's voltage", "allowed"),
    _t("curve", "", "the digitized curve the point was checked against (dc or a pulse width)"),
    _t("extrapolated", "", "true when the point lies beyond the digitized voltage range (conservative)"),
    # results over time
    _t("duration", "s", "length of the test or trace"),
    _t("samples", "", "number of samples checked"),
    _t("first_violation_time", "s", "time of the first sample outside, null when none is", "first violation"),
    _t("margin_time", "s", "time at which the least margin occurs", "margin at"),
    _t("tj_peak", "°C", "highest junction temperature"),
    _t("tj_peak_time", "s", "time of the highest junction temperature", "tj peak at"),
    _t("case_peak", "°C", "highest case temperature"),
    _t("heatsink_peak", "°C", "highest heatsink temperature"),
    _t("time_outside", "s", "total time spent outside"),
    _t("time_over_tj_max", "s", "total time the junction spent above tj_max"),
    _t("excursions", "", "runs of samples above the DC boundary, each judged as a pulse"),
    _t("worst_device", "", "the device (Q1, Q2 ...) with the least margin"),
    _t("loop_gain_peak", "1", "highest electro-thermal loop gain; 1 or more is runaway"),
    _t("device_power_peak", "W", "highest power in one device"),
    _t(
        "sense_resistor_power_peak",
        "W",
        "highest power in the shared sense and wiring resistance",
        "sense R power peak",
    ),
    _t("energy", "Wh", "energy taken from the source over the test"),
    _t("max_safe_setpoint", "", "the most demanding setpoint that still passes (A, W or Ω, as the mode)"),
    # stages, envelopes, comparisons
    _t("count", "", "devices in parallel"),
    _t("worst_voltage", "V", "source voltage where the least margin occurs"),
    _t("worst_current", "A", "total current where the least margin occurs"),
    _t("max_current", "A", "the largest safe total current at that source voltage, rounded down", "max current"),
    _t("min_count", "", "the fewest devices in parallel that pass", "fewest devices"),
    _t("max_heatsink_rth", "K/W", "the highest heatsink resistance at which the candidate still passes"),
    _t("max_case_temp", "°C", "the highest case temperature at which the candidate alone still passes"),
    _t("equal_share", "1", "each device's share of the current if all shared evenly"),
    _t("worst_share", "1", "the worst device's share of the current at the chosen percentile"),
    _t("runaway_fraction", "1", "fraction of random draws that run away thermally"),
    # the part
    _t("v_max", "V", "rated voltage (V_CEO or V_DSS)"),
    _t("i_max", "A", "rated continuous current"),
    _t("p_max", "W", "rated power at 25 °C case"),
    _t("tj_max", "°C", "rated junction temperature"),
    _t("rth_jc", "K/W", "junction-to-case thermal resistance", "Rth jc"),
]

TERMS: dict[str, Term] = {term.name: term for term in _TERMS}
"""The names of the JSON output other than the limits, with their units."""


def term(name: str) -> Term:
    """The glossary entry of ``name``; a KeyError names a word the glossary lacks."""
    return TERMS[name]


def heading(name: str) -> str:
    """Table heading of ``name``: words and the unit, such as ``tj peak (°C)``; the name itself if unknown."""
    found = TERMS.get(name)
    return found.heading if found else name.replace("_", " ")


def unit(name: str) -> str:
    """Unit of ``name``'s value in JSON (``""`` when it has none or is unknown)."""
    found = TERMS.get(name)
    return found.unit if found else ""


def markdown() -> str:
    """The glossary as the README shows it: limits, verdicts, then every other name with its unit."""
    lines = [
        "| `limit` | meaning |",
        "|---|---|",
        *(f"| `{name}` | {text} |" for name, text in LIMITS.items()),
        "",
        "| `verdict` | meaning |",
        "|---|---|",
        *(f"| `{name}` | {text} |" for name, text in VERDICTS.items()),
        "",
        "| name | unit | meaning |",
        "|---|---|---|",
        *(f"| `{t.name}` | {t.unit or '—'} | {t.text} |" for t in _TERMS),
    ]
    return "\n".join(lines) + "\n"
