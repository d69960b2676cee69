"""The report reads like a test record: checked on the parsed page, not on its bytes.

What a test record must carry is common practice for lab reports, no source: a table of
contents, each job's verdict with the policy and the assumptions beside it, every figure
with its unit, the set-up under the names the user wrote, the plan as written, and pages
that print on A4 without cutting a plot (ISO 216: A4 is 210 mm × 297 mm).
"""

from __future__ import annotations

import json
import re
import tomllib

import pytest

from soacheck.demo import demo_plan_path
from soacheck.display import PERCENT
from soacheck.glossary import TERMS, heading, words

from .helpers import HtmlNode, invoke, parse_html

A4_HEIGHT_MM = 297.0  # ISO 216

COUNTS = frozenset(
    {"count", "samples", "points_checked", "points_outside", "candidates", "passing", "excursions", "min_count"}
)
"""Names whose values are counts: a number without a unit by definition (common practice, no source)."""

SETPOINT_UNITS = ("A", "W", "Ω")  # a discharge's setpoint, as its mode: cc, cp or cr (glossary: max_safe_setpoint)
RUN_UNITS = {"max_safe_setpoint": SETPOINT_UNITS, "max_setpoint_at_rating": SETPOINT_UNITS}
"""Names whose unit depends on the run; the glossary gives them none."""

TIME_UNITS = ("ms", "s", "min", "h")  # a time reads in the unit that fits the test's length (soacheck.display)

NUMBER = re.compile(r"^[+\-−]?\d+(?:\.\d+)?(?:e[+\-]?\d+)?(?: (?P<unit>\S+))?$")
"""A cell that is a number, with or without a unit after one space."""


def page_of(folder) -> HtmlNode:
    return parse_html((folder / "report.html").read_text(encoding="utf-8"))


def report_of(folder) -> dict:
    return json.loads((folder / "report.json").read_text(encoding="utf-8"))


def job_sections(page: HtmlNode) -> list[HtmlNode]:
    return [node for node in page.iter("section") if "job" in node.classes]


def _name_of(words_shown: str) -> str | None:
    """The glossary name a row or column heading shows (with or without its unit), or the key itself."""
    shown = words_shown.strip()
    for name in TERMS:
        if shown in (name, words(name), heading(name), heading(name).replace(" (%)", "") + " (%)"):
            return name
    return None


def _unitless_by_definition(name: str | None) -> bool:
    """A count, or a fraction or ratio (glossary unit "1") that is not shown as a percentage."""
    return name is not None and (name in COUNTS or (TERMS[name].unit == "1" and name not in PERCENT))


def _unit_problem(heading_text: str, cell: str) -> str | None:
    """Why a numeric cell under (or beside) ``heading_text`` reads without a unit; None when it has one."""
    found = NUMBER.match(cell.strip())
    if not found:
        return None  # not a number: a name, a verdict, '—'
    name = _name_of(heading_text)
    shown = found["unit"]
    if shown is not None:  # the cell carries its unit: it must be the glossary's
        if name in RUN_UNITS:
            expected = RUN_UNITS[name]
            return None if shown in expected else f"'{cell}' under '{heading_text}': unit {shown}, expected {expected}"
        if name is None or TERMS[name].unit in ("", "1"):
            return None if name is None or name in PERCENT else f"'{cell}' under '{heading_text}': a stray unit"
        expected = TIME_UNITS if TERMS[name].unit == "s" else ("%",) if name in PERCENT else (TERMS[name].unit,)
        return None if shown in expected else f"'{cell}' under '{heading_text}': unit {shown}, expected {expected}"
    if re.search(r"\(.+\)\s*$", heading_text):  # the heading carries the unit: 'voltage (V)'
        return None
    if _unitless_by_definition(name):
        return None
    return f"'{cell}' under '{heading_text}' has no unit, and the heading none"


def table_unit_problems(table: HtmlNode) -> list[str]:
    """Every numeric cell of a table whose unit is neither in the cell nor in its heading, nor unitless by definition.

    A table whose first row is all headings is read by columns; any other row by its own
    heading cell (a quantity and its value).
    """
    rows = list(table.iter("tr"))
    problems = []
    first = rows[0].elements()
    if all(cell.tag == "th" for cell in first) and len(first) > 1:
        headings = [cell.text() for cell in first]
        for row in rows[1:]:
            for head, cell in zip(headings, row.elements(), strict=True):
                problems.append(_unit_problem(head, cell.text()))
    else:
        for row in rows:
            cells = row.elements()
            if len(cells) == 2 and cells[0].tag == "th":
                problems.append(_unit_problem(cells[0].text(), cells[1].text()))
    return [p for p in problems if p]


# --------------------------------------------------------------------------- the demo's report


def test_every_contents_link_leads_to_an_element_of_the_page(demo_report):
    page = page_of(demo_report)
    ids = {node.attrs["id"] for node in page.iter() if node.attrs.get("id")}
    (toc,) = [nav for nav in page.iter("nav") if "toc" in nav.classes]
    links = [a.attrs["href"] for a in toc.iter("a")]
    assert links and all(href.startswith("#") for href in links), links
    assert [href for href in links if href[1:] not in ids] == []
    inner = [a.attrs["href"] for a in page.iter("a") if (a.attrs.get("href") or "").startswith("#")]
    assert [href for href in inner if href[1:] not in ids] == []  # the jobs table's links too


def test_the_contents_list_each_job_once_and_lead_to_its_section(demo_report):
    page, report = page_of(demo_report), report_of(demo_report)
    (toc,) = [nav for nav in page.iter("nav") if "toc" in nav.classes]
    entries = [(a.text(), a.attrs["href"][1:]) for a in toc.iter("a") if a.attrs["href"].startswith("#job-")]
    assert [name for name, _ in entries] == [job["name"] for job in report["jobs"]]  # one each, failures first
    sections = {node.attrs["id"]: node for node in job_sections(page)}
    assert len(sections) == len(report["jobs"])
    for name, anchor in entries:
        assert sections[anchor].elements()[0].text().startswith(name), (name, anchor)


def test_every_job_shows_its_verdict_with_the_policy_and_the_assumptions_beside_it(demo_report):
    page, report = page_of(demo_report), report_of(demo_report)
    by_name = {job["name"]: job for job in report["jobs"]}
    for section in job_sections(page):
        title = section.elements()[0]
        (badge,) = [span for span in title.iter("span") if "verdict" in span.classes]
        job = by_name[title.text().removesuffix(badge.text()).strip()]
        assert badge.text() == job["verdict"].upper() and job["verdict"] in badge.classes
        (answer,) = [div for div in section.iter("div") if "answer" in div.classes]
        headings = [h.text() for h in answer.iter("h3")]
        assert headings[:1] == ["Answer"] and "Assumptions" in headings and "Design policy" in headings, headings
        shown = [li.text() for li in answer.iter("li")]
        assert all(note in shown for note in job["assumptions"]), job["name"]
        policy = job["summary"]["policy"]["name"]
        assert any(line.startswith(policy) for line in shown), (job["name"], policy, shown)
        answer_rows = {row.elements()[0].text(): row.elements()[1].text() for row in answer.iter("tr")}
        assert answer_rows["verdict"] == job["verdict"]


def test_every_number_in_every_table_carries_its_unit(demo_report):
    page = page_of(demo_report)
    tables = list(page.iter("table"))
    assert len(tables) >= 2 + 2 * len(job_sections(page))  # stage, jobs, and each job's answer and figures
    problems = [p for table in tables for p in table_unit_problems(table)]
    assert problems == []


def test_the_unit_check_finds_a_bare_number():
    """The check above can fail: a setpoint without its unit, a time under a heading without one."""
    table = parse_html(
        "<table><tr><th>max safe setpoint</th><td>6.438</td></tr><tr><th>duration</th><td>60</td></tr>"
        "<tr><th>tj peak</th><td>92 V</td></tr><tr><th>count</th><td>2</td></tr></table>"
    )
    (found,) = list(table.iter("table"))
    assert len(table_unit_problems(found)) == 3


def test_the_stage_shows_the_keys_of_its_file_as_written(demo_report):
    page = page_of(demo_report)
    written = tomllib.loads((demo_plan_path().parent / "stage.toml").read_text(encoding="utf-8"))
    (main,) = list(page.iter("main"))
    order = main.elements()
    heading_at = next(k for k, node in enumerate(order) if node.attrs.get("id") == "stage")
    table = order[heading_at + 1]
    assert table.tag == "table", table.tag
    shown = [th.text() for th in table.iter("th")]
    for key, value in written.items():
        if isinstance(value, dict):
            assert f"[{key}]" in shown
            assert all(inner in shown for inner in value), (key, shown)
        else:
            assert key in shown, (key, shown)


def test_the_plan_is_shown_as_written(demo_report):
    page = page_of(demo_report)
    (block,) = [pre for pre in page.iter("pre") if "plan" in pre.classes]
    assert block.text() == demo_plan_path().read_text(encoding="utf-8")


def test_the_page_prints_on_a4_without_cutting_a_plot(demo_report):
    page = page_of(demo_report)
    (head,) = list(page.iter("head"))
    (style,) = list(head.iter("style"))  # the page's own; each plot's SVG has one of its own
    css = re.sub(r"\s+", " ", style.text())
    page_rule = re.search(r"@page \{([^}]*)\}", css)
    assert page_rule and re.search(r"size: A4\b", page_rule[1]), css
    margins_mm = [float(m) for m in re.findall(r"([\d.]+)mm", re.search(r"margin: ([^;]*)", page_rule[1])[1])]
    top_mm, bottom_mm = margins_mm[0], margins_mm[2 % len(margins_mm)]
    start = css.index("@media print {")
    printed = css[start : css.index("} }", start) + 1]
    figure_rule = re.search(r"(?:^|[;}] )([^{};]*\bfigure\b[^{]*)\{([^}]*)\}", printed)
    assert figure_rule and "break-inside: avoid" in figure_rule[2], printed
    svg_rule = re.search(r"figure svg \{([^}]*)\}", printed)
    assert svg_rule and "max-width: 100%" in svg_rule[1], printed
    plot_height_mm = float(re.search(r"max-height: ([\d.]+)mm", svg_rule[1])[1])
    assert plot_height_mm <= A4_HEIGHT_MM - top_mm - bottom_mm  # a whole plot fits on one printed page
    assert re.search(r"figure svg \{[^}]*max-width: 100%", css[:start])  # on screen too
    assert all(figure.elements()[0].tag == "svg" for figure in page.iter("figure"))  # every plot is in a figure


# --------------------------------------------------------------------------- markup in the plan


HOSTILE = '<script>alert("x")</script> & <b>co</b> --><script>'


@pytest.fixture
def hostile_report(tmp_path):
    """A plan whose job name and comment carry markup, run into a report."""
    (tmp_path / "stage.toml").write_text('part = "demo-npn-to3-250w"\ncount = 1\ncase_temp = 25\n')
    (tmp_path / "p.csv").write_text("voltage,current\n10,1\n")
    plan = tmp_path / "plan.toml"
    plan.write_text(
        f"# a comment with {HOSTILE}\n"
        f'title = "bench & <i>title</i>"\nstage = "stage.toml"\n'
        f"[[points]]\nname = '{HOSTILE}'\nfile = \"p.csv\"  # {HOSTILE}\n"
        f'[[sweep]]\nname = \'{HOSTILE} sweep\'\nramp = "current"\nfrom = 0\nto = 1\nat = 10\ntime = "1s"\n',
        encoding="utf-8",
    )
    result = invoke("run", plan, "-o", tmp_path / "out")
    assert result.exit_code == 0, result.output  # 10 V × 1 A on a 250 W part: inside
    return tmp_path / "out", plan


def test_markup_in_a_plan_shows_as_text_and_never_as_a_tag(hostile_report):
    folder, plan = hostile_report
    page = page_of(folder)
    tags = {node.tag for node in page.iter()}
    assert not tags & {"script", "b", "i"}, tags
    names = [section.elements()[0].text() for section in job_sections(page)]
    assert any(name.startswith(HOSTILE) for name in names), names
    (block,) = [pre for pre in page.iter("pre") if "plan" in pre.classes]
    assert block.text() == plan.read_text(encoding="utf-8")
    raw = (folder / "report.html").read_text(encoding="utf-8")
    assert "<script" not in raw.lower()  # not in a plot's text either
