"""Error types shared by every layer.

Bad user input raises :class:`InputError` (a ``ValueError``) naming what is wrong and where;
numerical failure (a solver that does not converge) raises :class:`SolverError`.
"""

from __future__ import annotations


class InputError(ValueError):
    """Invalid input: the message names the object, the position and the offending value."""


class SolverError(RuntimeError):
    """A numerical method did not reach its stated tolerance; nothing is returned."""
