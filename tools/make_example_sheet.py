"""Write examples/sheet.png and examples/sheet-dashed.png: invented datasheet SOA pictures for docs/part-format.md.

The pictures are drawn by tests/pictures.py from known curves (a DC curve and a 1 ms
curve, black on a grey log-log grid, 1 V to 100 V and 0.1 A to 100 A; in
sheet-dashed.png the 1 ms curve is dashed), so the test suite can compare what is
traced from them with what was drawn. Run from the repository root:
``python tools/make_example_sheet.py``.
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from dataclasses import replace  # noqa: E402

from tests.pictures import DC, PULSE_1MS, draw_sheet  # noqa: E402

if __name__ == "__main__":
    draw_sheet(ROOT / "examples" / "sheet.png", (DC, PULSE_1MS))
    print(f"wrote {ROOT / 'examples' / 'sheet.png'}")
    draw_sheet(ROOT / "examples" / "sheet-dashed.png", (DC, replace(PULSE_1MS, linestyle="--")))
    print(f"wrote {ROOT / 'examples' / 'sheet-dashed.png'}")
