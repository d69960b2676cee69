"""Plans, runs and reports: the main job end to end.

The browser test opens the report in headless Chromium (Debian's package) and checks that
every plot renders and that the page sends no request; it is skipped, saying why, only
where no Chromium can be had. The no-request check is shown to work on a page that does
send one (a check that cannot fail proves nothing).
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
from matplotlib.image import imread
from typer.testing import CliRunner

from soacheck.cli import app
from soacheck.demo import demo_plan_path
from soacheck.report import slug

from .conftest import write_part
from .helpers import svg_texts, validate_output

runner = CliRunner(env={"COLUMNS": "200"})
EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


def test_demo_plan_runs_end_to_end_with_every_job_kind(demo_report):
    report = validate_output("run", (demo_report / "report.json").read_text())  # report.json is run --json
    kinds = {job["kind"] for job in report["jobs"]}
    assert kinds == {"points", "envelope", "discharge", "sweep", "trace", "compare"}
    for job in report["jobs"]:
        assert job["verdict"] in ("pass", "fail") and job["assumptions"] and job["plots"]
        for plot in job["plots"]:
            texts = svg_texts(demo_report / plot)  # each plot, read back, is drawn on V and I axes
            assert any(t.endswith("[V]") for t in texts) and any(t.endswith("[A]") for t in texts), plot
            if job["kind"] in ("discharge", "sweep"):  # titled with the job's name and the worst device
                assert any(t.startswith(f"{job['name']}: ") and t.endswith("Q1 (worst)") for t in texts), texts
    assert report["cautions"] and "licensed practice" in " ".join(report["cautions"])
    html = (demo_report / "report.html").read_text()
    assert html.count("<svg") == sum(len(job["plots"]) for job in report["jobs"])


def test_the_report_json_names_the_program_and_version_that_wrote_it_first(demo_report):
    """report.json starts with ``written_by``, "soacheck" and the version pyproject.toml gives (read here with
    tomllib), as every JSON file soacheck writes; so a file named report.json is known for soacheck's own."""
    import tomllib

    from soacheck.filemarks import written_by_soacheck

    version = tomllib.loads((EXAMPLES.parent / "pyproject.toml").read_text())["project"]["version"]
    path = demo_report / "report.json"
    report = json.loads(path.read_text(encoding="utf-8"))
    assert next(iter(report)) == "written_by", list(report)[:3]
    assert report["written_by"] == f"soacheck {version}"
    assert "soacheck" not in report  # one key for one thing: the version is in written_by only
    assert written_by_soacheck(path)


def test_failures_come_first_in_the_report(demo_report):
    report = json.loads((demo_report / "report.json").read_text())
    verdicts = [job["verdict"] for job in report["jobs"]]
    assert "fail" in verdicts and verdicts == sorted(verdicts)  # 'fail' sorts before 'pass'
    html = (demo_report / "report.html").read_text()
    failing = next(job["name"] for job in report["jobs"] if job["verdict"] == "fail")
    passing = next(job["name"] for job in report["jobs"] if job["verdict"] == "pass")
    assert html.index(f'id="job-{slug(failing)}"') < html.index(f'id="job-{slug(passing)}"')
    assert html.index('class="job failed"') < html.index('class="job"')


def test_the_example_plan_runs(tmp_path):
    result = runner.invoke(app, ["run", str(EXAMPLES / "plan.toml"), "-o", str(tmp_path / "out"), "--json"])
    assert result.exit_code == 0, result.output  # the example is a plan that passes: every job inside
    payload = json.loads(result.stdout)
    assert len(payload["jobs"]) == 8 and (tmp_path / "out" / "report.html").is_file()
    assert [job["verdict"] for job in payload["jobs"]] == ["pass"] * 8


def small_plan(tmp_path, jobs: str, stage: str = 'part = "ref-bjt"\ncount = 1\ncase_temp = 25\n') -> Path:
    write_part(tmp_path / "parts" / "ref-bjt")
    (tmp_path / "stage.toml").write_text(stage)
    (tmp_path / "ok.csv").write_text("voltage,current\n20,3\n")
    (tmp_path / "bad.csv").write_text("voltage,current\n20,9\n")  # above 125 W / 20 V = 6.25 A
    plan = tmp_path / "plan.toml"
    plan.write_text('title = "small <plan> & co"\nstage = "stage.toml"\n' + jobs)
    return plan


def run_plan(tmp_path, plan, *extra):
    return runner.invoke(
        app, ["run", str(plan), "-o", str(tmp_path / "out"), "--library", str(tmp_path / "parts"), *extra]
    )


def test_one_failing_job_exits_1_and_is_shown_first(tmp_path):
    plan = small_plan(
        tmp_path, '[[points]]\nname = "fine"\nfile = "ok.csv"\n\n[[points]]\nname = "too much"\nfile = "bad.csv"\n'
    )
    result = run_plan(tmp_path, plan, "--json")
    assert result.exit_code == 1, result.output
    report = json.loads((tmp_path / "out" / "report.json").read_text())
    assert [j["name"] for j in report["jobs"]] == ["too much", "fine"]
    assert report["jobs"][0]["summary"]["limit"] == "power"
    html = (tmp_path / "out" / "report.html").read_text()
    assert html.index("too much") < html.index(">fine<")
    # user strings are escaped: the title's markup characters do not become markup
    assert "small &lt;plan&gt; &amp; co" in html and "<plan>" not in html


@pytest.mark.parametrize(
    ("jobs", "fragments"),
    [
        ('[[dischrge]]\nname = "x"\n', ["plan.toml", "'dischrge'", "did you mean 'discharge'"]),
        ('[[points]]\nname = "pts"\nfiel = "ok.csv"\n', ["plan.toml", "'pts'", "did you mean 'file'"]),
        ('[[points]]\nname = "pts"\nfile = "missing.csv"\n', ["plan.toml", "'pts'", "missing.csv"]),
        ('[[points]]\nname = "pts"\nfile = "ok.csv"\npart = "no-such-part"\n', ["plan.toml", "'pts'", "unknown part"]),
        ('[[trace]]\nname = "log"\nfile = "gone.csv"\n', ["plan.toml", "'log'", "gone.csv"]),
        ('[[envelope]]\nname = "env"\nvoltage = [40, 5]\ncurrent = 1\npower = 1\n', ["'env'", "is empty"]),
        (
            '[[discharge]]\nname = "d"\nbattery = "nmc"\ncells = 10\ncapacity = 2\nmode = "cc"\nsetpoint = 1\n'
            "cutoff = 60\n",
            ["'d'", "full-charge"],
        ),
        ("", ["plan.toml", "no jobs"]),
    ],
)
def test_bad_plans_exit_2_with_one_line_and_no_report(tmp_path, jobs, fragments):
    plan = small_plan(tmp_path, jobs)
    result = run_plan(tmp_path, plan)
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in result.output
    for fragment in fragments:
        assert fragment in lines[0]
    assert not (tmp_path / "out").exists()


def test_run_never_replaces_a_folder_that_is_not_a_report(tmp_path):
    plan = small_plan(tmp_path, '[[points]]\nfile = "ok.csv"\n')
    (tmp_path / "out").mkdir()
    (tmp_path / "out" / "thesis.txt").write_text("mine")
    result = run_plan(tmp_path, plan)
    assert result.exit_code == 2 and "--force" in result.stderr
    assert (tmp_path / "out" / "thesis.txt").read_text() == "mine"
    (tmp_path / "out" / "thesis.txt").unlink()
    (tmp_path / "out").rmdir()
    assert run_plan(tmp_path, plan).exit_code == 0
    assert run_plan(tmp_path, plan).exit_code == 0  # its own report may be replaced


# --------------------------------------------------------------------------- a real browser

CHROMIUM_FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    # nothing may leave this machine: every request goes to a dead proxy on loopback, no name is resolved
    "--proxy-server=http://127.0.0.1:9",
    "--host-resolver-rules=MAP * ~NOTFOUND , EXCLUDE 127.0.0.1",
]


def chromium() -> str:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        found = shutil.which(name)
        if found:
            return found
    pytest.skip("no Chromium on this machine (Debian: apt-get install chromium; .ci/run installs it)")


def open_in_chromium(page: Path, workdir: Path) -> tuple[str, Path, list[str]]:
    """Load ``page``; return its DOM after load, a screenshot, and the URLs the page itself requested."""
    browser = chromium()
    netlog = workdir / "netlog.json"
    shot = workdir / "shot.png"
    common = [browser, *CHROMIUM_FLAGS, f"--user-data-dir={workdir / 'profile'}", "--window-size=1280,3000"]
    env = {**os.environ, "HOME": str(workdir)}
    dom = subprocess.run([*common, "--dump-dom", page.as_uri()], capture_output=True, text=True, timeout=120, env=env)
    subprocess.run(
        [*common, f"--screenshot={shot}", f"--log-net-log={netlog}", page.as_uri()],
        capture_output=True,
        timeout=120,
        env=env,
    )
    log = json.loads(netlog.read_text())
    event_names = {v: k for k, v in log["constants"]["logEventTypes"].items()}
    from_page = [
        e["params"]["url"]
        for e in log["events"]
        if event_names.get(e["type"]) == "URL_REQUEST_START_JOB"
        and "url" in e.get("params", {})
        and e["params"].get("initiator") != "not an origin"  # Chromium's own background traffic
    ]
    return dom.stdout, shot, from_page


def test_report_renders_in_a_real_browser_and_requests_nothing(demo_report, tmp_path):
    page = demo_report / "report.html"
    dom, shot, requests = open_in_chromium(page, tmp_path)
    report = json.loads((demo_report / "report.json").read_text())
    plots = sum(len(job["plots"]) for job in report["jobs"])
    assert dom.count("<svg") == plots  # every plot is in the rendered document
    pixels = imread(str(shot))[..., :3]
    assert pixels.std() > 0.05  # not a blank page
    # coloured plot lines and badges drawn somewhere: saturated pixels exist
    assert np.mean(np.ptp(pixels, axis=-1) > 0.3) > 0.001
    assert requests == []


def test_the_request_check_sees_a_page_that_does_request(tmp_path):
    page = tmp_path / "leaky.html"
    # a loopback address with nothing listening: the request is refused on this machine
    page.write_text('<!DOCTYPE html><html><body><img src="http://127.0.0.1:9/pixel.png"></body></html>')
    _, _, requests = open_in_chromium(page, tmp_path)
    assert any(url.startswith("http://127.0.0.1:9/") for url in requests)


def test_demo_plan_is_package_data():
    assert demo_plan_path().is_file()
    assert (demo_plan_path().parent / "pulse-test.csv").is_file()
