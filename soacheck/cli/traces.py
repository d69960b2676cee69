"""Waveforms: trace."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

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
from soacheck.cli.tables import quantity_table, under_policy
from soacheck.errors import SoacheckError
from soacheck.filemarks import save_figure
from soacheck.quantities import HEAT_CAPACITY, INTERFACE_RESISTANCE, TEMPERATURE, THERMAL_RESISTANCE
from soacheck.stage import Cooling
from soacheck.trace import TraceResult


@app.command()
@user_errors
def trace(
    part: Annotated[str, typer.Argument(help="Part id or path of a part folder.")],
    file: Annotated[
        Path, typer.Argument(help="Trace: CSV (or Parquet with pyarrow) with columns time,voltage,current.")
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
    chunk_rows: Annotated[int, typer.Option("--chunk-rows", help="Samples read and checked at a time.")] = 1_000_000,
    breakdown_derating: BreakdownOpt = "auto",
    policy: PolicyOpt = None,
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Check a V–I waveform sample by sample: SOA at the case temperature, pulses, and Tj."""
    from soacheck import api

    cooling = None
    if heatsink_rth is not None or heatsink_capacity is not None:
        if heatsink_rth is None or heatsink_capacity is None:
            raise SoacheckError("a heatsink needs both --heatsink-rth (K/W) and --heatsink-capacity (J/K)")
        if case_temp is not None:
            raise SoacheckError("give either --case-temp or a heatsink, not both")
        cooling = Cooling(
            INTERFACE_RESISTANCE.check(interface_rth, "--interface-rth"),
            THERMAL_RESISTANCE.check(heatsink_rth, "--heatsink-rth"),
            HEAT_CAPACITY.check(heatsink_capacity, "--heatsink-capacity"),
            TEMPERATURE.check(ambient, "--ambient"),
        )
    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    with progress_bar(f"checking {file.name}: samples", quiet=as_json) as progress:
        result = api.trace(
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


def _print_trace(console: Console, result: TraceResult, plot: Path | None) -> None:
    summary = result.summary()
    title = f"{result.part_id}: trace of {result.samples} samples{under_policy(result.policy)}"
    console.print(quantity_table(title, summary, skip=("part", "samples"), span_s=result.duration_s))
    for note in result.assumptions:
        console.print(f"  assumed: {note}", highlight=False, markup=False)
    if plot is not None:
        console.print(f"plot written to {plot}", highlight=False)
    console.print("[green]PASS[/]" if result.passed else "[bold red]FAIL[/]: the trace leaves the safe operating area")
