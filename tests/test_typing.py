"""The public surface type-checks: mypy on the modules that ``soacheck.__all__`` comes from.

The files and options are ``[tool.mypy]`` in pyproject.toml; the modules behind them are
read for their types but not reported on.
"""

from __future__ import annotations

from pathlib import Path

import pytest

mypy_api = pytest.importorskip("mypy.api", reason="mypy is in the test extra: pip install '.[test]'")

ROOT = Path(__file__).resolve().parent.parent


def test_public_modules_are_clean_under_mypy(monkeypatch):
    monkeypatch.chdir(ROOT)
    stdout, stderr, status = mypy_api.run([])
    assert status == 0, stdout + stderr


def test_the_package_says_it_is_typed():
    # PEP 561: a py.typed marker in the package, shipped as package data
    assert (ROOT / "soacheck" / "py.typed").is_file()
    assert '"soacheck" = ["py.typed"]' in (ROOT / "pyproject.toml").read_text()
