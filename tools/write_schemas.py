"""Write the installed JSON Schema files from soacheck/jsonschemas.py: ``python tools/write_schemas.py``."""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))  # this checkout's soacheck, not an installed one

from soacheck.jsonschemas import SCHEMAS, schema_text  # noqa: E402

folder = ROOT / "soacheck" / "schemas"
for stale in folder.glob("*.json"):
    if stale.stem not in SCHEMAS:
        stale.unlink()
for command in SCHEMAS:
    (folder / f"{command}.json").write_text(schema_text(command), encoding="utf-8")
print(f"wrote {len(SCHEMAS)} schemas into {folder}")
