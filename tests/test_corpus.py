"""The bad-input corpus: what a careless or hurried user might type, across every command and file kind.

Each case is the files it writes, the command, the exit code it must give and a fragment
of the one line it must print. Exit codes are soacheck's (README, "Bad input, limits and
exit codes"): 2 for bad input, never 0 or 1 and never a traceback. Physical ranges are
those of :mod:`soacheck.quantities` (absolute zero −273.15 °C, ISO 80000-5; a count is a
whole number; a duty cycle lies in (0, 1]; common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pytest
from typer.testing import CliRunner

from soacheck.cli import app

runner = CliRunner(env={"COLUMNS": "200", "SOACHECK_LIBRARY": ""})

PART = "demo-npn-to3-250w"
STAGE = f'part = "{PART}"\ncount = 2\nballast = 0.1\nvbe_spread = 0.02\ncase_temp = 40\n'
COOLED = f'part = "{PART}"\ncount = 2\nballast = 0.1\n\n[cooling]\nheatsink_rth = 0.5\nheatsink_capacity = 400\n'
ENVELOPE = "voltage = [5, 40]\ncurrent = 4\npower = 60\ncase_temp = 40\n"
DISCHARGE = 'battery = "nmc"\ncells = 10\ncapacity = 2\nmode = "cc"\nsetpoint = 3\nsamples = 100\n'
POINTS = "voltage,current\n10,1\n"
TRACE = "time,voltage,current\n0,10,1\n0.001,10,1\n0.002,10,1\n"


@dataclass(frozen=True)
class Case:
    """One bad input: the files it writes, the command, the exit code and a fragment of the message."""

    args: tuple[str, ...]
    fragment: str
    files: dict[str, str | bytes] = field(default_factory=dict)
    code: int = 2


def plan(job: str, stage: str = 'stage = "stage.toml"\n') -> dict[str, str]:
    """A plan with one job beside a stage file, an envelope, a discharge, points and a trace."""
    return {
        "plan.toml": stage + job,
        "stage.toml": STAGE,
        "envelope.toml": ENVELOPE,
        "discharge.toml": DISCHARGE,
        "points.csv": POINTS,
        "trace.csv": TRACE,
    }


def run(job: str, stage: str = 'stage = "stage.toml"\n') -> tuple[tuple[str, ...], dict[str, str]]:
    return ("run", "plan.toml", "-o", "out"), plan(job, stage)


def stage_case(text: str, fragment: str) -> Case:
    """A stage file read by `sharing`, the quickest command that reads one."""
    return Case(("sharing", "s.toml", "-i", "2", "-v", "20", "--draws", "10"), fragment, {"s.toml": text})


def envelope_case(text: str, fragment: str) -> Case:
    return Case(("envelope", "stage.toml", "--check", "e.toml"), fragment, {"stage.toml": STAGE, "e.toml": text})


def discharge_case(text: str, fragment: str) -> Case:
    return Case(
        ("compare", PART, "--discharge", "d.toml", "--stage", "stage.toml"),
        fragment,
        {"stage.toml": STAGE, "d.toml": text},
    )


def plan_case(job: str, fragment: str, stage: str = 'stage = "stage.toml"\n') -> Case:
    args, files = run(job, stage)
    return Case(args, fragment, files)


CASES: dict[str, Case] = {
    # ------------------------------------------------------------------ stage files (typed schema)
    "stage count is text": stage_case(STAGE.replace("count = 2", 'count = "2"'), "count is '2'; write a whole number"),
    "stage count is a float": stage_case(
        STAGE.replace("count = 2", "count = 2.5"), "count is 2.5; write a whole number"
    ),
    "stage count is a boolean": stage_case(STAGE.replace("count = 2", "count = true"), "count is True; write a whole"),
    "stage count zero": stage_case(STAGE.replace("count = 2", "count = 0"), "count is 0; give a number of devices"),
    "stage count a billion": stage_case(STAGE.replace("count = 2", "count = 1000000000"), "from 1 to 10 000"),
    "stage ballast negative": stage_case(STAGE.replace("ballast = 0.1", "ballast = -0.1"), "ballast is -0.1"),
    "stage ballast nan": stage_case(STAGE.replace("ballast = 0.1", "ballast = nan"), "ballast is nan"),
    "stage ballast inf": stage_case(STAGE.replace("ballast = 0.1", "ballast = inf"), "ballast is inf"),
    "stage ballast text": stage_case(
        STAGE.replace("ballast = 0.1", 'ballast = "0.1"'), "ballast is '0.1'; write a number"
    ),
    "stage case_temp nan": stage_case(STAGE.replace("case_temp = 40", "case_temp = nan"), "case_temp is nan"),
    "stage case_temp -inf": stage_case(STAGE.replace("case_temp = 40", "case_temp = -inf"), "case_temp is -inf"),
    "stage case_temp below absolute zero": stage_case(
        STAGE.replace("case_temp = 40", "case_temp = -300"), "case_temp is -300; give a temperature above -273.15"
    ),
    "stage case_temp 1e6": stage_case(STAGE.replace("case_temp = 40", "case_temp = 1e6"), "at most 1000 °C"),
    "stage vbe_spread above a volt": stage_case(
        STAGE.replace("vbe_spread = 0.02", "vbe_spread = 20"), "vbe_spread is 20"
    ),
    "stage misspelt key": stage_case(
        STAGE.replace("ballast", "balast"), "unknown key 'balast' (did you mean 'ballast'?)"
    ),
    "stage missing part": stage_case(STAGE.replace(f'part = "{PART}"\n', ""), "missing key 'part'"),
    "stage part is a number": stage_case(STAGE.replace(f'"{PART}"', "5"), "part is 5; write text in quotes"),
    "stage no cooling nor case": stage_case(STAGE.replace("case_temp = 40\n", ""), "add a [cooling] table"),
    "stage cooling and case": stage_case("case_temp = 30\n" + COOLED, "either [cooling] or case_temp"),
    "stage cooling not a table": stage_case(
        STAGE.replace("case_temp = 40", "cooling = 5"), "cooling is 5; write a table"
    ),
    "cooling capacity inf": stage_case(COOLED.replace("= 400", "= inf"), "cooling.heatsink_capacity is inf"),
    "cooling capacity zero": stage_case(COOLED.replace("= 400", "= 0"), "cooling.heatsink_capacity is 0"),
    "cooling rth negative": stage_case(COOLED.replace("= 0.5", "= -0.5"), "cooling.heatsink_rth is -0.5"),
    "cooling ambient nan": stage_case(COOLED + "ambient = nan\n", "cooling.ambient is nan"),
    "cooling misspelt key": stage_case(
        COOLED + "ambiant = 30\n", "unknown key 'cooling.ambiant' (did you mean 'ambient'?)"
    ),
    "cooling missing capacity": stage_case(
        COOLED.replace("heatsink_capacity = 400\n", ""), "missing key 'cooling.heatsink_capacity'"
    ),
    "stage is a folder": Case(("sharing", ".", "-i", "2", "-v", "20"), "is a folder, not a stage file"),
    "stage missing file": Case(("sharing", "nope.toml", "-i", "2", "-v", "20"), "no such stage file"),
    "stage binary garbage": Case(
        ("sharing", "s.toml", "-i", "2", "-v", "20"), "is not a UTF-8 text file", {"s.toml": b"\xff\xfe\x00\x81garbage"}
    ),
    "stage invalid toml": stage_case("part = = 1\n", "invalid TOML"),
    "stage unknown part": stage_case(STAGE.replace(PART, "demo-npn-to3-25w"), "unknown part 'demo-npn-to3-25w'"),
    # ------------------------------------------------------------------ envelope files
    "envelope voltage not a list": envelope_case(ENVELOPE.replace("[5, 40]", "5"), "voltage is 5; write a list"),
    "envelope voltage one value": envelope_case(ENVELOPE.replace("[5, 40]", "[5]"), "voltage is [5]; give a range"),
    "envelope voltage three values": envelope_case(
        ENVELOPE.replace("[5, 40]", "[5, 20, 40]"), "give a range [low, high]"
    ),
    "envelope voltage text": envelope_case(
        ENVELOPE.replace("[5, 40]", '[5, "x"]'), "voltage[1] is 'x'; write a number"
    ),
    "envelope voltage nan": envelope_case(ENVELOPE.replace("[5, 40]", "[5, nan]"), "voltage[1] is nan"),
    "envelope current inf": envelope_case(ENVELOPE.replace("current = 4", "current = inf"), "current is inf"),
    "envelope current negative": envelope_case(ENVELOPE.replace("current = 4", "current = -4"), "current is -4"),
    "envelope power zero": envelope_case(ENVELOPE.replace("power = 60", "power = 0"), "power is 0"),
    "envelope duty 1.5": envelope_case(ENVELOPE + 'pulse = "1ms"\nduty = 1.5\n', "duty is 1.5"),
    "envelope duty on dc": envelope_case(ENVELOPE + "duty = 0.5\n", "duty needs a pulse width"),
    "envelope case_temp nan": envelope_case(ENVELOPE.replace("case_temp = 40", "case_temp = nan"), "case_temp is nan"),
    "envelope ambient and case": envelope_case(ENVELOPE + "ambient = 30\n", "either ambient or case_temp"),
    "envelope ambient -inf": envelope_case(ENVELOPE.replace("case_temp = 40", "ambient = -inf"), "ambient is -inf"),
    "envelope misspelt key": envelope_case(
        ENVELOPE.replace("power", "pwoer"), "unknown key 'pwoer' (did you mean 'power'?)"
    ),
    "envelope pulse number": envelope_case(ENVELOPE + "pulse = 10\n", "pulse is 10; write text in quotes"),
    "envelope pulse unitless": envelope_case(ENVELOPE + 'pulse = "10"\n', "has no unit"),
    # ------------------------------------------------------------------ discharge files
    "discharge cells text": discharge_case(DISCHARGE.replace("cells = 10", 'cells = "10"'), "cells is '10'"),
    "discharge cells zero": discharge_case(DISCHARGE.replace("cells = 10", "cells = 0"), "cells is 0"),
    "discharge cells huge": discharge_case(DISCHARGE.replace("cells = 10", "cells = 100000"), "cells is 100000"),
    "discharge capacity nan": discharge_case(DISCHARGE.replace("capacity = 2", "capacity = nan"), "capacity is nan"),
    "discharge setpoint inf": discharge_case(DISCHARGE.replace("setpoint = 3", "setpoint = inf"), "setpoint is inf"),
    "discharge setpoint negative": discharge_case(DISCHARGE.replace("setpoint = 3", "setpoint = -3"), "setpoint is -3"),
    "discharge samples zero": discharge_case(DISCHARGE.replace("samples = 100", "samples = 0"), "samples is 0"),
    "discharge samples one": discharge_case(DISCHARGE.replace("samples = 100", "samples = 1"), "from 10 to 1 000 000"),
    "discharge samples 1e9": discharge_case(DISCHARGE.replace("samples = 100", "samples = 1000000000"), "samples is"),
    "discharge samples text": discharge_case(DISCHARGE.replace("samples = 100", 'samples = "abc"'), "samples is 'abc'"),
    "discharge mode unknown": discharge_case(DISCHARGE.replace('"cc"', '"ccc"'), "mode 'ccc' is not one of"),
    "discharge mode number": discharge_case(DISCHARGE.replace('"cc"', "1"), "mode is 1; write text"),
    "discharge internal resistance negative": discharge_case(
        DISCHARGE + "internal_resistance = -1\n", "internal_resistance is -1"
    ),
    "discharge cutoff nan": discharge_case(DISCHARGE + "cutoff = nan\n", "cutoff is nan"),
    "discharge misspelt key": discharge_case(DISCHARGE.replace("setpoint", "setpiont"), "did you mean 'setpoint'"),
    "discharge unknown chemistry": discharge_case(DISCHARGE.replace('"nmc"', '"lipo"'), "lipo"),
    # ------------------------------------------------------------------ plans (typed schema per job)
    "plan sweep one sample": plan_case(
        '[[sweep]]\nramp = "current"\nfrom = 0\nto = 60\nat = 10\nsamples = 1\n',
        "samples is 1; give a number of samples",
    ),
    "plan sweep zero samples": plan_case(
        '[[sweep]]\nramp = "current"\nfrom = 0\nto = 6\nat = 10\nsamples = 0\n', "samples is 0"
    ),
    "plan sweep samples text": plan_case(
        '[[sweep]]\nramp = "current"\nfrom = 0\nto = 6\nat = 10\nsamples = "abc"\n', "samples is 'abc'; write a whole"
    ),
    "plan sweep to nan": plan_case('[[sweep]]\nramp = "current"\nfrom = 0\nto = nan\nat = 10\n', "to is nan"),
    "plan sweep at inf": plan_case('[[sweep]]\nramp = "current"\nfrom = 0\nto = 6\nat = inf\n', "at is inf"),
    "plan sweep from negative": plan_case('[[sweep]]\nramp = "voltage"\nfrom = -5\nto = 40\nat = 1\n', "from is -5"),
    "plan sweep time dc": plan_case(
        '[[sweep]]\nramp = "voltage"\nfrom = 5\nto = 40\nat = 1\ntime = "dc"\n', "time must be"
    ),
    "plan sweep missing to": plan_case('[[sweep]]\nramp = "voltage"\nfrom = 5\nat = 1\n', "missing key 'to'"),
    "plan discharge find_max string": plan_case(
        '[[discharge]]\nfile = "discharge.toml"\nfind_max = "no"\n', "find_max is 'no'; write true or false"
    ),
    "plan inline discharge find_max string": plan_case(
        "[[discharge]]\n" + DISCHARGE + 'find_max = "false"\n', "find_max is 'false'; write true or false"
    ),
    "plan compare use_stage string": plan_case(
        '[[compare]]\nparts = ["demo-npn-to3-250w"]\nenvelope = "envelope.toml"\nuse_stage = "false"\n',
        "use_stage is 'false'; write true or false",
    ),
    "plan compare all string": plan_case('[[compare]]\nall = "yes"\nenvelope = "envelope.toml"\n', "all is 'yes'"),
    "plan compare parts string": plan_case(
        '[[compare]]\nparts = "x"\nenvelope = "envelope.toml"\n', "parts is 'x'; write a list"
    ),
    "plan compare envelope number": plan_case("[[compare]]\nall = true\nenvelope = 5\n", "envelope is 5; write text"),
    "plan compare envelope missing": plan_case(
        '[[compare]]\nall = true\nenvelope = "nope.toml"\n', "not found next to the plan"
    ),
    "plan compare envelope is a folder": plan_case(
        '[[compare]]\nall = true\nenvelope = "."\n', "not found next to the plan"
    ),
    "plan points is text": plan_case('points = "x"\n', "points is 'x'; write each points job"),
    "plan points not array of tables": plan_case("points = [1, 2]\n", "write each points job as a [[points]] table"),
    "plan points single brackets": plan_case('[points]\nfile = "points.csv"\n', "write [[points]] (two brackets)"),
    "plan points case_temp nan": plan_case('[[points]]\nfile = "points.csv"\ncase_temp = nan\n', "case_temp is nan"),
    "plan points case_temp text": plan_case(
        '[[points]]\nfile = "points.csv"\ncase_temp = "hot"\n', "case_temp is 'hot'"
    ),
    "plan points duty 2": plan_case('[[points]]\nfile = "points.csv"\nduty = 2\n', "duty is 2"),
    "plan points misspelt file": plan_case('[[points]]\nfiel = "points.csv"\n', "did you mean 'file'"),
    "plan points file number": plan_case("[[points]]\nfile = 5\n", "file is 5; write text"),
    "plan points file missing": plan_case('[[points]]\nfile = "nope.csv"\n', "not found next to the plan"),
    "plan envelope number": plan_case("envelope = 5\n", "envelope is 5"),
    "plan envelope file and inline": plan_case('[[envelope]]\nfile = "envelope.toml"\ncurrent = 3\n', "either as file"),
    "plan envelope inline nan": plan_case(
        "[[envelope]]\n" + ENVELOPE.replace("current = 4", "current = nan"), "current is nan"
    ),
    "plan trace case_temp inf": plan_case('[[trace]]\nfile = "trace.csv"\ncase_temp = inf\n', "case_temp is inf"),
    "plan trace file missing key": plan_case('[[trace]]\npart = "x"\n', "missing key 'file'"),
    "plan job name number": plan_case(
        '[[points]]\nname = 5\nfile = "points.csv"\n', "name is 5; write a name in quotes"
    ),
    "plan duplicate names": plan_case(
        '[[points]]\nname = "a"\nfile = "points.csv"\n\n[[trace]]\nname = "a"\nfile = "trace.csv"\n',
        "the name 'a' is also the name of a [[points]] job",
    ),
    "plan names differing in case": plan_case(
        '[[points]]\nname = "Hot"\nfile = "points.csv"\n\n[[points]]\nname = "hot"\nfile = "points.csv"\n',
        "is also the name of",
    ),
    "plan title number": plan_case('title = 5\n[[points]]\nfile = "points.csv"\n', "title is 5"),
    "plan stage number": plan_case('[[points]]\nfile = "points.csv"\n', "stage must be the path", stage="stage = 5\n"),
    "plan stage is a folder": plan_case(
        '[[points]]\nfile = "points.csv"\n', "is a folder, not a stage file", stage='stage = "."\n'
    ),
    "plan inline stage count text": plan_case(
        '[[points]]\nfile = "points.csv"\n',
        "[stage]: count is 'two'",
        stage=STAGE.replace("count = 2", 'count = "two"').replace(f'part = "{PART}"', f'[stage]\npart = "{PART}"'),
    ),
    "plan no stage": plan_case('[[points]]\nfile = "points.csv"\n', "no stage", stage=""),
    "plan no jobs": plan_case("", "the plan has no jobs"),
    "plan unknown kind": plan_case('[[pionts]]\nfile = "points.csv"\n', "did you mean 'points'"),
    "plan binary garbage": Case(
        ("run", "plan.toml", "-o", "out"), "is not a UTF-8 text file", {"plan.toml": b"\x00\xff\xfe"}
    ),
}


def trace_case(text: str | bytes, fragment: str, *extra: str) -> Case:
    return Case(("trace", PART, "t.csv", *extra), fragment, {"t.csv": text})


def check_case(fragment: str, *args: str, files: dict[str, str | bytes] | None = None) -> Case:
    return Case(("check", PART, *args), fragment, files or {})


MORE: dict[str, Case] = {
    # ------------------------------------------------------------------ traces
    "trace header only": trace_case("time,voltage,current\n", "the trace has a header but no samples"),
    "trace empty": trace_case("", "the file is empty"),
    "trace binary": trace_case(b"\xff\xfe\x00\x01", "is not a UTF-8 text file"),
    "trace time 1e308": trace_case("time,voltage,current\n-1e308,1,1\n1e308,1,1\n", "time is -1e+308; give a time"),
    "trace time nan": trace_case("time,voltage,current\n0,1,1\nnan,1,1\n", "time is not a finite number"),
    "trace voltage inf": trace_case("time,voltage,current\n0,inf,1\n1,1,1\n", "voltage is not a finite number"),
    "trace current negative": trace_case("time,voltage,current\n0,1,-1\n1,1,1\n", "current -1 is negative"),
    "trace current 1e9": trace_case(
        "time,voltage,current\n0,1,1e9\n1,1,1\n", "current is 1 000 000 000; give a current"
    ),
    "trace time repeats": trace_case("time,voltage,current\n0,1,1\n0,1,1\n", "time 0 s repeats"),
    "trace time backwards": trace_case("time,voltage,current\n1,1,1\n0,1,1\n", "goes backwards"),
    "trace text cell": trace_case("time,voltage,current\n0,1,1\n1,one,1\n", "voltage 'one' is not a number"),
    "trace misspelt column": trace_case("time,voltge,current\n0,1,1\n", "did you mean 'voltage'"),
    "trace missing column": trace_case("time,voltage\n0,1\n", "missing column 'current'"),
    "trace is a folder": Case(("trace", PART, "."), "is a folder"),
    "trace case nan": trace_case(TRACE, "--case-temp is nan", "--case-temp", "nan"),
    "trace case -inf": trace_case(TRACE, "--case-temp is -inf", "--case-temp=-inf"),
    "trace case below absolute zero": trace_case(TRACE, "--case-temp is -300", "--case-temp=-300"),
    "trace ambient nan with heatsink": trace_case(
        TRACE, "--ambient is nan", "--heatsink-rth", "1", "--heatsink-capacity", "100", "--ambient", "nan"
    ),
    "trace ambient -inf with heatsink": trace_case(
        TRACE, "--ambient is -inf", "--heatsink-rth", "1", "--heatsink-capacity", "100", "--ambient=-inf"
    ),
    "trace heatsink capacity inf": trace_case(
        TRACE, "--heatsink-capacity is inf", "--heatsink-rth", "1", "--heatsink-capacity", "inf"
    ),
    "trace heatsink rth zero": trace_case(
        TRACE, "--heatsink-rth is 0", "--heatsink-rth", "0", "--heatsink-capacity", "100"
    ),
    "trace interface negative": trace_case(
        TRACE, "--interface-rth is -1", "--heatsink-rth", "1", "--heatsink-capacity", "100", "--interface-rth=-1"
    ),
    "trace heatsink half given": trace_case(TRACE, "needs both --heatsink-rth", "--heatsink-rth", "1"),
    "trace chunk rows one": trace_case(TRACE, "--chunk-rows is 1", "--chunk-rows", "1"),
    "trace plot under a file": Case(
        ("trace", PART, "t.csv", "--plot", "f/p.png"),
        "is a file, so no folder can be made there",
        {"t.csv": TRACE, "f": "x"},
    ),
    "trace plot wrong suffix": trace_case(TRACE, "must end in .png", "--plot", "p.txt"),
    "trace plot is a folder": Case(
        ("trace", PART, "t.csv", "--plot", "d"), "is a folder", {"t.csv": TRACE, "d/x": "x"}
    ),
    "trace plot exists": Case(("trace", PART, "t.csv", "--plot", "p.png"), "exists", {"t.csv": TRACE, "p.png": "mine"}),
    # ------------------------------------------------------------------ check and points files
    "check case nan": check_case("--case-temp is nan", "-v", "10", "-i", "1", "--case-temp", "nan"),
    "check case inf": check_case("--case-temp is inf", "-v", "10", "-i", "1", "--case-temp", "inf"),
    "check case 2000": check_case("--case-temp is 2000", "-v", "10", "-i", "1", "--case-temp", "2000"),
    "check voltage nan": check_case("--voltage is nan", "-v", "nan", "-i", "1"),
    "check current inf": check_case("--current is inf", "-v", "10", "-i", "inf"),
    "check current zero": check_case("--current is 0", "-v", "10", "-i", "0"),
    "check duty zero": check_case("--duty is 0", "-v", "10", "-i", "1", "--pulse", "1ms", "--duty", "0"),
    "check duty nan": check_case("--duty is nan", "-v", "10", "-i", "1", "--pulse", "1ms", "--duty", "nan"),
    "check duty on dc": check_case("--duty needs a pulse width", "-v", "10", "-i", "1", "--duty", "0.5"),
    "check pulse zero": check_case("must be longer than zero", "-v", "10", "-i", "1", "--pulse", "0ms"),
    "check points and values": check_case("not both", "-v", "10", "-i", "1", "-p", "p.csv", files={"p.csv": POINTS}),
    "points case -300": check_case(
        "p.csv line 2: case_temp is -300; give a temperature above -273.15",
        "-p",
        "p.csv",
        files={"p.csv": "voltage,current,case_temp\n10,1,-300\n"},
    ),
    "points case nan": check_case("case_temp", "-p", "p.csv", files={"p.csv": "voltage,current,case_temp\n10,1,nan\n"}),
    "points voltage huge": check_case(
        "p.csv line 2: voltage is 10 000 000", "-p", "p.csv", files={"p.csv": "voltage,current\n1e7,1\n"}
    ),
    "points duty above one": check_case("duty", "-p", "p.csv", files={"p.csv": "voltage,current,duty\n10,1,1.5\n"}),
    "points quoted header misspelt": check_case(
        "did you mean 'current'", "-p", "p.csv", files={"p.csv": '"voltage","curent"\n10,1\n'}
    ),
    "points header only": check_case("no rows", "-p", "p.csv", files={"p.csv": "voltage,current\n"}),
    "show case list with nan": Case(
        ("show", PART, "--case-temp", "25,nan", "--plot", "s.png"), "--case-temp: value 2 is nan"
    ),
    "show case list text": Case(("show", PART, "--case-temp", "25,hot", "--plot", "s.png"), "is not a list of numbers"),
    # ------------------------------------------------------------------ stages on the command line
    "sharing draws a trillion": Case(
        ("sharing", "s.toml", "-i", "2", "-v", "20", "--draws", "1000000000000"), "--draws is 1e+12", {"s.toml": STAGE}
    ),
    "sharing draws zero": Case(
        ("sharing", "s.toml", "-i", "2", "-v", "20", "--draws", "0"), "--draws is 0", {"s.toml": STAGE}
    ),
    "sharing percentile 101": Case(
        ("sharing", "s.toml", "-i", "2", "-v", "20", "--percentile", "101"), "--percentile is 101", {"s.toml": STAGE}
    ),
    "sharing current nan": Case(("sharing", "s.toml", "-i", "nan", "-v", "20"), "--current is nan", {"s.toml": STAGE}),
    "sharing voltage -inf": Case(
        ("sharing", "s.toml", "-i", "2", "--voltage=-inf"), "--voltage is -inf", {"s.toml": STAGE}
    ),
    "sweep samples one": Case(
        ("sweep", "s.toml", "--ramp", "current", "--from", "0", "--to", "6", "--at", "10", "--samples", "1"),
        "--samples is 1",
        {"s.toml": STAGE},
    ),
    "sweep samples 1e9": Case(
        ("sweep", "s.toml", "--ramp", "current", "--from", "0", "--to", "6", "--at", "10", "--samples", "1000000000"),
        "--samples is 1 000 000 000",
        {"s.toml": STAGE},
    ),
    "sweep to nan": Case(
        ("sweep", "s.toml", "--ramp", "current", "--from", "0", "--to", "nan", "--at", "10"),
        "--to is nan",
        {"s.toml": STAGE},
    ),
    "discharge cells zero": Case(
        ("discharge", "s.toml", "-b", "nmc", "--cells", "0", "--capacity", "2", "--mode", "cc", "--setpoint", "1"),
        "--cells is 0",
        {"s.toml": STAGE},
    ),
    "discharge capacity inf": Case(
        ("discharge", "s.toml", "-b", "nmc", "--cells", "4", "--capacity", "inf", "--mode", "cc", "--setpoint", "1"),
        "--capacity is inf",
        {"s.toml": STAGE},
    ),
    "discharge setpoint nan": Case(
        ("discharge", "s.toml", "-b", "nmc", "--cells", "4", "--capacity", "2", "--mode", "cc", "--setpoint", "nan"),
        "--setpoint is nan",
        {"s.toml": STAGE},
    ),
    "envelope case nan": Case(("envelope", "s.toml", "--case-temp", "nan"), "--case-temp is nan", {"s.toml": STAGE}),
    "envelope case inf": Case(("envelope", "s.toml", "--case-temp", "inf"), "--case-temp is inf", {"s.toml": STAGE}),
    "envelope voltages with zero": Case(
        ("envelope", "s.toml", "--voltages", "0,10"), "--voltages: value 1 is 0", {"s.toml": STAGE}
    ),
    "envelope export suffix": Case(("envelope", "s.toml", "--export", "t.txt"), "--export", {"s.toml": STAGE}),
    "compare trace case nan": Case(
        ("compare", PART, "--trace", "t.csv", "--case-temp", "nan"), "--case-temp is nan", {"t.csv": TRACE}
    ),
    "compare trace case -inf": Case(
        ("compare", PART, "--trace", "t.csv", "--case-temp=-inf"), "--case-temp is -inf", {"t.csv": TRACE}
    ),
    # ------------------------------------------------------------------ adding parts
    "new-part tj_max inf": Case(
        (
            "new-part",
            "p1",
            "--kind",
            "npn",
            "--v-max",
            "100",
            "--i-max",
            "10",
            "--p-max",
            "100",
            "--tj-max",
            "inf",
            "--rth-jc",
            "1",
        ),
        "--tj-max is inf; give a rated junction temperature",
    ),
    "new-part tj_max nan": Case(
        (
            "new-part",
            "p1",
            "--kind",
            "npn",
            "--v-max",
            "100",
            "--i-max",
            "10",
            "--p-max",
            "100",
            "--tj-max",
            "nan",
            "--rth-jc",
            "1",
        ),
        "--tj-max is nan",
    ),
    "new-part v_max inf": Case(
        (
            "new-part",
            "p1",
            "--kind",
            "npn",
            "--v-max",
            "inf",
            "--i-max",
            "10",
            "--p-max",
            "100",
            "--tj-max",
            "150",
            "--rth-jc",
            "1",
        ),
        "--v-max is inf",
    ),
    "new-part bad id": Case(
        (
            "new-part",
            "../up",
            "--kind",
            "npn",
            "--v-max",
            "100",
            "--i-max",
            "10",
            "--p-max",
            "100",
            "--tj-max",
            "150",
            "--rth-jc",
            "1",
        ),
        "not usable as a folder name",
    ),
    "new-part into a file": Case(
        (
            "new-part",
            "p1",
            "--kind",
            "npn",
            "--v-max",
            "100",
            "--i-max",
            "10",
            "--p-max",
            "100",
            "--tj-max",
            "150",
            "--rth-jc",
            "1",
            "--into",
            "f",
        ),
        "is a file",
        {"f": "x"},
    ),
    "digitize negative linear axis": Case(
        ("digitize", "px.csv", "--x", "0=-10,300=100", "--y", "0=100,300=1", "--linear-x", "--into", "soa.csv"),
        "voltage of point 1 (check the axis calibration, --x and --y) is -6.33333",
        {"px.csv": "x,y\n10,100\n200,150\n"},
    ),
    "digitize nan axis": Case(
        ("digitize", "px.csv", "--x", "0=nan,300=100", "--y", "0=100,300=1", "--into", "soa.csv"),
        "must be finite",
        {"px.csv": "x,y\n10,100\n200,150\n"},
    ),
    "digitize zero on log axis": Case(
        ("digitize", "px.csv", "--x", "0=0,300=100", "--y", "0=100,300=1", "--into", "soa.csv"),
        "above zero",
        {"px.csv": "x,y\n10,100\n200,150\n"},
    ),
    "digitize into a folder": Case(
        ("digitize", "px.csv", "--x", "0=1,300=100", "--y", "0=100,300=1", "--into", "d"),
        "is a folder",
        {"px.csv": "x,y\n10,100\n200,150\n", "d/x": "x"},
    ),
    "digitize pixels nan": Case(
        ("digitize", "px.csv", "--x", "0=1,300=100", "--y", "0=100,300=1", "--into", "soa.csv"),
        "not a finite number",
        {"px.csv": "x,y\nnan,100\n200,150\n"},
    ),
    # ------------------------------------------------------------------ run
    "run out is a file": Case(
        ("run", "plan.toml", "-o", "o"),
        "o: exists",
        {**plan('[[points]]\nfile = "points.csv"\n'), "o": "x"},
    ),
    "run out under a file": Case(
        ("run", "plan.toml", "-o", "f/out"),
        "is a file, so no folder",
        {**plan('[[points]]\nfile = "points.csv"\n'), "f": "x"},
    ),
    "run plan missing": Case(("run", "nope.toml", "-o", "out"), "no such plan file"),
    "run plan is a folder": Case(("run", ".", "-o", "out"), "is a folder, not a plan file"),
}
CASES.update(MORE)


@pytest.mark.parametrize("name", list(CASES), ids=list(CASES))
def test_bad_input_gives_its_exit_code_and_one_line_naming_the_problem(name, tmp_path, monkeypatch):
    case = CASES[name]
    monkeypatch.chdir(tmp_path)
    for file, content in case.files.items():
        target = tmp_path / file
        target.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            target.write_bytes(content)
        else:
            target.write_text(content, encoding="utf-8")
    result = runner.invoke(app, list(case.args))
    assert result.exit_code == case.code, f"{case.args}\n{result.output}"
    assert "Traceback" not in result.output, result.output
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1, result.stderr
    assert case.fragment in lines[0], lines[0]
    assert not (tmp_path / "out").exists(), "a report was written for bad input"
