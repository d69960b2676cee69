"""What a stage can promise, and choosing parts: envelope, compare."""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path
from typing import Annotated

import numpy as np
import typer
from rich.markup import escape
from rich.table import Table as RichTable

from soacheck.cli.base import (
    PLOT_SUFFIXES,
    BreakdownOpt,
    ForceOpt,
    JsonOpt,
    LibraryOpt,
    PlotOpt,
    app,
    breakdown_option,
    console_for_output,
    duty_option,
    echo_json,
    number_list,
    output_path,
    progress_bar,
    stage_option,
    user_errors,
)
from soacheck.compare import TrajectoryJob
from soacheck.compare import compare as compare_parts
from soacheck.envelope import check_envelope, largest_safe_envelope
from soacheck.errors import SoacheckError
from soacheck.filemarks import save_figure
from soacheck.files import read_toml, read_trace
from soacheck.jobfiles import discharge_from_table, read_envelope
from soacheck.library import find_part, library_folders, list_parts, read_stage
from soacheck.limit_table import export_writer, limit_table
from soacheck.partfiles import read_part
from soacheck.quantities import TEMPERATURE, VOLTAGE
from soacheck.units import parse_duration


def _voltages(text: str | None, v_max_v: float) -> np.ndarray:
    if text is None:
        return np.geomspace(1.0, v_max_v, 25)
    return np.unique(number_list(text, "--voltages", "10,20,40", VOLTAGE))


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
    export: Annotated[Path | None, typer.Option("--export", help="Write the limit table: .csv, .json or .h.")] = None,
    plot: PlotOpt = None,
    breakdown_derating: BreakdownOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """What a stage can safely promise: check an envelope, or find the largest safe one and export it."""
    breakdown = breakdown_option(breakdown_derating)
    loaded = stage_option(stage, library)
    if case_temp is not None:
        loaded = replace(loaded, cooling=None, case_temp_c=TEMPERATURE.check(case_temp, "--case-temp"))
    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    console = console_for_output()
    if check_file is not None:
        env = read_envelope(check_file)
        result = check_envelope(loaded, env, breakdown=breakdown)
        if plot is not None:
            from soacheck.plots import plot_envelope_check  # matplotlib: only when plotting

            save_figure(plot_envelope_check(result, breakdown=breakdown), plot)
        payload = result.summary()
        if as_json:
            echo_json(payload)
        else:
            console.print(f"{loaded.part.id} × {loaded.count} against {env.label}", highlight=False)
            console.print(
                f"least margin {payload['margin']:+.1%} ({payload['limit']}) at "
                f"{payload['worst_voltage']:g} V, {payload['worst_current']:.4g} A"
                if payload["margin"] is not None
                else "nothing allowed somewhere on the edge",
                highlight=False,
            )
            for part_out in result.outside:
                console.print(
                    f"  outside from {part_out['from_voltage']:.4g} V to {part_out['to_voltage']:.4g} V: "
                    f"{part_out['limit']}",
                    highlight=False,
                )
            for note in result.assumptions:
                console.print(f"  assumed: {note}", highlight=False, markup=False)
            console.print(
                "[green]PASS[/]: the stage covers the envelope"
                if result.passed
                else "[bold red]FAIL[/]: part of the envelope lies outside"
            )
        raise typer.Exit(0 if result.passed else 1)
    if export is not None:
        write_table = export_writer(export.suffix)
        output_path(export, "--export", force=force)
    pulse_s = parse_duration(pulse, where="--pulse")
    duty_value = 1.0 if math.isinf(pulse_s) else duty_option(duty, pulse_s) if duty is not None else 0.0
    with progress_bar("largest safe envelope: bisection", quiet=as_json) as progress:
        safe = largest_safe_envelope(
            loaded,
            _voltages(voltages, loaded.part.ratings.v_max_v),
            pulse_s=pulse_s,
            duty=duty_value,
            breakdown=breakdown,
            progress=progress,
        )
    table = limit_table(safe)
    if export is not None:
        export.write_text(write_table(table), encoding="utf-8")
    if plot is not None:
        from soacheck.plots import new_axes  # matplotlib: only when plotting

        ax = new_axes()
        ax.plot(table.voltage_v, table.max_current_a, marker="o", color="#1f5fa8")
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlabel("source voltage [V]")
        ax.set_ylabel("largest safe total current [A]")
        ax.set_title(f"{loaded.part.id} × {loaded.count}: largest safe envelope", fontsize=10)
        ax.grid(True, which="both", lw=0.3, alpha=0.6)
        save_figure(ax.figure, plot)
    if as_json:
        echo_json(table.to_dict())
        return
    out = RichTable(title=escape(f"{loaded.part.id} × {loaded.count}: largest safe envelope"), title_justify="left")
    for name in ("source V", "max total current", "max power", "limit"):
        out.add_column(name, justify="right" if name != "limit" else "left")
    for v, i, lim in zip(table.voltage_v, table.max_current_a, table.limit, strict=True):
        out.add_row(f"{v:.4g} V", f"{i:.3f} A", f"{math.floor(v * i * 10) / 10:.1f} W", lim)
    console.print(out)
    for note in table.assumptions:
        console.print(f"  assumed: {note}", highlight=False, markup=False)
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
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Rank candidate parts for a job: margin, limit, fewest devices, cooling headroom."""
    breakdown = breakdown_option(breakdown_derating)
    folders = library_folders(library or [])
    if all_parts == bool(parts):
        raise SoacheckError("name the candidate parts, or give --all (not both)")
    jobs = [f for f in (envelope_file, discharge_file, trace_file) if f is not None]
    if len(jobs) != 1:
        raise SoacheckError("give the job as one of --envelope FILE, --discharge FILE or --trace FILE")
    if discharge_file is not None and stage is None:
        raise SoacheckError("--discharge needs --stage: a battery discharges through a stage")
    TEMPERATURE.check(case_temp, "--case-temp")
    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    candidates = (
        [read_part(e.folder) for e in list_parts(folders)] if all_parts else [find_part(p, folders) for p in parts]
    )
    loaded_stage = read_stage(stage, folders) if stage is not None else None
    if envelope_file is not None:
        job = env = read_envelope(envelope_file)
    elif discharge_file is not None:
        path = discharge_from_table(
            read_toml(discharge_file, "discharge"), where=str(discharge_file), base=discharge_file.parent
        )
        job = TrajectoryJob(path)
    else:
        job = TrajectoryJob(read_trace(trace_file), case_temp_c=case_temp)
    with progress_bar("comparing candidates", total=len(candidates), quiet=as_json) as progress:
        ranked = compare_parts(candidates, job, stage=loaded_stage, breakdown=breakdown, progress=progress)
    label = env.label if envelope_file is not None else job.trajectory.label
    if plot is not None and envelope_file is None:
        raise SoacheckError("--plot draws the candidates over an envelope; use it with --envelope")
    if plot is not None:
        if env.case_temp_c is not None:
            tc = env.case_temp_c
        elif loaded_stage is not None and loaded_stage.case_temp_c is not None:
            tc = loaded_stage.case_temp_c
        else:
            tc = env.ambient_c
        from soacheck.plots import plot_compare  # matplotlib: only when plotting

        by_id = {p.id: p for p in candidates}
        drawn = plot_compare(
            [by_id[c.part] for c in ranked],
            env,
            case_temp_c=tc,
            count=loaded_stage.count if loaded_stage else 1,
            breakdown=breakdown,
        ).figure
        save_figure(drawn, plot)
    payload = {
        "job": label,
        "stage": str(stage) if stage else None,
        "candidates": [c.as_dict() for c in ranked],
    }
    if as_json:
        echo_json(payload)
    else:
        out = RichTable(title=escape(f"candidates for {label}"), title_justify="left")
        for name in (
            "part",
            "verdict",
            "margin",
            "limit",
            "fewest devices",
            "max heatsink Rth" if loaded_stage else "max case temp",
        ):
            out.add_column(name)
        for c in ranked:
            headroom = c.max_heatsink_rth if loaded_stage else c.max_case_temp
            unit = " K/W" if loaded_stage else " °C"
            out.add_row(
                escape(c.part),
                "[green]pass[/]" if c.passes else "[bold red]fail[/]",
                "—" if c.margin is None else f"{c.margin:+.1%}",
                c.limit,
                "—" if c.min_count is None else str(c.min_count),
                "—" if headroom is None else f"{headroom:.3g}{unit}",
            )
        console_for_output().print(out)
    raise typer.Exit(0 if ranked and ranked[0].passes else 1)
