"""Result files are never left half-written: write beside the target, then rename over it."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

# mkstemp creates 0600 files; results are meant to be shared and served, so use the usual mode.
FILE_MODE = 0o644


@contextmanager
def atomic_target(path) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; on success it is renamed over ``path``."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    os.close(fd)
    try:
        yield Path(tmp)
        os.chmod(tmp, FILE_MODE)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_text(path, text: str) -> Path:
    """Write ``text`` (UTF-8) to ``path`` atomically."""
    with atomic_target(path) as tmp, os.fdopen(os.open(tmp, os.O_WRONLY), "w",
                                               encoding="utf-8") as fh:
        fh.write(text)
    return Path(path)
