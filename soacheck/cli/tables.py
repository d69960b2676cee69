"""Terminal tables that fit: essential columns whole at any width from 80 columns, the rest dropped with a note.

Every table names its columns with the glossary's words and units (``tj peak (°C)``) and
formats values with :mod:`soacheck.display`. A column is *essential* (verdict, margin,
overload, limit, allowed current, the row's name) or has a *rank*; when the table does
not fit the terminal, the lowest-ranked columns are left out first and a line below the
table says which, and that ``--json`` carries everything.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

from rich.console import Console
from rich.markup import escape
from rich.table import Table
from rich.text import Text

from soacheck.display import column_heading, failure_text, value_text
from soacheck.glossary import words

_PASS_STYLE, _FAIL_STYLE = "green", "bold red"


@dataclass
class Column:
    """One column: a heading, its cells (plain text), how it aligns and how much it matters.

    ``rank`` orders the optional columns: the lowest is left out first when the table is
    too wide; an essential column is never left out nor cut.
    """

    heading: str
    cells: list[str] = field(default_factory=list)
    essential: bool = False
    rank: int = 0
    justify: str = "right"
    styles: list[str] | None = None

    def lines(self) -> str:
        """The heading as shown: the unit on a line of its own, ``allowed`` over ``(A)``."""
        return self.heading.replace(" (", "\n(")

    def width(self) -> int:
        """The widest of the heading's lines and the cells."""
        return max([*(len(line) for line in self.lines().splitlines()), *(len(c) for c in self.cells)])


def verdict_cells(passed: Iterable[bool], *, inside: bool = False) -> tuple[list[str], list[str]]:
    """Cells and styles of a verdict column: pass / FAIL (or inside / OUTSIDE for points)."""
    good, bad = ("inside", "OUTSIDE") if inside else ("pass", "FAIL")
    flags = list(passed)
    return [good if ok else bad for ok in flags], [_PASS_STYLE if ok else _FAIL_STYLE for ok in flags]


def fit_table(title: str, columns: Sequence[Column], width: int) -> tuple[Table, list[str]]:
    """A rich table of ``columns`` no wider than ``width``; also the headings of the columns left out.

    The width of a box table is the sum of its columns' widths plus three characters a
    column (padding and rule) and one; optional columns go, lowest rank first, until it fits.
    """
    kept = list(columns)
    dropped: list[str] = []

    def total(cols: Sequence[Column]) -> int:
        return sum(c.width() + 3 for c in cols) + 1

    while total(kept) > width:
        optional = [c for c in kept if not c.essential]
        if not optional:
            break
        victim = min(optional, key=lambda c: c.rank)
        kept.remove(victim)
        dropped.append(victim.heading.split(" (")[0])
    table = Table(title=escape(title), title_justify="left")
    for column in kept:
        table.add_column(
            escape(column.lines()),
            justify=column.justify,  # type: ignore[arg-type]
            no_wrap=column.essential,
            min_width=column.width() if column.essential else None,
            overflow="fold",
        )
    rows = max((len(c.cells) for c in kept), default=0)
    for k in range(rows):
        table.add_row(
            *(Text(c.cells[k], style=(c.styles[k] if c.styles else "")) if k < len(c.cells) else "" for c in kept)
        )
    return table, dropped


def print_table(console: Console, title: str, columns: Sequence[Column]) -> None:
    """Print a fitted table, and below it the columns left out at this width."""
    table, dropped = fit_table(title, columns, console.width)
    console.print(table)
    if dropped:
        console.print(
            f"  not shown at {console.width} columns: {', '.join(dropped)} (--json has every column)",
            highlight=False,
            markup=False,
        )


def quantity_table(
    title: str,
    summary: dict,
    *,
    skip: Sequence[str] = (),
    span_s: float | None = None,
    units: dict[str, str] | None = None,
) -> Table:
    """A two-column table of a result's figures: each name in words, each value with its unit.

    Lists and tables inside ``summary`` (stretches outside, assumptions) and the names in
    ``skip`` are left out; the caller prints them in their own way. ``units`` gives the unit
    of a name whose unit depends on the run (a setpoint in A, W or Ω).
    """
    table = Table(title=escape(title), title_justify="left")
    table.add_column("quantity")
    table.add_column("value", justify="right", no_wrap=True)
    for key, value in summary.items():
        if key in skip or isinstance(value, list | dict):
            continue
        style = ""
        if key == "verdict":
            style = _PASS_STYLE if value == "pass" else _FAIL_STYLE
        text = value_text(key, value, span_s=span_s)
        if units and units.get(key) and value is not None:
            text = f"{text} {units[key]}"
        table.add_row(words(key), Text(text, style=style))
    return table


def under_policy(policy: dict | None) -> str:
    """`` under policy 'NAME'`` for a title, from a result's policy object; empty without a policy."""
    if not policy or policy.get("name") in (None, "none"):
        return ""
    return f" under policy '{policy['name']}'"


def print_assumptions(console: Console, notes: Iterable[str]) -> None:
    """Each assumption on its own line, as written (no markup)."""
    for note in notes:
        console.print(f"  assumed: {note}", highlight=False, markup=False)


def named_column(name: str, values: Iterable, *, essential: bool = False, rank: int = 0, span_s=None) -> Column:
    """A column of the JSON name ``name``: glossary heading with unit, values formatted without it."""
    cells = [value_text(name, v, with_unit=False, span_s=span_s) for v in values]
    return Column(column_heading(name), cells, essential=essential, rank=rank)


def print_verdict(
    console: Console,
    passed: bool,
    summary: dict,
    *,
    subject: str,
    span_s: float | None = None,
    covered: str = "",
    device: str | None = None,
) -> None:
    """The closing line of a result: PASS (and ``covered``, what passing means there), or FAIL and why
    (:func:`soacheck.display.failure_text`, naming ``device`` where it is given)."""
    if passed:
        console.print(f"[{_PASS_STYLE}]PASS[/]" + (f": {escape(covered)}" if covered else ""))
    else:
        why = failure_text(summary, subject=subject, span_s=span_s, device=device)
        console.print(f"[{_FAIL_STYLE}]FAIL[/]: {escape(why)}", highlight=False)
