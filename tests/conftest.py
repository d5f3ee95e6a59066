"""Test set-up: always test the package of this checkout (also in subprocesses)."""

import os
import sys
from pathlib import Path

PLUGIN = str(Path(__file__).resolve().parents[1] / "plugin")
if sys.path[0] != PLUGIN:
    sys.path.insert(0, PLUGIN)
os.environ["PYTHONPATH"] = PLUGIN + (os.pathsep + os.environ["PYTHONPATH"] if os.environ.get("PYTHONPATH") else "")
