"""What the command loads to start: no numerics for help, no pandas for a part's small tables.

A behaviour check, not a timing: ``benchmarks/startup.py`` measures the time. Importing
numpy costs about as much as starting Python; pandas, scipy and matplotlib several times that.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import soacheck
from soacheck import csvtables
from soacheck.errors import SoacheckError
from soacheck.library import bundled_library, part_rows
from soacheck.partfiles import read_part

ROOT = Path(__file__).resolve().parent.parent
HEAVY = {"pandas", "scipy", "matplotlib", "shapely", "pyarrow"}


def loaded_after(code: str) -> set[str]:
    """The top-level modules loaded in a fresh interpreter after running ``code``."""
    probe = f"import sys\n{code}\nprint(' '.join(sorted({{name.split('.')[0] for name in sys.modules}})))"
    done = subprocess.run(
        [sys.executable, "-c", probe],
        capture_output=True,
        text=True,
        env={**os.environ, "COLUMNS": "100", "PYTHONPATH": str(ROOT)},
    )
    assert done.returncode == 0, done.stderr
    return set(done.stdout.split())


def test_importing_the_command_loads_no_numerics():
    assert not (HEAVY | {"numpy"}) & loaded_after("import soacheck.cli")


def test_the_public_listing_loads_no_numerics():
    """``soacheck.part_rows()``, what ``soacheck parts`` calls: importing and listing the bundled parts."""
    loaded = loaded_after("import soacheck\nassert soacheck.part_rows()")
    assert not (HEAVY | {"numpy"}) & loaded, sorted((HEAVY | {"numpy"}) & loaded)


@pytest.mark.parametrize(
    "args",
    [["--help"], ["check", "--help"], ["parts"], ["check", "demo-npn-to3-250w", "-v", "20", "-i", "2"]],
    ids=["help", "check-help", "parts", "check-one-point"],
)
def test_a_quick_command_loads_no_pandas_scipy_or_matplotlib(args):
    run = f"from soacheck.cli import app\ntry:\n    app({args!r})\nexcept SystemExit:\n    pass"
    loaded = loaded_after(run)
    assert not HEAVY & loaded, sorted(HEAVY & loaded)
    if "--help" in args or args == ["parts"]:  # listing reads part.toml headers and soa.csv pulse labels
        assert "numpy" not in loaded


@pytest.mark.parametrize("path", sorted(bundled_library().glob("*/*.csv")), ids=lambda p: f"{p.parent.name}/{p.name}")
def test_a_plain_small_table_reads_as_pandas_reads_it(path, monkeypatch):
    """Every bundled part table, read in Python and through pandas' reader: the same columns, bit for bit."""
    header = path.read_text().splitlines()[0].split(",")
    numeric = [name for name in header if name != "pulse"]
    text = [name for name in header if name == "pulse"]
    sep, names = csvtables._sniff(path)
    assert csvtables._plain_columns(path, sep, names, numeric + text, numeric, ()) is not None  # read without pandas
    plain = csvtables.read_table(path, numeric=numeric, text=text)
    monkeypatch.setattr(csvtables, "PLAIN_FILE_BYTES", -1)  # every file through pandas
    read = csvtables.read_table(path, numeric=numeric, text=text)
    assert list(plain.columns) == list(read.columns)
    for name in numeric:
        assert plain.columns[name].tobytes() == read.columns[name].tobytes(), name
    for name in text:
        assert plain.columns[name].tolist() == read.columns[name].tolist()


def _row_of_loaded(folder: Path) -> dict:
    """The listing's row built from the part as every command loads it (full read, numpy)."""
    p = read_part(folder)
    r = p.ratings
    return {
        "id": p.id,
        "kind": p.kind,
        "v_max": r.v_max_v,
        "i_max": r.i_max_a,
        "p_max": r.p_max_w,
        "tj_max": r.tj_max_c,
        "rth_jc": r.rth_jc_k_per_w,
        "curves": [c.label for c in p.curves],
        "description": p.description,
        "folder": str(p.folder),
    }


def _copy_part(tmp_path: Path, name: str) -> Path:
    """A bundled part copied under a new id into ``tmp_path``."""
    source = bundled_library() / "demo-npn-to3-250w"
    folder = tmp_path / name
    folder.mkdir()
    (folder / "soa.csv").write_text((source / "soa.csv").read_text())
    (folder / "part.toml").write_text((source / "part.toml").read_text().replace("demo-npn-to3-250w", name))
    return folder


@pytest.mark.parametrize("given", [str, Path, lambda p: [p]], ids=["text", "path", "list"])
def test_the_public_listing_lists_a_user_library_as_loading_shows(tmp_path, given):
    """A user library given as text, path or list: its part listed as the fully loaded part shows, then the bundled."""
    folder = _copy_part(tmp_path, "zz-user")
    rows = soacheck.part_rows(library=given(tmp_path))
    assert [r for r in rows if r["id"] == "zz-user"] == [_row_of_loaded(folder)]
    assert {r["id"] for r in rows} >= {p.parent.name for p in bundled_library().glob("*/part.toml")}


def test_listing_shows_what_loading_the_parts_shows():
    """Every bundled part: the listing's row (headers and pulse labels only) equals the fully loaded part's."""
    rows = part_rows([bundled_library()])
    assert [r["id"] for r in rows] == sorted(p.parent.name for p in bundled_library().glob("*/part.toml"))
    for row in rows:
        assert row == _row_of_loaded(Path(row["folder"]))


@pytest.mark.parametrize(
    ("edit", "message"),
    [
        (lambda t: "".join(line for line in t.splitlines(True) if not line.startswith("dc,")), "no 'dc' curve"),
        (lambda t: t.replace("100us,1,30", "100us,abc,30"), "voltage 'abc' is not a finite number"),
        (lambda t: t.replace("100us,1,30", "100us,-1,30"), "it must be above zero"),
        (lambda t: t.replace("pulse,voltage", "pulse,volts"), "unknown column 'volts'"),
        (lambda t: t.replace("100us,1,30", "1 0us,1,30"), "line 2"),
    ],
    ids=["no-dc", "not-a-number", "negative", "unknown-column", "bad-pulse"],
)
def test_a_listed_part_with_bad_curve_cells_is_reported_as_loading_reports_it(tmp_path, edit, message):
    """Curves the listing cannot read plainly are read as every command reads them: the same message."""
    folder = _copy_part(tmp_path, "zz-broken")
    (folder / "soa.csv").write_text(edit((folder / "soa.csv").read_text()))
    with pytest.raises(SoacheckError) as loaded:
        read_part(folder)
    assert message in str(loaded.value)
    with pytest.raises(SoacheckError) as listed:
        part_rows([tmp_path])
    assert str(listed.value) == str(loaded.value)


def test_a_quoted_curve_file_lists_the_same_labels(tmp_path):
    """A file not plainly written (quoted cells) is read as a command reads it, labels unchanged."""
    folder = _copy_part(tmp_path, "zz-quoted")
    text = (folder / "soa.csv").read_text()
    (folder / "soa.csv").write_text(text.replace("100us,1,30", '"100us",1,30'))
    assert part_rows([tmp_path]) == [_row_of_loaded(folder)]


def test_listing_leaves_the_curve_shapes_and_tables_to_loading(tmp_path):
    """The documented limit: a derating fraction above 1 is listed; loading (check, show, lint) reports it."""
    folder = _copy_part(tmp_path, "zz-derating")
    toml = (folder / "part.toml").read_text()
    (folder / "part.toml").write_text(toml.replace("[175, 0.65]", "[175, 1.65]"))
    assert [r["id"] for r in part_rows([tmp_path])] == ["zz-derating"]
    with pytest.raises(SoacheckError, match="fractions must lie between 0 and 1"):
        read_part(folder)


@pytest.mark.parametrize(
    "cells",
    ["1e-3", "-0", "-0.0", " 5", "5 ", '"5"', "1.2345678901234567", "inf", "0x10", "1_000"],
)
def test_a_number_not_written_plainly_goes_through_pandas(tmp_path, cells):
    """Exponents, signs of zero, spaces, quotes, more than 15 digits: left to pandas and its messages."""
    path = tmp_path / "t.csv"
    path.write_text(f"voltage,current\n1,{cells}\n")
    assert (
        csvtables._plain_columns(path, ",", ["voltage", "current"], ["voltage", "current"], ["voltage", "current"], ())
        is None
    )


def test_a_plain_number_reads_to_the_correctly_rounded_float(tmp_path):
    """Up to 15 digits: the nearest float, as Python's float() gives it (IEEE 754 round to nearest)."""
    path = tmp_path / "t.csv"
    path.write_text("voltage,current\n0.1,30\n123456789012345,.5\n")
    columns = csvtables._plain_columns(
        path, ",", ["voltage", "current"], ["voltage", "current"], ["voltage", "current"], ()
    )
    assert columns is not None
    np.testing.assert_array_equal(columns["voltage"], [0.1, 123456789012345.0])
    np.testing.assert_array_equal(columns["current"], [30.0, 0.5])


@pytest.mark.parametrize(("json_flag", "rows"), [(["--json"], 20_000), ([], 2_000)], ids=["json", "table"])
def test_a_reader_that_stops_early_ends_the_command_quietly(tmp_path, json_flag, rows):
    """``soacheck check ... | head -1`` through a real pipe: no traceback, no "internal error", exit 141.

    141 = 128 + SIGPIPE (13), what a shell reports for a Unix tool stopped by a closed pipe
    (POSIX shell, "Exit Status for Commands"); common practice, no source for the choice.
    """
    points = tmp_path / "points.csv"
    points.write_text("voltage,current\n" + "20,1\n" * rows)  # more text than a pipe's buffer (64 kB)
    command = [sys.executable, "-m", "soacheck", "check", "demo-npn-to3-250w", "--points", str(points), "--all-rows"]
    env = {**os.environ, "COLUMNS": "100", "PYTHONPATH": str(ROOT), "SOACHECK_LIBRARY": ""}
    with subprocess.Popen(
        [*command, *json_flag], cwd=ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE
    ) as child:
        assert child.stdout is not None and child.stderr is not None
        child.stdout.readline()
        child.stdout.close()  # the reader goes away, as head does
        errors = child.stderr.read().decode()
        assert child.wait(timeout=120) == 141, errors
    assert errors == ""


@pytest.mark.parametrize("args", [["--help"], ["sharing", "--help"], ["check", "-h"]], ids=" ".join)
def test_help_into_a_pipe_whose_reader_is_gone_ends_quietly(args):
    """``soacheck --help | head -1`` through a real pipe whose reader has already gone (so the first write fails,
    every time): no traceback, nothing on stderr, exit 141 as for a command's output above, never 1 (unsafe).

    141 = 128 + SIGPIPE (13) (POSIX shell, "Exit Status for Commands"); common practice, no source for the choice.
    """
    reader, writer = os.pipe()
    os.close(reader)  # the reader goes away before anything is written
    env = {**os.environ, "COLUMNS": "100", "PYTHONPATH": str(ROOT), "SOACHECK_LIBRARY": ""}
    try:
        done = subprocess.run(
            [sys.executable, "-m", "soacheck", *args], cwd=ROOT, env=env, stdout=writer, stderr=subprocess.PIPE
        )
    finally:
        os.close(writer)
    assert (done.returncode, done.stderr.decode()) == (141, "")


def test_every_command_prints_its_help_through_the_class_that_ends_quietly_on_a_closed_pipe():
    """The pipe test above runs three commands; every other command is built the same way, which this holds."""
    import typer

    from soacheck.cli import app
    from soacheck.cli.base import _QuietOnClosedPipe

    group = typer.main.get_command(app)
    commands: dict = group.commands  # type: ignore[attr-defined]
    assert isinstance(group, _QuietOnClosedPipe) and "sharing" in commands
    assert [name for name, command in commands.items() if not isinstance(command, _QuietOnClosedPipe)] == []
