"""The report of a plan run: one JSON document and one self-contained HTML page.

The page needs nothing from the network: its plots are inline SVG, its style is inline,
it carries no script, and a content security policy forbids loading anything. Every
string that came from the user (names, ids, file names, notes) is escaped.
"""

from __future__ import annotations

import hashlib
import html
import io
import re
from datetime import UTC, datetime
from typing import Any

from matplotlib.figure import Figure

from soacheck import __version__
from soacheck.display import column_heading, limit_text, value_text
from soacheck.filemarks import json_mark
from soacheck.glossary import words
from soacheck.jsonvalues import json_text
from soacheck.library import stage_table
from soacheck.plan import Plan
from soacheck.runner import SAFETY_CAUTIONS, JobResult, failures_first

_CSS = """
body { font: 15px/1.45 system-ui, sans-serif; color: #1d232a; margin: 0; background: #f6f7f9; }
main { max-width: 1180px; margin: 0 auto; padding: 24px; }
h1 { font-size: 24px; margin: 0 0 4px; } h2 { font-size: 19px; margin: 18px 0 6px; }
h3 { font-size: 15px; margin: 10px 0 4px; }
.meta { color: #5b6470; font-size: 13px; }
.verdict { font-weight: 700; padding: 2px 10px; border-radius: 10px; color: #fff; font-size: 13px; }
.pass { background: #2e7d4f; } .fail { background: #b23a3a; }
.banner { margin: 16px 0; padding: 14px 18px; border-radius: 8px; color: #fff; font-size: 18px; font-weight: 600; }
.caution { background: #fff7e0; border-left: 5px solid #d9a400; padding: 10px 16px; margin: 16px 0; }
.caution li { margin: 4px 0; }
nav.toc ol { margin: 4px 0 12px; } nav.toc li { margin: 2px 0; }
section.job { background: #fff; border: 1px solid #dde1e6; border-radius: 8px; padding: 16px 18px; margin: 18px 0; }
section.job.failed { border-color: #b23a3a; border-width: 2px; }
.answer { display: flex; flex-wrap: wrap; gap: 18px; align-items: flex-start; }
.answer > div { flex: 1 1 320px; }
table { border-collapse: collapse; margin: 8px 0; font-size: 13px; }
th, td { border-bottom: 1px solid #e3e6ea; padding: 4px 10px; text-align: left; vertical-align: top; }
th { background: #eef1f4; } th.sub { background: none; font-weight: 600; padding-top: 8px; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
figure { margin: 12px 0; } figure svg { max-width: 100%; height: auto; }
ul.notes { color: #3c4550; font-size: 13px; margin: 4px 0; }
pre.plan { background: #f1f3f5; border: 1px solid #dde1e6; padding: 10px 14px; font-size: 12px; white-space: pre-wrap; }
@page { size: A4; margin: 14mm 12mm; }
@media print {
  body { background: #fff; font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  .banner, .verdict { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  section.job { border: none; border-top: 2px solid #1d232a; border-radius: 0; padding: 6px 0; break-before: page; }
  h2, h3 { break-after: avoid; }
  tr, figure, .answer { break-inside: avoid; }
  figure svg { max-width: 100%; max-height: 235mm; width: auto; height: auto; }
  nav.toc a { color: inherit; text-decoration: none; }
}
"""


def _cell(name: str, value: Any, *, span_s: float | None = None, own_unit: str | None = None) -> str:
    """One value for a table cell, escaped, with its unit (see :mod:`soacheck.display`)."""
    return html.escape(value_text(name, value, span_s=span_s, own_unit=own_unit))


def svg_text(figure: Figure) -> str:
    """A figure as an inline ``<svg>`` element (no XML prolog, no external references)."""
    buffer = io.StringIO()
    figure.savefig(buffer, format="svg")
    text = buffer.getvalue()
    return text[text.index("<svg") :]


def slug(text: str) -> str:
    """A file-name- and anchor-safe version of a job name, different for different names.

    A name made only of lower-case letters, digits and single inner hyphens is its own
    slug; any other gets the readable part (or ``job``) and 8 hex digits of the name's
    SHA-256, so ``&`` and ``'`` (both ``job`` when read) get plots and anchors of their own
    (plans refuse names equal but for letter case, which would otherwise share a slug).
    """
    readable = re.sub(r"[^A-Za-z0-9]+", "-", text).strip("-").lower() or "job"
    if readable == text:
        return readable
    return f"{readable}-{hashlib.sha256(text.encode('utf-8', 'surrogatepass')).hexdigest()[:8]}"


def report_json(plan: Plan, results: list[JobResult], plot_files: dict[str, list[str]]) -> dict[str, Any]:
    """The whole run as plain data: failures first.

    Its first key, ``written_by``, names the program and version that wrote it, as every JSON
    file soacheck writes does (:func:`soacheck.filemarks.json_mark`).
    """
    ordered = failures_first(results)
    return {
        **json_mark(),
        "title": plan.title,
        "plan": str(plan.path),
        "verdict": "pass" if all(r.passed for r in results) else "fail",
        "stage": stage_table(plan.stage),
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


def _stage_rows(plan: Plan) -> str:
    """The stage under the keys of its file, each value with its unit; [cooling] as in the file."""
    e = html.escape
    rows = []
    for key, value in stage_table(plan.stage).items():
        if isinstance(value, dict):
            rows.append(f'<tr><th class="sub" colspan="2">[{e(key)}]</th></tr>')
            rows += [f'<tr><th>{e(k)}</th><td class="num">{_cell(k, v)}</td></tr>' for k, v in value.items()]
        else:
            rows.append(f'<tr><th>{e(key)}</th><td class="num">{_cell(key, value)}</td></tr>')
    return "".join(rows)


def _jobs_rows(ordered: list[JobResult]) -> str:
    e = html.escape
    return "".join(
        f'<tr><td><a href="#job-{e(slug(r.name))}">{e(r.name)}</a></td><td>{e(r.kind)}</td>'
        f'<td><span class="verdict {r.verdict}">{r.verdict.upper()}</span></td>'
        f'<td class="num">{_cell("margin", r.summary.get("margin"))}</td>'
        f'<td class="num">{_cell("overload", r.summary.get("overload"))}</td>'
        f"<td>{e(limit_text(r.summary.get('limit')))}</td>"
        f'<td class="num">{_cell("first_violation_time", r.summary.get("first_violation_time"))}</td></tr>'
        for r in ordered
    )


def report_html(
    plan: Plan, results: list[JobResult], svgs: dict[str, list[str]], *, plan_text: str | None = None
) -> str:
    """The self-contained page, read like a test record.

    Parameters
    ----------
    plan, results
        The plan and each job's result.
    svgs
        A job name to its inline SVG figures.
    plan_text
        The plan file as written, shown escaped as text; left out when None.
    """
    e = html.escape
    ordered = failures_first(results)
    failed = [r for r in results if not r.passed]
    verdict = "pass" if not failed else "fail"
    banner = (
        f"All {len(results)} jobs pass."
        if not failed
        else f"{len(failed)} of {len(results)} jobs fail: {', '.join(r.name for r in failed)}."
    )
    sections = "".join(_section(r, svgs.get(r.name, [])) for r in ordered)
    cautions = "".join(f"<li>{e(c)}</li>" for c in SAFETY_CAUTIONS)
    job_links = "".join(
        f'<li><a href="#job-{e(slug(r.name))}">{e(r.name)}</a> · {r.verdict.upper()}</li>' for r in ordered
    )
    plan_block = (
        "" if plan_text is None else f'<h2 id="plan">Plan as written</h2>\n<pre class="plan">{e(plan_text)}</pre>'
    )
    plan_link = "" if plan_text is None else '<li><a href="#plan">Plan as written</a></li>'
    stamp = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    heads = "".join(f"<th>{e(column_heading(k))}</th>" for k in ("margin", "overload", "limit", "first_violation_time"))
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
<nav class="toc"><strong>Contents</strong><ol>
<li><a href="#cautions">Cautions</a></li><li><a href="#stage">Stage</a></li>{plan_link}
<li><a href="#jobs">Jobs, failures first</a><ol>{job_links}</ol></li></ol></nav>
<div class="caution" id="cautions"><strong>Cautions</strong><ul>{cautions}</ul></div>
<h2 id="stage">Stage</h2>
<table>{_stage_rows(plan)}</table>
{plan_block}
<h2 id="jobs">Jobs, failures first</h2>
<table><tr><th>job</th><th>kind</th><th>verdict</th>{heads}</tr>{_jobs_rows(ordered)}</table>
{sections}
</main>
</body>
</html>
"""


_ANSWER = ("verdict", "margin", "overload", "limit", "first_violation_time", "device", "best")


def _rows_table(rows: list[dict[str, Any]]) -> str:
    """A job's rows (points, stretches outside, candidates): glossary headings with units; empty columns left out."""
    e = html.escape
    keys = [k for k in rows[0] if any(row.get(k) is not None for row in rows)]
    head = "".join(f"<th>{e(column_heading(k))}</th>" for k in keys)
    body = "".join(
        "<tr>"
        + "".join(f'<td class="num">{e(value_text(k, row.get(k), with_unit=False))}</td>' for k in keys)
        + "</tr>"
        for row in rows[:200]
    )
    more = f'<p class="meta">{len(rows) - 200} more rows in report.json</p>' if len(rows) > 200 else ""
    return f"<table><tr>{head}</tr>{body}</table>{more}"


def _section(result: JobResult, figures: list[str]) -> str:
    e = html.escape
    s = result.summary
    span = s.get("duration") if isinstance(s.get("duration"), int | float) else None

    def row(k: str, v: Any) -> str:
        cell = _cell(k, v, span_s=span, own_unit=result.units.get(k))
        return f'<tr><th>{e(words(k))}</th><td class="num">{cell}</td></tr>'

    answer = row("verdict", result.verdict) + "".join(row(k, s[k]) for k in _ANSWER[1:] if k in s)
    facts = "".join(row(k, v) for k, v in s.items() if k not in _ANSWER and not isinstance(v, list | dict))
    notes = "".join(f"<li>{e(n)}</li>" for n in result.assumptions)
    policy = getattr(result, "policy", None)
    policy_block = (
        ""
        if not policy
        else '<h3>Design policy</h3><ul class="notes">' + "".join(f"<li>{e(str(p))}</li>" for p in policy) + "</ul>"
    )
    rows = _rows_table(result.rows) if result.rows else ""
    plots = "".join(f"<figure>{svg}</figure>" for svg in figures)
    state = "" if result.passed else " failed"
    why = "" if result.passed else f'<p class="why">{e(result.headline())}</p>'  # what failed, first
    return f"""<section class="job{state}" id="job-{e(slug(result.name))}">
<h2>{e(result.name)} <span class="verdict {result.verdict}">{result.verdict.upper()}</span></h2>
<div class="meta">{e(result.kind)}</div>
<div class="answer">
<div><h3>Answer</h3>{why}<table>{answer}</table></div>
<div><h3>Assumptions</h3><ul class="notes">{notes}</ul>{policy_block}</div>
</div>
<h3>Figures</h3>
<table>{facts}</table>
{rows}
{plots}
</section>
"""


REPORT_MARKER = ".soacheck-report"
"""The file a report folder carries, so that a later run may replace the folder without ``--force``."""


def plot_files(results: list[JobResult]) -> dict[str, list[str]]:
    """The report's plot files of each job, by job name: ``plots/JOB-FIGURE.svg``."""
    return {r.name: [f"plots/{slug(r.name)}-{name}.svg" for name in r.figures] for r in results if r.figures}


def report_files(plan: Plan, results: list[JobResult], *, plan_text: str | None = None) -> dict[str, str | bytes]:
    """Every file of the report folder, by relative path: report.html, report.json and the SVG plots.

    ``plan_text``: the plan file as written, shown in the report (the caller reads it).
    """
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
    files["report.html"] = report_html(plan, results, svgs, plan_text=plan_text)
    return files
