"""The exported limit table: what a load's controller, a spreadsheet or a review receives.

Check values: the reference part's constructed DC curve (conftest: current limit 15 A to
8.3333 V, 125 W to 40 V, second breakdown 3.125 (V/40)^-2 A beyond), one device at a fixed
25 °C case with no resistors, so the safe current at a source voltage is the curve itself,
computed by hand below. The C header is read by the system's C and C++ compilers and a
small C program that applies the lookup rule the header states.
"""

from __future__ import annotations

import json
import math
import re
import shutil
import subprocess

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from soacheck.limit_table import floor_to

from .conftest import write_part
from .helpers import invoke, validate_output

# By hand from the reference DC curve, one device at 25 °C, no resistors:
HAND_A = {
    5.0: 15.0,  # current limit (125 W / 5 V = 25 A lies above it)
    20.0: 125.0 / 20.0,  # constant power: 6.25 A
    60.0: 3.125 * (60.0 / 40.0) ** -2,  # second breakdown, slope -2: 1.38889 A
}
RESOLUTION_A = 0.001  # the documented rounding step of exported currents


def table_stage(tmp_path):
    """A stage file of one reference device at a fixed 25 °C case, no ballast, no sense resistor."""
    write_part(tmp_path / "ref-bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text('part = "ref-bjt"\ncount = 1\ncase_temp = 25\n', encoding="utf-8")
    return stage


def export(tmp_path, name):
    out = tmp_path / name
    result = invoke("envelope", table_stage(tmp_path), "--voltages", "5,20,60", "--export", out)
    assert result.exit_code == 0, result.output
    return out


def header_arrays(text):
    """The two float arrays of a limit-table header, as the decimal numbers written."""

    def array(name):
        (body,) = re.findall(rf"{name}\[\d+\] = \{{([^}}]*)\}};", text)
        return [float(x.strip().removesuffix("f")) for x in body.split(",")]

    return array("SOA_LIMIT_VOLTAGE_V"), array("SOA_LIMIT_CURRENT_A")


def test_floor_to_by_hand():
    assert floor_to(4.5678, 0.001) == 4.567
    assert floor_to(6.2499999999, 0.001) == 6.249  # the bisection's safe side of 6.25 stays below it
    assert floor_to(2.0, 0.001) == 2.0
    assert floor_to(0.0009, 0.001) == 0.0
    assert floor_to(math.nan, 0.001) == 0.0 and floor_to(-1.0, 0.001) == 0.0  # nothing allowed


@given(st.floats(min_value=1e-6, max_value=1e4, allow_nan=False))
def test_floor_to_never_rounds_up_and_loses_less_than_one_step(value):
    rounded = floor_to(value, RESOLUTION_A)
    assert rounded <= value
    assert value - rounded < RESOLUTION_A * (1 + 1e-9)
    assert abs(rounded / RESOLUTION_A - round(rounded / RESOLUTION_A)) < 1e-6  # a whole number of steps


def test_the_three_exports_and_json_output_carry_the_same_rounded_hand_values(tmp_path):
    stage = table_stage(tmp_path)
    files = {}
    for suffix in ("csv", "json", "h"):
        files[suffix] = tmp_path / f"limits.{suffix}"
        result = invoke("envelope", stage, "--voltages", "5,20,60", "--export", files[suffix])
        assert result.exit_code == 0, result.output
    printed = invoke("envelope", stage, "--voltages", "5,20,60", "--json")
    assert printed.exit_code == 0, printed.output

    csv = pd.read_csv(files["csv"], comment="#")
    exported = validate_output("envelope", files["json"].read_text(encoding="utf-8"))  # the --json schema
    volts_h, amps_h = header_arrays(files["h"].read_text(encoding="utf-8"))
    assert json.loads(printed.stdout) == exported  # --json prints what --export writes
    rows = exported["points"]
    assert csv["voltage"].tolist() == [r["voltage"] for r in rows] == volts_h == [5.0, 20.0, 60.0]
    assert csv["max_current"].tolist() == [r["max_current"] for r in rows] == amps_h
    assert csv["limit"].tolist() == [r["limit"] for r in rows]
    assert exported["current_resolution"] == RESOLUTION_A and exported["duty"] is None
    for v, amps in zip(volts_h, amps_h, strict=True):
        # rounded down: never above the hand value, less than one step (plus the bisection's 1e-9) below
        assert HAND_A[v] - RESOLUTION_A - 1e-6 <= amps <= HAND_A[v], (v, amps)
        assert amps * 1000 == pytest.approx(round(amps * 1000), abs=1e-9)  # a multiple of 1 mA
    assert [r["limit"] for r in rows][0] == "current" and [r["limit"] for r in rows][2] == "second_breakdown"
    # each file states the rounding and the lookup rule
    statement = "rounded down to a multiple of 0.001 A"
    assert statement in files["csv"].read_text(encoding="utf-8")
    assert any(statement in note for note in exported["assumptions"])
    assert statement in files["h"].read_text(encoding="utf-8")
    assert any("lower of their two currents" in note for note in exported["assumptions"])


C_FLAGS = ["-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic-errors"]
CXX_FLAGS = ["-std=c++11", "-Wall", "-Wextra", "-Werror", "-pedantic-errors"]

LOOKUP_PROGRAM = r"""
#include <stdio.h>
#include <stdlib.h>
#include "limits.h"

/* The header's rule: with V[k] <= v <= V[k + 1], the lower of I[k] and I[k + 1];
   outside the breakpoints nothing. */
static float allowed(float v)
{
    size_t k;
    for (k = 0; k + 1 < SOA_LIMIT_POINTS; ++k) {
        if (SOA_LIMIT_VOLTAGE_V[k] <= v && v <= SOA_LIMIT_VOLTAGE_V[k + 1]) {
            float a = SOA_LIMIT_CURRENT_A[k];
            float b = SOA_LIMIT_CURRENT_A[k + 1];
            return a < b ? a : b;
        }
    }
    return 0.0f;
}

int main(int argc, char **argv)
{
    int n;
    for (n = 1; n < argc; ++n) {
        printf("%.9g\n", (double)allowed((float)atof(argv[n])));
    }
    return 0;
}
"""

QUERIES_V = [4.9, 5.0, 12.0, 20.0, 40.0, 59.5, 60.0, 61.0]


def rule_by_hand(volts, amps, v):
    """The stated rule, in Python, on the CSV table: the lower of the two neighbouring currents."""
    for k in range(len(volts) - 1):
        if volts[k] <= v <= volts[k + 1]:
            return min(amps[k], amps[k + 1])
    return 0.0


def compiler(*names):
    found = next((shutil.which(n) for n in names if shutil.which(n)), None)
    if found is None:
        pytest.skip(f"no {' or '.join(names)} on this machine; .ci/run installs gcc and g++ when missing")
    return found


@pytest.mark.parametrize(
    ("names", "flags", "language"), [(("gcc", "cc"), C_FLAGS, "c"), (("g++", "c++"), CXX_FLAGS, "c++")]
)
def test_c_header_compiles_without_warnings_and_its_rule_matches_the_table(tmp_path, names, flags, language):
    cc = compiler(*names)
    header = export(tmp_path, "limits.h")
    csv = pd.read_csv(export(tmp_path, "limits.csv"), comment="#")
    volts, amps = csv["voltage"].tolist(), csv["max_current"].tolist()
    source = tmp_path / "lookup.c"
    source.write_text(LOOKUP_PROGRAM, encoding="utf-8")
    exe = tmp_path / "lookup"
    build = subprocess.run(
        [cc, *flags, "-x", language, "-I", str(header.parent), str(source), "-o", str(exe)],
        capture_output=True,
        text=True,
        check=False,
    )
    assert build.returncode == 0, build.stderr
    assert build.stderr == ""  # not a single warning
    ran = subprocess.run([str(exe), *map(str, QUERIES_V)], capture_output=True, text=True, check=True)
    got = [np.float32(line) for line in ran.stdout.split()]  # %.9g reads back to the same float exactly
    # the program's float lookup equals the rule applied to the CSV's decimal numbers, in single precision
    want = [np.float32(rule_by_hand(volts, amps, v)) for v in QUERIES_V]
    assert got == want
    assert got[0] == 0.0 and got[-1] == 0.0  # outside the breakpoints: nothing
    # and the rule stays below the part's own limit between breakpoints, by hand:
    # 125 W / 12 V = 10.42 A at 12 V, 3.125 (40/40)^-2 = 3.125 A at 40 V
    assert got[QUERIES_V.index(12.0)] <= 125 / 12 and got[QUERIES_V.index(40.0)] <= 3.125


def test_c_header_alone_compiles_as_c_and_cpp_including_twice(tmp_path):
    header = export(tmp_path, "limits.h")
    unit = tmp_path / "twice.c"
    unit.write_text(
        '#include "limits.h"\n#include "limits.h"\nint main(void) { return (int)SOA_LIMIT_POINTS - 3; }\n',
        encoding="utf-8",
    )
    for names, flags, language in ((("gcc", "cc"), C_FLAGS, "c"), (("g++", "c++"), CXX_FLAGS, "c++")):
        cc = compiler(*names)
        build = subprocess.run(
            [cc, *flags, "-x", language, "-I", str(header.parent), str(unit), "-o", str(tmp_path / "twice")],
            capture_output=True,
            text=True,
            check=False,
        )
        assert build.returncode == 0 and build.stderr == "", build.stderr
        assert subprocess.run([str(tmp_path / "twice")], check=False).returncode == 0  # three points
    text = header.read_text(encoding="utf-8")
    assert text.isascii()  # embedded toolchains read nothing else
    # every float literal has a decimal point or an exponent before its f
    literals = re.findall(r"[-+]?[0-9][0-9.eE+-]*f\b", text)
    assert literals and all(
        re.fullmatch(r"[0-9]+(\.[0-9]*)?([eE][-+]?[0-9]+)?f", x) and ("." in x or "e" in x) for x in literals
    ), literals


def test_an_export_replaces_its_own_earlier_file_but_not_a_users(tmp_path):
    """soacheck marks its exports (a first comment line); a re-run replaces a marked file, never another."""
    out = export(tmp_path, "limits.h")
    assert out.read_text(encoding="utf-8").startswith("/* written by soacheck ")
    again = invoke("envelope", tmp_path / "stage.toml", "--voltages", "5,20", "--export", out)
    assert again.exit_code == 0, again.output
    assert "#define SOA_LIMIT_POINTS ((size_t)2)" in out.read_text(encoding="utf-8")
    mine = tmp_path / "mine.h"
    mine.write_text("/* my own limits */\n", encoding="utf-8")
    refused = invoke("envelope", tmp_path / "stage.toml", "--voltages", "5,20", "--export", mine)
    assert refused.exit_code == 2 and "--force" in refused.stderr, refused.output
    assert mine.read_text(encoding="utf-8") == "/* my own limits */\n"
    forced = invoke("envelope", tmp_path / "stage.toml", "--voltages", "5,20", "--export", mine, "--force")
    assert forced.exit_code == 0, forced.output


def test_a_json_export_replaces_its_own_earlier_file_without_force(tmp_path):
    """JSON has no comments: soacheck's mark is the object's first key, written_by (glossary)."""
    out = export(tmp_path, "limits.json")
    first = json.loads(out.read_text(encoding="utf-8"))
    assert next(iter(first)) == "written_by" and first["written_by"].startswith("soacheck ")
    again = invoke("envelope", tmp_path / "stage.toml", "--voltages", "5,20", "--export", out)
    assert again.exit_code == 0, again.output
    assert [row["voltage"] for row in json.loads(out.read_text(encoding="utf-8"))["points"]] == [5, 20]


def test_a_users_json_file_is_replaced_only_with_force(tmp_path):
    mine = tmp_path / "mine.json"
    text = '{"part": "my bench", "note": "limits checked with soacheck 0.1.0", "points": []}\n'
    mine.write_bytes(text.encode("utf-8"))
    refused = invoke("envelope", table_stage(tmp_path), "--voltages", "5,20", "--export", mine)
    assert refused.exit_code == 2 and "--force" in refused.stderr, refused.output
    assert mine.read_bytes() == text.encode("utf-8")  # byte for byte
    forced = invoke("envelope", tmp_path / "stage.toml", "--voltages", "5,20", "--export", mine, "--force")
    assert forced.exit_code == 0, forced.output
    assert json.loads(mine.read_text(encoding="utf-8"))["written_by"].startswith("soacheck ")


def test_an_unknown_export_suffix_is_refused_before_anything_is_written(tmp_path):
    result = invoke("envelope", table_stage(tmp_path), "--voltages", "5,20", "--export", tmp_path / "limits.txt")
    assert result.exit_code == 2, result.output
    assert ".csv, .json or .h" in result.stderr and not (tmp_path / "limits.txt").exists()


# --------------------------------------------------------------------------- two devices sharing, by hand

VT_V, PHI_V_PER_K = 0.02569, -0.002  # kT/q at 25 °C; dV_BE/dT at constant current (Sedra & Smith, from memory)
BALLAST, SERIES, SPREAD_V, CASE_C = 0.1, 0.02, 0.02, 50.0
DERATE = (150 - CASE_C) / (150 - 25)  # the reference part's thermal factor at 50 °C: 0.8


def shared_by_hand(source_v, total_a):
    """Two devices, common base drive, ballast R_E each, the first at the bottom of the V_BE band.

    Equal base voltages: V_T ln(I1/I2) + R_E (I1 - I2) - ΔV + φ (Tj1 - Tj2) = 0, with
    V_CE,k = V_s - I R_series - I_k R_E and Tj,k = Tc + V_CE,k I_k Rth_jc (Rth_jc 1 K/W):
    the electro-thermal fixed point, solved here with scipy's brentq (elementary circuit analysis).
    Returns [(V_CE, I)] of both devices.
    """
    import scipy.optimize

    def unbalance(i1):
        i2 = total_a - i1
        v1, v2 = source_v - total_a * SERIES - i1 * BALLAST, source_v - total_a * SERIES - i2 * BALLAST
        tj1, tj2 = CASE_C + v1 * i1, CASE_C + v2 * i2
        return VT_V * math.log(i1 / i2) + BALLAST * (i1 - i2) - SPREAD_V + PHI_V_PER_K * (tj1 - tj2)

    i1 = scipy.optimize.brentq(unbalance, total_a / 2, total_a * (1 - 1e-12), xtol=1e-14)
    return [(source_v - total_a * SERIES - i * BALLAST, i) for i in (i1, total_a - i1)]


def allowed_by_hand(vce):
    """The reference curve derated at 50 °C, by mechanism: 15 A (not derated), 0.8 x 125 W / V, and second
    breakdown 0.8 x 3.125 (V/40)^-2 (no table: derated like thermal). tj_max gives the same 100 W."""
    return {"current": 15.0, "power": DERATE * 125 / vce, "second_breakdown": DERATE * 3.125 * (vce / 40) ** -2}


def overload_by_hand(source_v, total_a):
    return max(i / min(allowed_by_hand(v).values()) for v, i in shared_by_hand(source_v, total_a))


def test_exported_limit_table_of_two_sharing_devices_matches_the_hand_solution(tmp_path):
    """The table read back from the CSV against the sharing solved by hand: each current at most the hand
    limit and less than 1 mA (plus the solvers' 1e-6) below it; 2 % more puts a device outside. Source
    voltages up to 40 V keep the loop gain 1 x V_CE x 0.002/(0.1 + V_T/I) below 1 (no runaway)."""
    import scipy.optimize

    write_part(tmp_path / "ref-bjt")
    stage = tmp_path / "stage.toml"
    stage.write_text(
        f'part = "ref-bjt"\ncount = 2\nballast = {BALLAST}\nseries_resistance = {SERIES}\n'
        f"vbe_spread = {SPREAD_V}\ncase_temp = {CASE_C}\n",
        encoding="utf-8",
    )
    out = tmp_path / "limits.csv"
    result = invoke("envelope", stage, "--voltages", "8,15,25,40", "--export", out)
    assert result.exit_code == 0, result.output
    table = pd.read_csv(out, comment="#")
    for source_v, exported_a, limit in table.itertuples(index=False):
        hand_a = scipy.optimize.brentq(lambda i, v=source_v: overload_by_hand(v, i) - 1, 0.01, 60.0, xtol=1e-12)
        assert hand_a - RESOLUTION_A - 1e-6 * hand_a <= exported_a <= hand_a * (1 + 1e-9), (source_v, hand_a)
        assert overload_by_hand(source_v, 1.02 * exported_a) > 1  # 2 % more: outside
        vce, current = shared_by_hand(source_v, hand_a)[0]  # the first device is the one at its limit
        bound = min(allowed_by_hand(vce), key=allowed_by_hand(vce).get)
        assert current == pytest.approx(allowed_by_hand(vce)[bound], rel=1e-6)
        assert limit == bound, (source_v, limit, bound)
