"""The report of a plan run: one JSON document and one self-contained HTML page.

The page needs nothing from the network: its plots are inline SVG, its style is inline,
it carries no script, and a content security policy forbids loading anything. Every
string that came from the user (names, ids, file names, notes) is escaped.
"""

from __future__ import annotations

import html
import io
import math
import re
from datetime import UTC, datetime
from typing import Any

from matplotlib.figure import Figure

from soacheck import __version__
from soacheck.jsonvalues import json_text
from soacheck.plan import Plan
from soacheck.runner import SAFETY_CAUTIONS, JobResult, failures_first

_CSS = """
body { font: 15px/1.45 system-ui, sans-serif; color: #1d232a; margin: 0; background: #f6f7f9; }
main { max-width: 1180px; margin: 0 auto; padding: 24px; }
h1 { font-size: 24px; margin: 0 0 4px; } h2 { font-size: 19px; margin: 0 0 6px; }
.meta { color: #5b6470; font-size: 13px; }
.verdict { font-weight: 700; padding: 2px 10px; border-radius: 10px; color: #fff; font-size: 13px; }
.pass { background: #2e7d4f; } .fail { background: #b23a3a; }
.banner { margin: 16px 0; padding: 14px 18px; border-radius: 8px; color: #fff; font-size: 18px; font-weight: 600; }
.caution { background: #fff7e0; border-left: 5px solid #d9a400; padding: 10px 16px; margin: 16px 0; }
.caution li { margin: 4px 0; }
section.job { background: #fff; border: 1px solid #dde1e6; border-radius: 8px; padding: 16px 18px; margin: 18px 0; }
section.job.failed { border-color: #b23a3a; border-width: 2px; }
table { border-collapse: collapse; margin: 8px 0; font-size: 13px; }
th, td { border-bottom: 1px solid #e3e6ea; padding: 4px 10px; text-align: left; vertical-align: top; }
th { background: #eef1f4; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
figure { margin: 12px 0; } figure svg { max-width: 100%; height: auto; }
ul.notes { color: #3c4550; font-size: 13px; }
"""


def _fmt(value: Any) -> str:
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return "—" if not math.isfinite(value) else f"{value:.4g}"
    if isinstance(value, list | tuple):
        return ", ".join(_fmt(v) for v in value)
    if isinstance(value, dict):
        return "; ".join(f"{k}: {_fmt(v)}" for k, v in value.items())
    return str(value)


def svg_text(figure: Figure) -> str:
    """A figure as an inline ``<svg>`` element (no XML prolog, no external references)."""
    buffer = io.StringIO()
    figure.savefig(buffer, format="svg")
    text = buffer.getvalue()
    return text[text.index("<svg") :]


def slug(text: str) -> str:
    """A file-name-safe version of a job name."""
    return re.sub(r"[^A-Za-z0-9]+", "-", text).strip("-").lower() or "job"


def report_json(plan: Plan, results: list[JobResult], plot_files: dict[str, list[str]]) -> dict[str, Any]:
    """The whole run as plain data: failures first."""
    ordered = failures_first(results)
    return {
        "title": plan.title,
        "plan": str(plan.path),
        "soacheck": __version__,
        "verdict": "pass" if all(r.passed for r in results) else "fail",
        "stage": _stage_facts(plan),
        "jobs": [
            {
                "name": r.name,
                "kind": r.kind,
                "verdict": r.verdict,
                "summary": r.summary,
                "rows": r.rows,
                "assumptions": list(r.assumptions),
                "plots": plot_files.get(r.name, []),
            }
            for r in ordered
        ],
        "cautions": list(SAFETY_CAUTIONS),
    }


def _stage_facts(plan: Plan) -> dict[str, Any]:
    s = plan.stage
    facts: dict[str, Any] = {
        "part": s.part.id,
        "count": s.count,
        "ballast_ohm": s.ballast_ohm,
        "series_ohm": s.series_ohm,
        "vbe_spread_v": s.vbe_spread_v,
    }
    if s.cooling is not None:
        c = s.cooling
        facts.update(
            interface_k_per_w=c.case_sink_k_per_w,
            heatsink_k_per_w=c.sink_ambient_k_per_w,
            heatsink_j_per_k=c.sink_j_per_k,
            ambient_c=c.ambient_c,
        )
    else:
        facts["case_temp_c"] = s.case_temp_c
    return facts


def report_html(plan: Plan, results: list[JobResult], svgs: dict[str, list[str]]) -> str:
    """The self-contained page. ``svgs`` maps a job name to its inline SVG figures."""
    e = html.escape
    ordered = failures_first(results)
    failed = [r for r in results if not r.passed]
    verdict = "pass" if not failed else "fail"
    banner = (
        f"All {len(results)} jobs pass."
        if not failed
        else f"{len(failed)} of {len(results)} jobs fail: {', '.join(r.name for r in failed)}."
    )
    stage_rows = "".join(f"<tr><th>{e(k)}</th><td>{e(_fmt(v))}</td></tr>" for k, v in _stage_facts(plan).items())
    summary_rows = "".join(
        f'<tr><td><a href="#job-{e(slug(r.name))}">{e(r.name)}</a></td><td>{e(r.kind)}</td>'
        f'<td><span class="verdict {r.verdict}">{r.verdict.upper()}</span></td><td>{e(r.headline())}</td></tr>'
        for r in ordered
    )
    sections = "".join(_section(r, svgs.get(r.name, [])) for r in ordered)
    cautions = "".join(f"<li>{e(c)}</li>" for c in SAFETY_CAUTIONS)
    stamp = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    return f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{e(plan.title)} · soacheck report</title>
<style>{_CSS}</style>
</head>
<body>
<main>
<h1>{e(plan.title)}</h1>
<div class="meta">soacheck {e(__version__)} · plan {e(str(plan.path))} · {stamp}</div>
<div class="banner {verdict}">{e(banner)}</div>
<div class="caution"><strong>Cautions</strong><ul>{cautions}</ul></div>
<h2>Stage</h2>
<table>{stage_rows}</table>
<h2>Jobs, failures first</h2>
<table><tr><th>job</th><th>kind</th><th>verdict</th><th>what decides it</th></tr>{summary_rows}</table>
{sections}
</main>
</body>
</html>
"""


def _section(result: JobResult, figures: list[str]) -> str:
    e = html.escape
    facts = "".join(
        f'<tr><th>{e(str(k).replace("_", " "))}</th><td class="num">{e(_fmt(v))}</td></tr>'
        for k, v in result.summary.items()
        if k != "outside"
    )
    rows = ""
    if result.rows:
        keys = list(result.rows[0])
        head = "".join(f"<th>{e(k)}</th>" for k in keys)
        body = "".join(
            "<tr>" + "".join(f"<td>{e(_fmt(row.get(k)))}</td>" for k in keys) + "</tr>" for row in result.rows[:200]
        )
        more = (
            f'<p class="meta">{len(result.rows) - 200} more rows in report.json</p>' if len(result.rows) > 200 else ""
        )
        rows = f"<table><tr>{head}</tr>{body}</table>{more}"
    notes = "".join(f"<li>{e(n)}</li>" for n in result.assumptions)
    plots = "".join(f"<figure>{svg}</figure>" for svg in figures)
    state = "" if result.passed else " failed"
    return f"""<section class="job{state}" id="job-{e(slug(result.name))}">
<h2>{e(result.name)} <span class="verdict {result.verdict}">{result.verdict.upper()}</span></h2>
<div class="meta">{e(result.kind)} · {e(result.headline())}</div>
<table>{facts}</table>
{rows}
{plots}
<strong>Assumptions</strong>
<ul class="notes">{notes}</ul>
</section>
"""


REPORT_MARKER = ".soacheck-report"
"""The file a report folder carries, so that a later run may replace the folder without ``--force``."""


def plot_files(results: list[JobResult]) -> dict[str, list[str]]:
    """The report's plot files of each job, by job name: ``plots/JOB-FIGURE.svg``."""
    return {r.name: [f"plots/{slug(r.name)}-{name}.svg" for name in r.figures] for r in results if r.figures}


def report_files(plan: Plan, results: list[JobResult]) -> dict[str, str | bytes]:
    """Every file of the report folder, by relative path: report.html, report.json and the SVG plots."""
    names = plot_files(results)
    files: dict[str, str | bytes] = {}
    svgs: dict[str, list[str]] = {}
    for result in results:
        for file, figure in zip(names.get(result.name, []), result.figures.values(), strict=True):
            svg = svg_text(figure)
            files[file] = svg
            svgs.setdefault(result.name, []).append(svg)
    payload = report_json(plan, results, names)
    files["report.json"] = json_text(payload) + "\n"
    files["report.html"] = report_html(plan, results, svgs)
    return files
