"""Packages that import their public names on first use (PEP 562).

``bayesirl check`` and ``--help`` should not pay for numba, the sparse solvers or the
plotting stack they never call: a package's ``__init__`` lists what it exports and where, and
:func:`exports` gives it the module-level ``__getattr__`` and ``__dir__`` that import a name
(or a submodule) when it is first asked for.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable


def exports(package: str, table: dict[str, str],
            namespace: dict) -> tuple[Callable[[str], object], Callable[[], list[str]]]:
    """``(__getattr__, __dir__)`` for ``package``: ``table`` maps a name to its module."""

    def __getattr__(name: str) -> object:
        if name in table:
            value = getattr(importlib.import_module(table[name]), name)
        else:
            try:
                value = importlib.import_module(f"{package}.{name}")
            except ModuleNotFoundError as err:
                if err.name != f"{package}.{name}":
                    raise
                raise AttributeError(f"module {package!r} has no attribute {name!r}") from None
        namespace[name] = value  # later look-ups skip this function
        return value

    def __dir__() -> list[str]:
        return sorted({*namespace, *table})

    return __getattr__, __dir__
