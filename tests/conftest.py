"""Puts tests/ on the import path, for the sheets every suite builds (tests/linetools.py)."""

from __future__ import annotations

import sys
from pathlib import Path

# Not test modules: kept out of --doctest-modules, which would import two files named conftest.
collect_ignore = ["conftest.py", "linetools.py"]

HERE = str(Path(__file__).resolve().parent)
if HERE not in sys.path:
    sys.path.append(HERE)
