"""Write the README's glossary section from soacheck/glossary.py: ``python tools/write_glossary.py``."""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))  # this checkout's soacheck, not an installed one

from soacheck.glossary import markdown  # noqa: E402

START, END = "<!-- glossary: start -->\n", "<!-- glossary: end -->"

readme = ROOT / "README.md"
text = readme.read_text(encoding="utf-8")
head, rest = text.split(START, 1)
_, tail = rest.split(END, 1)
readme.write_text(head + START + markdown() + END + tail, encoding="utf-8")
print(f"wrote the glossary into {readme}")
