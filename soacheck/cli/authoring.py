"""Adding parts: digitize, lint, new-part."""

from __future__ import annotations

import json
import os
from pathlib import Path
from typing import Annotated

import numpy as np
import typer
from rich.markup import escape

from soacheck.authoring import (
    AxisCalibration,
    check_part_id,
    follow_colour,
    parse_colour,
    pixels_to_values,
    soa_from_ratings,
)
from soacheck.cli.base import (
    ForceOpt,
    JsonOpt,
    LibraryOpt,
    app,
    console_for_output,
    echo_json,
    user_errors,
)
from soacheck.errors import SoacheckError
from soacheck.files import read_image, read_table
from soacheck.library import find_part_folder, library_folders
from soacheck.lint import lint_part
from soacheck.partfiles import PART_FILE, SOA_FILE, add_curve, write_part_folder, write_zth


@app.command()
@user_errors
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
    into: Annotated[
        Path | None,
        typer.Option(
            "--into",
            metavar="FILE",
            show_default="soa.csv or zth.csv",
            help="The soa.csv (or zth.csv) to add the curve to.",
        ),
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
    target = into or Path("zth.csv" if zth else "soa.csv")
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
@user_errors
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
        echo_json({"part": folder.name, "findings": [f.as_dict() for f in findings]})
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
