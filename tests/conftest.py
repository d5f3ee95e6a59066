"""Test set-up: always test the package of this checkout (also in subprocesses)."""

import os
import sys
from pathlib import Path

# One BLAS thread: on 2 cores the dense reference solves run several times faster and the
# results do not depend on thread scheduling (subprocesses inherit it).
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

PLUGIN = str(Path(__file__).resolve().parents[1] / "plugin")
if sys.path[0] != PLUGIN:
    sys.path.insert(0, PLUGIN)
os.environ["PYTHONPATH"] = PLUGIN + (os.pathsep + os.environ["PYTHONPATH"] if os.environ.get("PYTHONPATH") else "")
