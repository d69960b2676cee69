"""Progress bars: on stderr, only on a terminal, never with --json or in a pipe.

What is asserted is where the bar goes (a fact of the CLI's contract, common practice, no
source): a person at a terminal sees it on stderr; JSON on stdout stays parseable and a
pipe stays clean.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

import soacheck
import soacheck.cli.base
from soacheck.cli import app

runner = CliRunner(env={"COLUMNS": "120", "SOACHECK_LIBRARY": ""})
PART = "demo-npn-to3-250w"  # invented bundled part


@pytest.fixture
def small_trace(tmp_path):
    """20 samples at 10 V, 1 A: 10 W, well inside the invented part's DC boundary."""
    path = tmp_path / "log.csv"
    path.write_text("time,voltage,current\n" + "".join(f"{k * 1e-3},10,1\n" for k in range(20)))
    return path


def test_a_terminal_sees_the_bar_on_stderr(small_trace, monkeypatch):
    monkeypatch.setattr(soacheck.cli.base, "stderr_is_terminal", lambda: True)
    result = runner.invoke(app, ["trace", PART, str(small_trace)])
    assert result.exit_code == 0, result.output
    assert "checking log.csv" in result.stderr
    assert "checking" not in result.stdout


def test_json_gets_no_bar_even_on_a_terminal(small_trace, monkeypatch):
    monkeypatch.setattr(soacheck.cli.base, "stderr_is_terminal", lambda: True)
    result = runner.invoke(app, ["trace", PART, str(small_trace), "--json"])
    assert result.exit_code == 0, result.output
    assert result.stderr == ""
    assert json.loads(result.stdout)["verdict"] == "pass"


def test_a_pipe_gets_no_bar(small_trace):
    result = runner.invoke(app, ["trace", PART, str(small_trace)])
    assert result.exit_code == 0, result.output
    assert result.stderr == ""


FIND_MAX = [
    "discharge",
    "examples/stage.toml",
    "--battery",
    "nmc",
    "--cells",
    "10",
    "--capacity",
    "10",
    "--mode",
    "cc",
    "--setpoint",
    "4",
    "--internal-resistance",
    "0.15",
    "--samples",
    "200",
    "--find-max",
]


def test_find_max_shows_its_search_on_a_terminal(monkeypatch):
    """The invented example stage and pack of the README: a search of several runs, shown on stderr."""
    monkeypatch.setattr(soacheck.cli.base, "stderr_is_terminal", lambda: True)
    monkeypatch.chdir(Path(__file__).resolve().parent.parent)
    result = runner.invoke(app, FIND_MAX)
    assert result.exit_code in (0, 1), result.output
    assert "most demanding safe setpoint" in result.stderr
    assert "most demanding safe setpoint: runs" not in result.stdout


def test_find_max_with_json_gets_no_bar(monkeypatch):
    monkeypatch.setattr(soacheck.cli.base, "stderr_is_terminal", lambda: True)
    monkeypatch.chdir(Path(__file__).resolve().parent.parent)
    result = runner.invoke(app, [*FIND_MAX, "--json"])
    assert result.exit_code in (0, 1), result.output
    assert result.stderr == ""
    assert json.loads(result.stdout)["max_safe_setpoint"] > 0


def test_find_max_reports_each_run_to_its_progress_callback():
    """The library side: one call per run of the search, counting up from 1, the total unknown (None)."""
    calls = []
    root = Path(__file__).resolve().parent.parent
    found = soacheck.discharge(
        root / "examples" / "stage.toml",
        battery="nmc",
        cells=10,
        capacity=10,
        mode="cc",
        setpoint=4.0,
        internal_resistance=0.15,
        samples=200,
        find_max=True,
        progress=lambda done, total: calls.append((done, total)),
    )
    assert found.max_safe_setpoint is not None
    assert len(calls) > 5
    assert calls == [(k + 1, None) for k in range(len(calls))]
