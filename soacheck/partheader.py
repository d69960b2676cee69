"""A part's header: what ``part.toml`` says about a part (id, kind, ratings) and the pulse
widths its ``soa.csv`` holds, read without numpy so that listing parts starts fast.

:func:`soacheck.partfiles.read_part` checks the header here, then reads the rest.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

from soacheck.errors import SoacheckError, did_you_mean
from soacheck.plaintext import plain_lines
from soacheck.tomlfiles import check_keys, read_toml, toml_number, toml_text
from soacheck.units import format_duration, parse_duration

Kind = Literal["npn", "pnp", "nmos", "pmos", "igbt"]
KINDS: tuple[Kind, ...] = ("npn", "pnp", "nmos", "pmos", "igbt")
BIPOLAR_KINDS: tuple[Kind, ...] = ("npn", "pnp")

PART_FILE = "part.toml"
SOA_FILE = "soa.csv"
TOP_KEYS = ("id", "kind", "description", "source", "ratings", "derating", "thermal", "gain", "darlington")
REQUIRED_TOP = ("id", "kind", "description", "source", "ratings")
RATING_KEYS = ("v_max", "i_max", "i_pulse_max", "p_max", "tj_max", "rth_jc")
REQUIRED_RATINGS = ("v_max", "i_max", "p_max", "tj_max", "rth_jc")


@dataclass(frozen=True)
class PartHeader:
    """The checked head of a ``part.toml``.

    Attributes
    ----------
    id, kind
        The part's id (its folder's name) and kind (one of :data:`KINDS`).
    ratings
        ``ratings`` as written, keys :data:`RATING_KEYS` (``v_max`` [V], ``i_max`` [A],
        ``p_max`` [W], ``tj_max`` [°C], ``rth_jc`` [K/W], optional ``i_pulse_max`` [A]).
    data
        The whole parsed file, for the tables read after the header.
    where
        The file's path as text, for messages.
    """

    id: str
    kind: Kind
    ratings: dict[str, float]
    data: dict[str, Any]
    where: str


def read_header(folder: Path) -> PartHeader:
    """Read and check ``part.toml``'s keys, id, kind and ratings (the first checks of ``read_part``)."""
    toml_path = folder / PART_FILE
    data = read_toml(toml_path, "part")
    where = str(toml_path)
    check_keys(where, data, TOP_KEYS, REQUIRED_TOP)
    part_id = toml_text(f"{where}: id", data["id"])
    if part_id != folder.name:
        raise SoacheckError(
            f"{where}: id '{part_id}' differs from the folder name '{folder.name}'; rename one to match"
        )
    kind = toml_text(f"{where}: kind", data["kind"]).lower()
    if kind not in KINDS:
        raise SoacheckError(
            f"{where}: kind '{kind}' is unknown{did_you_mean(kind, KINDS)}; use one of {', '.join(KINDS)}"
        )
    ratings_table = data["ratings"]
    if not isinstance(ratings_table, dict):
        raise SoacheckError(f"{where}: 'ratings' must be a table: write [ratings] on its own line")
    check_keys(f"{where} [ratings]", ratings_table, RATING_KEYS, REQUIRED_RATINGS)
    ratings = {k: toml_number(f"{where}: ratings.{k}", v) for k, v in ratings_table.items()}
    if ratings["tj_max"] <= 25:
        raise SoacheckError(f"{where}: ratings.tj_max is {ratings['tj_max']:g} °C; it must be above 25 °C")
    return PartHeader(part_id, kind, ratings, data, where)  # type: ignore[arg-type]  # kind checked in KINDS


def plain_curve_labels(path: Path) -> list[str] | None:
    """The pulse widths of a plainly written ``soa.csv`` as labels (``1ms`` ... ``dc``), shortest first.

    The labels of the curves :func:`soacheck.partfiles.read_soa_curves` reads from the file
    (one per distinct pulse width, DC last), found from the ``pulse`` column alone. None for
    a file that is not plainly written (comma-separated, no quotes, spaces or tabs, the
    columns ``pulse``, ``voltage`` and ``current``, as many cells in every row as in the header),
    nor when a voltage or current is not a number above zero, nor when a pulse cell
    does not parse, a curve has fewer than two points or no curve is DC: those files are
    left to ``read_part`` and its messages. The order and shape of each curve are not checked.
    """
    lines = plain_lines(path)
    if lines is None:
        return None
    names = [name.lower() for name in lines[0].split(",")] if lines else []
    if sorted(names) != ["current", "pulse", "voltage"]:
        return None
    column = names.index("pulse")
    rows = [line.split(",") for line in lines[1:]]
    if not rows or any(len(row) != len(names) for row in rows):
        return None
    numbers = [k for k in range(len(names)) if k != column]
    points: dict[float, int] = {}
    try:
        for row in rows:
            if any("_" in row[k] or not 0 < float(row[k]) < math.inf for k in numbers):
                return None
            width_s = parse_duration(row[column], where=f"{path}: pulse")
            points[width_s] = points.get(width_s, 0) + 1
    except (SoacheckError, ValueError):
        return None
    if not any(math.isinf(width_s) for width_s in points) or min(points.values()) < 2:
        return None
    return [format_duration(width_s) for width_s in sorted(points)]
