"""The shared look: the glossary, the plot palette and time axes, soacheck's mark on its files."""

from __future__ import annotations

from pathlib import Path

import matplotlib.colors as mcolors
import numpy as np
import pytest
from matplotlib.figure import Figure

from soacheck import glossary
from soacheck.display import time_unit
from soacheck.filemarks import first_line, save_figure, written_by_soacheck
from soacheck.plotstyle import MECHANISM_STYLES, OKABE_ITO, series_style

# --------------------------------------------------------------------------- glossary

# the decided vocabulary of `limit` values (the project's shared vocabulary table)
DECIDED_LIMITS = {
    "current", "power", "second_breakdown", "thermal_instability", "voltage", "on_resistance", "tj_max",
    "case_at_tj_max", "case_at_tj_ceiling", "tj_ceiling", "policy_voltage", "runaway", "dropout", "drive",
    "unclassified", "invalid",
}  # fmt: skip


def test_the_glossary_names_exactly_the_decided_limits():
    assert set(glossary.LIMITS) == DECIDED_LIMITS


def test_every_term_has_a_meaning_and_its_unit_in_the_heading():
    for term in glossary.TERMS.values():
        assert term.text and "_" not in term.heading, term
        if term.unit not in ("", "1"):
            assert term.heading.endswith(f"({term.unit})"), term


def test_headings_read_as_words_with_units():
    assert glossary.heading("tj_peak") == "tj peak (°C)"  # the issue's own example
    assert glossary.heading("energy") == "energy (Wh)"
    assert glossary.unit("margin") == "1"


def test_the_readme_glossary_is_the_glossary_module():
    """The README's glossary section is generated from soacheck/glossary.py (tools/write_glossary.py)."""
    text = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")
    start, end = "<!-- glossary: start -->\n", "<!-- glossary: end -->"
    assert start in text and end in text, "README has no generated glossary section"
    section = text[text.index(start) + len(start) : text.index(end)]
    assert section.strip() == glossary.markdown().strip()


# --------------------------------------------------------------------------- palette


def test_palette_is_okabe_ito():
    # Okabe & Ito (2008), Color Universal Design, the eight colours in RGB
    published = {
        "black": (0, 0, 0), "orange": (230, 159, 0), "sky_blue": (86, 180, 233), "bluish_green": (0, 158, 115),
        "yellow": (240, 228, 66), "blue": (0, 114, 178), "vermillion": (213, 94, 0), "reddish_purple": (204, 121, 167),
    }  # fmt: skip
    for name, rgb in published.items():
        assert tuple(round(c * 255) for c in mcolors.to_rgb(OKABE_ITO[name])) == rgb, name


def test_mechanisms_differ_by_dash_pattern_so_greyscale_keeps_them_apart():
    dashes = [repr(style["linestyle"]) for style in MECHANISM_STYLES.values()]
    assert len(set(dashes)) == len(dashes)


def test_series_differ_in_colour_dash_and_marker():
    styles = [series_style(n) for n in range(6)]
    for key in ("color", "linestyle", "marker"):
        values = [repr(s[key]) for s in styles]
        assert len(set(values)) == len(values), key


@pytest.mark.parametrize(
    ("duration_s", "unit"),
    [(9000.0, "h"), (7200.0, "h"), (3600.0, "min"), (300.0, "min"), (299.0, "s"), (1.0, "s"), (0.02, "ms")],
)
def test_time_axis_unit_fits_the_duration(duration_s, unit):
    """A 2.5 h discharge reads in hours, a 30 s ramp in seconds (thresholds: 2 h, 5 min, 1 s)."""
    assert time_unit(duration_s)[1] == unit


# --------------------------------------------------------------------------- marks


def _figure() -> Figure:
    fig = Figure()
    fig.add_subplot().plot(np.arange(3))
    return fig


@pytest.mark.parametrize("suffix", [".png", ".svg", ".pdf"])
def test_a_saved_plot_carries_the_mark_and_a_plain_one_does_not(tmp_path, suffix):
    ours, theirs = tmp_path / f"ours{suffix}", tmp_path / f"theirs{suffix}"
    save_figure(_figure(), ours)
    _figure().savefig(theirs)  # matplotlib's own metadata: someone else's plot
    assert written_by_soacheck(ours)
    assert not written_by_soacheck(theirs)


@pytest.mark.parametrize("suffix", [".csv", ".h"])
def test_text_files_are_marked_by_their_first_line(tmp_path, suffix):
    ours, theirs = tmp_path / f"ours{suffix}", tmp_path / f"theirs{suffix}"
    ours.write_text(first_line(suffix) + "voltage,max_current,limit\n", encoding="utf-8")
    theirs.write_text("voltage,max_current,limit\n# written by soacheck 0.1.0\n", encoding="utf-8")
    assert written_by_soacheck(ours)
    assert not written_by_soacheck(theirs)


@pytest.mark.parametrize(
    ("text", "ours"),
    [
        ('{\n  "written_by": "soacheck 0.1.0",\n  "part": "x"\n}\n', True),
        ('\ufeff{"written_by":"soacheck 9.9", "points": []}', True),  # another version, a byte-order mark
        ('{"part": "x", "written_by": "soacheck 0.1.0"}', False),  # not the first key: edited by someone else
        ('{"written_by": "my own script"}', False),
        ('{"note": "limits from soacheck 0.1.0"}', False),
        ('[{"written_by": "soacheck 0.1.0"}]', False),  # not an object
        ("", False),
    ],
)
def test_json_files_are_marked_by_their_first_key(tmp_path, text, ours):
    """JSON has no comments: the mark is the object's first key, written_by, naming soacheck."""
    path = tmp_path / "limits.json"
    path.write_text(text, encoding="utf-8")
    assert written_by_soacheck(path) is ours


def test_missing_files_folders_and_other_kinds_are_not_soachecks(tmp_path):
    (tmp_path / "notes.txt").write_text("# written by soacheck 0.1.0\n")
    assert not written_by_soacheck(tmp_path / "absent.png")
    assert not written_by_soacheck(tmp_path)
    assert not written_by_soacheck(tmp_path / "notes.txt")
