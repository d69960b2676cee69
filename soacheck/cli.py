"""The ``soacheck`` command: a thin layer that reads files, calls the library and prints.

Exit codes: 0 when everything checked is safe, 1 when anything is unsafe, 2 for bad
input. A :class:`~soacheck.errors.SoacheckError` anywhere becomes one line on stderr and
exit code 2; that happens in one place, :func:`_user_errors`.
"""

from __future__ import annotations

import contextlib
import functools
import json
import math
import os
from dataclasses import replace
from pathlib import Path
from typing import Annotated, Any

import numpy as np
import typer
from rich.console import Console
from rich.markup import escape
from rich.progress import Progress
from rich.table import Table as RichTable

from soacheck.authoring import (
    AxisCalibration,
    check_part_id,
    follow_colour,
    parse_colour,
    pixels_to_values,
    soa_from_ratings,
)
from soacheck.battery import MODES
from soacheck.battery import discharge as battery_discharge
from soacheck.battery import sweep as battery_sweep
from soacheck.compare import TrajectoryJob
from soacheck.compare import compare as compare_parts
from soacheck.demo import DEMO_FOLDER, demo_plan_path
from soacheck.envelope import SafeEnvelope, check_envelope, largest_safe_envelope, limit_table_c_header
from soacheck.errors import SoacheckError
from soacheck.files import (
    PART_FILE,
    SOA_FILE,
    add_curve,
    battery_from,
    discharge_from_table,
    iter_trace,
    read_envelope,
    read_image,
    read_part,
    read_points,
    read_table,
    read_toml,
    read_trace,
    write_folder,
    write_part_folder,
    write_zth,
)
from soacheck.library import find_part, find_part_folder, library_folders, list_parts, read_stage
from soacheck.lint import lint_part
from soacheck.parts import Part
from soacheck.plan import read_plan
from soacheck.plots import new_axes, plot_compare, plot_envelope_check, plot_soa, plot_stage_run, plot_trace
from soacheck.report import report_html, report_json, slug, svg_text
from soacheck.runner import failures_first, run_plan
from soacheck.soa import BreakdownDerating, PointCheck, check_points
from soacheck.stage import Stage, StageRun, most_demanding_safe, run_stage, sharing_monte_carlo
from soacheck.trace import Cooling, TraceChecker, TraceResult
from soacheck.units import parse_duration

app = typer.Typer(
    name="soacheck",
    help="Check linear-mode operating points of power transistors against their derated safe operating area.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)

SAFETY_NOTE = (
    "soacheck's answer rests on digitized datasheet curves and the assumptions listed; it does not replace "
    "the datasheet, a prototype measured with a thermocouple, local codes or licensed practice."
)

LibraryOpt = Annotated[
    list[Path] | None,
    typer.Option(
        "--library", "-L", help="Folder of user part folders (repeatable); searched before the bundled demo parts."
    ),
]
JsonOpt = Annotated[bool, typer.Option("--json", help="Print one JSON object instead of a table.")]
PolicyOpt = Annotated[
    str,
    typer.Option(
        "--breakdown-derating",
        help="How second breakdown / instability derates: auto (part's table, else like thermal), thermal, none.",
    ),
]
ForceOpt = Annotated[bool, typer.Option("--force", help="Overwrite existing output files.")]


def _user_errors(command):
    """Turn a SoacheckError into one line on stderr and exit code 2, without a traceback."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        try:
            return command(*args, **kwargs)
        except SoacheckError as err:
            typer.echo(f"soacheck: error: {err}", err=True)
            raise typer.Exit(2) from None

    return wrapper


def _console() -> Console:
    return Console(width=int(os.environ.get("COLUMNS", "120")), soft_wrap=False)


def _policy(text: str) -> BreakdownDerating:
    if text not in ("auto", "thermal", "none"):
        raise SoacheckError(f"--breakdown-derating: '{text}' is not one of auto, thermal, none")
    return text  # type: ignore[return-value]


def _duty(duty: float | None, pulse_s: float) -> float:
    """The duty cycle from ``--duty``: 0 (a single pulse) when absent."""
    if duty is None:
        return 0.0
    if not (0 < duty <= 1):
        raise SoacheckError(f"--duty is {duty:g}; give the duty cycle tp/T in (0, 1], such as 0.1 for 10 %")
    if math.isinf(pulse_s):
        raise SoacheckError("--duty needs a pulse width: add --pulse, such as --pulse 3ms --duty 0.1")
    return duty


def _part(ref: str, library: list[Path] | None) -> Part:
    return find_part(ref, library_folders(library or []))


def _jsonable(value: Any) -> Any:
    """Plain JSON values: NaN becomes null, numpy scalars become Python numbers."""
    if isinstance(value, dict):
        return {k: _jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _echo_json(payload: dict[str, Any]) -> None:
    typer.echo(json.dumps(_jsonable(payload), indent=2, ensure_ascii=False))


def _refuse_overwrite(path: Path, force: bool) -> None:
    if path.exists() and not force:
        raise SoacheckError(f"{path}: exists; choose another name with -o or add --force to overwrite it")


def _check_payload(result: PointCheck) -> dict[str, Any]:
    frame = result.to_frame()
    return {
        "part": result.part_id,
        "verdict": result.verdict,
        "points": frame.to_dict(orient="records"),
        "assumptions": list(result.assumptions),
    }


def _print_check(console: Console, result: PointCheck) -> None:
    table = RichTable(title=escape(f"{result.part_id}: operating points"), title_justify="left")
    for name in ("V [V]", "I [A]", "Tc [°C]", "pulse", "duty", "curve", "allowed [A]", "margin", "limit", ""):
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
            f"{row.duty:g}" if row.duty > 0 else "single" if row.pulse != "dc" else "",
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
@_user_errors
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
    breakdown_derating: PolicyOpt = "auto",
    library: LibraryOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Check operating points against a part's SOA derated at the case temperature."""
    policy = _policy(breakdown_derating)
    pulse_s = parse_duration(pulse, where="--pulse")
    duty_value = _duty(duty, pulse_s)
    if not math.isfinite(case_temp):
        raise SoacheckError("--case-temp must be a finite temperature in °C")
    if points is not None:
        if voltage is not None or current is not None:
            raise SoacheckError("give either --points FILE or --voltage and --current, not both")
        frame = read_points(points).frame
        v, i = frame["voltage"].to_numpy(), frame["current"].to_numpy()
        tc = frame["case_temp"].to_numpy() if "case_temp" in frame else case_temp
        tp = frame["pulse_s"].to_numpy() if "pulse_s" in frame else pulse_s
        d = frame["duty"].to_numpy() if "duty" in frame else duty_value
    else:
        if voltage is None or current is None:
            raise SoacheckError("give --voltage and --current (in V and A), or --points FILE")
        for name, value in (("--voltage", voltage), ("--current", current)):
            if not (math.isfinite(value) and value > 0):
                raise SoacheckError(f"{name} is {value:g}; it must be a number above zero")
        v, i, tc, tp, d = voltage, current, case_temp, pulse_s, duty_value
    result = check_points(v, i, _part(part, library), tc_c=tc, pulse_s=tp, duty=d, policy=policy)
    if as_json:
        _echo_json(_check_payload(result))
    else:
        _print_check(_console(), result)
    raise typer.Exit(0 if result.passed else 1)


@app.command()
@_user_errors
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
        _echo_json({"parts": rows})
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
    _console().print(table)


def _temperatures(text: str) -> list[float]:
    try:
        values = [float(t) for t in text.split(",") if t.strip()]
    except ValueError:
        raise SoacheckError(f"--case-temp: '{text}' is not a list of temperatures such as 25,75,125") from None
    if not all(math.isfinite(t) for t in values):
        raise SoacheckError("--case-temp: temperatures must be finite numbers in °C")
    return values


@app.command()
@_user_errors
def show(
    part: Annotated[str, typer.Argument(help="Part id or path of a part folder.")],
    case_temp: Annotated[
        str, typer.Option("--case-temp", "-t", help="Case temperatures of the derated curves [°C], comma separated.")
    ] = "25,75,125",
    pulse: Annotated[str, typer.Option("--pulse", help="Curve to derate: 'dc' or a pulse width.")] = "dc",
    points: Annotated[Path | None, typer.Option("--points", "-p", help="CSV of points to check and draw.")] = None,
    output: Annotated[
        Path | None, typer.Option("--output", "-o", help="Plot file: .png, .svg or .pdf [default: PART-soa.png].")
    ] = None,
    breakdown_derating: PolicyOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
) -> None:
    """Plot a part's SOA: every curve by mechanism, derated curves and checked points."""
    loaded = _part(part, library)
    policy = _policy(breakdown_derating)
    pulse_s = parse_duration(pulse, where="--pulse")
    output = output or Path(f"{loaded.id}-soa.png")
    _plot_suffix(output)
    _refuse_overwrite(output, force)
    checked = None
    if points is not None:
        frame = read_points(points).frame
        checked = check_points(
            frame["voltage"].to_numpy(),
            frame["current"].to_numpy(),
            loaded,
            tc_c=frame["case_temp"].to_numpy() if "case_temp" in frame else 25.0,
            pulse_s=frame["pulse_s"].to_numpy() if "pulse_s" in frame else pulse_s,
            policy=policy,
        )
    ax = plot_soa(loaded, case_temps_c=_temperatures(case_temp), pulse_s=pulse_s, points=checked, policy=policy)
    ax.figure.savefig(output)
    typer.echo(f"wrote {output}")


REPORT_MARKER = ".soacheck-report"


def _run_plan_into(plan_path: Path, out: Path, *, force: bool, as_json: bool, library: list[Path] | None) -> bool:
    """Read, run and report a plan into ``out``; the report appears whole or not at all."""
    folders = library_folders(library or [])
    plan = read_plan(plan_path, folders)
    if out.exists() and not (out / REPORT_MARKER).is_file() and not force:
        raise SoacheckError(f"{out}: exists and holds no soacheck report; choose another -o or add --force")
    progress = Progress(console=Console(stderr=True), transient=True, disable=as_json)
    with progress:
        task = progress.add_task("jobs", total=len(plan.jobs))
        results = run_plan(
            plan, progress=lambda done, total, name: progress.update(task, completed=done, description=name)
        )
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
    files["report.json"] = json.dumps(_jsonable(payload), indent=2, ensure_ascii=False) + "\n"
    files["report.html"] = report_html(plan, results, svgs)
    write_folder(out, files, force=True, marker=REPORT_MARKER)
    if as_json:
        _echo_json(payload)
        return payload["verdict"] == "pass"
    console = _console()
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
@_user_errors
def run(
    plan: Annotated[Path, typer.Argument(help="Plan file (TOML): a stage and its jobs.")],
    out: Annotated[
        Path | None, typer.Option("--out", "-o", help="Folder for the report [default: PLAN-report].")
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
@_user_errors
def demo(
    out: Annotated[Path, typer.Option("--out", "-o", help="Folder for the demo's report.")] = Path(DEMO_FOLDER),
    force: ForceOpt = False,
) -> None:
    """Run the bundled demo plan (a workshop's pack-test bench, invented parts) into a report."""
    _console().print(
        "[bold]Demo:[/] a workshop bench that discharges donated e-bike packs through two pass transistors on "
        "one heatsink; every job kind of soacheck, on invented parts. Some jobs fail on purpose.",
        highlight=False,
    )
    _run_plan_into(demo_plan_path(), out, force=force, as_json=False, library=None)


@app.command()
@_user_errors
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
    breakdown_derating: PolicyOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Check a V–I waveform sample by sample: SOA at the case temperature, pulses, and Tj."""
    loaded = _part(part, library)
    policy = _policy(breakdown_derating)
    cooling = None
    if heatsink_rth is not None or heatsink_capacity is not None:
        if heatsink_rth is None or heatsink_capacity is None:
            raise SoacheckError("a heatsink needs both --heatsink-rth (K/W) and --heatsink-capacity (J/K)")
        if case_temp is not None:
            raise SoacheckError("give either --case-temp or a heatsink, not both")
        cooling = Cooling(interface_rth, heatsink_rth, heatsink_capacity, ambient)
    if plot is not None:
        _plot_suffix(plot)
        _refuse_overwrite(plot, force)
    if chunk_rows < 2:
        raise SoacheckError("--chunk-rows must be at least 2")
    checker = TraceChecker(
        loaded, tc_c=None if cooling else (25.0 if case_temp is None else case_temp), cooling=cooling, policy=policy
    )
    progress = Progress(console=Console(stderr=True), transient=True, disable=as_json)
    with progress, contextlib.closing(iter_trace(file, chunk_rows=chunk_rows)) as chunks:
        task = progress.add_task(f"checking {file.name}: samples", total=None)
        for t, v, i, first_row in chunks:
            try:
                checker.feed(t, v, i)
            except SoacheckError as err:
                raise SoacheckError(f"{file} near data row {first_row + 1}: {err}") from None
            progress.update(task, advance=t.size)
    result = checker.result()
    if plot is not None:
        plot_trace(loaded, result, policy=policy).savefig(plot)
    if as_json:
        _echo_json(result.summary())
    else:
        _print_trace(_console(), result, plot)
    raise typer.Exit(0 if result.passed else 1)


def _print_trace(console: Console, result: TraceResult, plot: Path | None) -> None:
    table = RichTable(title=escape(f"{result.part_id}: trace of {result.samples} samples"), title_justify="left")
    table.add_column("quantity")
    table.add_column("value", justify="right")

    def fmt(value, unit="", spec=".4g"):
        return "—" if value is None else f"{value:{spec}}{unit}"

    rows = [
        ("duration", fmt(result.duration_s, " s")),
        (
            "junction peak",
            fmt(result.tj_peak_c, " °C", ".1f")
            + (f" at {result.tj_peak_time_s:.4g} s" if result.tj_peak_c is not None else ""),
        ),
        ("case peak", fmt(result.tc_peak_c, " °C", ".1f")),
        (
            "worst margin",
            fmt(result.worst_margin, "", "+.1%")
            + (f" at {result.worst_margin_time_s:.4g} s" if result.worst_margin is not None else ""),
        ),
        ("excursions above DC", str(result.excursions)),
        ("first violation", fmt(result.first_violation_time_s, " s") + (f" ({result.limit})" if result.limit else "")),
        ("time outside", fmt(result.time_outside_s, " s")),
        ("time above tj_max", fmt(result.time_over_tj_max_s, " s")),
    ]
    for name, value in rows:
        table.add_row(name, value)
    console.print(table)
    for note in result.assumptions:
        console.print(f"  assumed: {note}", highlight=False, markup=False)
    if plot is not None:
        console.print(f"plot written to {plot}", highlight=False)
    console.print("[green]PASS[/]" if result.passed else "[bold red]FAIL[/]: the trace leaves the safe operating area")


def _plot_suffix(path: Path) -> None:
    if path.suffix.lower() not in (".png", ".svg", ".pdf"):
        raise SoacheckError(f"'{path}' must end in .png, .svg or .pdf")


def _stage(path: Path, library: list[Path] | None) -> Stage:
    return read_stage(path, library_folders(library or []))


def _check_outputs(samples: int, plot: Path | None, force: bool) -> None:
    if samples < 10:
        raise SoacheckError("--samples must be at least 10")
    if plot is not None:
        _plot_suffix(plot)
        _refuse_overwrite(plot, force)


def _report_run(run: StageRun, label: str, *, as_json: bool, plot: Path | None, extra: dict[str, Any]) -> None:
    payload = {"test": label, **run.summary(), **extra, "assumptions": list(run.assumptions)}
    if plot is not None:
        plot_stage_run(run, title=label).savefig(plot)
    if as_json:
        _echo_json(payload)
    else:
        console = _console()
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
@_user_errors
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
    plot: Annotated[Path | None, typer.Option("--plot", help="Write the plots (.png/.svg/.pdf).")] = None,
    breakdown_derating: PolicyOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Discharge a battery through the stage and check every device all the way down."""
    policy = _policy(breakdown_derating)
    loaded = _stage(stage, library)
    pack = battery_from(battery, cells, capacity, internal_resistance)
    if mode not in MODES:
        raise SoacheckError(f"--mode: '{mode}' is not one of cc, cp, cr")
    _check_outputs(samples, plot, force)

    def run_at(value: float) -> StageRun:
        path = battery_discharge(pack, mode, value, cutoff_v=cutoff, samples=samples)
        run = run_stage(loaded, path.time_s, path.source_v, path.total_a, policy=policy)
        return replace(run, assumptions=run.assumptions + path.notes)

    run = run_at(setpoint)
    label = battery_discharge(pack, mode, setpoint, cutoff_v=cutoff, samples=10).label
    extra: dict[str, Any] = {}
    if find_max:
        if mode == "cr":  # more load is less resistance: search the conductance
            best = most_demanding_safe(lambda g: run_at(1.0 / g), 1.0 / setpoint)
            extra["max_safe_setpoint"] = None if best is None else 1.0 / best
        else:
            extra["max_safe_setpoint"] = most_demanding_safe(run_at, setpoint)
    _report_run(run, label, as_json=as_json, plot=plot, extra=extra)


@app.command()
@_user_errors
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
    plot: Annotated[Path | None, typer.Option("--plot", help="Write the plots (.png/.svg/.pdf).")] = None,
    breakdown_derating: PolicyOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Run a V–I sweep through the stage and check every device along it."""
    policy = _policy(breakdown_derating)
    loaded = _stage(stage, library)
    seconds = parse_duration(ramp_time, where="--time")
    if math.isinf(seconds):
        raise SoacheckError("--time must be a duration such as 10s, not dc")
    _check_outputs(samples, plot, force)
    path = battery_sweep(ramp, start, stop, at=at, ramp_s=seconds, samples=samples)
    run = run_stage(loaded, path.time_s, path.source_v, path.total_a, policy=policy)
    _report_run(run, path.label, as_json=as_json, plot=plot, extra={})


@app.command()
@_user_errors
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
    loaded = _stage(stage, library)
    if not (current > 0 and voltage > 0 and draws >= 1 and 0 < percentile <= 100):
        raise SoacheckError("--current and --voltage must be above zero, --draws at least 1, --percentile in (0, 100]")
    progress = Progress(console=Console(stderr=True), transient=True, disable=as_json or draws < 20000)
    with progress:
        task = progress.add_task("Monte Carlo draws", total=draws)
        spread = sharing_monte_carlo(
            loaded,
            current,
            voltage,
            draws=draws,
            percentile=percentile,
            seed=seed,
            progress=lambda done, total: progress.update(task, completed=done),
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
        _echo_json(payload)
    else:
        console = _console()
        console.print(
            f"{loaded.count} devices, {current:g} A at {voltage:g} V: the worst device carries "
            f"{spread.worst_share:.1%} of the current ({spread.worst_share * current:.3g} A) at the "
            f"{percentile:g}th percentile of {draws} draws; equal sharing would be {spread.equal_share:.1%}.",
            highlight=False,
        )
        if spread.runaway_fraction:
            console.print(f"[bold red]{spread.runaway_fraction:.1%} of draws run away thermally[/]")
    raise typer.Exit(1 if spread.runaway_fraction else 0)


def _voltages(text: str | None, v_max_v: float) -> np.ndarray:
    if text is None:
        return np.geomspace(1.0, v_max_v, 25)
    try:
        values = np.array([float(x) for x in text.split(",") if x.strip()])
    except ValueError:
        raise SoacheckError(f"--voltages: '{text}' is not a list of voltages such as 10,20,40") from None
    if values.size == 0 or np.any(~np.isfinite(values)) or np.any(values <= 0):
        raise SoacheckError("--voltages: give voltages above zero, such as 10,20,40")
    return np.sort(values)


def _export_table(table: SafeEnvelope, path: Path, force: bool) -> None:
    _refuse_overwrite(path, force)
    suffix = path.suffix.lower()
    if suffix == ".csv":
        lines = [f"# {note}" for note in table.assumptions]
        lines.append("voltage,max_current,limit")
        lines += [f"{float(p['voltage'])!r},{float(p['max_current'])!r},{p['limit']}" for p in table.points()]
        text = "\n".join(lines) + "\n"
    elif suffix == ".json":
        text = (
            json.dumps(
                {
                    "part": table.stage.part.id,
                    "count": table.stage.count,
                    "points": table.points(),
                    "assumptions": list(table.assumptions),
                },
                indent=2,
                ensure_ascii=False,
            )
            + "\n"
        )
    elif suffix == ".h":
        text = limit_table_c_header(table)
    else:
        raise SoacheckError(f"--export: '{path}' must end in .csv, .json or .h")
    path.write_text(text, encoding="utf-8")


@app.command()
@_user_errors
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
    plot: Annotated[Path | None, typer.Option("--plot", help="Write the plot (.png/.svg/.pdf).")] = None,
    breakdown_derating: PolicyOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """What a stage can safely promise: check an envelope, or find the largest safe one and export it."""
    policy = _policy(breakdown_derating)
    loaded = _stage(stage, library)
    if case_temp is not None:
        loaded = replace(loaded, cooling=None, case_temp_c=case_temp)
    if plot is not None:
        _plot_suffix(plot)
        _refuse_overwrite(plot, force)
    console = _console()
    if check_file is not None:
        env = read_envelope(check_file)
        result = check_envelope(loaded, env, policy=policy)
        if plot is not None:
            plot_envelope_check(result, policy=policy).savefig(plot)
        payload = result.summary()
        if as_json:
            _echo_json(payload)
        else:
            console.print(f"{loaded.part.id} × {loaded.count} against {env.label}", highlight=False)
            console.print(
                f"least margin {payload['min_margin']:+.1%} ({payload['limit']}) at "
                f"{payload['worst_voltage']:g} V, {payload['worst_current']:.4g} A"
                if payload["min_margin"] is not None
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
    pulse_s = parse_duration(pulse, where="--pulse")
    duty_value = 1.0 if math.isinf(pulse_s) else _duty(duty, pulse_s) if duty is not None else 0.0
    table = largest_safe_envelope(
        loaded, _voltages(voltages, loaded.part.ratings.v_max_v), pulse_s=pulse_s, duty=duty_value, policy=policy
    )
    if export is not None:
        _export_table(table, export, force)
    if plot is not None:
        ax = new_axes()
        ax.plot(table.voltage_v, table.max_current_a, marker="o", color="#1f5fa8")
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlabel("source voltage [V]")
        ax.set_ylabel("largest safe total current [A]")
        ax.set_title(f"{loaded.part.id} × {loaded.count}: largest safe envelope", fontsize=10)
        ax.grid(True, which="both", lw=0.3, alpha=0.6)
        ax.figure.savefig(plot)
    payload = {
        "part": loaded.part.id,
        "count": loaded.count,
        "points": table.points(),
        "assumptions": list(table.assumptions),
    }
    if as_json:
        _echo_json(payload)
        return
    out = RichTable(title=escape(f"{loaded.part.id} × {loaded.count}: largest safe envelope"), title_justify="left")
    for name in ("source V", "max total current", "max power", "limit"):
        out.add_column(name, justify="right" if name != "limit" else "left")
    for p in table.points():
        out.add_row(
            f"{p['voltage']:.4g} V", f"{p['max_current']:.4g} A", f"{p['voltage'] * p['max_current']:.4g} W", p["limit"]
        )
    console.print(out)
    for note in table.assumptions:
        console.print(f"  assumed: {note}", highlight=False, markup=False)
    if export is not None:
        console.print(f"limit table written to {export}", highlight=False)


@app.command()
@_user_errors
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
    plot: Annotated[Path | None, typer.Option("--plot", help="Overlay plot (.png/.svg/.pdf).")] = None,
    breakdown_derating: PolicyOpt = "auto",
    library: LibraryOpt = None,
    force: ForceOpt = False,
    as_json: JsonOpt = False,
) -> None:
    """Rank candidate parts for a job: margin, limit, fewest devices, cooling headroom."""
    policy = _policy(breakdown_derating)
    folders = library_folders(library or [])
    if all_parts == bool(parts):
        raise SoacheckError("name the candidate parts, or give --all (not both)")
    jobs = [f for f in (envelope_file, discharge_file, trace_file) if f is not None]
    if len(jobs) != 1:
        raise SoacheckError("give the job as one of --envelope FILE, --discharge FILE or --trace FILE")
    if discharge_file is not None and stage is None:
        raise SoacheckError("--discharge needs --stage: a battery discharges through a stage")
    if plot is not None:
        _plot_suffix(plot)
        _refuse_overwrite(plot, force)
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
    ranked = compare_parts(candidates, job, stage=loaded_stage, policy=policy)
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
        by_id = {p.id: p for p in candidates}
        plot_compare(
            [by_id[c.part] for c in ranked],
            env,
            case_temp_c=tc,
            count=loaded_stage.count if loaded_stage else 1,
            policy=policy,
        ).figure.savefig(plot)
    payload = {
        "job": label,
        "stage": str(stage) if stage else None,
        "candidates": [c.as_dict() for c in ranked],
    }
    if as_json:
        _echo_json(payload)
    else:
        out = RichTable(title=escape(f"candidates for {label}"), title_justify="left")
        for name in (
            "part",
            "verdict",
            "min margin",
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
                "—" if c.min_margin is None else f"{c.min_margin:+.1%}",
                c.limit,
                "—" if c.min_count is None else str(c.min_count),
                "—" if headroom is None else f"{headroom:.3g}{unit}",
            )
        _console().print(out)
    raise typer.Exit(0 if ranked and ranked[0].passes else 1)


@app.command()
@_user_errors
def digitize(
    points: Annotated[
        Path | None, typer.Argument(help="Picked pixels: CSV with columns x,y (rows count downward).")
    ] = None,
    x: Annotated[str, typer.Option("--x", help="x calibration: PX1=V1,PX2=V2 (pixel column = value).")] = "",
    y: Annotated[str, typer.Option("--y", help="y calibration: PY1=I1,PY2=I2 (pixel row = value).")] = "",
    pulse: Annotated[str, typer.Option("--pulse", help="The curve's pulse width: dc, 10us, 1ms ...")] = "dc",
    linear_x: Annotated[bool, typer.Option("--linear-x", help="The x axis is linear, not logarithmic.")] = False,
    linear_y: Annotated[bool, typer.Option("--linear-y", help="The y axis is linear, not logarithmic.")] = False,
    zth: Annotated[bool, typer.Option("--zth", help="A Zth curve (x time in s, y in K/W) for zth.csv.")] = False,
    image: Annotated[
        Path | None, typer.Option("--image", help="The plot as a PNG: pick on screen, or follow --colour.")
    ] = None,
    colour: Annotated[
        str | None, typer.Option("--colour", help="Follow the curve of this colour (#rrggbb) in --image.")
    ] = None,
    output: Annotated[
        Path | None, typer.Option("--output", "-o", help="soa.csv (or zth.csv) to add the curve to.")
    ] = None,
    force: ForceOpt = False,
) -> None:
    """Turn points picked on a datasheet plot into soa.csv (or zth.csv) rows."""
    if not x or not y:
        raise SoacheckError("give both axis calibrations: --x PX1=V1,PX2=V2 --y PY1=I1,PY2=I2")
    x_axis = AxisCalibration.parse(x, log=not linear_x, option="--x")
    y_axis = AxisCalibration.parse(y, log=not linear_y, option="--y")
    if points is not None:
        frame = read_table(points, numeric=("x", "y")).frame
        px, py = frame["x"].to_numpy(), frame["y"].to_numpy()
    elif image is not None and colour is not None:
        px, py = follow_colour(read_image(image), parse_colour(colour))
    elif image is not None:
        px, py = _pick_on_screen(image)
    else:
        raise SoacheckError("give a CSV of picked pixels (x,y), or --image with --colour to follow a curve")
    if px.size < 2:
        raise SoacheckError("a curve needs at least two points")
    values_x, values_y = pixels_to_values(px, py, x_axis, y_axis)
    target = output or Path("zth.csv" if zth else "soa.csv")
    if zth:
        write_zth(target, values_x, values_y, force=force)
        typer.echo(f"wrote {values_x.size} Zth points to {target}")
    else:
        written = add_curve(target, pulse, values_x, values_y, force=force)
        typer.echo(f"added {written} points of the '{pulse}' curve to {target}")


def _pick_on_screen(image: Path) -> tuple[np.ndarray, np.ndarray]:
    """Click points on the image in a window (matplotlib ginput); needs a display."""
    if not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")) and os.name != "nt":
        raise SoacheckError(
            "no display to pick points on: open the image in any viewer that shows pixel coordinates, write "
            "the picked pixels as a CSV with columns x,y and pass it as POINTS, or follow a curve with --colour"
        )
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots()
    ax.imshow(read_image(image))
    ax.set_title("click the curve's corners from left to right; Enter when done")
    picked = plt.ginput(n=-1, timeout=0)
    plt.close(fig)
    if not picked:
        raise SoacheckError("no points picked")
    xy = np.array(picked)
    return xy[:, 0], xy[:, 1]


@app.command()
@_user_errors
def lint(
    part: Annotated[str, typer.Argument(help="Part id or path of a part folder.")],
    library: LibraryOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Check a part folder for digitizing mistakes; each finding with its file, row and fix."""
    folder = Path(part)
    if not (folder / PART_FILE).is_file():
        folder = find_part_folder(part, library_folders(library or []))
    findings = lint_part(folder)
    errors = sum(f.severity == "error" for f in findings)
    if as_json:
        _echo_json({"part": folder.name, "findings": [f.as_dict() for f in findings]})
    else:
        console = _console()
        for f in findings:
            where = f"{f.file}" + (f" line {f.row}" if f.row else "")
            colour = "red" if f.severity == "error" else "yellow"
            console.print(f"[{colour}]{f.severity}[/] {escape(where)}: {escape(f.message)}", highlight=False)
        console.print(f"{folder.name}: {errors} error(s), {len(findings) - errors} warning(s)", highlight=False)
    raise typer.Exit(1 if errors else 0)


@app.command("new-part")
@_user_errors
def new_part(
    part_id: Annotated[str, typer.Argument(metavar="ID", help="Id of the new part (the folder's name).")],
    kind: Annotated[str, typer.Option("--kind", help="npn, pnp, nmos, pmos or igbt.")],
    v_max: Annotated[float, typer.Option("--v-max", help="Voltage rating [V].")],
    i_max: Annotated[float, typer.Option("--i-max", help="Continuous current rating [A].")],
    p_max: Annotated[float, typer.Option("--p-max", help="Power rating at 25 °C case [W].")],
    tj_max: Annotated[float, typer.Option("--tj-max", help="Highest junction temperature [°C].")],
    rth_jc: Annotated[float, typer.Option("--rth-jc", help="Junction-to-case thermal resistance [K/W].")],
    sb_knee: Annotated[
        float | None, typer.Option("--sb-knee", help="Voltage where second breakdown starts [V].")
    ] = None,
    sb_exponent: Annotated[
        float | None, typer.Option("--sb-exponent", help="Steepness of that line (I ∝ V^-n).")
    ] = None,
    description: Annotated[str, typer.Option("--description", help="One line for tables.")] = "",
    library: Annotated[Path | None, typer.Option("--library", "-L", help="Folder to write the part into.")] = None,
    force: ForceOpt = False,
) -> None:
    """Write a part folder whose DC curve is synthesized from its ratings (conservative where it can be)."""
    check_part_id(part_id)
    made = soa_from_ratings(
        kind=kind,
        v_max_v=v_max,
        i_max_a=i_max,
        p_max_w=p_max,
        tj_max_c=tj_max,
        rth_jc_k_per_w=rth_jc,
        sb_knee_v=sb_knee,
        sb_exponent=sb_exponent,
    )
    knee = "" if sb_knee is None else f", second breakdown from {sb_knee:g} V with exponent {sb_exponent:g}"
    toml = (
        f'id = "{part_id}"\n'
        f'kind = "{kind}"\n'
        f"description = {json.dumps(description or f'{kind} synthesized from ratings')}\n"
        f'source = "synthesized from ratings by soacheck new-part (current limit, constant power{knee}); '
        'not digitized from a datasheet SOA plot"\n\n'
        "[ratings]\n"
        f"v_max = {v_max!r}\ni_max = {i_max!r}\np_max = {p_max!r}\ntj_max = {tj_max!r}\nrth_jc = {rth_jc!r}\n"
    )
    rows = "\n".join(f"dc,{float(v)!r},{float(i)!r}" for v, i in zip(made.voltage_v, made.current_a, strict=True))
    base = library if library is not None else Path(".")
    folder = base / part_id
    write_part_folder(folder, {PART_FILE: toml, SOA_FILE: "pulse,voltage,current\n" + rows + "\n"}, force=force)
    for warning in made.warnings:
        typer.echo(f"warning: {warning}", err=True)
    typer.echo(f"wrote {folder}")


def main() -> None:
    """Entry point of the ``soacheck`` console script."""
    app()
