"""The Python documentation runs: every ``python`` block of docs/python.md and README.md, in order.

The blocks of one document share one namespace, as in a notebook, and run in a temporary
folder holding a copy of ``examples/``. A block's own ``assert`` lines state what its
result must show.
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
FENCE = re.compile(r"^```python\n(.*?)^```", re.S | re.M)


def python_blocks(document: Path) -> list[tuple[int, str]]:
    """Each ``python`` fenced block with the line it starts on."""
    text = document.read_text(encoding="utf-8")
    return [(text[: m.start()].count("\n") + 1, m.group(1)) for m in FENCE.finditer(text)]


def test_the_python_page_has_the_worked_example():
    code = "\n".join(block for _, block in python_blocks(ROOT / "docs" / "python.md"))
    assert "find_max=True" in code and "soacheck.Stage(" in code and "savefig" in code


@pytest.mark.parametrize("document", ["docs/python.md", "README.md"])
def test_every_python_block_runs(document, tmp_path, monkeypatch, capsys):
    monkeypatch.delenv("SOACHECK_LIBRARY", raising=False)
    shutil.copytree(ROOT / "examples", tmp_path / "examples")
    monkeypatch.chdir(tmp_path)
    namespace: dict[str, object] = {"__name__": "docs"}
    for line, block in python_blocks(ROOT / document):
        try:
            exec(compile(block, f"{document}:{line}", "exec"), namespace)  # noqa: S102  (our own documentation)
        except Exception as err:  # name the block that failed
            raise AssertionError(f"{document}:{line}: {type(err).__name__}: {err}") from err
    if document == "docs/python.md":
        assert (tmp_path / "heatsink-sweep.png").stat().st_size > 0  # the one file the page asks for
