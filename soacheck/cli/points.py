"""Point checks and the library: check, parts, show."""

from __future__ import annotations

import math
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
    PlotOpt,
    PolicyOpt,
    app,
    breakdown_option,
    console_for_output,
    echo_json,
    echo_result_json,
    number_list,
    output_path,
    part_option,
    user_errors,
)
from soacheck.cli.tables import Column, named_column, print_assumptions, print_table, verdict_cells
from soacheck.filemarks import save_figure
from soacheck.units import parse_duration

if TYPE_CHECKING:  # numpy and the domain modules load when a command runs, not for --help
    import numpy as np

    from soacheck.points import PointCheck

TABLE_ROWS = 20
"""Rows a point table shows without ``--all-rows``: the worst ones."""


def worst_rows(result: PointCheck, count: int) -> np.ndarray:
    """Indices of the ``count`` worst points, worst first: outside before inside, then by margin.

    A point not evaluated (margin NaN) comes first among its kind; equal points keep the
    file's order. A partial sort: linear in the number of points.
    """
    import numpy as np

    # outside: margin < 0, or -inf when nothing is allowed; inside: 10 + margin in [9, 11]
    key = np.where(
        result.inside, 10.0 + np.nan_to_num(result.margin, nan=-1.0), np.nan_to_num(result.margin, nan=-np.inf)
    )
    if key.size <= count:
        return np.lexsort((np.arange(key.size), key))
    kth = np.partition(key, count - 1)[count - 1]
    below = np.flatnonzero(key < kth)
    chosen = np.r_[below, np.flatnonzero(key == kth)[: count - below.size]]  # ties at the cut in file order
    return chosen[np.lexsort((chosen, key[chosen]))]


def _print_check(console: Console, result: PointCheck, *, all_rows: bool = False) -> None:
    """The points as a table that fits the terminal: verdict, margin, overload, limit and allowed always whole."""
    import numpy as np

    total = result.inside.size
    subset = not all_rows and total > TABLE_ROWS
    under = "" if result.policy is None else f" under policy '{result.policy.name}'"
    title = f"{result.part_id}: operating points{under}" + (f", the {TABLE_ROWS} worst of {total}" if subset else "")
    chosen = worst_rows(result, TABLE_ROWS) if subset else np.arange(total)
    frame = {name: values.tolist() for name, values in result.columns(chosen).items()}  # no pandas for a table
    outside = not all(frame["inside"])
    limits = [
        limit + ("*" if beyond else "") for limit, beyond in zip(frame["limit"], frame["extrapolated"], strict=True)
    ]
    point, styles = verdict_cells(frame["inside"], inside=True)
    columns = [Column("#", [str(k + 1) for k in chosen], essential=True)] if subset else []
    columns += [
        named_column("voltage", frame["voltage"], rank=6),
        named_column("current", frame["current"], rank=5),
        named_column("case_temp", frame["case_temp"], rank=4),
        Column("pulse", list(frame["pulse"]), rank=3, justify="left"),
    ]
    if not all(math.isnan(duty) for duty in frame["duty"]):  # duty only means something for pulse trains
        columns.append(named_column("duty", frame["duty"], rank=2))
    if any(idle > 0 for idle in frame["idle_current"]):
        columns.append(named_column("idle_current", frame["idle_current"], rank=1))
    columns += [
        Column("curve", list(frame["curve"]), rank=0, justify="left"),
        named_column("allowed_current", frame["allowed_current"], essential=True),
        named_column("margin", frame["margin"], essential=True),
    ]
    if result.policy is not None:  # the margin to the absolute ratings beside the policy's
        columns.append(named_column("margin_to_rating", frame["margin_to_rating"], essential=True))
    if outside:
        columns.append(named_column("overload", frame["overload"], essential=True))
    columns += [
        Column("limit", limits, essential=True, justify="left"),
        Column("point", point, essential=True, justify="left", styles=styles),
    ]
    print_table(console, title, columns)
    if any(frame["extrapolated"]):
        console.print("  * beyond the digitized voltage range (conservative)", highlight=False, markup=False)
    if subset:
        _print_summary(console, result)
    print_assumptions(console, result.assumptions)
    verdict = (
        "[green]PASS[/]: every point is inside"
        if result.passed
        else (f"[bold red]FAIL[/]: {int((~result.inside).sum())} of {result.inside.size} points outside")
    )
    console.print(verdict)


def _print_summary(console: Console, result: PointCheck) -> None:
    """All points in a few lines: how many are outside, by limit, and the least margin."""
    import numpy as np

    outside = ~result.inside
    limits, counts = np.unique(result.limit[outside], return_counts=True)
    ranked = np.argsort(-counts, kind="stable")
    by_limit = ", ".join(f"{counts[k]} {limits[k]}" for k in ranked)
    finite = np.isfinite(result.margin)
    least = f"{np.min(result.margin[finite]):+.1%}" if finite.any() else "—"
    console.print(
        f"{result.inside.size} points: {int(outside.sum())} outside{f' ({by_limit})' if by_limit else ''}; "
        f"margin {least} (the least); # is the point's row among the data rows; --all-rows shows them all",
        highlight=False,
    )


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
    policy: PolicyOpt = None,
    library: LibraryOpt = None,
    force: ForceOpt = False,
    all_rows: Annotated[
        bool,
        typer.Option("--all-rows", help=f"Show every point in the table, not the {TABLE_ROWS} worst and a summary."),
    ] = False,
    as_json: JsonOpt = False,
) -> None:
    """Check operating points against a part's SOA derated at the case temperature."""
    import soacheck

    output_path(plot, "--plot", force=force, suffixes=PLOT_SUFFIXES)
    result = soacheck.check(
        part,
        voltage,
        current,
        points=points,
        case_temp=case_temp,
        pulse=pulse,
        duty=duty,
        idle_current=idle_current,
        breakdown=breakdown_option(breakdown_derating),
        policy=policy,
        library=library,
    )
    if plot is not None:
        save_figure(result.plot().figure, plot)
    if as_json:
        echo_result_json(result)
    else:
        _print_check(console_for_output(), result.points, all_rows=all_rows)
    raise typer.Exit(0 if result.passed else 1)


@app.command()
@user_errors
def parts(library: LibraryOpt = None, as_json: JsonOpt = False) -> None:
    """List the parts in the libraries, first match of each id."""
    import soacheck

    rows = soacheck.part_rows(library=library)  # soacheck.parts() without its DataFrame: no numpy, no pandas
    if as_json:
        echo_json({"parts": rows})
        return
    columns = [
        Column("id", [r["id"] for r in rows], essential=True, justify="left"),
        Column("kind", [r["kind"] for r in rows], essential=True, justify="left"),
        *(named_column(k, [r[k] for r in rows], essential=True) for k in ("v_max", "i_max", "p_max", "tj_max")),
        named_column("rth_jc", [r["rth_jc"] for r in rows], rank=2),
        Column("curves", [" ".join(r["curves"]) for r in rows], rank=1, justify="left"),
        Column("description", [r["description"] for r in rows], rank=0, justify="left"),
    ]
    print_table(console_for_output(), "soacheck parts", columns)


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
        import soacheck

        checked = soacheck.check(loaded, points=points, pulse=pulse, breakdown=breakdown).points
    from soacheck.plots import plot_soa  # matplotlib: only when plotting
    from soacheck.quantities import TEMPERATURE

    ax = plot_soa(
        loaded,
        case_temps_c=number_list(case_temp, "--case-temp", "25,75,125", TEMPERATURE).tolist(),
        pulse_s=pulse_s,
        points=checked,
        breakdown=breakdown,
    )
    save_figure(ax.figure, output)
    typer.echo(f"wrote {output}")
