"""Helpers shared by the tests (fixtures live in conftest.py)."""

from __future__ import annotations

from typer.testing import CliRunner

from soacheck.cli import app

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})


def invoke(*args, env=None):
    """Run ``soacheck ARGS`` in-process with a fixed terminal width and no user library."""
    return runner.invoke(app, [str(a) for a in args], env=env)
