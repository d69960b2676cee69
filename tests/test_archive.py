"""A lab's archive: several trace files checked each on its own, in parallel, one summary.

The constructed reference part of conftest (a 125 W constant-power line from 8.33 V to 40 V)
allows 125 W / 20 V = 6.25 A at 20 V and 25 °C case (by hand): a log at 3 A passes, one at 7 A fails from its first sample
with the limit ``power``.
"""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from soacheck.archive import check_archive, expand_files
from soacheck.cli import app
from soacheck.partfiles import read_part

from .conftest import write_part

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})


def log(path, current_a):
    path.write_text("time,voltage,current\n" + "".join(f"{k * 1e-3},20,{current_a}\n" for k in range(50)))
    return path


@pytest.fixture
def archive(tmp_path):
    logs = tmp_path / "logs"
    logs.mkdir()
    log(logs / "a-fine.csv", 3.0)
    log(logs / "b-hot.csv", 7.0)
    (logs / "c-broken.csv").write_text("time,voltage,current\n0,20,3\n0.001,20,oops\n")
    (logs / "notes.md").write_text("not a trace")
    return write_part(tmp_path / "ref-bjt"), logs


def test_a_folder_gives_one_row_per_file_and_an_unreadable_file_does_not_stop_the_others(archive):
    part, logs = archive
    result = runner.invoke(app, ["trace", str(part), str(logs), "--jobs", "2"])
    assert result.exit_code == 2, result.output  # one file could not be read
    rows = [line for line in result.stdout.splitlines() if line.startswith("│")]
    assert len(rows) == 3 and "a-fine.csv" in rows[0] and "b-hot.csv" in rows[1] and "c-broken.csv" in rows[2]
    assert "pass" in rows[0] and "FAIL" in rows[1] and "(power)" in rows[1] and "unreadable" in rows[2]
    assert "-12.0" in rows[1]  # margin 1 - 7/6.25, by hand
    assert "data row 2" in result.stdout  # the broken file's own message: its bad row
    assert "1 passed, 1 failed, 1 unreadable" in result.stdout


def test_json_gives_one_object_per_file_in_the_order_given(archive):
    part, logs = archive
    files = [str(logs / "b-hot.csv"), str(logs / "a-fine.csv")]
    result = runner.invoke(app, ["trace", str(part), *files, "--json", "--jobs", "2"])
    assert result.exit_code == 1, result.output  # one failed, none unreadable
    payload = json.loads(result.stdout)
    assert payload["part"] == "ref-bjt" and payload["verdict"] == "fail"
    objects = payload["files"]
    assert [o["file"] for o in objects] == files
    hot, fine = objects
    assert hot["verdict"] == "fail" and hot["limit"] == "power" and hot["first_violation_time"] == 0.0
    assert hot["margin"] == pytest.approx(1 - 7 / 6.25, rel=1e-4)  # by hand, see the module docstring
    assert fine["verdict"] == "pass" and fine["margin"] == pytest.approx(1 - 3 / 6.25, rel=1e-4)


def test_a_quoted_glob_is_expanded_in_order(archive):
    _, logs = archive
    assert [p.name for p in expand_files([str(logs / "*-*.csv")])] == ["a-fine.csv", "b-hot.csv", "c-broken.csv"]
    assert [p.name for p in expand_files([logs / "missing.csv"])] == ["missing.csv"]  # reported, not dropped


def test_processes_and_one_process_agree(archive):
    part, logs = archive
    files = expand_files([logs])
    loaded = read_part(part)
    serial = [o.to_dict() for o in check_archive(loaded, files, case_temp=25.0, jobs=1)]
    parallel = [o.to_dict() for o in check_archive(loaded, files, case_temp=25.0, jobs=2)]
    assert serial == parallel


def test_a_dask_cluster_gives_the_same_outcomes(archive):
    distributed = pytest.importorskip("distributed")
    part, logs = archive
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=2, processes=False, dashboard_address=None
    ) as cluster:
        result = runner.invoke(app, ["trace", str(part), str(logs), "--json", "--dask", cluster.scheduler_address])
    assert result.exit_code == 2, result.output
    local = runner.invoke(app, ["trace", str(part), str(logs), "--json", "--jobs", "1"])
    assert result.stdout == local.stdout
