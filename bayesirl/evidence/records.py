"""Evidence terms beside the demonstrations as plain arrays and JSON scalars, and back.

Posterior files and checkpoint fingerprints store the problem; a term that is part of the
posterior must be stored with it, or a reloaded posterior (or a resume) would silently use
less evidence than the run did.
"""

from __future__ import annotations

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.comparisons import ComparisonTerm
from bayesirl.evidence.partial import PartialEpisodes, PartialTerm


def term_record(term) -> tuple[dict[str, np.ndarray], dict]:
    """``(arrays, meta)`` of a :class:`PartialTerm` or :class:`ComparisonTerm`."""
    if isinstance(term, PartialTerm):
        eps = term.episodes.episodes
        arrays = {"states": np.concatenate([s for s, _ in eps]),
                  "actions": np.concatenate([a for _, a in eps]),
                  "lengths": np.asarray([a.size for _, a in eps], dtype=np.int64)}
        meta = {"kind": "partial", "key": term.key, **term.settings}
        return arrays, meta
    if isinstance(term, ComparisonTerm):
        if term.fixed is None:
            raise InputError("comparisons: a sampled judge rationality cannot be stored yet")
        return ({"differences": term.differences},
                {"kind": "comparisons", "key": term.key, "rationality": term.fixed})
    raise InputError(f"evidence: cannot store a term of type {type(term).__name__}")


def term_from_record(mdp, arrays: dict[str, np.ndarray], meta: dict):
    """Inverse of :func:`term_record`."""
    if meta.get("kind") == "partial":
        cut = np.cumsum(arrays["lengths"])
        s_cut = cut + np.arange(1, cut.size + 1)  # T + 1 states per episode
        states = np.split(np.asarray(arrays["states"], np.int64), s_cut[:-1])
        actions = np.split(np.asarray(arrays["actions"], np.int64), cut[:-1])
        return PartialTerm(mdp, PartialEpisodes(states, actions), key=meta["key"],
                           tol=meta["tol"], gradient_rtol=meta["gradient_rtol"])
    if meta.get("kind") == "comparisons":
        return ComparisonTerm(arrays["differences"], rationality=meta["rationality"],
                              key=meta["key"])
    raise InputError(f"evidence: unknown stored term {meta!r}")
