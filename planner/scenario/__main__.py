"""``python -m planner.scenario [docs/scenario.md]``: rewrite the doc's key tables."""

import sys
from pathlib import Path

from .keys import with_tables

doc = Path(sys.argv[1] if len(sys.argv) > 1 else "docs/scenario.md")
doc.write_text(with_tables(doc.read_text(encoding="utf-8")), encoding="utf-8")
print(f"rewrote the key tables in {doc}")
