"""Point checks and the library: check, parts, show."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Any

import typer
from rich.console import Console
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
    part_option,
    user_errors,
)
from soacheck.errors import SoacheckError
from soacheck.filemarks import save_figure
from soacheck.jobfiles import read_points
from soacheck.library import library_folders, list_parts
from soacheck.partfiles import read_part
from soacheck.points import PointCheck, check_points
from soacheck.quantities import CURRENT, IDLE_CURRENT, TEMPERATURE, VOLTAGE
from soacheck.units import parse_duration


def check_payload(result: PointCheck) -> dict[str, Any]:
    frame = result.to_frame()
    return {
        "part": result.part_id,
        "verdict": result.verdict,
        "points": frame.to_dict(orient="records"),
        "assumptions": list(result.assumptions),
    }


def _print_check(console: Console, result: PointCheck) -> None:
    table = RichTable(title=escape(f"{result.part_id}: operating points"), title_justify="left")
    names = ("V [V]", "I [A]", "Tc [°C]", "pulse", "duty", "idle [A]", "curve", "allowed [A]", "margin", "limit", "")
    for name in names:
        table.add_column(name, justify="right" if "[" in name or name == "margin" else "left")
    frame = result.to_frame()
    for row in frame.itertuples(index=False):
        margin = "—" if not math.isfinite(row.margin) else f"{row.margin:+.1%}"
        allowed = "—" if not math.isfinite(row.allowed_current) else f"{row.allowed_current:.4g}"
        mark = "[green]inside[/]" if row.inside else "[bold red]OUTSIDE[/]"
        limit = row.limit + (" (extrapolated)" if row.extrapolated else "")
        table.add_row(
            f"{row.voltage:g}",
            f"{row.current:g}",
            f"{row.case_temp:g}",
            row.pulse,
            f"{row.duty:g}" if row.duty is not None else "single" if row.pulse != "dc" else "",
            f"{row.idle_current:g}" if row.idle_current > 0 else "",
            row.curve,
            allowed,
            margin,
            limit,
            mark,
        )
    console.print(table)
    for note in result.assumptions:
        console.print(f"  assumed: {note}", highlight=False, markup=False)
    verdict = (
        "[green]PASS[/]: every point is inside"
        if result.passed
        else (f"[bold red]FAIL[/]: {int((~result.inside).sum())} of {result.inside.size} points outside")
    )
    console.print(verdict)


@app.command()
@user_errors
def check(
    part: Annotated[str, typer.Argument(help="Part id or path of a part folder.")],
    voltage: Annotated[float | None, typer.Option("--voltage", "-v", help="Voltage across the device [V].")] = None,
    current: Annotated[float | None, typer.Option("--current", "-i", help="Current through the device [A].")] = None,
    points: Annotated[
        Path | None, typer.Option("--points", "-p", help="CSV of points: voltage,current[,case_temp,pulse].")
    ] = None,
    case_temp: Annotated[
        float, typer.Option("--case-temp", "-t", help="Case temperature [°C] where the points give none.")
    ] = 25.0,
    pulse: Annotated[
        str, typer.Option("--pulse", help="'dc' or a pulse width such as 1ms, where the points give none.")
    ] = "dc",
    duty: Annotated[
        float | None,
        typer.Option("--duty", help="Duty cycle of a pulse train, in (0, 1]; a single pulse when absent."),
    ] = None,
    idle_current: Annotated[
        float,
        typer.Option(
            "--idle-current",
            help="Current standing between pulses, at the same voltage [A], where the points give none.",
        ),
    ] = 0.0,
    plot: PlotOpt = None,
    breakdown_derating: BreakdownOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Check operating points against a part's SOA derated at the case temperature."""
    breakdown = breakdown_option(breakdown_derating)
    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    pulse_s = parse_duration(pulse, where="--pulse")
    duty_value = duty_option(duty, pulse_s)
    TEMPERATURE.check(case_temp, "--case-temp")
    IDLE_CURRENT.check(idle_current, "--idle-current")
    if points is not None:
        if voltage is not None or current is not None:
            raise SoacheckError("give either --points FILE or --voltage and --current, not both")
        frame = read_points(points).frame
        v, i = frame["voltage"].to_numpy(), frame["current"].to_numpy()
        tc = frame["case_temp"].to_numpy() if "case_temp" in frame else case_temp
        tp = frame["pulse_s"].to_numpy() if "pulse_s" in frame else pulse_s
        d = frame["duty"].to_numpy() if "duty" in frame else duty_value
        idle = frame["idle_current"].to_numpy() if "idle_current" in frame else idle_current
    else:
        if voltage is None or current is None:
            raise SoacheckError("give --voltage and --current (in V and A), or --points FILE")
        VOLTAGE.check(voltage, "--voltage")
        CURRENT.check(current, "--current")
        v, i, tc, tp, d, idle = voltage, current, case_temp, pulse_s, duty_value, idle_current
    loaded = part_option(part, library)
    result = check_points(v, i, loaded, tc_c=tc, pulse_s=tp, duty=d, idle_current_a=idle, breakdown=breakdown)
    if plot is not None:
        from soacheck.plots import plot_point_check  # matplotlib: only when plotting

        save_figure(plot_point_check(loaded, result, breakdown=breakdown).figure, plot)
    if as_json:
        echo_json(check_payload(result))
    else:
        _print_check(console_for_output(), result)
    raise typer.Exit(0 if result.passed else 1)


@app.command()
@user_errors
def parts(library: LibraryOpt = None, as_json: JsonOpt = False) -> None:
    """List the parts in the libraries, first match of each id."""
    folders = library_folders(library or [])
    loaded = [read_part(entry.folder) for entry in list_parts(folders)]
    rows = [
        {
            "id": p.id,
            "kind": p.kind,
            "v_max": p.ratings.v_max_v,
            "i_max": p.ratings.i_max_a,
            "p_max": p.ratings.p_max_w,
            "tj_max": p.ratings.tj_max_c,
            "rth_jc": p.ratings.rth_jc_k_per_w,
            "curves": [c.label for c in p.curves],
            "description": p.description,
            "folder": str(p.folder),
        }
        for p in loaded
    ]
    if as_json:
        echo_json({"parts": rows})
        return
    table = RichTable(title="soacheck parts", title_justify="left")
    for name in ("id", "kind", "V max", "I max", "P max", "Tj max", "Rth jc", "curves", "description"):
        table.add_column(name)
    for r in rows:
        table.add_row(
            escape(r["id"]),
            r["kind"],
            f"{r['v_max']:g} V",
            f"{r['i_max']:g} A",
            f"{r['p_max']:g} W",
            f"{r['tj_max']:g} °C",
            f"{r['rth_jc']:g} K/W",
            " ".join(r["curves"]),
            escape(r["description"]),
        )
    console_for_output().print(table)


@app.command()
@user_errors
def show(
    part: Annotated[str, typer.Argument(help="Part id or path of a part folder.")],
    case_temp: Annotated[
        str, typer.Option("--case-temp", "-t", help="Case temperatures of the derated curves [°C], comma separated.")
    ] = "25,75,125",
    pulse: Annotated[str, typer.Option("--pulse", help="Curve to derate: 'dc' or a pulse width.")] = "dc",
    points: Annotated[Path | None, typer.Option("--points", "-p", help="CSV of points to check and draw.")] = None,
    plot: Annotated[
        Path | None,
        typer.Option("--plot", metavar="FILE", show_default="PART-soa.png", help="Plot file: .png, .svg or .pdf."),
    ] = None,
    breakdown_derating: BreakdownOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
) -> None:
    """Plot a part's SOA: every curve by mechanism, derated curves and checked points."""
    loaded = part_option(part, library)
    breakdown = breakdown_option(breakdown_derating)
    pulse_s = parse_duration(pulse, where="--pulse")
    output = plot or Path(f"{loaded.id}-soa.png")
    output_path(output, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    checked = None
    if points is not None:
        frame = read_points(points).frame
        checked = check_points(
            frame["voltage"].to_numpy(),
            frame["current"].to_numpy(),
            loaded,
            tc_c=frame["case_temp"].to_numpy() if "case_temp" in frame else 25.0,
            pulse_s=frame["pulse_s"].to_numpy() if "pulse_s" in frame else pulse_s,
            breakdown=breakdown,
        )
    from soacheck.plots import plot_soa  # matplotlib: only when plotting

    ax = plot_soa(
        loaded,
        case_temps_c=number_list(case_temp, "--case-temp", "25,75,125", TEMPERATURE).tolist(),
        pulse_s=pulse_s,
        points=checked,
        breakdown=breakdown,
    )
    save_figure(ax.figure, output)
    typer.echo(f"wrote {output}")
