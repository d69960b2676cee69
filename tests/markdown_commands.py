"""The commands written in the documentation, read out of the markdown, and their shown outputs.

The convention (DEVELOPERS.md, "Runnable documentation"):

- Every fenced block tagged ``sh`` or ``console`` in README.md and docs/*.md is run, in
  document order, in one temporary folder per document holding a copy of ``examples/``.
- ``sh``: each line is a command (a trailing ``\\`` continues it; ``#`` starts a comment).
  Output is not compared. The command must exit 0, unless its comment says ``# exits 1``
  (or 2), which the reader sees too.
- ``console``: a line starting ``$ `` is a command; the lines after it, up to the next
  ``$ `` line or the end of the block, are its output as a terminal shows it (stdout and
  stderr). A comment ``# exits 1`` works as in ``sh``.
- A block that cannot run here is preceded by ``<!-- docs-test: skip: REASON -->``.
"""

from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

FENCE = re.compile(r"^(?P<indent>[ \t]*)```(?P<info>[^\n`]*)$")
SKIP = re.compile(r"<!--\s*docs-test:\s*skip:\s*(?P<reason>.*?)\s*-->")
EXITS = re.compile(r"#.*?\bexits?\s+(?P<code>[0-3])\b")
NUMBER = re.compile(r"[-+]?(?:\d+\.\d*|\.\d+|\d+)(?:[eE][-+]?\d+)?")
BOX_RUNS = re.compile(r"([─━═┄┅])\1+")
ELLIPSIS = "..."


@dataclass
class Command:
    """One command of a document: where it is, what it runs, what it must print and return."""

    document: str
    line: int
    text: str
    exit_code: int = 0
    output: list[str] | None = None  # None: not compared
    skip: str | None = None

    @property
    def where(self) -> str:
        return f"{self.document}:{self.line}"


@dataclass
class _Block:
    info: str
    line: int
    lines: list[str] = field(default_factory=list)
    skip: str | None = None


def _blocks(text: str) -> list[_Block]:
    blocks: list[_Block] = []
    current: _Block | None = None
    indent = ""
    pending_skip: str | None = None
    for number, raw in enumerate(text.splitlines(), start=1):
        match = FENCE.match(raw)
        if current is None:
            skip = SKIP.search(raw)
            if skip:
                pending_skip = skip.group("reason")
            elif match:
                current = _Block(match.group("info").strip(), number + 1, skip=pending_skip)
                indent = match.group("indent")
                pending_skip = None
            elif raw.strip():
                pending_skip = None
        elif match and match.group("info").strip() == "":
            blocks.append(current)
            current = None
        else:
            current.lines.append(raw[len(indent) :] if raw.startswith(indent) else raw.lstrip())
    return blocks


def _strip_comment(line: str) -> tuple[str, str]:
    """A command line and its trailing ``#`` comment (outside quotes)."""
    quote = None
    for i, char in enumerate(line):
        if quote:
            if char == quote:
                quote = None
        elif char in "'\"":
            quote = char
        elif char == "#" and (i == 0 or line[i - 1].isspace()):
            return line[:i].rstrip(), line[i:]
    return line.rstrip(), ""


def _join_continuations(lines: list[str], first: int) -> list[tuple[int, str, str]]:
    """(line number, command, comment) with ``\\`` continuations joined."""
    out: list[tuple[int, str, str]] = []
    buffer, comments, start = "", "", first
    for offset, line in enumerate(lines):
        body, comment = _strip_comment(line)
        if not buffer:
            start = first + offset
        comments += comment
        if body.endswith("\\"):
            buffer += body[:-1].rstrip() + " "
            continue
        buffer += body.strip()
        if buffer:
            out.append((start, buffer, comments))
        buffer, comments = "", ""
    return out


def _exit_code(comment: str) -> int:
    match = EXITS.search(comment)
    return int(match.group("code")) if match else 0


def read_commands(path: Path, document: str) -> list[Command]:
    """Every command of the ``sh`` and ``console`` blocks of a markdown file, in order."""
    commands: list[Command] = []
    for block in _blocks(path.read_text(encoding="utf-8")):
        if block.info not in ("sh", "console"):
            continue
        if block.info == "sh":
            for line, text, comment in _join_continuations(block.lines, block.line):
                commands.append(Command(document, line, text, _exit_code(comment), None, block.skip))
            continue
        current: Command | None = None
        pending: list[str] = []
        for offset, raw in enumerate(block.lines):
            if raw.startswith("$ "):
                pending = [raw[2:]]
                if pending[0].rstrip().endswith("\\"):
                    continue
            elif pending and pending[-1].rstrip().endswith("\\"):
                pending.append(raw)
                if raw.rstrip().endswith("\\"):
                    continue
            elif current is not None:
                current.output.append(raw)
                continue
            else:
                raise ValueError(f"{document}:{block.line + offset}: a console block starts with '$ COMMAND'")
            ((_, text, comment),) = _join_continuations(pending, block.line + offset)
            current = Command(document, block.line + offset, text, _exit_code(comment), [], block.skip)
            commands.append(current)
            pending = []
    return commands


# --------------------------------------------------------------------------- comparing outputs


def _decimals_match(shown: str, value: float) -> bool:
    """``value`` printed to the precision of ``shown`` reads ``shown``."""
    expected = float(shown)
    mantissa = shown.lstrip("+-").split("e")[0].split("E")[0]
    decimals = len(mantissa.split(".")[1]) if "." in mantissa else 0
    exponent = int(re.split("[eE]", shown)[1]) if re.search("[eE]", shown) else 0
    half_step = 0.5 * 10.0 ** (exponent - decimals)
    return math.isfinite(value) and abs(value - expected) <= half_step * (1 + 1e-9)


def _line_matches(shown: str, printed: str) -> bool:
    def parts(text: str) -> tuple[list[str], list[str]]:
        text = BOX_RUNS.sub(r"\1", " ".join(text.split()))
        return NUMBER.split(text), NUMBER.findall(text)

    shown_words, shown_numbers = parts(shown)
    printed_words, printed_numbers = parts(printed)
    if [w.strip() for w in shown_words] != [w.strip() for w in printed_words]:
        return False
    return all(_decimals_match(s, float(p)) for s, p in zip(shown_numbers, printed_numbers, strict=True))


def _lines_match(shown: list[str], printed: list[str]) -> bool:
    """Line by line; a shown line ``...`` stands for any number of printed lines."""
    if not shown:
        return not printed
    if shown[0].strip() == ELLIPSIS:
        return any(_lines_match(shown[1:], printed[k:]) for k in range(len(printed) + 1))
    return bool(printed) and _line_matches(shown[0], printed[0]) and _lines_match(shown[1:], printed[1:])


class _Shown(str):
    """A number as the documentation writes it."""


def _json_matches(shown, printed) -> bool:
    if shown == ELLIPSIS:
        return True
    if isinstance(shown, _Shown):
        return isinstance(printed, int | float) and not isinstance(printed, bool) and _decimals_match(shown, printed)
    if isinstance(shown, dict):
        return (
            isinstance(printed, dict)
            and set(shown) == set(printed)
            and all(_json_matches(shown[k], printed[k]) for k in shown)
        )
    if isinstance(shown, list):
        if shown == [ELLIPSIS]:
            return isinstance(printed, list)
        return (
            isinstance(printed, list)
            and len(shown) == len(printed)
            and all(_json_matches(s, p) for s, p in zip(shown, printed, strict=True))
        )
    return shown == printed and type(shown) is type(printed)


def output_matches(shown: list[str], printed: str) -> bool:
    """Whether a command's printed output is what the documentation shows.

    JSON (the shown output starts with ``{``) is compared as JSON: the same keys, numbers to
    the shown precision, ``"..."`` for any value and ``["..."]`` for any list. Other text is
    compared line by line with runs of spaces collapsed and numbers to the shown precision;
    a line ``...`` stands for any lines.
    """
    printed_lines = [line.rstrip() for line in printed.rstrip("\n").splitlines()]
    shown = [line.rstrip() for line in shown]
    while shown and not shown[-1]:
        shown.pop()
    if shown and shown[0].lstrip().startswith("{"):
        try:
            expected = json.loads("\n".join(shown), parse_float=_Shown, parse_int=_Shown)
            actual = json.loads(printed)
        except json.JSONDecodeError:
            return False
        return _json_matches(expected, actual)
    return _lines_match(shown, printed_lines)
