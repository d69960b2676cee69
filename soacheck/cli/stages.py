"""Planned tests through a stage: discharge, sweep, sharing."""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path
from typing import Annotated, Any

import typer
from rich.markup import escape
from rich.table import Table as RichTable

from soacheck.battery import MODES
from soacheck.battery import discharge as battery_discharge
from soacheck.battery import sweep as battery_sweep
from soacheck.cli.base import (
    BreakdownOpt,
    ForceOpt,
    JsonOpt,
    LibraryOpt,
    PlotOpt,
    app,
    breakdown_option,
    check_outputs,
    choice_option,
    console_for_output,
    echo_json,
    progress_bar,
    stage_option,
    user_errors,
)
from soacheck.errors import SoacheckError
from soacheck.filemarks import save_figure
from soacheck.jobfiles import battery_from
from soacheck.quantities import (
    CAPACITY,
    CELL_COUNT,
    CURRENT,
    DRAWS,
    PERCENTILE,
    POWER,
    RESISTANCE,
    SEED,
    SETPOINT,
    VOLTAGE,
)
from soacheck.search import max_safe_setpoint
from soacheck.sharing import sharing_monte_carlo
from soacheck.stage_run import StageRun, passes_at, run_stage
from soacheck.units import parse_duration


def _report_run(run: StageRun, label: str, *, as_json: bool, plot: Path | None, extra: dict[str, Any]) -> None:
    payload = {"test": label, **run.summary(), **extra, "assumptions": list(run.assumptions)}
    if plot is not None:
        from soacheck.plots import plot_stage_run  # matplotlib: only when plotting

        save_figure(plot_stage_run(run, title=label), plot)
    if as_json:
        echo_json(payload)
    else:
        console = console_for_output()
        table = RichTable(title=escape(f"{run.stage.part.id} × {run.stage.count}: {label}"), title_justify="left")
        table.add_column("quantity")
        table.add_column("value", justify="right")
        for key, value in payload.items():
            if key in ("assumptions", "test", "verdict"):
                continue
            table.add_row(
                key.replace("_", " "),
                "—" if value is None else f"{value:.4g}" if isinstance(value, float) else str(value),
            )
        console.print(table)
        for note in payload["assumptions"]:
            console.print(f"  assumed: {note}", highlight=False, markup=False)
        if plot is not None:
            console.print(f"plot written to {plot}", highlight=False)
        console.print("[green]PASS[/]" if run.passed else "[bold red]FAIL[/]: a device leaves its safe operating area")
    raise typer.Exit(0 if run.passed else 1)


@app.command()
@user_errors
def discharge(
    stage: Annotated[Path, typer.Argument(help="Stage file (TOML).")],
    battery: Annotated[str, typer.Option("--battery", "-b", help="nmc, lfp, lead-acid, nimh, or a CSV soc,voltage.")],
    cells: Annotated[int, typer.Option("--cells", help="Cells in series.")],
    capacity: Annotated[float, typer.Option("--capacity", help="Capacity [Ah].")],
    mode: Annotated[str, typer.Option("--mode", help="cc (A), cp (W) or cr (Ω).")],
    setpoint: Annotated[float, typer.Option("--setpoint", help="Current [A], power [W] or resistance [Ω].")],
    cutoff: Annotated[float | None, typer.Option("--cutoff", help="Pack cut-off voltage under load [V].")] = None,
    internal_resistance: Annotated[
        float, typer.Option("--internal-resistance", help="Pack's own resistance [Ω].")
    ] = 0.0,
    find_max: Annotated[bool, typer.Option("--find-max", help="Also find the most demanding safe setpoint.")] = False,
    samples: Annotated[int, typer.Option("--samples", help="Time samples of the trajectory.")] = 2000,
    plot: PlotOpt = None,
    breakdown_derating: BreakdownOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Discharge a battery through the stage and check every device all the way down."""
    breakdown = breakdown_option(breakdown_derating)
    mode = choice_option(mode, MODES, "--mode")
    CELL_COUNT.check(cells, "--cells")
    CAPACITY.check(capacity, "--capacity")
    RESISTANCE.check(internal_resistance, "--internal-resistance")
    SETPOINT[mode].check(setpoint, "--setpoint")
    if cutoff is not None:
        VOLTAGE.check(cutoff, "--cutoff")
    loaded = stage_option(stage, library)
    pack = battery_from(battery, cells, capacity, internal_resistance)
    check_outputs(samples, plot, force)

    def run_at(value: float) -> StageRun:
        path = battery_discharge(pack, mode, value, cutoff_v=cutoff, samples=samples)
        run = run_stage(loaded, path.time_s, path.source_v, path.total_a, breakdown=breakdown)
        return replace(run, assumptions=run.assumptions + path.notes)

    run = run_at(setpoint)
    label = battery_discharge(pack, mode, setpoint, cutoff_v=cutoff, samples=10).label
    extra: dict[str, Any] = {}
    if find_max:
        extra["max_safe_setpoint"] = max_safe_setpoint(passes_at(run_at), setpoint, mode)
    _report_run(run, label, as_json=as_json, plot=plot, extra=extra)


@app.command()
@user_errors
def sweep(
    stage: Annotated[Path, typer.Argument(help="Stage file (TOML).")],
    ramp: Annotated[
        str,
        typer.Option(
            "--ramp",
            help="current (at a fixed voltage), voltage (at a fixed current) or power (constant, over voltage).",
        ),
    ],
    start: Annotated[float, typer.Option("--from", help="Start of the ramp [A for current ramps, V otherwise].")],
    stop: Annotated[float, typer.Option("--to", help="End of the ramp [A for current ramps, V otherwise].")],
    at: Annotated[float, typer.Option("--at", help="The fixed source voltage [V], current [A] or power [W].")],
    ramp_time: Annotated[str, typer.Option("--time", help="Ramp duration, such as 10s or 500ms.")] = "10s",
    samples: Annotated[int, typer.Option("--samples", help="Time samples of the ramp.")] = 2000,
    plot: PlotOpt = None,
    breakdown_derating: BreakdownOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Run a V–I sweep through the stage and check every device along it."""
    breakdown = breakdown_option(breakdown_derating)
    ramp = choice_option(ramp, ("current", "voltage", "power"), "--ramp")
    ramped = CURRENT if ramp == "current" else VOLTAGE
    ramped.check(stop, "--to")
    if not (ramp == "current" and start == 0):
        ramped.check(start, "--from")
    {"current": VOLTAGE, "voltage": CURRENT, "power": POWER}[ramp].check(at, "--at")
    loaded = stage_option(stage, library)
    seconds = parse_duration(ramp_time, where="--time")
    if math.isinf(seconds):
        raise SoacheckError("--time must be a duration such as 10s, not dc")
    check_outputs(samples, plot, force)
    path = battery_sweep(ramp, start, stop, at=at, ramp_s=seconds, samples=samples)
    run = run_stage(loaded, path.time_s, path.source_v, path.total_a, breakdown=breakdown)
    _report_run(run, path.label, as_json=as_json, plot=plot, extra={})


@app.command()
@user_errors
def sharing(
    stage: Annotated[Path, typer.Argument(help="Stage file (TOML).")],
    current: Annotated[float, typer.Option("--current", "-i", help="Total current [A].")],
    voltage: Annotated[float, typer.Option("--voltage", "-v", help="Source voltage at the load's input [V].")],
    draws: Annotated[int, typer.Option("--draws", help="Monte Carlo draws of the V_BE offsets.")] = 10000,
    percentile: Annotated[float, typer.Option("--percentile", help="Percentile of the worst share to report.")] = 99.0,
    seed: Annotated[int, typer.Option("--seed", help="Random seed, for a repeatable answer.")] = 0,
    library: LibraryOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """How unevenly the devices share: the worst device's share over random V_BE spreads."""
    CURRENT.check(current, "--current")
    VOLTAGE.check(voltage, "--voltage")
    DRAWS.check(draws, "--draws")
    PERCENTILE.check(percentile, "--percentile")
    SEED.check(seed, "--seed")
    loaded = stage_option(stage, library)
    with progress_bar("Monte Carlo draws", total=draws, quiet=as_json) as progress:
        spread = sharing_monte_carlo(
            loaded, current, voltage, draws=draws, percentile=percentile, seed=seed, progress=progress
        )
    payload = {
        "stage": str(stage),
        "count": loaded.count,
        "equal_share": spread.equal_share,
        "worst_share": spread.worst_share,
        "percentile": spread.percentile,
        "mean_worst_share": spread.mean_share,
        "worst_device_current": spread.worst_share * current,
        "runaway_fraction": spread.runaway_fraction,
        "draws": spread.draws,
        "seed": seed,
    }
    if as_json:
        echo_json(payload)
    else:
        console = console_for_output()
        console.print(
            f"{loaded.count} devices, {current:g} A at {voltage:g} V: the worst device carries "
            f"{spread.worst_share:.1%} of the current ({spread.worst_share * current:.3g} A) at the "
            f"{percentile:g}th percentile of {draws} draws; equal sharing would be {spread.equal_share:.1%}.",
            highlight=False,
        )
        if spread.runaway_fraction:
            console.print(f"[bold red]{spread.runaway_fraction:.1%} of draws run away thermally[/]")
    raise typer.Exit(1 if spread.runaway_fraction else 0)
