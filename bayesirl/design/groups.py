"""Whose demonstrations the designer simulates when the posterior has several demonstrators.

A new demonstration comes from *someone*. With several demonstrators (pooling separate or
partial) the headline weights are the population mean (or the mean of the demonstrators'
weights), which no one demonstrates, so simulating outcomes from them would rank
demonstrations nobody can give: the designer refuses unless told whose demonstrations are
meant (``demonstrator=``, one name or several, and/or :data:`NEW`).

- More from demonstrator ``d``: outcomes are simulated from ``d``'s weights (and ``d``'s
  rationality, when each demonstrator has one) in each posterior draw. The gain is the
  expected information about all the parameters, which equals the information about ``d``'s
  weights since the outcome depends on nothing else (it reaches the population mean and the
  others through the joint draws).
- A new demonstrator (partial pooling only): the person is not in the model yet; their
  weights are ``mu + tau z`` with a fresh ``z ~ Normal(0, 1)`` (and, with per-demonstrator
  rationality of fixed spread ``s``, ``log beta + s u`` with a fresh ``u``). The gain is again
  the information about the model's parameters ``theta`` (population and the present
  demonstrators); the newcomer's own ``z`` is integrated out, not counted: the likelihood of
  an outcome under draw ``m`` is ``E_z p(y | mu_m + tau_m z)``, estimated by the mean over
  ``new_draws`` fresh ``z`` per draw (:mod:`bayesirl.design.newcomer`). Both kinds of gain are
  the same quantity, ``I(y; theta)`` over the same posterior draws, so they rank in one list.

A ``target`` is read from the headline weights of the same draws, so "how much would more from
ana narrow the population mean of shade" is answered by importance reweighting as before.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.errors import InputError

# How ``suggest`` names a demonstration from someone not in the data yet.
NEW = "(new demonstrator)"
# Seed-sequence branch of the newcomer's fresh z (the designer's others are 0..3).
NEWCOMER = 4


class Person(NamedTuple):
    """Whose demonstrations a candidate means, and the draws they are simulated from."""

    label: str  # a demonstrator's name, or NEW
    weights: np.ndarray  # (N * per_draw, F), draw-major
    rationalities: np.ndarray  # (N * per_draw,)
    per_draw: int  # 1, or the fresh z per posterior draw of a new demonstrator


def _even(n: int, max_draws: int | None) -> np.ndarray:
    """The draw indices :func:`~bayesirl.design.policies.posterior_draws` keeps."""
    if max_draws is not None and max_draws < n:
        return np.linspace(0, n - 1, max_draws).round().astype(int)
    return np.arange(n)


def _flat(x: np.ndarray, keep: np.ndarray) -> np.ndarray:
    """Chains and draws of ``x`` ``(C, D, ...)`` flattened, at the kept draws."""
    return np.ascontiguousarray(x.reshape((-1,) + x.shape[2:])[keep])


def _names(demonstrator) -> list[str]:
    who = [demonstrator] if isinstance(demonstrator, str) else list(demonstrator)
    if not who or not all(isinstance(w, str) for w in who):
        raise InputError(f"suggest: demonstrator must be a name or a list of names (or "
                         f"{NEW!r}); got {demonstrator!r}")
    if len(set(who)) != len(who):
        raise InputError(f"suggest: demonstrator lists a name twice: {who}")
    return who


def people(posterior, demonstrator, weights: np.ndarray, betas: np.ndarray,
           max_draws: int | None, seed: int, new_draws: int) -> list[Person] | None:
    """The people whose demonstrations are ranked, or None for a posterior of one reward.

    ``weights`` and ``betas`` are the headline draws the designer keeps
    (:func:`~bayesirl.design.policies.posterior_draws`).
    """
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
            f"{groups['pooling']!r}), so a new demonstration must come from someone: name "
            f"whose with demonstrator= (one or several of {names}, or {NEW!r} for a person "
            "not in the data yet)")
    if NEW in names:
        raise InputError(f"suggest: a demonstrator in this posterior is named {NEW!r}, the "
                         "designer's name for a new demonstrator; rename them in the data")
    shape = groups["demonstrator_weights"].shape
    keep = _even(shape[0] * shape[1], max_draws)
    out = []
    for who in _names(demonstrator):
        if who == NEW:
            out.append(_newcomer(posterior, groups, weights, betas, keep, seed, new_draws))
            continue
        if who not in names:
            raise InputError(f"suggest: demonstrator {who!r} is not in this posterior; its "
                             f"demonstrators are {names} (or {NEW!r})")
        k = names.index(who)
        own = groups.get("demonstrator_rationality")
        beta = betas if own is None else _flat(own[..., k], keep)
        out.append(Person(who, _flat(groups["demonstrator_weights"][..., k, :], keep),
                          np.ascontiguousarray(beta, dtype=float), 1))
    return out


def _newcomer(posterior, groups, mu, betas, keep, seed: int, new_draws: int) -> Person:
    """``new_draws`` predictive draws of a new person's weights per posterior draw."""
    if groups["pooling"] != "partial" or "spread" not in groups:
        raise InputError(f"suggest: {NEW!r} needs partial pooling (a population to draw the "
                         f"new person from); this posterior's pooling is "
                         f"{groups['pooling']!r}")
    if (isinstance(new_draws, bool) or int(new_draws) != new_draws or new_draws < 2
            or new_draws % 2):
        raise InputError(f"suggest: new_draws must be an even integer >= 2 (its halves "
                         f"correct the estimate's bias); got {new_draws!r}")
    k = int(new_draws)
    tau = _flat(groups["spread"], keep)
    rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(NEWCOMER,)))
    z = rng.standard_normal((mu.shape[0], k, mu.shape[1]))
    w = (mu[:, None, :] + tau[:, None, :] * z).reshape(-1, mu.shape[1])
    beta = np.repeat(betas, k)
    if "demonstrator_rationality" in groups:
        rat = getattr(posterior.model, "_rat", None)
        spread = None if rat is None else rat.fixed
        if spread is None:
            raise InputError(f"suggest: {NEW!r} with a sampled spread of the demonstrators' "
                             "rationalities is not supported (the spread's draws are not "
                             "kept); fix the spread in the problem file to rank a new "
                             "demonstrator")
        beta = beta * np.exp(spread * rng.standard_normal(beta.shape[0]))
    return Person(NEW, np.ascontiguousarray(w), np.ascontiguousarray(beta), k)
