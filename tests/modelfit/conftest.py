"""Make ``tests/harness.py`` importable as ``harness`` however pytest roots the tests.

Same arrangement as ``tests/sampler/conftest.py``: pytest's default import mode puts only the
directory above a test package on ``sys.path``; adding ``tests/`` keeps ``import harness``
working if ``tests/`` later becomes a package.
"""

from __future__ import annotations

import sys
from pathlib import Path

_TESTS = str(Path(__file__).resolve().parents[1])
if _TESTS not in sys.path:
    sys.path.insert(0, _TESTS)
