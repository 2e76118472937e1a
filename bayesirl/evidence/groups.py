"""Demonstrations from several demonstrators: one evidence term (and warm start) each.

Each demonstrator's episodes get their own :class:`~bayesirl.likelihood.BoltzmannLikelihood`
on the same MDP and settings, so each keeps the warm starts of its own reward's soft
Bellman solve: the rewards differ, and a warm start shared between them would restart every
solve from another demonstrator's solution.
"""

from __future__ import annotations

import inspect
from typing import TYPE_CHECKING

from bayesirl.evidence.boltzmann import BoltzmannTerm
from bayesirl.evidence.model import Evidence

if TYPE_CHECKING:
    from bayesirl.likelihood import BoltzmannLikelihood


def weights_name(index: int) -> str:
    """The quantity holding demonstrator ``index``'s reward weights."""
    return f"weights/{index}"


def rationality_name(index: int) -> str:
    """The quantity holding demonstrator ``index``'s own rationality (when they have one)."""
    return f"rationality/{index}"


def likelihood_settings(likelihood) -> dict:
    """Every constructor setting of ``likelihood`` but its MDP and demonstrations (so a
    setting added to BoltzmannLikelihood later reaches the per-demonstrator copies too)."""
    from bayesirl.likelihood import BoltzmannLikelihood  # the solvers load on first use

    names = inspect.signature(BoltzmannLikelihood).parameters
    return {n: getattr(likelihood, n) for n in names
            if n not in ("mdp", "demos") and hasattr(likelihood, n)}


def split_likelihood(likelihood) -> list[BoltzmannLikelihood]:
    """One likelihood per demonstrator of ``likelihood.demos``, same MDP and settings."""
    from bayesirl.likelihood import BoltzmannLikelihood

    demos, settings = likelihood.demos, likelihood_settings(likelihood)
    return [BoltzmannLikelihood(likelihood.mdp, demos.subset(episodes), **settings)
            for episodes in demos.groups().values()]


def demonstrator_evidence(likelihood, own_rationality: bool = False) -> Evidence:
    """Evidence with term ``d{i}`` reading ``weights/{i}`` for the i-th demonstrator, and
    ``rationality/{i}`` instead of the shared ``rationality`` if ``own_rationality``."""
    parts = split_likelihood(likelihood)
    where = list(likelihood.demos.groups().values())
    return Evidence([BoltzmannTerm(lik, key=f"d{i}", weights=weights_name(i),
                                   rationality=(rationality_name(i) if own_rationality
                                                else "rationality"),
                                   episodes=where[i])
                     for i, lik in enumerate(parts)])


def pooled_evidence(likelihood) -> Evidence:
    """Every episode in one term reading ``weights`` (the model before demonstrators)."""
    return Evidence([BoltzmannTerm(likelihood)])
