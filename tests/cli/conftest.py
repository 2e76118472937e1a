"""The ``tiny`` fixture: the small map problem and its demonstrations in a fresh folder."""

from __future__ import annotations

from pathlib import Path

import pytest

from .helpers import TINY_CSV, TINY_TOML


@pytest.fixture
def tiny(tmp_path) -> tuple[Path, Path]:
    """``(problem, demonstrations)`` files of the tiny map in a fresh folder."""
    problem = tmp_path / "tiny.toml"
    problem.write_text(TINY_TOML)
    demos = tmp_path / "walks.csv"
    demos.write_text(TINY_CSV)
    return problem, demos
