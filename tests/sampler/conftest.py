"""Make ``tests/harness.py`` importable as ``harness`` however pytest roots the tests.

pytest's default import mode puts only the first directory above a test package on
``sys.path``; adding ``tests/`` here keeps ``import harness`` working if ``tests/`` later
becomes a package (a ``pythonpath = ["tests"]`` pytest option would do the same job).
"""

from __future__ import annotations

import sys
from pathlib import Path

_TESTS = str(Path(__file__).resolve().parents[1])
if _TESTS not in sys.path:
    sys.path.insert(0, _TESTS)
