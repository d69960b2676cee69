"""The ``soacheck`` command: a thin layer that reads files, calls the library and prints.

Exit codes: 0 when everything checked is safe, 1 when anything is unsafe, 2 for bad input.
Commands live in modules by topic; importing them registers them on the one app.
"""

from soacheck.cli import authoring, envelopes, plans, points, schemas, stages, traces  # noqa: F401  (registers commands)
from soacheck.cli.base import app, main

__all__ = ["app", "main"]
