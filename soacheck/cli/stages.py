"""Planned tests through a stage: discharge, sweep, sharing."""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from soacheck.cli.base import (
    PLOT_SUFFIXES,
    BreakdownOpt,
    ForceOpt,
    JsonOpt,
    LibraryOpt,
    PlotOpt,
    PolicyOpt,
    app,
    breakdown_option,
    console_for_output,
    echo_json,
    output_path,
    progress_bar,
    user_errors,
)
from soacheck.cli.tables import print_assumptions, print_verdict, quantity_table, under_policy
from soacheck.display import device_name, failing_device, value_text
from soacheck.filemarks import save_figure
from soacheck.glossary import words

if TYPE_CHECKING:
    from soacheck.api.stages import StageRunResult


def _report_run(result: StageRunResult, *, as_json: bool, plot: Path | None) -> None:
    run, label, payload = result.run, result.test, result.to_dict()
    if plot is not None:
        save_figure(result.plot().figure, plot)
    if as_json:
        echo_json(payload)
    else:
        console = console_for_output()
        title = f"{run.stage.part.id} × {run.stage.count}: {label}{under_policy(payload['policy'])}"
        unit = result.setpoint_unit  # A, W or Ω by the discharge's mode (quantities.SETPOINT)
        units = {"max_safe_setpoint": unit, "max_setpoint_at_rating": unit}
        console.print(quantity_table(title, payload, skip=("test",), span_s=payload.get("duration"), units=units))
        print_assumptions(console, payload["assumptions"])
        if plot is not None:
            console.print(f"plot written to {plot}", highlight=False)
        device = failing_device(run.failed_device, run.stage.count)
        print_verdict(console, run.passed, payload, subject="a device", span_s=payload.get("duration"), device=device)
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
    policy: PolicyOpt = None,
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Discharge a battery through the stage and check every device all the way down."""
    import soacheck

    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    with progress_bar("most demanding safe setpoint: runs", quiet=as_json or not find_max) as progress:
        result = soacheck.discharge(
            stage,
            battery=battery,
            cells=cells,
            capacity=capacity,
            mode=mode,  # type: ignore[arg-type]
            setpoint=setpoint,
            cutoff=cutoff,
            internal_resistance=internal_resistance,
            samples=samples,
            find_max=find_max,
            breakdown=breakdown_option(breakdown_derating),
            policy=policy,
            library=library,
            progress=progress,
        )
    _report_run(result, as_json=as_json, plot=plot)


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
    policy: PolicyOpt = None,
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Run a V–I sweep through the stage and check every device along it."""
    import soacheck

    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    result = soacheck.sweep(
        stage,
        ramp=ramp,  # type: ignore[arg-type]
        start=start,
        stop=stop,
        at=at,
        time=ramp_time,
        samples=samples,
        breakdown=breakdown_option(breakdown_derating),
        policy=policy,
        library=library,
    )
    _report_run(result, as_json=as_json, plot=plot)


@app.command()
@user_errors
def sharing(
    stage: Annotated[Path, typer.Argument(help="Stage file (TOML).")],
    current: Annotated[float, typer.Option("--current", "-i", help="Total current [A].")],
    voltage: Annotated[float, typer.Option("--voltage", "-v", help="Source voltage at the load's input [V].")],
    draws: Annotated[int, typer.Option("--draws", help="Monte Carlo draws of the V_BE offsets.")] = 10000,
    percentile: Annotated[float, typer.Option("--percentile", help="Percentile of the worst share to report.")] = 99.0,
    seed: Annotated[int, typer.Option("--seed", help="Random seed, for a repeatable answer.")] = 0,
    breakdown_derating: BreakdownOpt = "auto",
    policy: PolicyOpt = None,
    library: LibraryOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """How unevenly the devices share: the worst device's share over random V_BE spreads."""
    import soacheck

    with progress_bar("Monte Carlo draws", total=draws, quiet=as_json) as progress:
        result = soacheck.sharing(
            stage,
            current=current,
            voltage=voltage,
            draws=draws,
            percentile=percentile,
            seed=seed,
            breakdown=breakdown_option(breakdown_derating),
            policy=policy,
            library=library,
            progress=progress,
        )
    loaded, spread, payload = result.stage, result.spread, result.to_dict()
    if as_json:
        echo_json(payload)
    else:
        console = console_for_output()
        settled = draws - round(spread.runaway_fraction * draws)
        of = f"{draws} draws" if settled == draws else f"the {settled} of {draws} draws that settle"
        taken = "is taken to carry" if loaded.sharing_assumption is not None else "carries"  # no transfer.csv
        carries = (
            f"the worst device {taken} {spread.worst_share:.1%} of the current ({spread.worst_share * current:.3g} A) "
            f"at the {percentile:g}th percentile of {of}"
            if settled
            else f"no draw of {draws} settles, so no device has a settled share"
        )
        console.print(
            f"{loaded.count} devices, {current:g} A at {voltage:g} V: {carries}; equal sharing would be "
            f"{spread.equal_share:.1%}.",
            highlight=False,
        )
        stability = ("stage_gain_peak", "hogging_fraction", "runaway_fraction")
        console.print("; ".join(f"{words(k)} {value_text(k, payload[k])}" for k in stability), highlight=False)
        print_assumptions(console, result.assumptions)
        summary = {**payload, "margin": result.margin if math.isfinite(result.margin) else None}
        subject = "a device" if result.device is None else f"{device_name(result.device)} in the worst draw"
        failed = failing_device(spread.failed_device, loaded.count)
        draw = "the worst draw" if spread.device_margin < 0 else "a draw"  # the least margin's, or the first to fail
        device = None if failed is None else f"{failed} in {draw}"
        print_verdict(console, result.passed, summary, subject=subject, device=device)
    raise typer.Exit(0 if result.passed else 1)
