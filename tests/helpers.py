"""Helpers shared by the tests (fixtures live in conftest.py)."""

from __future__ import annotations

from typer.testing import CliRunner

from soacheck.cli import app

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})


def invoke(*args, env=None):
    """Run ``soacheck ARGS`` in-process with a fixed terminal width and no user library."""
    return runner.invoke(app, [str(a) for a in args], env=env)


def validate_output(command: str, text: str) -> dict:
    """Parse the ``--json`` output of ``soacheck COMMAND`` and validate it against its installed schema.

    Raises AssertionError naming the command, the path inside the object and what is wrong:
    a field the schema lacks, a missing field, a wrong type, a limit name outside the vocabulary.
    """
    import json

    import jsonschema

    from soacheck.jsonschemas import shipped

    try:
        payload = json.loads(text)
    except json.JSONDecodeError as err:
        raise AssertionError(f"soacheck {command} --json printed something that is not JSON ({err}):\n{text}") from None
    validator = jsonschema.Draft202012Validator(shipped(command))
    errors = sorted(validator.iter_errors(payload), key=lambda e: list(e.absolute_path))
    if errors:
        lines = [f"  at /{'/'.join(map(str, e.absolute_path))}: {e.message}" for e in errors[:10]]
        raise AssertionError(
            f"soacheck {command} --json does not follow its schema (soacheck/jsonschemas.py; after a change run "
            "python tools/write_schemas.py):\n" + "\n".join(lines)
        )
    return payload


def check_json_output(args, result) -> None:
    """Validate a CliRunner result's stdout when the command ran with ``--json`` and answered (exit 0 or 1)."""
    import shlex

    words = shlex.split(args) if isinstance(args, str) else [str(a) for a in (args or [])]
    if "--json" in words and result.exit_code in (0, 1) and words[0] not in ("-h", "--help"):
        validate_output(words[0], result.stdout)
