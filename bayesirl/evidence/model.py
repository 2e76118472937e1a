"""The evidence model: the sum of evidence terms, with their warm starts kept together.

``Evidence.evaluate`` adds the terms' log densities in order and adds up gradients that
several terms share (every demonstrator's term reads the shared rationality). A term's
warm-start arrays are stored under ``"{key}.{name}"``; the model's only term may have the
empty key and then keeps its own names (so a one-term model's checkpoints read as before).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.term import EvidenceTerm, PointwiseTerm, TermValue


class PointwiseSplit(NamedTuple):
    """The evidence's log density split by observation (:meth:`Evidence.pointwise`).

    ``episode``: per episode, the demonstrations first (in their order), then the episodes
    of terms with episodes of their own (episodes with unrecorded parts), in term order.
    ``step``: per step of those episodes in the same order, or None unless every term
    gives per-step values. ``answers``: per answer of the comparison terms, in term order,
    or None without them. ``episode.sum() + answers.sum()`` is the evidence's log density.
    """

    episode: np.ndarray
    step: np.ndarray | None
    answers: np.ndarray | None


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

    def pointwise(self, quantities: Mapping[str, object], lengths: np.ndarray) -> PointwiseSplit:
        """The log density split by observation: see :class:`PointwiseSplit`.

        ``lengths`` are the actions per episode of the demonstration set. Several terms
        explaining the same demonstration add up; episodes of a term's own follow the
        demonstrations in term order. Per-step values are given only when every term gives
        them. Raises InputError if a term cannot split its log density.
        """
        lengths = np.asarray(lengths, dtype=np.int64)
        offsets = np.concatenate([[0], np.cumsum(lengths)])
        episode = np.zeros(lengths.size)
        step: np.ndarray | None = np.zeros(int(offsets[-1]))
        own_episode, own_step, answers = [], [], []
        for term in self.terms:
            if not isinstance(term, PointwiseTerm):
                raise InputError(f"evidence: term {term.key!r} ({type(term).__name__}) "
                                 "cannot split its log density by observation")
            part = term.pointwise(quantities)
            if part.answers is not None:
                answers.append(np.asarray(part.answers, dtype=np.float64))
            if part.episodes is None:  # episodes of the term's own: after the demonstrations
                own_episode.append(part.episode)
                own_step.append(part.step)
                continue
            np.add.at(episode, part.episodes, part.episode)
            if part.step is None or step is None:
                step = None
                continue
            where = np.concatenate([np.arange(offsets[e], offsets[e + 1])
                                    for e in part.episodes] or [np.zeros(0, np.int64)])
            np.add.at(step, where, part.step)
        episode = np.concatenate([episode, *own_episode])
        if step is not None and all(x is not None for x in own_step):
            step = np.concatenate([step, *own_step])
        else:
            step = None
        return PointwiseSplit(episode, step, np.concatenate(answers) if answers else None)

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
