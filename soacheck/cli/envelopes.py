"""What a stage can promise, and choosing parts: envelope, compare."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated

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
    number_list,
    output_path,
    progress_bar,
    user_errors,
)
from soacheck.cli.tables import (
    Column,
    named_column,
    print_assumptions,
    print_table,
    print_verdict,
    quantity_table,
    under_policy,
    verdict_cells,
)
from soacheck.display import failing_device, limit_text
from soacheck.errors import SoacheckError
from soacheck.filemarks import save_figure


@app.command()
@user_errors
def envelope(
    stage: Annotated[Path, typer.Argument(help="Stage file (TOML).")],
    check_file: Annotated[
        Path | None, typer.Option("--check", help="Envelope (TOML) to check the stage against.")
    ] = None,
    case_temp: Annotated[float | None, typer.Option("--case-temp", "-t", help="Hold the cases at this [°C].")] = None,
    voltages: Annotated[str | None, typer.Option("--voltages", help="Source voltages, such as 10,20,40.")] = None,
    pulse: Annotated[str, typer.Option("--pulse", help="'dc' or a pulse width, for the limit table.")] = "dc",
    duty: Annotated[float | None, typer.Option("--duty", help="Duty cycle of the pulses, in (0, 1].")] = None,
    idle_current: Annotated[
        float, typer.Option("--idle-current", help="Total current standing between pulses [A], for the limit table.")
    ] = 0.0,
    export: Annotated[Path | None, typer.Option("--export", help="Write the limit table: .csv, .json or .h.")] = None,
    plot: PlotOpt = None,
    breakdown_derating: BreakdownOpt = "auto",
    policy: PolicyOpt = None,
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """What a stage can safely promise: check an envelope, or find the largest safe one and export it."""
    import soacheck

    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    console = console_for_output()
    options = {
        "case_temp": case_temp,
        "breakdown": breakdown_option(breakdown_derating),
        "policy": policy,
        "library": library,
    }
    if check_file is not None:
        result = soacheck.envelope(stage, check_file, **options)
        if plot is not None:
            save_figure(result.plot().figure, plot)
        payload = result.to_dict()
        if as_json:
            echo_json(payload)
        else:
            loaded, env = result.check.stage, result.envelope
            title = f"{loaded.part.id} × {loaded.count} against {env.label}{under_policy(payload['policy'])}"
            console.print(quantity_table(title, payload, skip=("envelope", "part", "count")))
            if payload["outside"]:
                stretches = payload["outside"]
                print_table(
                    console,
                    "stretches of source voltage outside",
                    [
                        named_column("from_voltage", [o["from_voltage"] for o in stretches], essential=True),
                        named_column("to_voltage", [o["to_voltage"] for o in stretches], essential=True),
                        named_column("margin", [o.get("margin") for o in stretches], essential=True),
                        Column("limit", [limit_text(o["limit"]) for o in stretches], essential=True, justify="left"),
                    ],
                )
            print_assumptions(console, result.assumptions)
            device = failing_device(result.check.failed_device, loaded.count)
            print_verdict(
                console,
                result.passed,
                payload,
                subject="a device",
                covered="the stage covers the envelope",
                device=device,
            )
        raise typer.Exit(0 if result.passed else 1)
    from soacheck.limit_table import export_writer
    from soacheck.quantities import VOLTAGE

    if export is not None:
        export_writer(export.suffix)
        output_path(export, "--export", force=force)
    grid = None if voltages is None else number_list(voltages, "--voltages", "10,20,40", VOLTAGE)
    with progress_bar("largest safe envelope: bisection", quiet=as_json) as progress:
        found = soacheck.envelope(
            stage, voltages=grid, pulse=pulse, duty=duty, idle_current=idle_current, progress=progress, **options
        )
    table = found.table
    if export is not None:
        export.write_text(found.export_text(export.suffix), encoding="utf-8")
    if plot is not None:
        save_figure(found.plot().figure, plot)
    if as_json:
        echo_json(found.to_dict())
        return
    loaded = found.safe.stage
    power = [math.floor(v * i * 10) / 10 for v, i in zip(table.voltage_v, table.max_current_a, strict=True)]
    print_table(
        console,
        f"{loaded.part.id} × {loaded.count}: largest safe envelope{under_policy(table.policy)}",
        [
            Column("source voltage (V)", [f"{v:.4g}" for v in table.voltage_v], essential=True),
            Column("max current (A)", [f"{i:.3f}" for i in table.max_current_a], essential=True),
            Column("max power (W)", [f"{p:.1f}" for p in power], rank=1),
            Column("limit", [limit_text(lim) for lim in table.limit], essential=True, justify="left"),
        ],
    )
    print_assumptions(console, table.assumptions)
    if export is not None:
        console.print(f"limit table written to {export}", highlight=False)


@app.command()
@user_errors
def compare(
    parts: Annotated[list[str] | None, typer.Argument(help="Part ids or folders; or --all.")] = None,
    all_parts: Annotated[bool, typer.Option("--all", help="Every part in the libraries.")] = False,
    envelope_file: Annotated[Path | None, typer.Option("--envelope", help="Envelope file (TOML).")] = None,
    discharge_file: Annotated[
        Path | None, typer.Option("--discharge", help="Discharge file (TOML); needs --stage.")
    ] = None,
    trace_file: Annotated[Path | None, typer.Option("--trace", help="Trace CSV: time,voltage,current.")] = None,
    case_temp: Annotated[
        float, typer.Option("--case-temp", "-t", help="Case of a single device on a trace [°C].")
    ] = 25.0,
    stage: Annotated[Path | None, typer.Option("--stage", help="Stage each candidate takes its place in.")] = None,
    plot: PlotOpt = None,
    breakdown_derating: BreakdownOpt = "auto",
    policy: PolicyOpt = None,
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Rank candidate parts for a job: margin, limit, fewest devices, cooling headroom."""
    import soacheck

    if all_parts and parts:
        raise SoacheckError("name the candidate parts, or give --all (not both)")
    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    if plot is not None and envelope_file is None and (discharge_file or trace_file):
        raise SoacheckError("--plot draws the candidates over an envelope; use it with --envelope")
    with progress_bar("comparing candidates", quiet=as_json) as progress:
        result = soacheck.compare(
            "all" if all_parts else (parts or []),
            envelope=envelope_file,
            discharge=discharge_file,
            trace=trace_file,
            case_temp=case_temp,
            stage=stage,
            breakdown=breakdown_option(breakdown_derating),
            policy=policy,
            library=library,
            progress=progress,
        )
    if plot is not None:
        save_figure(result.plot().figure, plot)
    label, loaded_stage, ranked, payload = result.job, result.stage, result.candidates, result.to_dict()
    if as_json:
        echo_json(payload)
    else:
        verdicts, styles = verdict_cells(c.passes for c in ranked)
        headroom = "max_heatsink_rth" if loaded_stage else "max_case_temp"
        columns = [
            Column("part", [c.part for c in ranked], essential=True, justify="left"),
            Column("verdict", verdicts, essential=True, justify="left", styles=styles),
            named_column("margin", [c.margin for c in ranked], essential=True),
        ]
        if under_policy(payload["policy"]):  # the margin to the absolute ratings beside the policy's
            columns.append(named_column("margin_to_rating", [c.margin_to_rating for c in ranked], essential=True))
        if any(c.margin is not None and c.margin < 0 for c in ranked):
            columns.append(named_column("overload", [c.as_dict()["overload"] for c in ranked], essential=True))
        columns += [
            Column("limit", [limit_text(c.limit) for c in ranked], essential=True, justify="left"),
            named_column("min_count", [c.min_count for c in ranked], rank=2),
            named_column(headroom, [getattr(c, headroom) for c in ranked], rank=1),
        ]
        console = console_for_output()
        print_table(console, f"candidates for {label}{under_policy(payload['policy'])}", columns)
        print_assumptions(console, result.assumptions)
    raise typer.Exit(0 if ranked and ranked[0].passes else 1)
