"""Plans and the demo: run, demo."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from soacheck.cli.base import (
    SAFETY_NOTE,
    ForceOpt,
    JsonOpt,
    LibraryOpt,
    app,
    console_for_output,
    echo_json,
    progress_bar,
    user_errors,
)
from soacheck.cli.tables import Column, named_column, print_table, verdict_cells
from soacheck.demo import DEMO_FOLDER, demo_plan_path
from soacheck.display import limit_text


def _run_plan_into(plan_path: Path, out: Path, *, force: bool, as_json: bool, library: list[Path] | None) -> bool:
    """Read, run and report a plan into ``out``; the report appears whole or not at all."""
    import soacheck
    from soacheck.runner import failures_first

    with progress_bar("jobs", quiet=as_json) as progress:
        result = soacheck.run_plan(plan_path, out, force=force, library=library, progress=progress)
    if as_json:
        echo_json(result.to_dict())
        return result.passed
    console = console_for_output()
    ordered = failures_first(list(result.jobs))
    verdicts, styles = verdict_cells(r.passed for r in ordered)
    columns = [
        Column("job", [r.name for r in ordered], essential=True, justify="left"),
        Column("kind", [r.kind for r in ordered], rank=2, justify="left"),
        Column("verdict", verdicts, essential=True, justify="left", styles=styles),
        named_column("margin", [r.summary.get("margin") for r in ordered], essential=True),
    ]
    if any(r.summary.get("overload") is not None for r in ordered):
        columns.append(named_column("overload", [r.summary.get("overload") for r in ordered], essential=True))
    columns += [
        Column("limit", [limit_text(r.summary.get("limit")) for r in ordered], essential=True, justify="left"),
        named_column("first_violation_time", [r.summary.get("first_violation_time") for r in ordered], rank=1),
    ]
    print_table(console, result.plan.title, columns)
    console.print(f"[yellow]Caution:[/] {SAFETY_NOTE}", highlight=False)
    console.print(f"Report written to {(out / 'report.html').resolve()}", highlight=False)
    return result.passed


@app.command()
@user_errors
def run(
    plan: Annotated[Path, typer.Argument(help="Plan file (TOML): a stage and its jobs.")],
    out: Annotated[
        Path | None,
        typer.Option("--out", "-o", metavar="DIR", show_default="PLAN-report", help="Folder for the report."),
    ] = None,
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Run every job of a plan and write report.html, report.json and the plots."""
    target = out or Path(f"{plan.stem}-report")
    passed = _run_plan_into(plan, target, force=force, as_json=as_json, library=library)
    raise typer.Exit(0 if passed else 1)


@app.command()
@user_errors
def demo(
    out: Annotated[Path, typer.Option("--out", "-o", metavar="DIR", help="Folder for the demo's report.")] = Path(
        DEMO_FOLDER
    ),
    force: ForceOpt = False,
) -> None:
    """Run the bundled demo plan (a workshop's pack-test bench, invented parts) into a report."""
    console_for_output().print(
        "[bold]Demo:[/] a workshop bench that discharges donated e-bike packs through two pass transistors on "
        "one heatsink; every job kind of soacheck, on invented parts. Some jobs fail on purpose.",
        highlight=False,
    )
    _run_plan_into(demo_plan_path(), out, force=force, as_json=False, library=None)
