"""JSON Schemas (draft 2020-12) of every ``--json`` output: the reference for the field names.

Each command's object is written here once, field by field; every description and unit
comes from :mod:`soacheck.glossary`, so a word means the same thing in the README, the
tables and the schemas. The schemas are strict: every field is required unless marked
optional, and an object allows no field the schema does not name, so an output that
gains a field without its schema fails the tests loudly.

Adding a field to an output: add ``f("name", "number")`` (or ``"integer"``, ``"string"``,
``"boolean"``, ``"limit"``, ``"verdict"``, ``"strings"``, a nested :func:`obj` or
:func:`array`) to the object below, with ``null=True`` when it can be null and
``optional=True`` when it can be absent; give the word a glossary entry (name, unit,
meaning) in ``soacheck/glossary.py`` unless it has one; then run
``python tools/write_schemas.py`` to write the installed files under ``soacheck/schemas/``
and ``tools/write_glossary.py`` for the README's glossary.
"""

from __future__ import annotations

import json
from importlib import resources
from typing import Any

from soacheck.errors import SoacheckError, did_you_mean
from soacheck.glossary import LIMITS, TERMS, VERDICTS

DIALECT = "https://json-schema.org/draft/2020-12/schema"
BASE_ID = "https://soacheck.invalid/schemas/"  # a name, not a place: nothing is fetched from it

Schema = dict[str, Any]
Field = tuple[str, Schema, bool]  # name, schema, required

_KINDS: dict[str, Schema] = {
    "number": {"type": "number"},
    "integer": {"type": "integer"},
    "string": {"type": "string"},
    "boolean": {"type": "boolean"},
    "limit": {"enum": list(LIMITS)},
    "verdict": {"enum": list(VERDICTS)},
    "strings": {"type": "array", "items": {"type": "string"}},
}


def _described(name: str, text: str | None) -> str:
    term = TERMS.get(name)
    if text is None and term is None:
        raise KeyError(f"'{name}' has no glossary entry: add it to soacheck/glossary.py or give text=")
    unit = term.unit if term is not None else ""
    body = text if text is not None else term.text  # type: ignore[union-attr]
    if unit == "1":
        return f"{body} [1, a fraction or ratio]"
    return f"{body} [{unit}]" if unit else body


def f(name: str, kind: str | Schema, *, null: bool = False, optional: bool = False, text: str | None = None) -> Field:
    """One field: its name, its kind (a name from the list above or a schema) and its description.

    The description is the glossary's text for ``name`` with its unit, unless ``text`` is given.
    """
    schema = dict(_KINDS[kind]) if isinstance(kind, str) else dict(kind)
    if null:
        if "enum" in schema:
            schema["enum"] = [*schema["enum"], None]
        elif "type" in schema:
            schema["type"] = [schema["type"], "null"]
        else:
            schema = {"anyOf": [schema, {"type": "null"}]}
    schema["description"] = _described(name, text)
    return name, schema, not optional


def obj(*fields: Field, text: str | None = None) -> Schema:
    """An object of exactly these fields, no others."""
    schema: Schema = {
        "type": "object",
        "properties": {name: schema for name, schema, _ in fields},
        "required": [name for name, _, required in fields if required],
        "additionalProperties": False,
    }
    if text:
        schema["description"] = text
    return schema


def array(items: Schema) -> Schema:
    return {"type": "array", "items": items}


ASSUMPTIONS = f("assumptions", "strings")
PART = f("part", "string")
MARGIN_TO_RATING = f("margin_to_rating", "number", null=True)
POLICY = f(
    "policy",
    obj(
        f("name", "string", text="the policy's name, shown in every result; none: the absolute ratings"),
        f("tj_ceiling", "number", null=True),
        f("current_fraction", "number", null=True),
        f("voltage_fraction", "number", null=True),
        f("power_fraction", "number", null=True),
        f("source", "string"),
    ),
)

POINT = obj(
    f("voltage", "number"),
    f("current", "number"),
    f("case_temp", "number"),
    f("pulse", "string"),
    f("duty", "number", null=True),
    f("idle_current", "number"),
    f("inside", "boolean"),
    f("allowed_current", "number", null=True),
    f("margin", "number", null=True),
    MARGIN_TO_RATING,
    f("overload", "number", null=True),
    f("limit", "limit"),
    f("curve", "string"),
    f("extrapolated", "boolean"),
    text="one operating point checked",
)

CANDIDATE = obj(
    PART,
    f("verdict", "verdict"),
    f("margin", "number", null=True),
    MARGIN_TO_RATING,
    f("overload", "number", null=True),
    f("limit", "limit", null=True),
    f("min_count", "integer", null=True),
    f("max_heatsink_rth", "number", null=True),
    f("max_case_temp", "number", null=True),
    f("worst_voltage", "number", null=True),
    text="one candidate part, as ranked",
)

OUTSIDE_STRETCH = obj(
    f("from_voltage", "number"),
    f("to_voltage", "number"),
    f("limit", "limit"),
    f("margin", "number", null=True),
    text="a stretch of source voltage where the envelope's edge lies outside or a junction passes its limit",
)

TRACE_FIELDS = (
    PART,
    f("verdict", "verdict"),
    f("samples", "integer"),
    f("duration", "number"),
    f("tj_peak", "number", null=True),
    f("tj_peak_time", "number", null=True),
    f("case_peak", "number"),
    f("first_violation_time", "number", null=True),
    f("limit", "limit", null=True),
    f("margin", "number", null=True),
    f("overload", "number", null=True),
    MARGIN_TO_RATING,
    POLICY,
    f("margin_time", "number", null=True),
    f("time_outside", "number"),
    f("time_over_tj_max", "number"),
    f("excursions", "integer"),
)

STAGE_RUN_FIELDS = (
    f("test", "string"),
    f("verdict", "verdict"),
    f("first_violation_time", "number", null=True),
    f("limit", "limit", null=True),
    f("margin", "number", null=True),
    f("overload", "number", null=True),
    MARGIN_TO_RATING,
    POLICY,
    f("margin_time", "number", null=True),
    f("device", "integer"),
    f("tj_peak", "number"),
    f("tj_peak_time", "number"),
    f("time_over_tj_max", "number"),
    f("case_peak", "number"),
    f("heatsink_peak", "number"),
    f("loop_gain_peak", "number"),
    f("stage_gain_peak", "number"),
    f("drive_current_peak", "number", null=True),
    f("device_power_peak", "number"),
    f("sense_resistor_power_peak", "number"),
    f("energy", "number"),
    f("duration", "number"),
)

ENVELOPE_CHECK_FIELDS = (
    f("envelope", "string"),
    PART,
    f("count", "integer"),
    f("verdict", "verdict"),
    f("margin", "number", null=True),
    f("overload", "number", null=True),
    MARGIN_TO_RATING,
    POLICY,
    f("limit", "limit"),
    f("device", "integer"),
    f("worst_voltage", "number"),
    f("worst_current", "number"),
    f("heatsink_temp", "number"),
    f("tj_peak", "number"),
    f("loop_gain_peak", "number"),
    f("stage_gain_peak", "number"),
    f("drive_current_peak", "number", null=True),
    f("outside", array(OUTSIDE_STRETCH)),
)

LIMIT_TABLE = obj(
    f("written_by", "string"),
    PART,
    f("count", "integer"),
    f("pulse", "string"),
    f("duty", "number", null=True),
    f("current_resolution", "number"),
    POLICY,
    f(
        "points",
        array(obj(f("voltage", "number"), f("max_current", "number"), f("limit", "limit"))),
        text="one breakpoint of the limit table per source voltage, rising",
    ),
    ASSUMPTIONS,
    text="the largest safe envelope as a limit table (also what --export x.json writes)",
)


def _union(*fields: Field, text: str) -> Schema:
    """An object that may hold any of these fields (the first of each name), none required, no others."""
    unique: dict[str, Field] = {}
    for name, schema, _ in fields:
        unique.setdefault(name, (name, schema, False))
    return obj(*unique.values(), text=text)


JOB_SUMMARY = _union(
    PART,
    f("points_checked", "integer"),
    f("points_outside", "integer"),
    f("passing", "integer"),
    f("candidates", "integer", text="how many candidates were ranked"),
    f("best", "string"),
    f("max_safe_setpoint", "number", null=True),
    f("max_setpoint_at_rating", "number", null=True),
    f("worst_current", "number"),
    *TRACE_FIELDS,
    *STAGE_RUN_FIELDS,
    *ENVELOPE_CHECK_FIELDS,
    text="the job's figures; which of them appear depends on the job's kind",
)

SCHEMAS: dict[str, Schema] = {
    "check": obj(PART, f("verdict", "verdict"), POLICY, f("points", array(POINT)), ASSUMPTIONS),
    "trace": {
        "oneOf": [
            obj(*TRACE_FIELDS, ASSUMPTIONS, text="one trace file"),
            obj(
                PART,
                f("verdict", "verdict"),
                f(
                    "files",
                    array(
                        {
                            "oneOf": [
                                obj(f("file", "string"), *TRACE_FIELDS, ASSUMPTIONS, text="a file that was checked"),
                                obj(
                                    f("file", "string"),
                                    f("verdict", "verdict"),
                                    f("error", "string"),
                                    text="a file that could not be read (verdict invalid)",
                                ),
                            ]
                        }
                    ),
                ),
                text="several trace files, each checked on its own",
            ),
        ]
    },
    "discharge": obj(
        *STAGE_RUN_FIELDS,
        f("max_safe_setpoint", "number", null=True, optional=True),
        f("max_setpoint_at_rating", "number", null=True, optional=True),
        ASSUMPTIONS,
    ),
    "sweep": obj(*STAGE_RUN_FIELDS, ASSUMPTIONS),
    "sharing": obj(
        f("stage", "string"),
        f("count", "integer"),
        f("verdict", "verdict"),
        f("limit", "limit"),
        f(
            "device",
            "integer",
            null=True,
            text="the device outside where the margin is least, numbered from 1 (Q1, Q2 ...), in the draw where it "
            "is least; null when every device of every settled draw is inside",
        ),
        f("equal_share", "number"),
        f("worst_share", "number", null=True),
        f("percentile", "number"),
        f("mean_worst_share", "number", null=True),
        f("worst_device_current", "number", null=True),
        f("runaway_fraction", "number"),
        f("hogging_fraction", "number"),
        f("stage_gain_peak", "number"),
        f(
            "tj_peak",
            "number",
            null=True,
            text="the hottest junction of any device in any draw that settles; null where none settles",
        ),
        f(
            "case_peak",
            "number",
            null=True,
            text="the hottest case of any device in any draw that settles; null where none settles",
        ),
        f("draws", "integer"),
        f("seed", "integer"),
        f(
            "margin",
            "number",
            null=True,
            text="the worst device's current against the policy's share of i_max; where a device of a settled draw "
            "is outside its derated DC SOA, past its junction limit or above that share (verdict fail), that "
            "device's least margin; null when not a number, and where a draw runs away (limit runaway: no stable "
            "state, no current to measure)",
        ),
        MARGIN_TO_RATING,
        POLICY,
    ),
    "envelope": {
        "oneOf": [
            obj(*ENVELOPE_CHECK_FIELDS, ASSUMPTIONS, text="envelope --check: the stage along the envelope's edge"),
            LIMIT_TABLE,
        ]
    },
    "compare": obj(f("job", "string"), f("stage", "string", null=True), POLICY, f("candidates", array(CANDIDATE))),
    "parts": obj(
        f(
            "parts",
            array(
                obj(
                    f("id", "string"),
                    f("kind", "string"),
                    f("description", "string"),
                    f("v_max", "number"),
                    f("i_max", "number"),
                    f("p_max", "number"),
                    f("tj_max", "number"),
                    f("rth_jc", "number"),
                    f("curves", "strings"),
                    f("folder", "string"),
                )
            ),
        )
    ),
    "lint": obj(
        PART,
        f(
            "findings",
            array(
                obj(
                    f("severity", {"enum": ["error", "warning"]}),
                    f("file", "string"),
                    f("row", "integer", null=True),
                    f("message", "string"),
                )
            ),
        ),
    ),
    "run": obj(
        f("written_by", "string"),
        f("title", "string"),
        f("plan", "string"),
        f("verdict", "verdict"),
        f(
            "stage",
            obj(
                PART,
                f("count", "integer"),
                f("ballast", "number"),
                f("series_resistance", "number"),
                f("vbe_spread", "number"),
                f("vbe_tempco", "number"),
                f("case_temp", "number", optional=True),
                f(
                    "cooling",
                    obj(
                        f("interface_rth", "number"),
                        f("heatsink_rth", "number"),
                        f("heatsink_capacity", "number"),
                        f("ambient", "number"),
                    ),
                    optional=True,
                ),
                f(
                    "policy",
                    obj(
                        f("name", "string", text="the policy's name"),
                        f("tj_ceiling", "number", optional=True),
                        f("current_fraction", "number", optional=True),
                        f("voltage_fraction", "number", optional=True),
                        f("power_fraction", "number", optional=True),
                    ),
                    optional=True,
                ),
                text="the stage under its file's keys",
            ),
        ),
        f(
            "jobs",
            array(
                obj(
                    f("name", "string"),
                    f("kind", "string"),
                    f("verdict", "verdict"),
                    f("summary", JOB_SUMMARY),
                    f("rows", array({"anyOf": [POINT, CANDIDATE, OUTSIDE_STRETCH]})),
                    ASSUMPTIONS,
                    f("plots", "strings"),
                )
            ),
        ),
        f("cautions", "strings"),
    ),
}
"""Each command's ``--json`` object (``run --json`` prints the report.json object)."""


def schema(command: str) -> Schema:
    """The complete JSON Schema of ``soacheck COMMAND --json``, with its ``$schema`` and ``$id``."""
    if command not in SCHEMAS:
        raise SoacheckError(
            f"schema: no command '{command}' prints JSON{did_you_mean(command, SCHEMAS)}; one of {', '.join(SCHEMAS)}"
        )
    body = dict(SCHEMAS[command])
    return {
        "$schema": DIALECT,
        "$id": f"{BASE_ID}{command}.json",
        "title": f"soacheck {command} --json",
        **body,
    }


def shipped_text(command: str) -> str:
    """The schema file installed with the package, ``soacheck/schemas/COMMAND.json``, as text."""
    schema(command)  # the same error for an unknown command
    return resources.files("soacheck.schemas").joinpath(f"{command}.json").read_text(encoding="utf-8")


def shipped(command: str) -> Schema:
    """The installed schema of ``soacheck COMMAND --json``."""
    return json.loads(shipped_text(command))


def schema_text(command: str) -> str:
    """The schema as the shipped file holds it: indented JSON, non-ASCII kept, a final newline."""
    return json.dumps(schema(command), indent=2, ensure_ascii=False) + "\n"
