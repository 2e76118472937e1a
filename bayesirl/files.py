"""Result files are never left half-written: write beside the target, then rename over it."""

from __future__ import annotations

import json
import math
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


def plain_json(value):
    """``value`` with numpy scalars/arrays made plain and non-finite floats made ``None``.

    RFC 8259 JSON has no NaN or Infinity; Python's ``json`` writes them anyway and strict
    readers (JavaScript's ``JSON.parse``, jq) then reject the whole file.
    """
    if isinstance(value, dict):
        return {k: plain_json(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain_json(v) for v in value]
    if hasattr(value, "tolist") and not isinstance(value, (str, bytes)):
        return plain_json(value.tolist())
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def write_json(path, value, **dumps_kwargs) -> Path:
    """Write ``value`` as strict JSON (non-finite numbers as null) to ``path`` atomically."""
    text = json.dumps(plain_json(value), allow_nan=False, indent=2, **dumps_kwargs)
    return write_text(path, text + "\n")
