"""Saving and restoring a likelihood's warm starts, so a resumed sampler continues bit for bit.

The solvers converge to a tolerance from the previous solution, so the last bits of every
value and gradient depend on the warm start. A sampler that stops and later continues must
therefore carry the warm starts along. The cache entries are replaced, never changed in
place, so an in-memory snapshot is a shallow copy; the LU factors of the preconditioner do
not serialise and are saved as the matrix they were computed from.
"""

from __future__ import annotations

import numpy as np

from bayesirl.solver import Preconditioner

# Entries fixed by the problem itself (rebuilt by new_cache); everything else is warm start.
_CONSTANT = ("rho", "tol", "gradient_rtol", "max_steps", "max_matvecs")
# Entries that are tuples of equal-length sequences of arrays (likelihood.predict's history):
# saved as one 2-D array per part, read back as such (predict reads both forms alike).
_TUPLES = ("path",)


def snapshot(cache: dict) -> dict:
    """A cheap copy of ``cache`` that later evaluations cannot change."""
    return {k: (v.copy() if isinstance(v, Preconditioner) else v) for k, v in cache.items()}


def to_arrays(cache: dict) -> dict[str, np.ndarray]:
    """The warm starts as named arrays (an entry that is None is left out)."""
    out = {}
    for key, value in cache.items():
        if key in _CONSTANT or value is None:
            continue
        if isinstance(value, Preconditioner):
            out.update({f"{key}.{k}": v for k, v in value.to_arrays().items()})
        elif key in _TUPLES:
            out.update({f"{key}.{i}": np.asarray(part) for i, part in enumerate(value)})
        else:
            out[key] = np.asarray(value)
    return out


def from_arrays(fresh: dict, arrays: dict[str, np.ndarray]) -> dict:
    """Inverse of :func:`to_arrays`, on a cache fresh from ``new_cache``."""
    cache = dict(fresh)
    for key, value in fresh.items():
        if key in _CONSTANT:
            continue
        if isinstance(value, Preconditioner):
            prefix = f"{key}."
            cache[key] = Preconditioner.from_arrays(
                {k[len(prefix):]: v for k, v in arrays.items() if k.startswith(prefix)})
        elif key in _TUPLES:
            parts = [arrays[k] for k in sorted(arrays) if k.startswith(f"{key}.")]
            cache[key] = tuple(p.copy() for p in parts) if parts else None
        else:
            cache[key] = arrays[key].copy() if key in arrays else None
    return cache


class WarmStarts:
    """The warm-start protocol of an object that keeps its solver cache in ``self._cache``
    and counts its evaluations in ``self.n_evaluations`` (the likelihood and the evidence
    terms built on the same cache); each class loads arrays itself (its fresh cache)."""

    _cache: dict
    n_evaluations: int

    def warm_start(self) -> dict:
        """A snapshot of the warm starts, for :meth:`restore_warm_start` (cheap)."""
        return {"cache": snapshot(self._cache), "n_evaluations": self.n_evaluations}

    def restore_warm_start(self, saved: dict) -> None:
        """Return to the warm starts of a :meth:`warm_start` snapshot."""
        self._cache = snapshot(saved["cache"])
        self.n_evaluations = saved["n_evaluations"]

    def warm_start_arrays(self) -> dict[str, np.ndarray]:
        """The warm starts as named arrays, for files (see :mod:`bayesirl.likelihood.warm`)."""
        out = to_arrays(self._cache)
        out["n_evaluations"] = np.array(self.n_evaluations)
        return out
