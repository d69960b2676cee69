"""A part folder checked for digitizing mistakes: ``lint`` and its result."""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from soacheck.api.base import Result, _pd, _plots
from soacheck.api.libraries import _folders
from soacheck.api.options import Library
from soacheck.jsonvalues import jsonable
from soacheck.library import find_part_folder
from soacheck.lint import Finding, lint_part
from soacheck.partfiles import PART_FILE

if TYPE_CHECKING:  # pandas, matplotlib and the report load only when a table, a plot or a report is asked for
    import pandas as pd
    from matplotlib.axes import Axes


def lint(part: str | Path, *, library: Library = None) -> LintResult:
    """Check a part folder for digitizing mistakes, each finding with its file, line and fix (``soacheck lint``).

    Parameters
    ----------
    part
        The path of a part folder, or a part id in the libraries.
    library
        Folders of user part folders, for a part given by id.

    Returns
    -------
    LintResult
        The findings, errors first; ``verdict`` ``fail`` when any is an error.

    Raises
    ------
    SoacheckError
        An unknown id or a folder without ``part.toml``; a malformed file is a finding, not an error.
    """
    folder = Path(part)
    if not (folder / PART_FILE).is_file():
        folder = find_part_folder(str(part), _folders(library))
    return LintResult(folder, tuple(lint_part(folder)))


@dataclass(frozen=True, eq=False, repr=False)
class LintResult(Result):
    """A part folder checked for digitizing mistakes (``soacheck lint``).

    ``passed`` is False when any finding is an error (warnings pass); ``margin`` is NaN and
    ``limit`` None, since no operating point is checked.

    Attributes
    ----------
    folder
        The part folder.
    findings
        Each finding's severity (``error`` / ``warning``), file, line (0 when the whole file) and message with its fix.
    """

    folder: Path
    findings: tuple[Finding, ...]

    @property
    def passed(self) -> bool:
        return not any(f.severity == "error" for f in self.findings)

    @property
    def margin(self) -> float:
        return math.nan

    @property
    def limit(self) -> str | None:
        return None

    @property
    def assumptions(self) -> tuple[str, ...]:
        return ()

    def to_dict(self) -> dict[str, Any]:
        return jsonable({"part": self.folder.name, "findings": [f.as_dict() for f in self.findings]})

    def to_frame(self) -> pd.DataFrame:
        """One row per finding, errors first: severity, file, row, message."""
        return _pd().DataFrame([f.as_dict() for f in self.findings], columns=["severity", "file", "row", "message"])

    def plot(self, ax: Axes | None = None) -> Axes:
        """The part's digitized curves, each segment coloured by the mechanism its slope implies.

        Raises
        ------
        SoacheckError
            When the part cannot be read (fix the errors first).
        """
        from soacheck.partfiles import read_part

        return _plots().plot_soa(read_part(self.folder), ax=ax)
