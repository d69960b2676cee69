"""The documentation runs: every command block of README.md and docs/*.md does what the text says.

Each document's ``sh`` and ``console`` blocks run in order in a temporary folder holding
a copy of ``examples/``; each command's exit code is asserted (0 unless the text says
``# exits N``) and each shown output is compared with what the command prints, numbers to
the shown precision. The convention is in DEVELOPERS.md ("Runnable documentation") and
``tests/markdown_commands.py``.
"""

from __future__ import annotations

import os
import shlex
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from .helpers import invoke
from .markdown_commands import Command, output_matches, read_commands

ROOT = Path(__file__).resolve().parents[1]
DOCUMENTS = ["README.md", *sorted(str(p.relative_to(ROOT)) for p in (ROOT / "docs").glob("*.md"))]
SHELL_WORDS = {"&&", "||", "|", ";", ">", ">>", "<"}
DOC_COLUMNS = "100"  # the terminal width the documented outputs were printed at


def run(command: Command, folder: Path) -> tuple[int, str]:
    """Run a documented command in ``folder``: soacheck in-process, anything else through bash."""
    words = shlex.split(command.text)
    if words[0] == "soacheck" and not SHELL_WORDS.intersection(words):
        result = invoke(*words[1:], env={"COLUMNS": DOC_COLUMNS})
        if result.exception is not None and not isinstance(result.exception, SystemExit):
            return 3, f"{result.output}\n{result.exception!r}"
        return result.exit_code, result.output
    env = {**os.environ, "COLUMNS": DOC_COLUMNS, "SOACHECK_LIBRARY": "", "PYTHONPATH": str(ROOT)}
    script = f'soacheck() {{ "{sys.executable}" -m soacheck "$@"; }}\n{command.text}\n'
    done = subprocess.run(
        ["bash", "-c", script], cwd=folder, env=env, capture_output=True, text=True, timeout=300, check=False
    )
    return done.returncode, done.stdout + done.stderr


@pytest.mark.parametrize("document", DOCUMENTS)
def test_every_documented_command_does_what_the_text_says(document, tmp_path, monkeypatch):
    commands = read_commands(ROOT / document, document)
    shutil.copytree(ROOT / "examples", tmp_path / "examples")
    monkeypatch.chdir(tmp_path)
    failures = []
    for command in commands:
        if command.skip:
            continue
        code, printed = run(command, tmp_path)
        if code != command.exit_code:
            failures.append(
                f"{command.where}: `{command.text}` exited {code}, the text says {command.exit_code}:\n{printed}"
            )
        elif command.output is not None and not output_matches(command.output, printed):
            shown = "\n".join(command.output)
            failures.append(f"{command.where}: `{command.text}` printed\n{printed}\nthe text shows\n{shown}")
    assert not failures, "\n\n".join(failures)


def test_every_skipped_block_says_why():
    for document in DOCUMENTS:
        for command in read_commands(ROOT / document, document):
            if command.skip is not None:
                assert len(command.skip) > 10, f"{command.where}: say why the block cannot run here"


# --------------------------------------------------------------------------- the convention itself

SAMPLE = textwrap.dedent(
    """\
    Text.

    ```sh
    soacheck parts   # the library
    soacheck check x --voltage 1 \\
        --current 2   # exits 1: outside on purpose
    ```

    <!-- docs-test: skip: needs a display to click on -->
    ```sh
    soacheck digitize --image plot.png
    ```

    ```console
    $ soacheck check y --json
    {"margin": 0.40, "assumptions": ["..."]}
    $ soacheck show z  # exits 2
    soacheck: error: z is not a part
    ```

    ```toml
    part = "not a command"
    ```
    """
)


def test_the_convention_reads_commands_exit_codes_outputs_and_skips(tmp_path):
    page = tmp_path / "page.md"
    page.write_text(SAMPLE, encoding="utf-8")
    commands = read_commands(page, "page.md")
    assert [c.text for c in commands] == [
        "soacheck parts",
        "soacheck check x --voltage 1 --current 2",
        "soacheck digitize --image plot.png",
        "soacheck check y --json",
        "soacheck show z",
    ]
    assert [c.exit_code for c in commands] == [0, 1, 0, 0, 2]
    assert [c.line for c in commands] == [4, 5, 11, 15, 17]
    assert commands[2].skip == "needs a display to click on" and commands[0].skip is None
    assert commands[0].output is None
    assert commands[3].output == ['{"margin": 0.40, "assumptions": ["..."]}']
    assert commands[4].output == ["soacheck: error: z is not a part"]


@pytest.mark.parametrize(
    ("shown", "printed", "matches"),
    [
        (["least margin +40.0% at 12 V"], "least margin +39.96% at 12 V\n", True),  # to the shown 0.1
        (["least margin +40.0% at 12 V"], "least margin +39.94% at 12 V\n", False),
        (["│ 4.56 A │ power │"], "│   4.5612 A │ power   │\n", True),  # spaces collapse
        (["│ 4.56 A │ power │"], "│ 4.5612 A │ current │\n", False),  # words must agree
        (["first", "...", "last"], "first\na\nb\nlast\n", True),
        (["first", "last"], "first\na\nlast\n", False),
        (['{"a": 0.40, "b": "dc", "c": ["..."]}'], '{"a": 0.4012, "b": "dc", "c": [1, 2]}', True),
        (['{"a": 0.40, "b": "dc"}'], '{"a": 0.4012, "b": "dc", "duty": null}', False),  # every key shown
        (['{"a": 0.40}'], '{"a": 0.41}', False),
        (['{"a": 5}'], '{"a": 5.4}', True),  # an integer shown: to the unit
        (['{"a": "..."}'], '{"a": {"deep": [1]}}', True),
    ],
)
def test_outputs_match_to_the_shown_precision(shown, printed, matches):
    assert output_matches(shown, printed) is matches


def test_no_file_cites_a_guide_outside_the_repository():
    """Sources are the published ones (standard and clause, textbook, paper), 'common practice, no
    source' or 'from memory': a reader of the project must be able to follow every citation."""
    outside = "methods" + ".md"  # the developers' guide that lives outside the repository
    suffixes = {".py", ".md", ".toml", ".csv", ".txt", ".cfg"}
    citing = [
        str(path.relative_to(ROOT))
        for path in ROOT.rglob("*")
        if path.suffix in suffixes
        and path.is_file()
        and not {".git", "build", ".venv"} & set(path.relative_to(ROOT).parts)
        and ".egg-info" not in str(path)
        and outside in path.read_text(encoding="utf-8", errors="replace")
    ]
    assert not citing, f"cite the published source instead of {outside} in: {citing}"


def test_the_contributor_guide_maps_every_module():
    """DEVELOPERS.md's module map names every module of the package (a new one must say what it is)."""
    guide = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    modules = [path.relative_to(ROOT).as_posix() for path in (ROOT / "soacheck").glob("*.py")]
    missing = [
        name for name in modules if f"`{name}`" not in guide and not name.endswith(("__init__.py", "__main__.py"))
    ]
    assert not missing, f"DEVELOPERS.md has no row for {missing}"
