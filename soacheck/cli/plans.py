"""Plans and the demo: run, demo."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated

import typer
from rich.markup import escape
from rich.table import Table as RichTable

from soacheck.cli.base import (
    SAFETY_NOTE,
    ForceOpt,
    JsonOpt,
    LibraryOpt,
    app,
    console_for_output,
    echo_json,
    jsonable,
    output_path,
    progress_bar,
    user_errors,
)
from soacheck.demo import DEMO_FOLDER, demo_plan_path
from soacheck.errors import SoacheckError
from soacheck.files import write_folder
from soacheck.library import library_folders
from soacheck.plan import read_plan

REPORT_MARKER = ".soacheck-report"


def _run_plan_into(plan_path: Path, out: Path, *, force: bool, as_json: bool, library: list[Path] | None) -> bool:
    """Read, run and report a plan into ``out``; the report appears whole or not at all."""
    from soacheck.report import report_html, report_json, slug, svg_text  # matplotlib: only when a plan runs
    from soacheck.runner import failures_first, run_plan

    folders = library_folders(library or [])
    plan = read_plan(plan_path, folders)
    if out.is_dir() and not (out / REPORT_MARKER).is_file() and not force:
        raise SoacheckError(f"{out}: exists and holds no soacheck report; choose another -o or add --force")
    output_path(out, "--out", force=True, folder=True)
    with progress_bar("jobs", total=len(plan.jobs), quiet=as_json) as progress:
        results = run_plan(plan, progress=progress)
    files: dict[str, str | bytes] = {}
    svgs: dict[str, list[str]] = {}
    plot_files: dict[str, list[str]] = {}
    for result in results:
        for name, figure in result.figures.items():
            svg = svg_text(figure)
            file = f"plots/{slug(result.name)}-{name}.svg"
            files[file] = svg
            svgs.setdefault(result.name, []).append(svg)
            plot_files.setdefault(result.name, []).append(file)
    payload = report_json(plan, results, plot_files)
    files["report.json"] = json.dumps(jsonable(payload), indent=2, ensure_ascii=False) + "\n"
    files["report.html"] = report_html(plan, results, svgs, plan_text=plan_path.read_text(encoding="utf-8"))
    write_folder(out, files, force=True, marker=REPORT_MARKER)
    if as_json:
        echo_json(payload)
        return payload["verdict"] == "pass"
    console = console_for_output()
    table = RichTable(title=escape(plan.title), title_justify="left")
    for name in ("job", "kind", "verdict", "what decides it"):
        table.add_column(name)
    for result in failures_first(results):
        verdict = "[green]pass[/]" if result.passed else "[bold red]FAIL[/]"
        table.add_row(escape(result.name), result.kind, verdict, escape(result.headline()))
    console.print(table)
    console.print(f"[yellow]Caution:[/] {SAFETY_NOTE}", highlight=False)
    console.print(f"Report written to {(out / 'report.html').resolve()}", highlight=False)
    return payload["verdict"] == "pass"


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
