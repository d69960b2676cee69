"""The ``soacheck`` command through typer's CliRunner: outputs, exit codes, files.

Expected allowed currents are computed by hand from the derating rules (a constructed
example; P = (tj_max - Tc)/Rth_jc, the definition of Rth_jc in JEDEC JESD51-1).
"""

from __future__ import annotations

import importlib.metadata
import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from soacheck.cli import app
from soacheck.filemarks import written_by_soacheck

from .conftest import BUNDLED_IDS, write_part

ROOT_CURVES = Path(__file__).resolve().parents[1] / "curves"
ROOT_PACKAGE = Path(__file__).resolve().parents[1] / "soacheck"

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})


def invoke(*args, env=None):
    result = runner.invoke(app, [str(a) for a in args], env=env)
    return result


def test_check_json_has_the_documented_shape_and_hand_computed_values(tmp_path):
    folder = write_part(tmp_path / "user-bjt")
    result = invoke("check", folder, "--voltage", 20, "--current", 3, "--case-temp", 75, "--json")
    assert result.exit_code == 0, result.output
    payload = json.loads(result.stdout)
    assert payload["part"] == "user-bjt" and payload["verdict"] == "pass"
    (point,) = payload["points"]
    assert set(point) >= {"voltage", "current", "case_temp", "pulse", "inside", "allowed_current", "margin", "limit"}
    # by hand: f = (150 - 75)/(150 - 25) = 0.6, 0.6 * 125 W / 20 V = 3.75 A
    assert point["allowed_current"] == pytest.approx(3.75, rel=1e-4)
    assert point["margin"] == pytest.approx(1 - 3 / 3.75, rel=1e-3)
    assert point["limit"] == "power" and point["inside"] is True


def test_check_at_25c_matches_the_hand_computation(tmp_path):
    folder = write_part(tmp_path / "user-bjt")
    result = invoke("check", folder, "-v", 20, "-i", 7, "--json")
    assert result.exit_code == 1, result.output  # 7 A > 125 W / 20 V = 6.25 A
    (point,) = json.loads(result.stdout)["points"]
    assert point["allowed_current"] == pytest.approx(6.25, rel=1e-4)
    assert point["inside"] is False and point["margin"] < 0


def test_points_file_with_per_point_case_temperature_and_pulse(tmp_path):
    folder = write_part(tmp_path / "user-bjt")
    points = tmp_path / "plan.csv"
    points.write_text("voltage,current,case_temp,pulse\n20,3,75,dc\n20,9,25,1ms\n120,0.1,25,dc\n150,1,160,dc\n")
    result = invoke("check", folder, "--points", points, "--json")
    assert result.exit_code == 1, result.output
    rows = json.loads(result.stdout)["points"]
    assert [r["inside"] for r in rows] == [True, True, False, False]
    assert [r["limit"] for r in rows] == ["power", "power", "voltage", "voltage"]
    assert rows[1]["allowed_current"] == pytest.approx(400 / 20, rel=1e-9)  # 1 ms curve: 400 W line
    assert rows[2]["margin"] is None  # nothing allowed above v_max: no margin, null in JSON


def test_check_table_output_names_the_verdict_and_assumptions():
    result = invoke("check", "demo-npn-to247-125w", "-v", 40, "-i", 2, "-t", 60)
    assert result.exit_code == 1, result.output
    assert "OUTSIDE" in result.stdout and "second_breakdown" in result.stdout
    assert "derated like the thermal limit" in result.stdout


def test_show_writes_png_svg_pdf_replaces_its_own_and_never_a_users_without_force(tmp_path):
    points = tmp_path / "p.csv"
    points.write_text("voltage,current\n10,2\n50,3\n")
    for suffix in ("png", "svg", "pdf"):
        out = tmp_path / f"soa.{suffix}"
        result = invoke("show", "demo-nmos-to247-300w", "--points", points, "--plot", out, "--case-temp", "25,100")
        assert result.exit_code == 0, result.output
        assert written_by_soacheck(out), suffix
        again = invoke("show", "demo-npn-to3-250w", "--plot", out)
        assert again.exit_code == 0, again.output
    users = tmp_path / "photo.png"
    users.write_bytes(b"\x89PNG\r\n\x1a\n not soacheck's")
    result = invoke("show", "demo-npn-to3-250w", "--plot", users)
    assert result.exit_code == 2 and "--force" in result.stderr, result.output
    assert users.read_bytes() == b"\x89PNG\r\n\x1a\n not soacheck's"
    assert invoke("show", "demo-npn-to3-250w", "--plot", users, "--force").exit_code == 0


def test_svg_plot_shows_every_mechanism_of_the_fet(tmp_path):
    out = tmp_path / "fet.svg"
    assert invoke("show", "demo-nmos-to247-300w", "--plot", out).exit_code == 0
    text = out.read_text()
    for label in ("on-resistance", "current limit", "power (constant power)", "thermal instability"):
        assert label in text


def test_parts_lists_bundled_and_user_libraries_user_first(tmp_path):
    library = tmp_path / "lib"
    write_part(library / "my-bjt")
    write_part(library / "demo-npn-to3-250w")  # shadows the bundled part of that id
    result = invoke("parts", "--library", library, "--json")
    assert result.exit_code == 0, result.output
    rows = {r["id"]: r for r in json.loads(result.stdout)["parts"]}
    assert len(rows) == len(BUNDLED_IDS) + 1 and "my-bjt" in rows
    assert rows["demo-npn-to3-250w"]["folder"].startswith(str(library))
    env_result = invoke("check", "my-bjt", "-v", 20, "-i", 1, env={"SOACHECK_LIBRARY": str(library)})
    assert env_result.exit_code == 0, env_result.output


def test_bundled_parts_are_invented_and_consistent():
    result = invoke("parts", "--json")
    rows = json.loads(result.stdout)["parts"]
    kinds = [r["kind"] for r in rows]
    assert len(rows) >= 5 and kinds.count("npn") + kinds.count("pnp") >= 3
    assert {"nmos", "igbt"} <= set(kinds)
    for r in rows:
        assert "INVENTED" in r["description"]
        # p_max = (tj_max - 25)/rth_jc, the definition of Rth_jc (JEDEC JESD51-1)
        assert r["p_max"] == pytest.approx((r["tj_max"] - 25) / r["rth_jc"], rel=1e-5)


def test_demo_never_writes_into_a_folder_of_the_users(tmp_path):
    # the demo itself runs end to end in tests/test_plan.py
    foreign = tmp_path / "mine"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("keep me")
    result = invoke("demo", "--out", foreign)
    assert result.exit_code == 2 and "--force" in result.stderr
    assert (foreign / "notes.txt").read_text() == "keep me"


def test_installed_package_carries_the_bundled_curves():
    """A plain (non-editable) `pip install .` must install the curves as package data."""
    installed = []
    for dist in importlib.metadata.distributions(name="soacheck"):
        direct = dist.read_text("direct_url.json") or "{}"
        if dist.read_text("WHEEL") is not None and not json.loads(direct).get("dir_info", {}).get("editable"):
            installed.append(dist)
    if not installed:
        pytest.skip("no non-editable install of soacheck here; CI's `pip install '.[test]'` makes one")

    for part_id in BUNDLED_IDS:
        names = (
            "part.toml",
            "soa.csv",
            *(("transfer.csv",) if (ROOT_CURVES / part_id / "transfer.csv").exists() else ()),
        )
        for name in names:
            assert installed[0].locate_file(f"soacheck/curves/{part_id}/{name}").is_file()
    # and every module of the source tree, subpackages included: a package missing from pyproject's
    # list installs without its modules, and only a non-editable install shows it
    shipped = {str(f).replace("\\", "/") for f in installed[0].files or ()}
    source = {f"soacheck/{p.relative_to(ROOT_PACKAGE).as_posix()}" for p in ROOT_PACKAGE.rglob("*.py")}
    assert source <= shipped, sorted(source - shipped)


def test_every_package_folder_is_listed_for_installation():
    """pyproject's [tool.setuptools] packages names every folder of soacheck/ that holds an __init__.py."""
    import tomllib

    listed = set(tomllib.loads((ROOT_PACKAGE.parent / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    folders = {
        ".".join(("soacheck", *init.parent.relative_to(ROOT_PACKAGE).parts))
        for init in ROOT_PACKAGE.rglob("__init__.py")
    }
    assert folders <= listed, sorted(folders - listed)
