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

from soacheck import csvtables
from soacheck.library import bundled_library

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


@pytest.mark.parametrize(
    "args",
    [["--help"], ["check", "--help"], ["parts"], ["check", "demo-npn-to3-250w", "-v", "20", "-i", "2"]],
    ids=["help", "check-help", "parts", "check-one-point"],
)
def test_a_quick_command_loads_no_pandas_scipy_or_matplotlib(args):
    run = f"from soacheck.cli import app\ntry:\n    app({args!r})\nexcept SystemExit:\n    pass"
    loaded = loaded_after(run)
    assert not HEAVY & loaded, sorted(HEAVY & loaded)
    if "--help" in args:
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
