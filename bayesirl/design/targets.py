"""The quantity whose posterior sd a new demonstration should shrink, per posterior draw."""

from __future__ import annotations

import numpy as np

from bayesirl.errors import InputError
from bayesirl.report import derived


def target_values(posterior, weights: np.ndarray, target) -> np.ndarray | None:
    """``g(theta_m)`` for each draw: a weight, a ratio ``"a/b"``, or ``"policy-risk"``.

    ``policy-risk`` is each draw's expected value difference of acting on the policy that is
    optimal for the posterior-mean weights (as in the report's policy risk).
    """
    if target is None:
        return None
    names = list(posterior.feature_names)
    if not isinstance(target, str):
        raise InputError(f"suggest: target must be a feature name, 'a/b' or 'policy-risk'; "
                         f"got {target!r}")
    if target == "policy-risk":
        return _policy_risk(posterior, weights)
    if target in names:
        return weights[:, names.index(target)].copy()
    if "/" in target:
        num, den = (part.strip() for part in target.split("/", 1))
        missing = [p for p in (num, den) if p not in names]
        if not missing:
            den_w = weights[:, names.index(den)]
            if np.any(den_w == 0.0):
                raise InputError(f"suggest: target {target!r}: the weight {den!r} is 0 in "
                                 f"{int(np.sum(den_w == 0.0))} draws; the ratio is undefined")
            return weights[:, names.index(num)] / den_w
    raise InputError(f"suggest: unknown target {target!r}; expected one of {names}, a ratio "
                     f"such as '{names[0]}/{names[-1]}', or 'policy-risk'")


def _policy_risk(posterior, weights: np.ndarray) -> np.ndarray:
    lik = posterior.model.likelihood
    # The report's own computation, so that the designer's target is the report's number.
    return derived.policy_losses(lik.mdp, lik.demos, weights, weights.mean(axis=0))[0]
