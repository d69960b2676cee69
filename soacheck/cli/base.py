"""Shared pieces of the ``soacheck`` command: the typer app, common options, output helpers.

A :class:`~soacheck.errors.SoacheckError` anywhere becomes one line on stderr and exit
code 2; that happens in one place, :func:`user_errors`.
"""

from __future__ import annotations

import contextlib
import functools
import io
import os
import sys
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any

import typer
from rich.console import Console
from typer.core import TyperCommand, TyperGroup

from soacheck import __version__
from soacheck.errors import SoacheckError, choose
from soacheck.jsonvalues import json_chunks
from soacheck.outputs import check_output

if TYPE_CHECKING:  # numpy and the domain modules load when a command runs, not for --help
    import numpy as np

    from soacheck.derating import BreakdownDerating
    from soacheck.parts import Part
    from soacheck.quantities import Quantity


def _plain_metavar(param) -> str:
    """A help label a person reads (FILE, NUMBER ...) instead of a Python type such as ``<float>``."""
    if getattr(param, "is_flag", False):
        return ""
    annotation = getattr(getattr(param, "type_descriptor", None), "annotation", None)
    name = getattr(annotation, "__name__", "") or str(annotation)
    if "Path" in str(annotation):
        return "DIR" if "list" in str(annotation) else "FILE"
    return {"float": "NUMBER", "int": "INTEGER"}.get(name, "TEXT")


def _tidy_help(params) -> None:
    """Plain labels in help: FILE, NUMBER ... for values, nothing for flags, no Python types."""
    for param in params:
        if param.param_type_name == "argument":
            param.metavar = param.metavar or param.name.upper()
            param.display_type_rich = lambda ctx: ""  # the name is the label already
        elif param.metavar is None:
            param.metavar = _plain_metavar(param)


class _QuietOnClosedPipe:
    """Help that ends quietly with :data:`CLOSED_PIPE_EXIT` when stdout's reader goes away
    (``soacheck --help | head -1``), as a command's output does.

    typer prints help through a rich console of its own, which ends a closed pipe with exit
    code 1 (``rich.console.Console.on_broken_pipe`` raises ``SystemExit(1)``: soacheck's
    "unsafe"); click's line after it raises :class:`BrokenPipeError` where the reader left
    later, which typer turns into 1 as well.
    """

    def get_help(self, ctx):  # noqa: D102
        try:
            return super().get_help(ctx)  # type: ignore[misc]
        except SystemExit:  # printing help exits only where rich's console met a closed pipe
            raise typer.Exit(_closed_pipe()) from None

    def make_context(self, *args, **kwargs):  # noqa: D102
        try:
            return super().make_context(*args, **kwargs)  # type: ignore[misc]
        except BrokenPipeError:  # the line click writes after the help (eager --help runs here)
            raise typer.Exit(_closed_pipe()) from None


class _Command(_QuietOnClosedPipe, TyperCommand):
    """A command: its help ends quietly on a closed pipe (:class:`_QuietOnClosedPipe`)."""


class _Commands(_QuietOnClosedPipe, TyperGroup):
    """The command group: every parameter gets a plain label in help (see :func:`_tidy_help`); help ends quietly
    on a closed pipe (:class:`_QuietOnClosedPipe`)."""

    def get_params(self, ctx):  # noqa: D102
        params = super().get_params(ctx)
        _tidy_help(params)
        return params

    def get_command(self, ctx, cmd_name):  # noqa: D102
        command = super().get_command(ctx, cmd_name)
        if command is not None:
            _tidy_help(command.get_params(ctx))
        return command


class _App(typer.Typer):
    """The typer app whose every command is a :class:`_Command` unless it names its own class."""

    def command(self, name=None, *, cls=None, **kwargs):  # noqa: D102
        return super().command(name, cls=cls or _Command, **kwargs)


app = _App(
    name="soacheck",
    cls=_Commands,
    help="Check linear-mode operating points of power transistors against their derated safe operating area.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)


def _print_version(value: bool) -> None:
    if value:
        typer.echo(f"soacheck {__version__}")
        raise typer.Exit(0)


@app.callback()
def _options(
    version: Annotated[
        bool, typer.Option("--version", callback=_print_version, is_eager=True, help="Print the version and exit.")
    ] = False,
) -> None:
    """Check linear-mode operating points of power transistors against their derated safe operating area."""


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
BreakdownOpt = Annotated[
    str,
    typer.Option(
        "--breakdown-derating",
        metavar="CHOICE",
        help="How second breakdown / thermal instability derates: auto (the part's table, else like the "
        "constant-power limit), thermal (like the constant-power limit), none.",
    ),
]
PolicyOpt = Annotated[
    str | None,
    typer.Option(
        "--policy",
        metavar="FILE|none|bench",
        help="Design margins to keep inside the ratings: a policy file (TOML: tj_ceiling, current_fraction, "
        "voltage_fraction, power_fraction), bench (125 °C ceiling, 80 % current and voltage, 90 % power; common "
        "practice) or none (the absolute ratings). Default: a stage file's \\[policy] where one is given, else none.",
    ),
]
PlotOpt = Annotated[Path | None, typer.Option("--plot", metavar="FILE", help="Write the plot (.png, .svg or .pdf).")]
ForceOpt = Annotated[bool, typer.Option("--force", help="Overwrite existing output files.")]


BUG_REPORT = "this is a bug, please report it with the command and files to the soacheck issue tracker"


def user_errors(command):
    """The one place errors become exit codes: one line on stderr, never a traceback.

    A :class:`SoacheckError` (the user can fix the input) exits 2; running out of memory
    exits 2 too, as an input too large for this machine. Anything else is a bug in
    soacheck: exit 3 with "internal error" and where to report it, never 0 or 1, so a
    crash can never read as a pass or as "outside".
    """

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        try:
            return command(*args, **kwargs)
        except SoacheckError as err:
            typer.echo(f"soacheck: error: {err}", err=True)
            raise typer.Exit(2) from None
        except BrokenPipeError:  # the reader went away (`soacheck ... --json | head -1`): not a bug
            raise typer.Exit(_closed_pipe()) from None
        except (typer.Exit, typer.Abort, typer.TyperException, KeyboardInterrupt, SystemExit):
            # typer's own exits and usage errors (TyperException is the base of its bundled click's errors)
            raise
        except MemoryError:
            typer.echo("soacheck: error: not enough memory for this input; check fewer samples or devices", err=True)
            raise typer.Exit(2) from None
        except Exception as err:  # the one catch-all, by design
            text = " ".join(str(err).split())[:300]
            typer.echo(f"soacheck: internal error ({type(err).__name__}: {text}); {BUG_REPORT}", err=True)
            raise typer.Exit(3) from None

    return wrapper


CLOSED_PIPE_EXIT = 141
"""Exit code when stdout's reader closed the pipe: 128 + SIGPIPE (13), what a shell reports for any
Unix tool stopped that way (``yes | head -1``). Not 1: that is soacheck's "unsafe"."""


def _closed_pipe() -> int:
    """Stop writing quietly after the reader closed stdout; the exit code to end with.

    Python's own advice for SIGPIPE (the ``signal`` module's documentation, "Note on
    SIGPIPE"): point stdout at devnull, so that the flush at exit cannot fail again.
    """
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError, io.UnsupportedOperation):  # no file behind stdout (a test runner)
        pass
    return CLOSED_PIPE_EXIT


class _Console(Console):
    """rich's console, ending with :data:`CLOSED_PIPE_EXIT` when stdout's reader goes away (rich's own exit is 1)."""

    def on_broken_pipe(self) -> None:  # noqa: D102
        self.quiet = True
        raise typer.Exit(_closed_pipe())


def console_for_output() -> Console:
    return _Console(width=int(os.environ.get("COLUMNS", "120")), soft_wrap=False)


def stderr_is_terminal() -> bool:
    """True when stderr is a terminal a person watches (not a pipe, a file or a test runner)."""
    return sys.stderr.isatty()


Progress = Callable[..., None]
"""``update(done, total=None, description=None)``: how far a long job has come."""


@contextlib.contextmanager
def progress_bar(description: str, *, total: float | None = None, quiet: bool = False) -> Iterator[Progress]:
    """A transient progress bar on stderr for a job that can take more than about a second.

    Shown only when stderr is a terminal and ``quiet`` is false (commands pass their
    ``--json``), so JSON output, pipes and tests never see it. Yields
    ``update(done, total=None, description=None)``, which library functions take as their
    ``progress`` callback (``progress(done, total)``, or ``(done, total, name)`` for plans).
    """
    if quiet or not stderr_is_terminal():
        yield lambda *args, **kwargs: None
        return
    from rich.progress import Progress as RichProgress

    with RichProgress(console=Console(stderr=True, force_terminal=True), transient=True) as bar:
        task = bar.add_task(description, total=total)

        def update(done: float, total: float | None = None, description: str | None = None) -> None:
            extra: dict[str, Any] = {} if total is None else {"total": total}
            if description is not None:
                extra["description"] = description
            bar.update(task, completed=done, **extra)

        yield update


def choice_option(text: str, choices: Sequence[str], option: str) -> str:
    """The choice named by ``text``, in any letter case (``CC`` is ``cc``); see :func:`soacheck.errors.choose`."""
    return choose(text, choices, option)


def breakdown_option(text: str) -> BreakdownDerating:
    return choice_option(text, ("auto", "thermal", "none"), "--breakdown-derating")  # type: ignore[return-value]


def part_option(ref: str, library: list[Path] | None) -> Part:
    from soacheck.library import find_part, library_folders

    return find_part(ref, library_folders(library or []))


def echo_result_json(result: Any) -> None:
    """Print a result's ``--json`` text as it is produced (a large result streams its rows).

    The bytes go to stdout's buffer as they are: ``typer.echo`` would search every piece
    for colour codes, and text would be decoded and encoded again.
    """
    out = getattr(sys.stdout, "buffer", None)
    if out is None:  # a text-only stdout (StringIO)
        for chunk in result.json_chunks():
            sys.stdout.write(chunk)
        sys.stdout.write("\n")
        return
    sys.stdout.flush()
    for piece in result.json_bytes():
        out.write(piece)
    out.write(b"\n")
    out.flush()


def echo_json(payload: dict[str, Any]) -> None:
    """Print ``payload`` as indented JSON; a table in it is streamed, one compact row a line."""
    for chunk in json_chunks(payload):
        typer.echo(chunk, nl=False)
    typer.echo("")


PLOT_SUFFIXES = (".png", ".svg", ".pdf")


def output_path(
    path: Path | None, option: str, *, force: bool, folder: bool = False, suffixes: tuple[str, ...] = ()
) -> Path | None:
    """Check an output path before any computation; the one output check of every command.

    See :func:`soacheck.outputs.check_output` (suffix, file or folder, overwrite, writable
    parent, missing parents made); the message gains the option's name. None passes.
    """
    if path is None:
        return None
    try:
        return check_output(path, force=force, folder=folder, suffixes=suffixes)
    except SoacheckError as err:
        raise SoacheckError(f"{option}: {err}") from None


def number_list(text: str, option: str, example: str, quantity: Quantity) -> np.ndarray:
    """Comma-separated values of one quantity from an option, such as ``25,75,125``; one clear error otherwise."""
    import numpy as np

    try:
        values = np.array([float(x) for x in text.split(",") if x.strip()])
    except ValueError:
        raise SoacheckError(f"{option}: '{text}' is not a list of numbers such as {example}") from None
    if values.size == 0:
        raise SoacheckError(f"{option}: give at least one number, such as {example}")
    return quantity.check_array(values, lambda k: f"{option}: value {k + 1}")


def main() -> None:
    """Entry point of the ``soacheck`` console script."""
    try:
        app()
    except SystemExit:
        try:
            sys.stdout.flush()  # what is still buffered, now, where a closed pipe can still be told apart
        except BrokenPipeError:
            raise SystemExit(_closed_pipe()) from None
        raise
