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
    "case_at_tj_ceiling": (
        "the case is at or above the design policy's temperature ceiling (below tj_max): the policy allows nothing"
    ),
    "tj_ceiling": "the junction would exceed the design policy's temperature ceiling, below tj_max",
    "policy_voltage": "above the design policy's fraction of v_max",
    "runaway": (
        "paralleled devices have no stable state, neither shared nor with one device taking the current: "
        "electro-thermal runaway of the whole set (every device of it is outside)"
    ),
    "dropout": "the stage's resistors alone would need more than the source voltage",
    "drive": "the base driver cannot supply the drive current the device needs",
    "unclassified": "a digitized segment whose slope names no mechanism, derated conservatively",
    "invalid": "the point could not be evaluated (not a number, negative, ...); never reported inside",
}
"""Every value a ``limit`` field can take, with its meaning."""

JUNCTION_LIMITS: tuple[str, ...] = ("tj_max", "tj_ceiling")
"""The limits a junction temperature passes, not the current boundary: a point past one of them
fails while its current may still be inside (a margin of 0 or more)."""

CASE_LIMITS: tuple[str, ...] = ("case_at_tj_max", "case_at_tj_ceiling")
"""The limits of a case at or above the junction's limit (tj_max; under a policy, its ceiling): no
current is allowed there at all, so the margin is −inf (null in the JSON)."""

STATE_LIMITS: tuple[str, ...] = ("runaway", "drive", "dropout")
"""The limits of a stage's state, not of the current boundary: a point that reaches one fails whatever its
current, which keeps its own margin (of 0 or more where the current is inside; ``dropout``: −inf)."""

VERDICTS: dict[str, str] = {
    "pass": "everything checked is inside its derated safe operating area",
    "fail": "something checked is outside, or reaches a limit",
    "invalid": "the input could not be evaluated; never a pass",
}


def _t(name: str, unit: str, text: str, heading: str | None = None) -> Term:
    words = heading or name.replace("_", " ")
    if unit not in ("", "1") and not words.endswith(f"({unit})"):
        words += f" ({unit})"
    return Term(name, unit, text, words)


_TERMS = [
    # the words of every answer
    _t("verdict", "", "pass, fail or invalid: the answer of a check (see the verdicts)"),
    _t(
        "margin",
        "1",
        "1 − I/I_allowed: the fraction of the allowed current still unused; negative outside. Per point at that "
        "point; for a whole result the least over everything checked. A fraction in JSON, a percentage in tables "
        "and plots; null where nothing is allowed, or where paralleled devices have no stable state to measure a "
        "current in (sharing's runaway): the limit says why. It measures the current only: a result that fails "
        "with a margin of 0 or more failed on another limit (a junction past tj_max or tj_ceiling, runaway, drive), "
        "which its limit names (and, over time, its first_violation_time).",
        "margin (%)",
    ),
    _t(
        "overload",
        "1",
        "I/I_allowed where a point is outside (above 1), null where it is inside: how many times the allowed "
        "current flows there.",
        "overload (I/I allowed)",
    ),
    _t(
        "margin_to_rating",
        "1",
        "the margin against the absolute ratings, beside a margin judged under a design-margin policy; "
        "the margin itself without a policy",
    ),
    _t(
        "policy",
        "",
        "the design-margin policy the answer was judged under: name, tj_ceiling (°C), current_fraction, "
        "voltage_fraction, power_fraction (null: no margin on that quantity) and its source; name none: the "
        "absolute ratings",
    ),
    _t(
        "limit",
        "",
        "what bounds the allowed current at that point, or why it fails (see the limits); for a failing test or "
        "trace, what its first violation passed",
    ),
    # the design-margin policy (in the policy object)
    _t("tj_ceiling", "°C", "the policy's junction ceiling, in place of tj_max; null: tj_max", "tj ceiling"),
    _t("current_fraction", "1", "the policy's fraction of the derated boundary's current; null: 1"),
    _t("voltage_fraction", "1", "the policy's fraction of v_max above which nothing is allowed; null: 1"),
    _t("power_fraction", "1", "the policy's fraction of the allowed power on constant-power lines; null: 1"),
    _t("source", "", "where a policy's numbers come from: its file, or the note of a preset"),
    _t("assumptions", "", "every choice made where the data did not decide, conservative unless it says otherwise"),
    # an operating point
    _t("voltage", "V", "voltage across the device (V_CE or V_DS); for a stage or a limit table, the source voltage"),
    _t("current", "A", "current through the device (I_C or I_D); for a stage, the total current"),
    _t("case_temp", "°C", "case temperature the point is checked at; in a stage file, a fixed case temperature"),
    _t("pulse", "", "dc, or the width of a pulse such as 1ms"),
    _t("duty", "1", "duty cycle tp/T of a pulse train in (0, 1]; null for DC and for a single pulse"),
    _t("idle_current", "A", "current standing between the pulses of a point, at the same voltage; 0 for none"),
    _t("inside", "", "true when the point is inside the derated SOA", "inside"),
    _t("allowed_current", "A", "the most current the derated SOA allows at the point's voltage", "allowed"),
    _t("curve", "", "the digitized curve the point was checked against (dc or a pulse width)"),
    _t("extrapolated", "", "true when the point lies beyond the digitized voltage range (conservative)"),
    # results over time
    _t("test", "", "the planned test in words (mode, setpoint, battery or ramp)"),
    _t("duration", "s", "length of the test or trace (tables: s, min or h as fits)"),
    _t("samples", "", "number of samples checked"),
    _t(
        "first_violation_time",
        "s",
        "time of the first sample outside or past a limit (a junction past tj_max or tj_ceiling, runaway and "
        "drive included), null when none is: where a result fails (its limit names what failed there), beside "
        "margin_time, where the current's margin is least",
        "first violation",
    ),
    _t(
        "margin_time",
        "s",
        "time at which the least margin occurs (the current's margin; a result that fails on another limit, a "
        "junction past tj_max say, fails where its first_violation_time points)",
        "margin at",
    ),
    _t(
        "dc_margin",
        "1",
        "a trace sample's margin against the DC boundary alone (derated at its case temperature), beside its "
        "margin against the boundary that judged it: inside an excursion that is a pulse curve, so a pulse that "
        "passes has a dc_margin below 0 and a margin at or above 0. A column of a trace's table only.",
        "DC margin (%)",
    ),
    _t(
        "device",
        "",
        "the device with the least margin, numbered from 1 (Q1, Q2 ...); where a stage has more than one device, "
        "the text of a failing result names the device that failed",
    ),
    _t("time", "s", "time of a sample from the start of the test or trace (a column of a table)"),
    _t("tj", "°C", "junction temperature of a device at a sample (a column of a table)", "Tj (°C)"),
    _t("source_voltage", "V", "the source's voltage at a sample: battery terminals or supply (a column)"),
    _t("total_current", "A", "the stage's total current at a sample (a column of a table)"),
    _t("device_power", "W", "power in one device at a sample (a column of a table)"),
    _t("tj_peak", "°C", "highest junction temperature"),
    _t("tj_peak_time", "s", "time of the highest junction temperature", "tj peak at"),
    _t("case_peak", "°C", "highest case temperature"),
    _t("heatsink_peak", "°C", "highest heatsink temperature"),
    _t("time_outside", "s", "total time spent outside"),
    _t(
        "time_over_tj_max",
        "s",
        "total time the junction (in a stage, any device's) spent above tj_max; under a policy with a tj_ceiling, "
        "above that ceiling (the limit it was judged against)",
    ),
    _t("excursions", "", "runs of samples above the DC boundary, each judged as a pulse"),
    _t(
        "loop_gain_peak",
        "1",
        "highest electro-thermal loop gain of one device (R_th·V·α over its drive's slope); above 1 a device warms "
        "faster than its ballast pulls it back, but the whole set decides: see stage_gain_peak",
    ),
    _t(
        "stage_gain_peak",
        "1",
        "highest real part of the eigenvalues of the whole set of devices' electro-thermal Jacobian (how the settled "
        "junction temperatures answer a change of the temperatures) at the states reported; 1 or more: a state that "
        "cannot hold (runaway). Below 1 a state is stable however far below 0 (devices whose current falls as they "
        "warm). Whether the devices can share is decided on them matched: where their equal split's eigenvalue is 1 "
        "or more, one device takes the current (current hogging, named in the assumptions) or the stage runs away; "
        "where they hog, the gain is that state's, below 1, as envelope checks report it (a run's samples still on "
        "their way into it, whose own gain is 1 or more, are left out)",
    ),
    _t(
        "drive_current_peak",
        "A",
        "most base current the driver supplies to all devices at once, Σ I_E/(h_FE + 1); 0 for FETs; null for a "
        "bipolar part without a [gain] table",
    ),
    _t("device_power_peak", "W", "highest power in one device"),
    _t("sense_resistor_power_peak", "W", "highest power in the shared sense and wiring resistance", "sense R peak"),
    _t("energy", "Wh", "energy taken from the source over the test"),
    _t("max_safe_setpoint", "", "the most demanding setpoint that still passes (A, W or Ω, as the test's mode)"),
    _t(
        "max_setpoint_at_rating",
        "",
        "the most demanding setpoint that passes against the absolute ratings, beside max_safe_setpoint under a "
        "policy (A, W or Ω, as the mode)",
    ),
    # stages and their files, as the user writes them
    _t("stage", "", "the stage: the pass devices, their resistors and cooling (or the stage file's path)"),
    _t("count", "", "devices in parallel"),
    _t("ballast", "Ω", "emitter (source) resistor of each device"),
    _t("series_resistance", "Ω", "shared current-sense and wiring resistance"),
    _t("vbe_spread", "V", "spread of V_BE (V_GS) between devices at equal current and temperature"),
    _t(
        "vbe_tempco",
        "V/K",
        "temperature coefficient of V_BE at constant current (bipolar parts; a FET's or IGBT's comes from its "
        "transfer curves)",
        "vbe tempco",
    ),
    _t("drive_limit", "A", "the most base current the driver can supply to all devices together"),
    _t("cooling", "", "the heatsink the devices share (a [cooling] table in the stage file)"),
    _t("interface_rth", "K/W", "case to heatsink, each device", "interface Rth"),
    _t("heatsink_rth", "K/W", "heatsink to ambient", "heatsink Rth"),
    _t("heatsink_capacity", "J/K", "heat capacity of the heatsink"),
    _t("ambient", "°C", "ambient temperature around the heatsink"),
    # envelopes and limit tables
    _t("envelope", "", "the envelope checked, in words: voltage range, current, power, timing"),
    _t("worst_voltage", "V", "source voltage where the least margin occurs"),
    _t("worst_current", "A", "total current where the least margin occurs"),
    _t("heatsink_temp", "°C", "the heatsink's steady temperature at the envelope's worst power"),
    _t(
        "outside",
        "",
        "the stretches of source voltage that lie outside or where a junction passes tj_max (tj_ceiling), each "
        "with its limit and least margin",
    ),
    _t("from_voltage", "V", "start of a stretch outside", "from"),
    _t("to_voltage", "V", "end of a stretch outside", "to"),
    _t("max_current", "A", "the largest safe total current at that source voltage, rounded down", "max current"),
    _t("current_resolution", "A", "the exported currents are multiples of this, rounded down"),
    _t(
        "written_by",
        "",
        "the program and version that wrote a JSON file (soacheck X.Y), its first key; a later run replaces a "
        "file that carries it without --force, any other file only with --force",
    ),
    # comparisons
    _t("job", "", "what the candidates are compared on, in words"),
    _t("candidates", "", "each candidate part's answer, passing first, then by margin"),
    _t("min_count", "", "the fewest devices in parallel that pass", "fewest devices"),
    _t("max_heatsink_rth", "K/W", "the highest heatsink resistance at which the candidate still passes"),
    _t("max_case_temp", "°C", "the highest case temperature at which the candidate alone still passes"),
    _t("best", "", "the best candidate"),
    _t("passing", "", "how many candidates pass"),
    # sharing
    _t("equal_share", "1", "each device's share of the current if all shared evenly"),
    _t(
        "worst_share",
        "1",
        "the worst device's share of the current at the chosen percentile of the draws that settle (a draw that "
        "runs away has no settled share and is left out); null where no draw settles",
    ),
    _t(
        "mean_worst_share",
        "1",
        "the worst device's share, averaged over the draws that settle; null where no draw settles",
    ),
    _t(
        "worst_device_current",
        "A",
        "the worst device's current at the chosen percentile of the draws that settle; null where no draw settles",
    ),
    _t("percentile", "%", "percentile of the worst share reported"),
    _t(
        "runaway_fraction",
        "1",
        "fraction of random draws that run away thermally (no stable state: limit runaway, margin null, as "
        "there is no current to measure)",
    ),
    _t(
        "hogging_fraction",
        "1",
        "fraction of random draws settled in a state where one device takes the current (current hogging): every "
        "draw that settles where the matched devices' equal split cannot hold (see stage_gain_peak), and any whose "
        "own shared state could not; their shares are that state's",
    ),
    _t("draws", "", "Monte Carlo draws of the V_BE offsets"),
    _t("seed", "", "random seed, for a repeatable answer"),
    # parts
    _t("parts", "", "the parts of the libraries"),
    _t("part", "", "a part id, or the path of a part folder"),
    _t("id", "", "a part id"),
    _t("kind", "", "npn, pnp, nmos, pmos or igbt; for a plan's job, its kind"),
    _t("description", "", "the part's description in words"),
    _t("folder", "", "the part's folder"),
    _t("curves", "", "the digitized curves: dc and pulse widths"),
    _t("v_max", "V", "rated voltage (V_CEO or V_DSS)"),
    _t("i_max", "A", "rated continuous current"),
    _t("p_max", "W", "rated power at 25 °C case"),
    _t("tj_max", "°C", "rated junction temperature"),
    _t("rth_jc", "K/W", "junction-to-case thermal resistance", "Rth jc"),
    _t("findings", "", "what lint found in a part folder"),
    _t("severity", "", "error (the part cannot be trusted) or warning"),
    _t("file", "", "the file a finding is in; for an archive of traces, the trace file"),
    _t("files", "", "an archive of traces: one object per file, in the order given"),
    _t("error", "", "why a file could not be read: the file, its row and the fix"),
    _t("row", "", "the data row of the file a finding is on, from 1"),
    _t("message", "", "the finding and its fix, in words"),
    # plans and reports
    _t("title", "", "the plan's title"),
    _t("plan", "", "the plan file"),
    _t("jobs", "", "each job's answer, failures first"),
    _t("name", "", "the job's name, as the plan gives it"),
    _t("summary", "", "a job's figures: the same names as its command's JSON"),
    _t("headline", "", "a job's answer in one line of words (a column of a plan's table)"),
    _t("rows", "", "a job's table: points, stretches outside or candidates"),
    _t("points", "", "one entry per point checked"),
    _t("points_checked", "", "how many points a job checked"),
    _t("points_outside", "", "how many of them lie outside"),
    _t("plots", "", "the job's plot files, relative to the report"),
    _t("cautions", "", "the safety cautions every report carries"),
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


def words(name: str) -> str:
    """``name`` in words without its unit, for a row whose value carries the unit: ``tj peak``."""
    found = TERMS.get(name)
    if found is None:
        return name.replace("_", " ")
    return found.heading.removesuffix(f" ({found.unit})").removesuffix(" (%)")


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
