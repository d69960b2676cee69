"""A report never loses anything: one slug per job name, leftovers of interrupted runs cleaned, one writer at a time."""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

from soacheck import outputs
from soacheck.errors import SoacheckError
from soacheck.outputs import folder_lock, write_folder
from soacheck.report import slug

from .helpers import invoke

ROOT = Path(__file__).resolve().parents[1]


def test_names_that_read_alike_get_slugs_of_their_own():
    names = ["&", "'", "hot", "Hot", "a b", "a-b", "a_b", "job"]
    assert len({slug(n) for n in names}) == len(names)
    assert slug("hot") == "hot"  # a clean name is its own slug


def test_two_jobs_whose_names_read_alike_keep_their_plots_and_anchors(tmp_path):
    (tmp_path / "stage.toml").write_text('part = "demo-npn-to3-250w"\ncount = 1\ncase_temp = 25\n')
    (tmp_path / "p.csv").write_text("voltage,current\n10,1\n")
    plan = tmp_path / "plan.toml"
    plan.write_text(
        'stage = "stage.toml"\n[[points]]\nname = "&"\nfile = "p.csv"\n[[points]]\nname = "\'"\nfile = "p.csv"\n'
    )
    result = invoke("run", plan, "-o", tmp_path / "out")
    assert result.exit_code == 0, result.output  # 10 V x 1 A on a 250 W part: inside
    plots = sorted(p.name for p in (tmp_path / "out" / "plots").iterdir())
    assert len(plots) == 2, plots
    page = (tmp_path / "out" / "report.html").read_text()
    anchors = {f'id="job-{slug(n)}"' for n in ("&", "'")}
    assert all(a in page for a in anchors) and len(anchors) == 2


def test_leftovers_of_an_interrupted_write_are_removed_on_the_next(tmp_path):
    for name in (".out.abcdefgh", ".out.soacheck-staging-abcd1234", ".out.soacheck-old-zz_9zz_9"):
        (tmp_path / name).mkdir()
        (tmp_path / name / "half.svg").write_text("<svg/>")
    (tmp_path / ".out-other.abcdefgh").mkdir()  # another folder's: not ours to remove
    write_folder(tmp_path / "out", {"report.html": "new"}, marker=".soacheck-report")
    left = sorted(p.name for p in tmp_path.iterdir())
    assert left == [".out-other.abcdefgh", "out"], left


def test_a_report_moved_aside_by_an_interrupted_swap_is_put_back_before_it_is_replaced(tmp_path):
    aside = tmp_path / ".out.old.abcdefgh" / "out"
    aside.mkdir(parents=True)
    (aside / "report.html").write_text("old")
    (aside / ".soacheck-report").write_text("mark")
    write_folder(tmp_path / "out", {"report.html": "new"}, marker=".soacheck-report")
    assert (tmp_path / "out" / "report.html").read_text() == "new"
    assert not (tmp_path / ".out.old.abcdefgh").exists()


def test_a_lock_left_by_a_killed_run_is_taken_over(tmp_path):
    (tmp_path / ".out.lock").write_text("999999999\n")  # above any pid_max of Linux (4194304)
    write_folder(tmp_path / "out", {"report.html": "new"})
    assert (tmp_path / "out" / "report.html").read_text() == "new"
    assert not (tmp_path / ".out.lock").exists()


def test_a_run_that_loses_the_race_says_so_and_leaves_the_winners_report(tmp_path, monkeypatch):
    write_folder(tmp_path / "out", {"report.html": "winner"}, marker=".soacheck-report")
    holder = subprocess.Popen(
        [
            sys.executable,
            "-c",
            "import sys, time; from pathlib import Path; from soacheck.outputs import folder_lock\n"
            "with folder_lock(Path(sys.argv[1])):\n    print('held', flush=True); time.sleep(5)",
            str(tmp_path / "out"),
        ],
        cwd=ROOT,
        stdout=subprocess.PIPE,
        text=True,
    )
    try:
        assert holder.stdout.readline().strip() == "held"
        monkeypatch.setattr(outputs, "LOCK_WAIT_S", 0.5)
        started = time.monotonic()
        with pytest.raises(SoacheckError, match=rf"another soacheck run \(process {holder.pid}\) is writing"):
            write_folder(tmp_path / "out", {"report.html": "loser"}, marker=".soacheck-report")
        assert time.monotonic() - started < 4
        assert (tmp_path / "out" / "report.html").read_text() == "winner"
    finally:
        holder.kill()
        holder.communicate()


def test_a_lock_is_released_after_use(tmp_path):
    with folder_lock(tmp_path / "out"):
        assert (tmp_path / ".out.lock").read_text().strip() == str(os.getpid())
    assert not (tmp_path / ".out.lock").exists()
