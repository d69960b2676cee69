"""The most demanding safe setpoint of a --find-max search is marked on the discharge plot (issue: design margins).

The drawn mark is read back from the matplotlib objects: the line's height on the current
axis must be the setpoint the result reports, and the search itself must bracket it (a run
at the marked setpoint passes; one 2 % above fails), so the mark stands where the boundary
between safe and unsafe setpoints lies, not merely where the code put a number.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

import soacheck

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


@pytest.fixture
def stage_file(tmp_path: Path) -> Path:
    shutil.copy(EXAMPLES / "stage.toml", tmp_path / "stage.toml")
    return tmp_path / "stage.toml"


def _discharge(stage_file: Path, setpoint: float, *, mode: str = "cc", find_max: bool = False):
    return soacheck.discharge(
        stage_file, battery="nmc", cells=10, capacity=10, internal_resistance=0.15, mode=mode,
        setpoint=setpoint, samples=200, find_max=find_max,
    )  # fmt: skip


def _marks(figure) -> list:
    return [a for ax in figure.axes for a in (*ax.lines, *ax.texts) if a.get_gid() == "max-safe-setpoint"]


def test_a_constant_current_setpoint_is_a_line_at_the_found_current(stage_file: Path):
    result = _discharge(stage_file, 4.0, find_max=True)
    found = result.max_safe_setpoint
    assert found is not None
    # the search's answer is a real edge: safe there, unsafe 2 % above (rel_tol of the search is 0.1 %)
    assert _discharge(stage_file, found).passed
    assert not _discharge(stage_file, found * 1.02).passed
    (mark,) = _marks(result.plot().figure)
    assert mark.get_ydata()[0] == pytest.approx(found)
    assert f"{found:.4g} A" in mark.get_label()


def test_a_constant_power_setpoint_is_stated_in_watts(stage_file: Path):
    result = _discharge(stage_file, 100.0, mode="cp", find_max=True)
    (mark,) = _marks(result.plot().figure)
    assert mark.get_text().endswith(f"{result.max_safe_setpoint:.4g} W")


def test_no_mark_without_a_search(stage_file: Path):
    assert _marks(_discharge(stage_file, 4.0).plot().figure) == []
