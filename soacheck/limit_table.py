"""The limit table a load's controller enforces: one set of conservative numbers, three formats.

A :class:`~soacheck.envelope.SafeEnvelope` holds the highest safe total current at each
source voltage as the bisection left it. What leaves soacheck for firmware, a spreadsheet
or a review is this table instead: every current rounded *down* to a multiple of a stated
resolution (1 mA unless asked otherwise), the voltages as given, and the same numbers in
the CSV, the JSON and the C header, each file stating the rounding, the lookup rule and
the assumptions behind the numbers.

The lookup rule, written into every file: at a source voltage V with
``voltage[k] <= V <= voltage[k + 1]`` the current is limited to the lower of
``max_current[k]`` and ``max_current[k + 1]``; outside the first and last breakpoint
nothing is allowed. It is conservative wherever the safe current falls with voltage
between two breakpoints, which holds for every mechanism soacheck knows (common
practice, no source: an SOA boundary never rises with voltage, except along the
on-resistance line, where the current limit caps it).
"""

from __future__ import annotations

import json
import math
import textwrap
from collections.abc import Callable
from dataclasses import dataclass, field
from decimal import ROUND_FLOOR, Decimal

from soacheck.envelope import SafeEnvelope
from soacheck.errors import SoacheckError
from soacheck.filemarks import first_line, json_mark
from soacheck.policy import NO_POLICY, policy_of
from soacheck.units import format_duration

CURRENT_RESOLUTION_A = 0.001
"""Currents in an exported limit table are multiples of this, rounded down. [A]"""

LOOKUP_RULE = (
    "between two breakpoints limit the total current to the lower of their two currents; "
    "below the first and above the last breakpoint allow nothing"
)


def floor_to(value: float, resolution: float) -> float:
    """``value`` rounded down to a multiple of ``resolution``, exactly, never up.

    The rounding is done in decimal on the exact binary value, so no floating-point error
    can round a limit up; the result is the float nearest that decimal multiple, which is
    never above ``value`` (it lies between the decimal multiple and ``value``, or on it).
    Non-finite or negative values give 0 (nothing allowed). [same unit as ``value``]
    """
    if not math.isfinite(value) or value <= 0:
        return 0.0
    step = Decimal(repr(resolution))
    return float((Decimal(value) / step).to_integral_value(rounding=ROUND_FLOOR) * step)


@dataclass(frozen=True)
class LimitTable:
    """The exported limit table: breakpoints, rounded-down currents and what limits each.

    Attributes
    ----------
    part, count
        The stage's part id and number of devices in parallel.
    pulse, duty
        ``"dc"`` or a pulse width such as ``"10ms"``; the duty cycle, ``None`` for DC and
        single pulses.
    voltage_v
        Source voltages of the breakpoints, rising, as given. [V]
    max_current_a
        Highest safe total current at each, rounded down to ``resolution_a``. [A]
    limit
        What bounds the current at each breakpoint (the shared vocabulary's limit names).
    resolution_a
        The rounding step of the currents. [A]
    assumptions
        What the numbers rest on, the rounding, the lookup rule and the design-margin policy included.
    policy
        The design-margin policy the currents were found under, as its JSON object (``name``
        ``none``: the absolute ratings).
    """

    part: str
    count: int
    pulse: str
    duty: float | None
    voltage_v: tuple[float, ...]
    max_current_a: tuple[float, ...]
    limit: tuple[str, ...]
    resolution_a: float
    assumptions: tuple[str, ...]
    policy: dict[str, object] = field(default_factory=lambda: NO_POLICY.to_dict())

    def to_dict(self) -> dict[str, object]:
        """The table as the JSON object that ``envelope --json`` prints and ``--export x.json`` writes.

        Its first key, ``written_by``, marks it as soacheck's (:mod:`soacheck.filemarks`), so a
        later export replaces the file without ``--force``.
        """
        return {
            **json_mark(),
            "part": self.part,
            "count": self.count,
            "pulse": self.pulse,
            "duty": self.duty,
            "current_resolution": self.resolution_a,
            "policy": self.policy,
            "points": [
                {"voltage": v, "max_current": i, "limit": lim}
                for v, i, lim in zip(self.voltage_v, self.max_current_a, self.limit, strict=True)
            ],
            "assumptions": list(self.assumptions),
        }


def limit_table(safe: SafeEnvelope, *, resolution_a: float = CURRENT_RESOLUTION_A) -> LimitTable:
    """Round a largest safe envelope into the table that is exported.

    Parameters
    ----------
    safe
        The largest safe envelope, its currents on the safe side of the bisection.
    resolution_a
        Rounding step of the currents, above zero. [A]

    Returns
    -------
    LimitTable
        Currents rounded down to a multiple of ``resolution_a``; the rounding and the lookup
        rule added to the assumptions.
    """
    if not (math.isfinite(resolution_a) and resolution_a > 0):
        raise SoacheckError(f"current resolution {resolution_a!r} A: give a step above zero, such as 0.001")
    duty = None if math.isinf(safe.pulse_s) or safe.duty == 0 else float(safe.duty)
    notes = (
        *safe.assumptions,
        f"currents rounded down to a multiple of {resolution_a:g} A (never up); voltages as given",
        LOOKUP_RULE,
    )
    return LimitTable(
        part=safe.stage.part.id,
        count=safe.stage.count,
        pulse=format_duration(safe.pulse_s),
        duty=duty,
        voltage_v=tuple(float(v) for v in safe.voltage_v),
        max_current_a=tuple(floor_to(float(i), resolution_a) for i in safe.max_current_a),
        limit=tuple(str(lim) for lim in safe.limit),
        resolution_a=resolution_a,
        assumptions=tuple(notes),
        policy=policy_of(safe.stage.part.policy).to_dict(),
    )


def to_json(table: LimitTable) -> str:
    """The table as a JSON document (the ``to_dict`` object, indented)."""
    return json.dumps(table.to_dict(), indent=2, ensure_ascii=False) + "\n"


def to_csv(table: LimitTable) -> str:
    """The table as CSV: ``#`` comment lines with units, rounding, rule and assumptions, then
    the columns ``voltage,max_current,limit`` (V, A)."""
    lines = [
        first_line(".csv").rstrip("\n"),
        f"# {table.part} x {table.count}, {_timing(table)}: largest safe total current; voltage in V, max_current in A",
        *(f"# {note}" for note in table.assumptions),
        "voltage,max_current,limit",
    ]
    lines += [f"{v!r},{i!r},{lim}" for v, i, lim in zip(table.voltage_v, table.max_current_a, table.limit, strict=True)]
    return "\n".join(lines) + "\n"


def _timing(table: LimitTable) -> str:
    if table.pulse == "dc":
        return "dc"
    return f"single {table.pulse} pulse" if table.duty is None else f"{table.pulse} pulses at duty {table.duty:g}"


def _c_float(value: float) -> str:
    """A C float literal: the shortest decimal that reads back as ``value``, with a point or exponent."""
    text = repr(float(value))
    if not any(c in text for c in ".eE"):
        text += ".0"
    return text + "f"


_ASCII = {"×": "x", "Ω": "ohm", "°C": "degC", "°": "deg", "µ": "u", "μ": "u", "–": "-", "—": "-", "≤": "<=", "≥": ">="}


def _c_comment(text: str) -> str:
    """Text for a C comment: ASCII only (some embedded toolchains read nothing else), no ``*/``."""
    for wide, narrow in _ASCII.items():
        text = text.replace(wide, narrow)
    return text.encode("ascii", "replace").decode("ascii").replace("*/", "* /")


def to_c_header(table: LimitTable, *, name: str = "SOA_LIMIT") -> str:
    """The table as a C header, valid C99 and C++11, for a load's controller to include.

    Declares ``NAME_POINTS`` (a ``size_t``), ``NAME_CURRENT_RESOLUTION_A`` and two
    ``static const float`` arrays, ``NAME_VOLTAGE_V`` and ``NAME_CURRENT_A``; the comment
    states the lookup rule, the rounding and the assumptions, and lists each breakpoint
    with its limit. The decimal numbers are those of the CSV and JSON exports; as
    ``float`` each is the nearest single-precision value (within 6e-8 relative).
    """
    if not name.isidentifier() or not name.isupper():
        raise SoacheckError(f"C header name '{name}': use capitals, digits and '_', such as SOA_LIMIT")
    n = len(table.voltage_v)
    rows = [
        f" *   {v!r:>10} V  {i!r:>10} A  {lim}"
        for v, i, lim in zip(table.voltage_v, table.max_current_a, table.limit, strict=True)
    ]
    notes = [
        line
        for note in table.assumptions
        for line in textwrap.wrap(_c_comment(note), 96, initial_indent=" * - ", subsequent_indent=" *   ")
    ]
    volts = ", ".join(_c_float(v) for v in table.voltage_v)
    amps = ", ".join(_c_float(i) for i in table.max_current_a)
    lines = [
        first_line(".h").rstrip("\n"),
        "/*",
        f" * Largest safe total current of {_c_comment(table.part)} x {table.count} against the source voltage,",
        f" * {_timing(table)}, written by soacheck.",
        f" * Lookup rule: with {name}_VOLTAGE_V[k] <= V <= {name}_VOLTAGE_V[k + 1], limit the total current to",
        f" * the lower of {name}_CURRENT_A[k] and {name}_CURRENT_A[k + 1]; below the first and above the last",
        " * breakpoint allow nothing. Enforce it in the controller, not by the operator.",
        f" * Rounding: currents rounded down to a multiple of {table.resolution_a:g} A (never up), the same decimal",
        " * numbers as the CSV and JSON exports; voltages as given.",
        " * Breakpoints (voltage, current, limit):",
        *rows,
        " * Assumptions:",
        *notes,
        " * It does not replace the datasheet, a measured prototype, local codes or licensed practice.",
        " */",
        f"#ifndef {name}_H",
        f"#define {name}_H",
        "",
        "#include <stddef.h>",
        "",
        f"#define {name}_POINTS ((size_t){n})",
        f"#define {name}_CURRENT_RESOLUTION_A {_c_float(table.resolution_a)}",
        "",
        f"static const float {name}_VOLTAGE_V[{n}] = {{{volts}}};",
        f"static const float {name}_CURRENT_A[{n}] = {{{amps}}};",
        "",
        f"#endif /* {name}_H */",
    ]
    return "\n".join(lines) + "\n"


def export_writer(suffix: str) -> Callable[[LimitTable], str]:
    """The writer for the format a file suffix names: ``.csv``, ``.json`` or ``.h``."""
    writers = {".csv": to_csv, ".json": to_json, ".h": to_c_header}
    if suffix.lower() not in writers:
        raise SoacheckError(f"--export: a limit table is written as .csv, .json or .h, not '{suffix}'")
    return writers[suffix.lower()]
