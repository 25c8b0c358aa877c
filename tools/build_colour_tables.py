"""Write lumeval/data/colour_tables.npz from the installed colour-science (see lumeval/_tables.py).

Run after upgrading colour-science: ``.venv/bin/python tools/build_colour_tables.py``. Until it
is re-run, lumeval reads the tables live from colour-science (slower start-up, same numbers).
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from lumeval._tables import SNAPSHOT, build_snapshot, colour_science_version

if __name__ == "__main__":
    path = build_snapshot(SNAPSHOT)
    print(f"wrote {path} from colour-science {colour_science_version()} ({path.stat().st_size} bytes)")
