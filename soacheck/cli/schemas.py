"""The JSON Schemas of the outputs: schema."""

from __future__ import annotations

from typing import Annotated

import typer

from soacheck.cli.base import app, user_errors
from soacheck.jsonschemas import SCHEMAS, shipped_text


@app.command()
@user_errors
def schema(
    command: Annotated[str, typer.Argument(help=f"The command whose --json output to describe: {', '.join(SCHEMAS)}.")],
) -> None:
    """Print the JSON Schema (draft 2020-12) of a command's --json output: every field, its unit and meaning."""
    typer.echo(shipped_text(command), nl=False)
