"""Typed schemas of the TOML tables soacheck reads: a stage, its cooling, envelopes, discharges and plan jobs.

Each table is a pydantic model in strict mode, so that a boolean must be a boolean
(``find_max = "no"`` is refused, not read as true), a whole number a whole number and a
list of numbers a list of numbers; every number also passes its quantity's validator
(:mod:`soacheck.quantities`: finite, in its physical range). Unknown keys are refused
with the nearest known key. :func:`validate` turns pydantic's report into soacheck's one
line: the file (or plan job), the key, what was written and what is accepted.

Cross-key rules (either a [cooling] table or case_temp; an envelope as a file or inline)
stay with the code that builds the domain object.
"""

from __future__ import annotations

from typing import Annotated, Any, TypeVar

from pydantic import AfterValidator, BaseModel, ConfigDict, Field, ValidationError

from soacheck import quantities as q
from soacheck.errors import SoacheckError, did_you_mean


def _in(quantity: q.Quantity):
    def check(value):
        try:
            return quantity.check(value, "")
        except SoacheckError:
            raise ValueError(f"give a {quantity.name} {quantity.accepted()}") from None

    return AfterValidator(check)


def Q(quantity: q.Quantity) -> Any:  # noqa: N802 - reads as a type in the models
    """The field type of a value of ``quantity``: a number (a whole number for a count) in its range."""
    base = int if quantity.integer else float
    return Annotated[base, _in(quantity)]


class _Table(BaseModel):
    model_config = ConfigDict(strict=True, extra="forbid", frozen=True, populate_by_name=True)


class CoolingTable(_Table):
    """``[cooling]`` of a stage: interface, heatsink and ambient."""

    interface_rth: Q(q.INTERFACE_RESISTANCE) = 0.0
    heatsink_rth: Q(q.THERMAL_RESISTANCE)
    heatsink_capacity: Q(q.HEAT_CAPACITY)
    ambient: Q(q.TEMPERATURE) = 25.0


class PolicyTable(_Table):
    """A design-margin policy file, or a ``[policy]`` table in a stage file or a plan; every key optional."""

    name: Annotated[str, Field(min_length=1)] | None = None
    tj_ceiling: Q(q.TJ_CEILING) | None = None
    current_fraction: Q(q.DESIGN_FRACTION) | None = None
    voltage_fraction: Q(q.DESIGN_FRACTION) | None = None
    power_fraction: Q(q.DESIGN_FRACTION) | None = None


class StageTable(_Table):
    """A stage file, or a ``[stage]`` table inline in a plan."""

    part: str = Field(min_length=1)
    count: Q(q.DEVICE_COUNT)
    ballast: Q(q.RESISTANCE) = 0.0
    series_resistance: Q(q.RESISTANCE) = 0.0
    vbe_spread: Q(q.VBE_SPREAD) = 0.0
    vbe_tempco: Q(q.VBE_TEMPCO) | None = None  # None: −2 mV/K per base-emitter junction of the part
    case_temp: Q(q.TEMPERATURE) | None = None
    cooling: CoolingTable | None = None
    drive_limit: Q(q.CURRENT) | None = None
    policy: PolicyTable | Annotated[str, Field(min_length=1)] | None = None


class EnvelopeTable(_Table):
    """An envelope file, or an ``[[envelope]]`` job's keys: the region a stage must cover."""

    voltage: Annotated[list[Q(q.Quantity("voltage", "V", 0.0, 1e6))], Field(min_length=2, max_length=2)]
    current: Q(q.CURRENT)
    power: Q(q.POWER)
    pulse: str = "dc"
    duty: Q(q.DUTY) | None = None
    ambient: Q(q.TEMPERATURE) | None = None
    case_temp: Q(q.TEMPERATURE) | None = None
    idle_current: Q(q.IDLE_CURRENT) = 0.0


class DischargeTable(_Table):
    """A discharge file, or an ``[[discharge]]`` job's keys: a pack through the stage."""

    battery: str = Field(min_length=1)
    cells: Q(q.CELL_COUNT)
    capacity: Q(q.CAPACITY)
    mode: str
    setpoint: Q(q.Quantity("setpoint (A, W or Ω)", "", 0.0, 1e9, low_open=True))
    cutoff: Q(q.VOLTAGE) | None = None
    internal_resistance: Q(q.RESISTANCE) = 0.0
    samples: Q(q.SAMPLES) = 2000


class PointsJob(_Table):
    """``[[points]]``: operating points from a CSV file."""

    name: str | None = None
    file: str
    part: str | None = None
    case_temp: Q(q.TEMPERATURE) = 25.0
    pulse: str = "dc"
    duty: Q(q.DUTY_OR_SINGLE) = 0.0
    idle_current: Q(q.IDLE_CURRENT) = 0.0


class SweepJob(_Table):
    """``[[sweep]]``: a ramp through the stage."""

    name: str | None = None
    ramp: str
    start: float = Field(alias="from")
    to: float
    at: float
    time: str = "10s"
    samples: Q(q.SAMPLES) = 1000


class TraceJob(_Table):
    """``[[trace]]``: a recorded waveform of one device."""

    name: str | None = None
    file: str
    part: str | None = None
    case_temp: Q(q.TEMPERATURE) | None = None


class CompareJob(_Table):
    """``[[compare]]``: candidate parts on an envelope or a discharge."""

    name: str | None = None
    parts: list[str] | None = None
    all: bool = False
    envelope: str | None = None
    discharge: str | None = None
    use_stage: bool = True


class DischargeJob(DischargeTable):
    """``[[discharge]]`` inline: a discharge table, a name and whether to search for the largest safe setpoint."""

    name: str | None = None
    find_max: bool = False


class DischargeFileJob(_Table):
    """``[[discharge]]`` from a file."""

    name: str | None = None
    file: str
    find_max: bool = False


class EnvelopeJob(EnvelopeTable):
    """``[[envelope]]`` inline."""

    name: str | None = None


class EnvelopeFileJob(_Table):
    """``[[envelope]]`` from a file."""

    name: str | None = None
    file: str


Model = TypeVar("Model", bound=BaseModel)

_TYPE_HINTS = {
    "bool_type": "write true or false, without quotes",
    "int_type": "write a whole number, such as 2",
    "int_from_float": "write a whole number, such as 2",
    "float_type": "write a number, such as 25 (without quotes)",
    "string_type": 'write text in quotes, such as "dc"',
    "list_type": 'write a list in brackets, such as [5, 40] or ["part-a", "part-b"]',
    "model_type": "write a table: [name] on its own line, or {key = value, ...}",
    "dict_type": "write a table: [name] on its own line, or {key = value, ...}",
    "too_short": "give a range [low, high], such as [5, 40]",
    "too_long": "give a range [low, high], such as [5, 40]",
    "string_too_short": "write a non-empty text",
}


def _key(loc: tuple[Any, ...]) -> str:
    text = ""
    for part in loc:
        if isinstance(part, int):
            text += f"[{part}]"
        else:
            text += ("." if text else "") + str(part)
    return text


def _fields(model: type[BaseModel], loc: tuple[Any, ...]) -> list[str]:
    """The keys allowed in the table at ``loc`` (its aliases where it has them)."""
    for part in loc:
        field = model.model_fields.get(str(part))
        annotation = getattr(field, "annotation", None)
        inner = [a for a in getattr(annotation, "__args__", (annotation,)) if isinstance(a, type)]
        nested = next((a for a in inner if issubclass(a, BaseModel)), None)
        if nested is None:
            break
        model = nested
    return [f.alias or name for name, f in model.model_fields.items()]


def validate(model: type[Model], data: Any, where: str) -> Model:
    """Check a TOML table against its schema; one :class:`SoacheckError` naming ``where`` and the key.

    Parameters
    ----------
    model
        The schema.
    data
        The table as parsed by :mod:`tomllib`.
    where
        The file (and, in a plan, the job) the table came from.
    """
    if not isinstance(data, dict):
        raise SoacheckError(f"{where}: write a table of keys, not {data!r}")
    try:
        return model.model_validate(data)
    except ValidationError as err:
        errors = err.errors(include_url=False)
        # a misspelt key is reported as unknown and its real name as missing: name the misspelling
        first = next((e for e in errors if e["type"] == "extra_forbidden"), errors[0])
    loc = tuple(first["loc"])
    key = _key(loc)
    kind = first["type"]
    if kind == "extra_forbidden":
        allowed = _fields(model, loc[:-1])
        name = str(loc[-1])
        raise SoacheckError(
            f"{where}: unknown key '{key}'{did_you_mean(name, allowed)}; the keys are {', '.join(allowed)}"
        )
    if kind == "missing":
        raise SoacheckError(f"{where}: missing key '{key}'; add it")
    shown = repr(first.get("input"))
    if kind == "value_error":
        message = str(first.get("ctx", {}).get("error", first["msg"]))
        raise SoacheckError(f"{where}: {key} is {_shown(first.get('input'))}; {message}")
    hint = _TYPE_HINTS.get(kind, first["msg"])
    raise SoacheckError(f"{where}: {key} is {shown}; {hint}")


def _shown(value: Any) -> str:
    if isinstance(value, float):
        return f"{value:g}"
    return repr(value)
