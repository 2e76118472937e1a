"""Which draws the designer simulates from when the posterior has several demonstrators.

A new demonstration comes from *someone*. With several demonstrators (pooling separate or
partial) the headline weights are the population mean (or the mean of the demonstrators'
weights), which no one demonstrates, so simulating outcomes from them would rank
demonstrations nobody can give: the designer refuses unless told whose demonstrations are
meant. ``demonstrator=d`` ranks more demonstrations from ``d``: outcomes are simulated from
``d``'s weights in each posterior draw, and the gain is the expected information about all
the parameters, which equals the information about ``d``'s weights since the outcome depends
on nothing else (it reaches the population mean and the others through the joint draws). A
``target`` is read from the headline weights of the same draws, so "how much would more from
ana narrow the population mean of shade" is answered by importance reweighting as before.

Not supported (refused, never approximated silently): a demonstration from a *new*
demonstrator. Its outcome depends on the population through ``mu + tau z`` with the new
person's ``z`` unknown; the designer's estimator would need ``z`` integrated out per draw.
"""

from __future__ import annotations

import numpy as np

from bayesirl.errors import InputError


def _even(n: int, max_draws: int | None) -> np.ndarray:
    """The draw indices :func:`~bayesirl.design.policies.posterior_draws` keeps."""
    if max_draws is not None and max_draws < n:
        return np.linspace(0, n - 1, max_draws).round().astype(int)
    return np.arange(n)


def simulation_weights(posterior, demonstrator, max_draws: int | None) -> np.ndarray | None:
    """Weights ``(N, F)`` of ``demonstrator`` in the draws the designer keeps, or None for a
    posterior of one demonstrator (the designer then uses the headline weights)."""
    groups = getattr(posterior, "groups", None)
    if groups is None:
        if demonstrator is not None:
            raise InputError(f"suggest: demonstrator={demonstrator!r} needs a posterior with "
                             "several demonstrators (pooling separate or partial); this one "
                             "has one reward for every episode")
        return None
    names = list(groups["demonstrators"])
    if demonstrator is None:
        raise InputError(
            f"suggest: this posterior has {len(names)} demonstrators (pooling "
            f"{groups['pooling']!r}), so a new demonstration must come from one of them: name "
            f"whose with demonstrator= (one of {names}). Ranking a demonstration from a new "
            "demonstrator is not supported.")
    if demonstrator not in names:
        raise InputError(f"suggest: demonstrator {demonstrator!r} is not in this posterior; "
                         f"its demonstrators are {names}")
    w = groups["demonstrator_weights"][..., names.index(demonstrator), :]
    w = w.reshape(-1, w.shape[-1])
    return np.ascontiguousarray(w[_even(w.shape[0], max_draws)])
