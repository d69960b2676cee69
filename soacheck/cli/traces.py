"""Waveforms: trace."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer
from rich.console import Console

from soacheck.cli.base import (
    PLOT_SUFFIXES,
    BreakdownOpt,
    ForceOpt,
    JsonOpt,
    LibraryOpt,
    PolicyOpt,
    app,
    breakdown_option,
    console_for_output,
    echo_json,
    output_path,
    progress_bar,
    user_errors,
)
from soacheck.cli.tables import (
    Column,
    named_column,
    print_table,
    print_verdict,
    quantity_table,
    under_policy,
    verdict_cells,
)
from soacheck.errors import SoacheckError
from soacheck.filemarks import save_figure
from soacheck.tracechunks import DEFAULT_CHUNK_ROWS

if TYPE_CHECKING:  # the domain modules load when a command runs, not for --help
    from soacheck.trace_result import TraceResult


@app.command()
@user_errors
def trace(
    part: Annotated[str, typer.Argument(help="Part id or path of a part folder.")],
    files: Annotated[
        list[str],
        typer.Argument(
            help="Traces: CSV (or Parquet) files with columns time,voltage,current; several files, folders or "
            "glob patterns check a whole archive.",
            metavar="FILES...",
        ),
    ],
    case_temp: Annotated[
        float | None,
        typer.Option("--case-temp", "-t", help="Fixed case temperature [°C] (default 25 without a heatsink)."),
    ] = None,
    heatsink_rth: Annotated[
        float | None,
        typer.Option("--heatsink-rth", help="Heatsink to ambient [K/W]; the case then follows the heatsink."),
    ] = None,
    heatsink_capacity: Annotated[
        float | None, typer.Option("--heatsink-capacity", help="Heat capacity of the heatsink [J/K].")
    ] = None,
    interface_rth: Annotated[float, typer.Option("--interface-rth", help="Case to heatsink [K/W].")] = 0.0,
    ambient: Annotated[float, typer.Option("--ambient", help="Ambient temperature [°C] with a heatsink.")] = 25.0,
    plot: Annotated[
        Path | None, typer.Option("--plot", help="Write the trajectory and Tj plot (.png, .svg, .pdf).")
    ] = None,
    chunk_rows: Annotated[
        int, typer.Option("--chunk-rows", help="Samples read and checked at a time.")
    ] = DEFAULT_CHUNK_ROWS,
    jobs: Annotated[
        int | None,
        typer.Option(
            "--jobs", "-j", help="Files checked at once, each in its own process.", show_default="the core count"
        ),
    ] = None,
    dask: Annotated[
        str | None,
        typer.Option("--dask", metavar="ADDRESS", help="Check the files on this Dask scheduler (soacheck\\[dask])."),
    ] = None,
    breakdown_derating: BreakdownOpt = "auto",
    policy: PolicyOpt = None,
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Check a V–I waveform sample by sample: SOA at the case temperature, pulses, and Tj.

    Several files (or a folder, or a glob) are checked each on its own, in parallel, into one
    summary table; exit 2 if any file could not be read, else 1 if any failed.
    """
    import soacheck
    from soacheck.archive import expand_files

    cooling = None
    if heatsink_rth is not None or heatsink_capacity is not None:
        if heatsink_rth is None or heatsink_capacity is None:
            raise SoacheckError("a heatsink needs both --heatsink-rth (K/W) and --heatsink-capacity (J/K)")
        if case_temp is not None:
            raise SoacheckError("give either --case-temp or a heatsink, not both")
        from soacheck.quantities import HEAT_CAPACITY, INTERFACE_RESISTANCE, TEMPERATURE, THERMAL_RESISTANCE
        from soacheck.stage import Cooling

        cooling = Cooling(
            INTERFACE_RESISTANCE.check(interface_rth, "--interface-rth"),
            THERMAL_RESISTANCE.check(heatsink_rth, "--heatsink-rth"),
            HEAT_CAPACITY.check(heatsink_capacity, "--heatsink-capacity"),
            TEMPERATURE.check(ambient, "--ambient"),
        )
    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    if jobs is not None and jobs < 1:
        raise SoacheckError(f"--jobs is {jobs}; give 1 or more files at a time")
    paths = expand_files(files)
    if len(files) > 1 or len(paths) != 1 or Path(files[0]).is_dir() or dask is not None:
        if plot is not None:
            raise SoacheckError("--plot draws one trace; give one file, or leave out --plot for an archive")
        _archive(part, paths, case_temp, cooling, breakdown_derating, chunk_rows, jobs, dask, library, as_json)
        return
    file = paths[0]
    with progress_bar(f"checking {file.name}: samples", quiet=as_json) as progress:
        result = soacheck.trace(
            part,
            file,
            case_temp=case_temp,
            cooling=cooling,
            breakdown=breakdown_option(breakdown_derating),
            chunk_rows=chunk_rows,
            policy=policy,
            library=library,
            progress=progress,
        )
    if plot is not None:
        save_figure(result.plot().figure, plot)
    if as_json:
        echo_json(result.to_dict())
    else:
        _print_trace(console_for_output(), result.trace, plot)
    raise typer.Exit(0 if result.passed else 1)


def _archive(part, paths, case_temp, cooling, breakdown_derating, chunk_rows, jobs, dask, library, as_json) -> None:
    """Check every file of an archive and print one summary (a table, or one JSON object a line)."""
    from soacheck.api.points import load_part
    from soacheck.archive import check_archive

    loaded = load_part(part, library=library)
    if case_temp is None and cooling is None:
        case_temp = 25.0
    with progress_bar("checking files", total=len(paths), quiet=as_json) as progress:
        outcomes = check_archive(
            loaded,
            paths,
            case_temp=case_temp,
            cooling=cooling,
            breakdown=breakdown_option(breakdown_derating),
            chunk_rows=chunk_rows,
            jobs=jobs,
            dask_address=dask,
            progress=progress,
        )
    verdicts = {o.verdict for o in outcomes}
    if as_json:
        overall = "invalid" if "invalid" in verdicts else "fail" if "fail" in verdicts else "pass"
        echo_json({"part": loaded.id, "verdict": overall, "files": [o.to_dict() for o in outcomes]})
    else:
        _print_archive(console_for_output(), loaded.id, outcomes)
    raise typer.Exit(2 if "invalid" in verdicts else 1 if "fail" in verdicts else 0)


def _print_archive(console: Console, part_id: str, outcomes) -> None:
    """One row per file: verdict, first violation and its limit, margin, Tj peak; then the unreadable files' messages."""
    read = [o.summary or {} for o in outcomes]
    verdicts, styles = verdict_cells(o.verdict == "pass" for o in outcomes)
    verdicts = ["unreadable" if o.summary is None else v for o, v in zip(outcomes, verdicts, strict=True)]
    first = [
        "" if not s or s["first_violation_time"] is None else f"{s['first_violation_time']:.4g} s ({s['limit']})"
        for s in read
    ]
    columns = [
        Column("file", [o.file for o in outcomes], essential=True, justify="left"),
        Column("verdict", verdicts, essential=True, justify="left", styles=styles),
        Column("first violation", first, essential=True),
        named_column("margin", [s.get("margin") for s in read], essential=True),
        named_column("tj_peak", [s.get("tj_peak") for s in read], rank=1),
    ]
    print_table(console, f"{part_id}: {len(outcomes)} trace files", columns)
    for o in outcomes:
        if o.error is not None:
            console.print(f"  unreadable: {o.error}", highlight=False, markup=False, soft_wrap=True)
    counts = {v: sum(o.verdict == v for o in outcomes) for v in ("pass", "fail", "invalid")}
    console.print(f"{counts['pass']} passed, {counts['fail']} failed, {counts['invalid']} unreadable", highlight=False)


def _print_trace(console: Console, result: TraceResult, plot: Path | None) -> None:
    summary = result.summary()
    title = f"{result.part_id}: trace of {result.samples} samples{under_policy(result.policy)}"
    console.print(quantity_table(title, summary, skip=("part", "samples"), span_s=result.duration_s))
    for note in result.assumptions:
        console.print(f"  assumed: {note}", highlight=False, markup=False)
    if plot is not None:
        console.print(f"plot written to {plot}", highlight=False)
    print_verdict(console, result.passed, summary, subject="the trace", span_s=result.duration_s)
