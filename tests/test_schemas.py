"""The JSON Schemas of the outputs: complete, valid draft 2020-12, installed, strict, described with units.

Every ``--json`` output the test suite produces through a CliRunner is validated against
its schema by the session fixture in conftest.py (``tests/helpers.check_json_output``);
these tests hold the schemas themselves to account. Reference library: ``jsonschema``.
"""

from __future__ import annotations

import json

import jsonschema
import pytest
import typer

from soacheck.cli import app
from soacheck.glossary import LIMITS
from soacheck.jsonschemas import SCHEMAS, schema, schema_text, shipped

from .helpers import invoke, validate_output


def json_commands() -> set[str]:
    """The commands that take --json, read off the command line itself."""
    group = typer.main.get_command(app)
    return {
        name
        for name, command in group.commands.items()
        if any("--json" in getattr(param, "opts", ()) for param in command.params)
    }


def walk(node, path=""):
    """Every sub-schema with its path."""
    yield path, node
    if isinstance(node, dict):
        for key, value in node.items():
            yield from walk(value, f"{path}/{key}")
    elif isinstance(node, list):
        for k, value in enumerate(node):
            yield from walk(value, f"{path}/{k}")


def test_every_command_with_json_has_a_schema_and_no_other():
    assert set(SCHEMAS) == json_commands()


@pytest.mark.parametrize("command", sorted(SCHEMAS))
def test_each_schema_is_valid_draft_2020_12_and_installed_as_written(command):
    jsonschema.Draft202012Validator.check_schema(schema(command))
    assert schema(command)["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert shipped(command) == schema(command), "the installed file is stale: run python tools/write_schemas.py"


@pytest.mark.parametrize("command", sorted(SCHEMAS))
def test_each_object_is_closed_and_each_field_described(command):
    for path, node in walk(schema(command)):
        if isinstance(node, dict) and node.get("type") == "object":
            assert node.get("additionalProperties") is False, f"{command}{path}: name every field, allow no other"
            for name, field in node["properties"].items():
                assert field.get("description"), f"{command}{path}/properties/{name} has no description"


def test_descriptions_carry_the_unit_from_the_glossary():
    point = schema("check")["properties"]["points"]["items"]["properties"]
    assert point["voltage"]["description"].endswith("[V]")
    assert point["allowed_current"]["description"].endswith("[A]")
    assert point["case_temp"]["description"].endswith("[°C]")
    assert point["margin"]["description"].endswith("[1, a fraction or ratio]")
    assert point["limit"]["enum"] == list(LIMITS)


def test_the_command_prints_the_installed_schema_and_refuses_an_unknown_command():
    result = invoke("schema", "trace")
    assert result.exit_code == 0, result.output
    assert result.stdout == schema_text("trace") and json.loads(result.stdout)["title"] == "soacheck trace --json"
    wrong = invoke("schema", "chek")
    assert wrong.exit_code == 2 and "did you mean 'check'" in wrong.stderr, wrong.output


CHECKED = {
    "part": "p",
    "verdict": "pass",
    "policy": {
        "name": "none", "tj_ceiling": None, "current_fraction": None, "voltage_fraction": None,
        "power_fraction": None, "source": "absolute ratings",
    },
    "points": [
        {
            "voltage": 20.0, "current": 3.0, "case_temp": 75.0, "pulse": "dc", "duty": None, "idle_current": 0.0,
            "inside": True, "allowed_current": 3.75, "margin": 0.2, "margin_to_rating": 0.2, "overload": None,
            "limit": "power", "curve": "dc", "extrapolated": False,
        }
    ],
    "assumptions": [],
}  # fmt: skip


@pytest.mark.parametrize(
    ("change", "complaint"),
    [
        (lambda d: d["points"][0].update(headroom=0.2), "Additional properties are not allowed"),  # a new field
        (lambda d: d["points"][0].pop("margin"), "'margin' is a required property"),
        (lambda d: d["points"][0].update(limit="thermal"), "is not one of"),  # an old limit name
        (lambda d: d["points"][0].update(voltage="20 V"), "is not of type"),
        (lambda d: d.update(verdict="ok"), "is not one of"),
    ],
)
def test_validation_is_strict(change, complaint):
    validate_output("check", json.dumps(CHECKED))  # as written, it passes
    broken = json.loads(json.dumps(CHECKED))
    change(broken)
    with pytest.raises(AssertionError, match=complaint):
        validate_output("check", json.dumps(broken))


def test_output_that_is_not_json_is_refused():
    with pytest.raises(AssertionError, match="not JSON"):
        validate_output("check", "PASS\n")
