"""Write examples/sheet.png: an invented datasheet SOA picture for the authoring path in docs/part-format.md.

The picture is drawn by tests/pictures.py from known curves (a DC curve and a 1 ms
curve, black on a grey log-log grid, 1 V to 100 V and 0.1 A to 100 A), so the test suite
can compare what is traced from it with what was drawn. Run from the repository root:
``python tools/make_example_sheet.py``.
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from tests.pictures import DC, PULSE_1MS, draw_sheet  # noqa: E402

if __name__ == "__main__":
    draw_sheet(ROOT / "examples" / "sheet.png", (DC, PULSE_1MS))
    print(f"wrote {ROOT / 'examples' / 'sheet.png'}")
