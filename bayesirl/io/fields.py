"""Typed access to parsed TOML tables, with errors that name the file, table, key and value."""

from __future__ import annotations

import math
import os
import sys
from pathlib import Path

from bayesirl.errors import InputError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - the backport has the same API
    import tomli as tomllib

MISSING = object()


def path_argument(path, name: str = "path") -> Path:
    """``path`` as a Path; anything but a non-empty str or os.PathLike is an InputError."""
    if isinstance(path, bytes) or not isinstance(path, str | os.PathLike) or not str(path):
        raise InputError(f"{name}: expected a file name (str or Path); got {path!r}")
    return Path(path)


def read_text(path: Path, what: str = "file") -> str:
    """UTF-8 text of ``path``; a missing, empty-named or binary file is an :class:`InputError`."""
    path = Path(path)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise InputError(f"{path}: no such {what}") from None
    except IsADirectoryError:
        raise InputError(f"{path}: is a folder; expected a {what}") from None
    except OSError as err:
        raise InputError(f"{path}: cannot be read ({err.strerror})") from None
    if b"\x00" in raw:
        raise InputError(f"{path}: contains NUL bytes (binary data); expected a text {what}")
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        raise InputError(
            f"{path}: byte {err.object[err.start]:#04x} at offset {err.start} is not UTF-8 "
            f"text; expected a text {what}"
        ) from None


def load_toml(path: Path) -> dict:
    """Parse a TOML file; syntax errors name the file and the line."""
    text = read_text(path, "problem file")
    if not text.strip():
        raise InputError(f"{path}: the file is empty; expected a problem description (TOML)")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        hint = "; the file seems truncated" if "end of document" in str(err) else ""
        raise InputError(f"{path}: not valid TOML: {err}{hint}") from None
    except RecursionError:
        raise InputError(f"{path}: arrays or tables nested too deeply to be a problem "
                         "file") from None


class Table:
    """One TOML table of a file: ``get`` checks types and names ``file: [table] key``."""

    def __init__(self, data: dict, file: Path, name: str) -> None:
        self.data, self.file, self.name = data, Path(file), name

    def where(self, key: str) -> str:
        """``file: [table] key`` (or ``file: key`` at the top level)."""
        return f"{self.file}: [{self.name}] {key}" if self.name else f"{self.file}: {key}"

    def fail(self, key: str, value, expected: str) -> InputError:
        """An error for ``key = value`` that says what was expected."""
        return InputError(f"{self.where(key)} = {value!r}: expected {expected}")

    def __contains__(self, key: str) -> bool:
        return key in self.data

    def only(self, allowed) -> None:
        """Unknown keys are errors (typos would otherwise be silently ignored)."""
        extra = [k for k in self.data if k not in allowed]
        if extra:
            raise InputError(f"{self.where(extra[0])}: unknown key; expected one of "
                             f"{', '.join(sorted(allowed))}")

    def _raw(self, key, default):
        if key in self.data:
            return self.data[key]
        if default is MISSING:
            raise InputError(f"{self.where(key)}: missing; this key is required")
        return default

    def number(self, key: str, default=MISSING, low=None, high=None, low_open=False,
               high_open=False) -> float:
        """A finite number, optionally in a range."""
        v = self._raw(key, default)
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
            raise self.fail(key, v, "a finite number")
        below = low is not None and (v <= low if low_open else v < low)
        above = high is not None and (v >= high if high_open else v > high)
        if below or above:
            lb = "(" if low_open else "["
            hb = ")" if high_open else "]"
            span = (f"{lb}{'-inf' if low is None else f'{low:g}'}, "
                    f"{'inf' if high is None else f'{high:g}'}{hb}")
            raise self.fail(key, v, f"a number in {span}")
        return float(v)

    def integer(self, key: str, default=MISSING, low: int | None = None) -> int:
        """An integer, optionally at least ``low``."""
        v = self._raw(key, default)
        if isinstance(v, bool) or not isinstance(v, int):
            raise self.fail(key, v, "an integer")
        if low is not None and v < low:
            raise self.fail(key, v, f"an integer >= {low}")
        return int(v)

    def string(self, key: str, default=MISSING, choices=None) -> str:
        """A string, optionally one of ``choices``."""
        v = self._raw(key, default)
        if not isinstance(v, str):
            raise self.fail(key, v, "a string")
        if choices is not None and v not in choices:
            raise self.fail(key, v, "one of " + ", ".join(repr(c) for c in choices))
        return v

    def boolean(self, key: str, default=MISSING) -> bool:
        """``true`` or ``false``."""
        v = self._raw(key, default)
        if not isinstance(v, bool):
            raise self.fail(key, v, "true or false")
        return v

    def strings(self, key: str, default=MISSING, distinct: bool = True) -> list[str]:
        """A list of non-empty strings (distinct unless told otherwise)."""
        v = self._raw(key, default)
        if not isinstance(v, list) or not all(isinstance(x, str) and x.strip() for x in v):
            raise self.fail(key, v, "a list of non-empty strings")
        if distinct:
            seen = set()
            for x in v:
                if x in seen:
                    raise InputError(f"{self.where(key)}: {x!r} appears more than once; "
                                     "names must be distinct")
                seen.add(x)
        return list(v)

    def table(self, key: str, default=MISSING) -> Table:
        """A sub-table."""
        v = self._raw(key, default)
        if not isinstance(v, dict):
            raise self.fail(key, v, "a table")
        return Table(v, self.file, f"{self.name}.{key}" if self.name else key)

    def path(self, key: str, default=MISSING) -> Path | None:
        """A file path, relative to the problem file's folder."""
        v = self._raw(key, default)
        if v is None:
            return None
        if not isinstance(v, str) or not v.strip():
            raise self.fail(key, v, "a file name (a string)")
        p = Path(v).expanduser()
        return p if p.is_absolute() else self.file.parent / p
