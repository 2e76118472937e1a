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
        meta = {"kind": "comparisons", "key": term.key,
                "rationality": _positive_record(term, term.rationality_name, term.fixed)}
        arrays = {"differences": term.differences}
        if term.davidson:  # absent otherwise, so older runs' fingerprints stay the same
            meta["tie"] = _positive_record(term, term.tie_name, term.tie_fixed)
            arrays["ties"] = term.ties.astype(np.int8)
        return arrays, meta
    raise InputError(f"evidence: cannot store a term of type {type(term).__name__}")


def _positive_record(term, name, fixed):
    """A fixed number, or ``{"name": ..., "prior": {kind, mu, sigma}}`` (prior if sampled)."""
    if fixed is not None:
        return fixed
    prior = term.priors.get(name)
    return {"name": name, "prior": None if prior is None else {
        "kind": prior.kind, **{k: np.asarray(v).tolist() for k, v in vars(prior).items()}}}


def _positive_from(value, make_prior):
    if not isinstance(value, dict):
        return value
    if value["prior"] is None:
        return value["name"]
    if make_prior is None:
        raise InputError("evidence: a stored term samples a quantity; pass make_prior")
    return make_prior(dict(value["prior"]))


def term_from_record(mdp, arrays: dict[str, np.ndarray], meta: dict, make_prior=None):
    """Inverse of :func:`term_record`; ``make_prior`` builds a prior from its stored
    ``{"kind": ..., parameters}`` (the posterior layer's, since priors sit above this one)."""
    if meta.get("kind") == "partial":
        cut = np.cumsum(arrays["lengths"])
        s_cut = cut + np.arange(1, cut.size + 1)  # T + 1 states per episode
        states = np.split(np.asarray(arrays["states"], np.int64), s_cut[:-1])
        actions = np.split(np.asarray(arrays["actions"], np.int64), cut[:-1])
        caps = {k: meta[k] for k in ("max_newton_steps", "max_linear_iterations")
                if k in meta}  # absent from runs before the caps were passed on
        return PartialTerm(mdp, PartialEpisodes(states, actions), key=meta["key"],
                           tol=meta["tol"], gradient_rtol=meta["gradient_rtol"], **caps)
    if meta.get("kind") == "comparisons":
        tie = meta.get("tie")
        return ComparisonTerm(arrays["differences"],
                              rationality=_positive_from(meta["rationality"], make_prior),
                              key=meta["key"], ties=arrays.get("ties"),
                              tie=None if tie is None else _positive_from(tie, make_prior))
    raise InputError(f"evidence: unknown stored term {meta!r}")
