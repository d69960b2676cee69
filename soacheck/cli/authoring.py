"""Adding parts: digitize, lint, new-part."""

from __future__ import annotations

import os
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer
from rich.markup import escape

from soacheck.cli.base import (
    ForceOpt,
    JsonOpt,
    LibraryOpt,
    app,
    console_for_output,
    echo_json,
    output_path,
    user_errors,
)
from soacheck.errors import SoacheckError

if TYPE_CHECKING:  # numpy and the domain modules load when a command runs, not for --help
    import numpy as np

    from soacheck.calibration import AxisCalibration


@app.command()
@user_errors
def digitize(
    points: Annotated[
        Path | None, typer.Argument(help="Picked pixels: CSV with columns x,y (rows count downward).")
    ] = None,
    x: Annotated[str, typer.Option("--x", help="x calibration: PX1=V1,PX2=V2 (pixel column = value).")] = "",
    y: Annotated[str, typer.Option("--y", help="y calibration: PY1=I1,PY2=I2 (pixel row = value).")] = "",
    x_range: Annotated[
        str, typer.Option("--x-range", help="x values at the frame's left and right edges, LOW:HIGH (needs --image).")
    ] = "",
    y_range: Annotated[
        str, typer.Option("--y-range", help="y values at the frame's bottom and top edges, LOW:HIGH (needs --image).")
    ] = "",
    pulse: Annotated[str, typer.Option("--pulse", help="The curve's pulse width: dc, 10us, 1ms ...")] = "dc",
    linear_x: Annotated[bool, typer.Option("--linear-x", help="The x axis is linear, not logarithmic.")] = False,
    linear_y: Annotated[bool, typer.Option("--linear-y", help="The y axis is linear, not logarithmic.")] = False,
    zth: Annotated[bool, typer.Option("--zth", help="A Zth curve (x time in s, y in K/W) for zth.csv.")] = False,
    image: Annotated[
        Path | None,
        typer.Option(
            "--image", help="The plot as PNG or JPEG: trace black curves, follow --colour, or pick on screen."
        ),
    ] = None,
    trace: Annotated[
        list[str] | None,
        typer.Option(
            "--trace",
            help="Trace the black curve through V:I (read off the picture) as pulse width PULSE: V:I=PULSE; repeatable. T:Z with --zth.",
        ),
    ] = None,
    colour: Annotated[
        str | None, typer.Option("--colour", help="Follow the curve of this colour (#rrggbb) in --image.")
    ] = None,
    overlay: Annotated[
        Path | None, typer.Option("--overlay", help="Write the picture with the traced curves drawn over it (.png).")
    ] = None,
    into: Annotated[
        Path | None,
        typer.Option(
            "--into",
            metavar="FILE",
            show_default="soa.csv or zth.csv",
            help="The soa.csv (or zth.csv) to add the curves to; its folder is made when missing.",
        ),
    ] = None,
    force: ForceOpt = False,
) -> None:
    """Turn a datasheet plot into soa.csv (or zth.csv) rows: trace its curves, follow a colour, or use picked pixels."""
    from soacheck.authoring import follow_colour, parse_colour, pixels_to_values
    from soacheck.calibration import AxisCalibration
    from soacheck.csvtables import read_table
    from soacheck.images import read_image
    from soacheck.partfiles import SOA_FILE, ZTH_FILE, add_curve, write_zth

    target = output_path(into or Path(ZTH_FILE if zth else SOA_FILE), "--into", force=True, suffixes=(".csv",))
    if trace:
        if image is None:
            raise SoacheckError("--trace needs the picture: add --image sheet.png")
        if points is not None or colour is not None:
            raise SoacheckError("--trace traces the picture itself; leave out the picked-pixel CSV and --colour")
        _trace(image, trace, x, y, x_range, y_range, linear_x, linear_y, zth, overlay, target, force)
        return
    if overlay is not None:
        raise SoacheckError("--overlay draws traced curves; add --trace V:I=PULSE")
    if x_range or y_range:
        raise SoacheckError("--x-range and --y-range calibrate a traced picture; add --trace, or give --x and --y")
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
        raise SoacheckError(
            "give --image with --trace V:I=PULSE to trace a curve, --image with --colour to follow one, "
            "or a CSV of picked pixels (x,y)"
        )
    if px.size < 2:
        raise SoacheckError("a curve needs at least two points")
    values_x, values_y = pixels_to_values(px, py, x_axis, y_axis)
    if zth:
        write_zth(target, values_x, values_y, force=force)
        typer.echo(f"wrote {values_x.size} Zth points to {target}")
    else:
        written = add_curve(target, pulse, values_x, values_y, force=force)
        typer.echo(f"added {written} points of the '{pulse}' curve to {target}")


def _trace(image, trace, x, y, x_range, y_range, linear_x, linear_y, zth, overlay, target, force) -> None:
    """Trace each seeded curve in the picture and add it to ``target``."""
    from soacheck.authoring import parse_seed
    from soacheck.images import read_image
    from soacheck.partfiles import add_curves, write_zth
    from soacheck.picture import find_frame, grey_levels
    from soacheck.tracing import trace_curves
    from soacheck.vertices import SIMPLIFY_DECADES

    if linear_x or linear_y:
        raise SoacheckError("--trace works on log-log plots; leave out --linear-x/--linear-y")
    seeds = [parse_seed(text, zth=zth) for text in trace]
    if zth and len(seeds) > 1:
        raise SoacheckError("a part has one Zth curve: give one --trace T:Z with --zth")
    overlay = output_path(overlay, "--overlay", force=force, suffixes=(".png",))
    picture = read_image(image)
    grey = grey_levels(picture)
    frame = find_frame(grey, required=bool(x_range or y_range))  # pixel ticks need no frame
    x_axis = _axis(x, x_range, "--x", grey, frame, vertical=False)
    y_axis = _axis(y, y_range, "--y", grey, frame, vertical=True)
    curves = trace_curves(grey, frame, seeds, x_axis, y_axis)
    for curve in curves:
        if curve.note:
            typer.echo(f"note: seed {curve.seed.label}: {curve.note}", err=True)
    if overlay is not None:
        _write_overlay(overlay, picture, curves)
    unit_x, unit_y = ("s", "K/W") if zth else ("V", "A")
    for curve in curves:
        typer.echo(
            f"{curve.seed.name or 'Zth'}: {curve.x.size} vertices from {curve.x[0]:.4g} to {curve.x[-1]:.4g} {unit_x}; "
            f"traced pixels within {curve.largest_px:.1f} px ({curve.largest_decades:.4f} decade in {unit_y}) "
            f"of the line through them (tolerance {SIMPLIFY_DECADES:g} decade)"
        )
    if zth:
        write_zth(target, curves[0].x, curves[0].y, force=force)
        typer.echo(f"wrote {curves[0].x.size} Zth points to {target}")
    else:
        written = add_curves(target, {c.seed.name: (c.x, c.y) for c in curves}, force=force)
        typer.echo(f"added {written} points of {len(curves)} curve(s) to {target}")


def _axis(ticks, value_range, option, grey, frame, *, vertical) -> AxisCalibration:
    """An axis from pixel ticks, or from its range put on the frame's edges and checked against the grid."""
    from soacheck.calibration import AxisCalibration, parse_range
    from soacheck.tracing import framed_axis

    if ticks and value_range:
        raise SoacheckError(f"give {option} (pixel ticks) or {option}-range (values at the frame's edges), not both")
    if ticks:
        return AxisCalibration.parse(ticks, log=True, option=option)
    if not value_range:
        raise SoacheckError(f"give the axis calibration: {option}-range LOW:HIGH, or {option} PX1=V1,PX2=V2")
    span = parse_range(value_range, log=True, option=f"{option}-range")
    return framed_axis(grey, frame, span, vertical=vertical, name=f"{option}-range {value_range}")


def _write_overlay(path: Path, picture: np.ndarray, curves) -> None:
    """The overlay picture, pixel for pixel over the original, marked as soacheck's and written atomically."""
    import io

    from soacheck.filemarks import figure_metadata
    from soacheck.partfiles import write_output
    from soacheck.tracing import plot_overlay

    buffer = io.BytesIO()
    plot_overlay(picture, curves).figure.savefig(buffer, format="png", dpi=100, metadata=figure_metadata(path))
    write_output(path, buffer.getvalue())


def _pick_on_screen(image: Path) -> tuple[np.ndarray, np.ndarray]:
    """Click points on the image in a window (matplotlib ginput); needs a display."""
    if not (os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")) and os.name != "nt":
        raise SoacheckError(
            "no display to pick points on: open the image in any viewer that shows pixel coordinates, write "
            "the picked pixels as a CSV with columns x,y and pass it as POINTS, or follow a curve with --colour"
        )
    import matplotlib.pyplot as plt
    import numpy as np

    from soacheck.images import read_image

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
@user_errors
def lint(
    part: Annotated[str, typer.Argument(help="Part id or path of a part folder.")],
    library: LibraryOpt = None,
    as_json: JsonOpt = False,
) -> None:
    """Check a part folder for digitizing mistakes; each finding with its file, row and fix."""
    import soacheck

    result = soacheck.lint(part, library=library)
    folder, findings = result.folder, result.findings
    errors = sum(f.severity == "error" for f in findings)
    if as_json:
        echo_json(result.to_dict())
    else:
        console = console_for_output()
        for f in findings:
            where = f"{f.file}" + (f" line {f.row}" if f.row else "")
            colour = "red" if f.severity == "error" else "yellow"
            console.print(f"[{colour}]{f.severity}[/] {escape(where)}: {escape(f.message)}", highlight=False)
        console.print(f"{folder.name}: {errors} error(s), {len(findings) - errors} warning(s)", highlight=False)
    raise typer.Exit(1 if errors else 0)


@app.command("new-part")
@user_errors
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
    into: Annotated[
        Path, typer.Option("--into", metavar="DIR", help="Folder to write the part folder ID into; made when missing.")
    ] = Path("."),
    library: Annotated[list[Path] | None, typer.Option("--library", "-L", hidden=True)] = None,
    force: Annotated[
        bool, typer.Option("--force", help="Replace an existing part.toml (soa.csv and zth.csv are always kept).")
    ] = False,
) -> None:
    """Write part.toml, and a DC curve synthesized from the ratings unless the folder already holds curves."""
    from soacheck.authoring import check_part_id, curve_rows, part_toml, soa_from_ratings
    from soacheck.partfiles import PART_FILE, SOA_FILE, write_new_part

    if library:
        raise SoacheckError("new-part: -L/--library is a search path; give the folder to write into with --into DIR")
    check_part_id(part_id)
    folder = output_path(into / part_id, "--into", force=True, folder=True)
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
    digitized = (folder / SOA_FILE).is_file()
    knee = "" if sb_knee is None else f", second breakdown from {sb_knee:g} V with exponent {sb_exponent:g}"
    source = (
        "ratings typed into soacheck new-part; curves in soa.csv digitized from the datasheet (name it and its "
        "revision here)"
        if digitized
        else f"synthesized from ratings by soacheck new-part (current limit, constant power{knee}); "
        "not digitized from a datasheet SOA plot"
    )
    toml = part_toml(
        part_id,
        kind=kind,
        description=description or (f"{kind}, curves digitized" if digitized else f"{kind} synthesized from ratings"),
        source=source,
        v_max_v=v_max,
        i_max_a=i_max,
        p_max_w=p_max,
        tj_max_c=tj_max,
        rth_jc_k_per_w=rth_jc,
    )
    kept = write_new_part(folder, toml, curve_rows("dc", made.voltage_v, made.current_a), force=force)
    # with digitized curves kept, only the warning about the ratings themselves applies
    for warning in (w for w in made.warnings if not digitized or w.startswith("p_max")):
        typer.echo(f"warning: {warning}", err=True)
    for name in kept:
        typer.echo(f"kept {folder / name} as it is")
    typer.echo(f"wrote {folder / PART_FILE}" + ("" if SOA_FILE in kept else f" and {folder / SOA_FILE}"))
