"""The evidence model: the sum of evidence terms, with their warm starts kept together.

``Evidence.evaluate`` adds the terms' log densities in order and adds up gradients that
several terms share (every demonstrator's term reads the shared rationality). A term's
warm-start arrays are stored under ``"{key}.{name}"``; the model's only term may have the
empty key and then keeps its own names (so a one-term model's checkpoints read as before).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.term import EvidenceTerm, Pointwise, PointwiseTerm, TermValue


class Evidence:
    """``log p(data | quantities) = sum_k term_k``.

    Parameters
    ----------
    terms : sequence of EvidenceTerm
        At least one; keys unique, the empty key only for a single term.
    """

    def __init__(self, terms: Sequence[EvidenceTerm]) -> None:
        terms = tuple(terms)
        if not terms:
            raise InputError("evidence: at least one evidence term is needed")
        keys = [t.key for t in terms]
        if len(set(keys)) != len(keys):
            raise InputError(f"evidence: term keys must be unique; got {keys}")
        if "" in keys and len(terms) > 1:
            raise InputError("evidence: only a model's single term may have an empty key")
        for t in terms:
            if "." in t.key:
                raise InputError(f"evidence: term key {t.key!r} may not contain '.'")
        self.terms = terms
        self.reads = tuple(dict.fromkeys(name for t in terms for name in t.reads))

    def __repr__(self) -> str:
        return f"Evidence({len(self.terms)} terms, reads={list(self.reads)})"

    @property
    def n_evaluations(self) -> int:
        """Evaluations summed over terms."""
        return sum(t.n_evaluations for t in self.terms)

    def evaluate(self, quantities: Mapping[str, object], gradient: bool = True) -> TermValue:
        """Sum of the terms' log densities and, if asked, of their gradients per quantity."""
        total = 0.0
        grads: dict[str, np.ndarray | float] = {}
        for term in self.terms:
            value = term.evaluate(quantities, gradient)
            total += value.logp
            for name, g in value.grads.items():
                # Never add in place: a term may hand out an array it keeps.
                grads[name] = g if name not in grads else grads[name] + g
        return TermValue(total, grads)

    def pointwise(self, quantities: Mapping[str, object],
                  lengths: np.ndarray) -> tuple[np.ndarray, np.ndarray | None]:
        """Log density per episode ``(E,)`` and per step ``(sum(lengths),)`` or None.

        ``lengths`` are the actions per episode of the whole demonstration set. Several
        terms explaining the same episode add up; per-step values are given only when every
        term gives them. Raises InputError if a term cannot split its log density. Terms over
        other observations (comparison answers, episodes with unrecorded parts) give their
        own arrays, not a :class:`Pointwise` record of demonstration episodes: they are left
        out, so the values describe the demonstrations given everything else.
        """
        lengths = np.asarray(lengths, dtype=np.int64)
        offsets = np.concatenate([[0], np.cumsum(lengths)])
        episode = np.zeros(lengths.size)
        step: np.ndarray | None = np.zeros(int(offsets[-1]))
        for term in self.terms:
            if not isinstance(term, PointwiseTerm):
                raise InputError(f"evidence: term {term.key!r} ({type(term).__name__}) "
                                 "cannot split its log density by episode")
            part = term.pointwise(quantities)
            if not isinstance(part, Pointwise):  # observations other than demonstrations
                continue
            np.add.at(episode, part.episodes, part.episode)
            if part.step is None or step is None:
                step = None
                continue
            where = np.concatenate([np.arange(offsets[e], offsets[e + 1])
                                    for e in part.episodes])
            np.add.at(step, where, part.step)
        return episode, step

    # -- warm starts: the terms' states side by side ---------------------------------------
    def warm_start(self) -> tuple:
        """Every term's snapshot."""
        return tuple(t.warm_start() for t in self.terms)

    def restore_warm_start(self, snapshot: tuple) -> None:
        """Back to a :meth:`warm_start` snapshot."""
        for term, snap in zip(self.terms, snapshot, strict=True):
            term.restore_warm_start(snap)

    def warm_start_arrays(self) -> dict[str, np.ndarray]:
        """Every term's arrays under its key."""
        out = {}
        for term in self.terms:
            prefix = f"{term.key}." if term.key else ""
            out.update({prefix + k: v for k, v in term.warm_start_arrays().items()})
        return out

    def load_warm_start_arrays(self, arrays: dict[str, np.ndarray]) -> None:
        """Inverse of :meth:`warm_start_arrays`."""
        for term in self.terms:
            if not term.key:
                term.load_warm_start_arrays(dict(arrays))
                continue
            prefix = f"{term.key}."
            term.load_warm_start_arrays(
                {k[len(prefix):]: v for k, v in arrays.items() if k.startswith(prefix)})
