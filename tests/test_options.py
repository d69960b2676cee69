"""The command's options read the same everywhere: help, version, choices, plot files.

These tests hold the command to the conventions of the issue on options: ``-h`` and
``--version``, plain value labels in help instead of Python types, defaults shown,
choices in any letter case, ``--plot FILE`` wherever something can be drawn and
``-o/--out DIR`` only for folders.
"""

from __future__ import annotations

import re

import pytest
from typer.testing import CliRunner

from soacheck import __version__
from soacheck.cli import app

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})

COMMANDS = [
    "check",
    "parts",
    "show",
    "trace",
    "discharge",
    "sweep",
    "sharing",
    "envelope",
    "compare",
    "digitize",
    "lint",
    "new-part",
    "run",
    "demo",
]


def invoke(*args):
    return runner.invoke(app, [str(a) for a in args])


def test_version_prints_the_package_version():
    result = invoke("--version")
    assert result.exit_code == 0, result.output
    assert result.stdout.strip() == f"soacheck {__version__}"


@pytest.mark.parametrize("command", COMMANDS)
def test_help_has_h_and_no_python_type_labels(command):
    """``-h`` works like ``--help``; no ``<float>``, ``<list[Path]>`` or ``<bool>`` in help."""
    result = invoke(command, "-h")
    assert result.exit_code == 0, result.output
    assert "Usage:" in result.stdout
    labels = re.findall(r"<[a-zA-Z_\[\]]+>", result.stdout)
    assert labels == [], result.stdout


def test_help_shows_the_default_report_folder():
    """The default written in rich-markup brackets once vanished ('Folder for the report .')."""
    result = invoke("run", "-h")
    assert "PLAN-report" in result.stdout, result.stdout


@pytest.mark.parametrize("command", ["run", "demo"])
def test_out_is_a_folder_option(command):
    result = invoke(command, "-h")
    line = next(x for x in result.stdout.splitlines() if "--out" in x)
    assert "-o" in line and "DIR" in line, line


@pytest.mark.parametrize("command", ["show", "digitize", "check", "trace", "discharge", "sweep", "envelope"])
def test_no_file_takes_o(command):
    """``-o`` names folders only; a file is ``--plot FILE`` (or ``--into``, ``--export``)."""
    result = invoke(command, "-h")
    assert not re.search(r"(^|\s)-o(\s|,)", result.stdout), result.stdout


@pytest.mark.parametrize("command", ["check", "show", "trace", "discharge", "sweep", "envelope", "compare"])
def test_every_command_that_draws_takes_plot_file(command):
    result = invoke(command, "-h")
    line = next((x for x in result.stdout.splitlines() if "--plot" in x), "")
    assert "FILE" in line, result.stdout


def test_check_plot_writes_the_drawing(tmp_path):
    out = tmp_path / "points.svg"
    result = invoke("check", "demo-npn-to3-250w", "-v", 40, "-i", 1.5, "-t", 60, "--plot", out)
    assert result.exit_code == 0, result.output
    assert out.read_text().lstrip().startswith("<?xml")


def test_choices_in_any_letter_case():
    """``--breakdown-derating AUTO`` is ``auto``: a choice is not a password."""
    result = invoke(
        "check", "demo-npn-to3-250w", "-v", 40, "-i", 1.5, "-t", 60, "--breakdown-derating", "Thermal", "--json"
    )
    assert result.exit_code == 0, result.output


def test_mode_in_capitals_runs_the_discharge(tmp_path):
    args = ["discharge", "examples/stage.toml", "--battery", "NMC", "--cells", 10, "--capacity", 10, "--mode", "CC"]
    result = invoke(*args, "--setpoint", 4, "--internal-resistance", 0.15, "--samples", 50, "--json")
    assert result.exit_code == 0, result.output


def test_an_unknown_choice_names_the_accepted_ones():
    result = invoke("check", "demo-npn-to3-250w", "-v", 40, "-i", 1.5, "--breakdown-derating", "thermo")
    assert result.exit_code == 2, result.output
    assert "auto, thermal, none" in result.stderr and "did you mean 'thermal'" in result.stderr


def test_envelope_from_zero_volts_is_refused_with_a_hint(tmp_path):
    env = tmp_path / "env.toml"
    env.write_text("voltage = [0, 42]\ncurrent = 10\npower = 150\n")
    result = invoke("envelope", "examples/stage.toml", "--check", env)
    assert result.exit_code == 2, result.output
    assert str(env) in result.stderr and "such as [1, 42]" in result.stderr, result.stderr


@pytest.mark.parametrize("command", COMMANDS)
def test_help_keeps_every_bracketed_word(command):
    """A word in square brackets in a help text (``[policy]``, ``soacheck[dask]``, ``[V]``) is
    printed, not taken by the help's markup as a style tag and dropped."""
    import typer.main

    click_command = typer.main.get_command(app).commands[command]
    texts = [click_command.help or ""] + [getattr(p, "help", None) or "" for p in click_command.params]
    words = {w for text in texts for w in re.findall(r"\[[^\[\]]+\]", text.replace("\\[", "["))}
    shown = " ".join(invoke(command, "-h").stdout.split())
    assert [w for w in sorted(words) if w not in shown] == [], shown
