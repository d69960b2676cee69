"""One look for every plot: the palette, line styles, time axes, legends and the violation mark.

Colours are the eight of Okabe and Ito, chosen to stay apart for the common forms of
colour blindness; every series also differs by its dash pattern or marker, so a plot
printed in greyscale still tells its lines apart.

References
----------
M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
presentations that are friendly to colorblind people", J*FLY, 2008.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from soacheck.display import time_unit

OKABE_ITO = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky_blue": "#56B4E9",
    "bluish_green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish_purple": "#CC79A7",
}
"""The colour-blind-safe palette, by name."""

INSIDE = OKABE_ITO["bluish_green"]
OUTSIDE = OKABE_ITO["vermillion"]

MECHANISM_STYLES: dict[str, dict[str, Any]] = {
    "current": {"color": OKABE_ITO["blue"], "linestyle": "-", "label": "current limit"},
    "power": {"color": OKABE_ITO["vermillion"], "linestyle": (0, (6, 2)), "label": "power (constant power)"},
    "second_breakdown": {"color": OKABE_ITO["reddish_purple"], "linestyle": "-.", "label": "second breakdown"},
    "thermal_instability": {
        "color": OKABE_ITO["reddish_purple"],
        "linestyle": (0, (5, 1.5, 1, 1.5, 1, 1.5)),
        "label": "thermal instability",
    },
    "on_resistance": {"color": OKABE_ITO["black"], "linestyle": (0, (1, 1.5)), "label": "on-resistance"},
    "unclassified": {"color": OKABE_ITO["orange"], "linestyle": (0, (3, 3)), "label": "unclassified slope"},
}
"""Colour, dash pattern and legend label of each mechanism's segments (names as in :mod:`soacheck.glossary`)."""

_SERIES_COLOURS = ("blue", "vermillion", "bluish_green", "reddish_purple", "orange", "sky_blue", "black")
_SERIES_DASHES: tuple[Any, ...] = ("-", (0, (6, 2)), "-.", (0, (1, 1.5)), (0, (8, 2, 1, 2, 1, 2)), (0, (3, 3)))
_SERIES_MARKERS = ("o", "s", "^", "D", "v", "P", "X")


def series_style(n: int, *, markers: bool = True) -> dict[str, Any]:
    """Style of the ``n``-th of several series (temperatures, devices, candidates).

    Colour, dash pattern and marker all change from one series to the next, so series
    stay apart in greyscale and for colour-blind readers. Markers are spaced along the
    line (``markevery``) so they do not hide it.
    """
    style: dict[str, Any] = {
        "color": OKABE_ITO[_SERIES_COLOURS[n % len(_SERIES_COLOURS)]],
        "linestyle": _SERIES_DASHES[n % len(_SERIES_DASHES)],
    }
    if markers:
        style.update(marker=_SERIES_MARKERS[n % len(_SERIES_MARKERS)], markevery=0.1, markersize=5)
    return style


# --------------------------------------------------------------------------- axes

VOLTAGE_LABEL = r"voltage $V_{CE}$ / $V_{DS}$ [V]"
CURRENT_LABEL = r"current $I_C$ / $I_D$ [A]"
MARGIN_LABEL = r"margin $1 - I/I_{allowed}$ [%]"
TJ_MAX_LABEL = r"$T_{j,max}$"


def time_axis(ax: Axes, t_s: np.ndarray) -> tuple[np.ndarray, float]:
    """Label ``ax``'s x axis in the unit that fits ``t_s``'s span; the times in it and the unit's size. [s]"""
    t = np.asarray(t_s, dtype=float)
    span = float(t.max() - t.min()) if t.size else 0.0
    size_s, name = time_unit(span)
    ax.set_xlabel(f"time [{name}]")
    return t / size_s, size_s


def legend_outside(ax: Axes, handles: Sequence | None = None, **kwargs: Any):
    """A legend to the right of the axes, never over the data; None when nothing is labelled."""
    if handles is None:
        handles = ax.get_legend_handles_labels()[0]
    if not handles:
        return None
    options = {"loc": "upper left", "bbox_to_anchor": (1.02, 1.0), "borderaxespad": 0.0, "fontsize": 7}
    options.update(kwargs)
    return ax.legend(handles=list(handles), **options)


VIOLATION_GID = "first-violation"
"""The ``gid`` of the first-violation mark, by which a test or a reader of the SVG finds it."""


def mark_violation(ax: Axes, x: float, y: float, *, text: str = "first violation") -> None:
    """Mark the first violation at (x, y) in data coordinates: a ring and a labelled arrow."""
    ax.plot(
        [x],
        [y],
        marker="o",
        markersize=13,
        markerfacecolor="none",
        markeredgecolor=OUTSIDE,
        markeredgewidth=2.2,
        linestyle="none",
        zorder=9,
        gid=VIOLATION_GID,
        label=text,
    )
    ax.annotate(
        text,
        (x, y),
        xytext=(18, 18),
        textcoords="offset points",
        fontsize=8,
        color=OUTSIDE,
        arrowprops={"arrowstyle": "->", "color": OUTSIDE, "lw": 1.0},
        zorder=9,
    )


def new_figure(width_in: float, height_in: float) -> Figure:
    """A figure with constrained layout (room for legends outside), no pyplot state."""
    return Figure(figsize=(width_in, height_in), layout="constrained")


def grid(ax: Axes) -> None:
    """The light grid every plot uses."""
    ax.grid(True, which="both", lw=0.3, alpha=0.6)
