"""Result objects of the public API: one shape for every check.

Every result has ``verdict`` (``pass`` / ``fail``), ``passed``, ``margin`` (the least margin
over everything checked, 1 − I/I_allowed), ``limit`` (what bounds the current where the
margin is least), ``assumptions`` (in words), and three ways out:

- ``to_dict()``: exactly the object that the command's ``--json`` prints (plain JSON values:
  NaN and infinities become ``None``);
- ``to_frame()``: a :class:`pandas.DataFrame`, one row per point checked, columns named as
  in the JSON (SI units: V, A, W, °C, s);
- ``plot(ax=None)``: draws and returns the matplotlib axes (a new figure when ``ax`` is
  None); nothing is shown or saved.

The objects are thin shells: the computation lives in the domain modules and the result
only keeps what it needs to report.
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from collections.abc import Iterator
from types import ModuleType
from typing import TYPE_CHECKING, Any, ClassVar, Literal

import numpy as np

from soacheck.derating import BreakdownDerating
from soacheck.jsonvalues import json_text
from soacheck.parts import Part

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes


def _pd() -> ModuleType:
    """pandas, imported when a table is first asked for."""
    import pandas

    return pandas


def _plots() -> ModuleType:
    """soacheck.plots (matplotlib), imported when a plot is first asked for."""
    from soacheck import plots

    return plots


Verdict = Literal["pass", "fail"]
"""A result's verdict: ``pass`` when everything checked is safe."""


def _least(margin: np.ndarray, limit: np.ndarray) -> tuple[float, str | None, int | None]:
    """The least margin (−inf where nothing is allowed or a point is not evaluated), its limit and flat index."""
    flat = np.ravel(margin).astype(float)
    if flat.size == 0:
        return math.nan, None, None
    filled = np.where(np.isnan(flat), -np.inf, flat)
    k = int(np.argmin(filled))
    return float(filled[k]), str(np.ravel(limit)[k]), k


class Result(ABC):
    """What every result object offers; see the module docstring."""

    @property
    @abstractmethod
    def passed(self) -> bool:
        """True when everything checked is safe."""

    @property
    def verdict(self) -> Verdict:
        """``pass`` when everything checked is safe, else ``fail``."""
        return "pass" if self.passed else "fail"

    @property
    @abstractmethod
    def margin(self) -> float:
        """The least margin 1 − I/I_allowed over everything checked; −inf where nothing is allowed. [1]"""

    @property
    @abstractmethod
    def limit(self) -> str | None:
        """What bounds the current where the margin is least (the shared ``limit`` names), or None."""

    @property
    @abstractmethod
    def assumptions(self) -> tuple[str, ...]:
        """The assumptions the answer rests on, in words."""

    @property
    def margin_to_rating(self) -> float:
        """The least margin against the absolute ratings; the ``margin`` itself without a design-margin policy. [1]"""
        value = self.to_dict().get("margin_to_rating")
        return -math.inf if value is None else float(value)

    @abstractmethod
    def to_dict(self) -> dict[str, Any]:
        """Exactly the command's ``--json`` object: plain JSON values, None for NaN."""

    @abstractmethod
    def to_frame(self) -> pd.DataFrame:
        """One row per point checked, columns named as in the JSON."""

    @abstractmethod
    def plot(self, ax: Axes | None = None) -> Axes:
        """Draw the result on ``ax`` (a new figure when None) and return the axes."""

    def to_json(self) -> str:
        """``to_dict()`` as the JSON text the command prints."""
        return "".join(self.json_chunks())

    def json_chunks(self) -> Iterator[str]:
        """``to_json()`` in pieces, as the command prints it; results with many rows stream them."""
        yield json_text(self.to_dict())

    def json_bytes(self) -> Iterator[bytes]:
        """:meth:`json_chunks` as UTF-8 bytes (what the command writes)."""
        return (chunk.encode() for chunk in self.json_chunks())

    def __repr__(self) -> str:
        margin = "—" if not math.isfinite(self.margin) else f"{self.margin:+.1%}"
        if not self.passed and math.isfinite(self.margin) and self.margin >= 0:  # failed on another limit
            return f"<{type(self).__name__} fail, limit {self.limit}; the current inside, margin {margin}>"
        return f"<{type(self).__name__} {self.verdict}, margin {margin}, limit {self.limit}>"


class CheckedResult(Result):
    """A result that reports what one domain object checked (a stage run, an envelope check).

    The object, held in the attribute that ``_checked`` names, has ``passed``,
    ``assumptions`` and arrays ``margin`` and ``limit`` of one shape; ``passed`` and
    ``assumptions`` are its own, ``margin`` and ``limit`` are taken where its margin is least
    (−inf where nothing is allowed or a point is not evaluated). A subclass overrides what differs.
    """

    _checked: ClassVar[str]
    """The name of the attribute that holds the domain object."""

    @property
    def _found(self) -> Any:
        return getattr(self, self._checked)

    @property
    def passed(self) -> bool:
        return bool(self._found.passed)

    @property
    def margin(self) -> float:
        return _least(self._found.margin, self._found.limit)[0]

    @property
    def limit(self) -> str | None:
        return _least(self._found.margin, self._found.limit)[1]

    @property
    def assumptions(self) -> tuple[str, ...]:
        return tuple(self._found.assumptions)


def _trajectory_on_soa(
    ax: Axes,
    part: Part,
    v: np.ndarray,
    i: np.ndarray,
    t: np.ndarray,
    temps: list[float],
    breakdown: BreakdownDerating,
    title: str,
) -> Axes:
    """A (V, I) path coloured by time over the part's SOA derated at ``temps``, on ``ax``."""
    _plots().plot_soa(part, case_temps_c=temps, breakdown=breakdown, ax=ax)
    shown = i > 1e-3 * max(float(np.max(i)), 1e-12)  # log axes: skip ~0 A
    dots = ax.scatter(v[shown], i[shown], c=t[shown], cmap="viridis", s=6, zorder=5)
    ax.figure.colorbar(dots, ax=ax, label="time [s]")
    ax.set_title(title, fontsize=10)
    return ax
