"""Each demonstrator's weights from their own episodes alone, for showing shrinkage.

A partially pooled demonstrator's weights lean on the population; to see how far, the forest
plot puts beside them what that demonstrator's episodes say by themselves. We compute that
"alone" estimate by a Laplace approximation at the mode, not by another sampling run: for
demonstrator ``d`` the one-demonstrator posterior (the pooled model of
:class:`~bayesirl.posterior.PosteriorModel` on ``d``'s episodes only, with the run's weight
prior, rationality (fixed, or sampled with its prior) and pinned weights) is maximised in
its unconstrained coordinates by L-BFGS-B with the exact gradient, and its covariance there
is the inverse of minus the Hessian, which we take by central differences of the exact
gradient. Intervals are ``mode +- z sd`` in those coordinates, mapped through the prior's
transform (the identity for normal and Laplace priors). This is the approximation of
Laplace (Tierney & Kadane 1986, JASA 81): good when a demonstrator has many steps, rough
when they have few (then the prior dominates the "alone" interval, which is the point: such
a demonstrator says little alone). When the optimiser fails or the Hessian is not negative
definite the estimate is marked failed with the reason, never replaced by something else.
"""

from __future__ import annotations

import numpy as np
from scipy import optimize, stats

from bayesirl.errors import SolverError
from bayesirl.evidence.groups import likelihood_settings
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.posterior.model import PosteriorModel

METHOD = ("Laplace approximation at the mode of the demonstrator's own posterior (their "
          "episodes only, same prior, rationality and pins)")
# Relative step of the central differences of the exact gradient: the gradient's relative
# error is ~1e-8 (DEVELOPERS.md, adjoint tolerance), so a step of 1e-4 leaves truncation
# ~1e-8 and rounding ~1e-8 / 1e-4 = 1e-4 relative in the Hessian (common practice: the
# square root of the function's relative accuracy).
_STEP = 1e-4


def _negative(model: PosteriorModel):
    def f(theta):
        try:
            value, grad = model.logdensity_and_grad(theta)
        except SolverError:
            return np.inf, np.zeros_like(theta)
        if not np.isfinite(value):
            return np.inf, np.zeros_like(theta)
        return -value, -grad
    return f


def hessian(model: PosteriorModel, theta: np.ndarray) -> np.ndarray:
    """Symmetrised central differences of the exact gradient of the log density."""
    cols = []
    for j in range(theta.size):
        h = _STEP * max(1.0, abs(float(theta[j])))
        e = np.zeros_like(theta)
        e[j] = h
        cols.append((model.logdensity_and_grad(theta + e)[1]
                     - model.logdensity_and_grad(theta - e)[1]) / (2 * h))
    m = np.column_stack(cols)
    return 0.5 * (m + m.T)


def _polish(model: PosteriorModel, theta: np.ndarray) -> np.ndarray:
    """Two Newton steps with the difference Hessian, each kept only if it does not lower the
    density: L-BFGS-B stops at a gradient of ~1e-5, whose distance to the mode is ~1e-5/H."""
    for _ in range(2):
        value, grad = model.logdensity_and_grad(theta)
        try:
            step = np.linalg.solve(-hessian(model, theta), grad)
        except np.linalg.LinAlgError:
            break
        new = theta + step
        if not model.logdensity(new) >= value:
            break
        theta = new
    return theta


def laplace(model: PosteriorModel, level: float) -> dict:
    """Mode, sd and interval per free feature of a one-demonstrator ``model``."""
    fit = optimize.minimize(_negative(model), np.zeros(model.dim), jac=True,
                            method="L-BFGS-B")
    if not (fit.success and np.isfinite(fit.fun)):
        return {"failed": f"no mode found ({fit.message})"}
    theta = _polish(model, fit.x)
    neg_h = -hessian(model, theta)
    try:
        chol = np.linalg.cholesky(neg_h)
    except np.linalg.LinAlgError:
        return {"failed": "the log density is not curved downwards at the mode found"}
    inv = np.linalg.inv(chol)
    sd = np.sqrt(np.sum(inv * inv, axis=0))  # sqrt(diag(neg_h^-1))
    k = model.free.size
    prior = model._free_prior
    z = stats.norm.ppf(0.5 + level / 2)
    mode, s = theta[:k], sd[:k]
    lo, hi = prior.transform(mode - z * s), prior.transform(mode + z * s)
    mid, scale = prior.transform(mode), prior.dtransform(mode) * s
    names = [model.feature_names[i] for i in model.free]
    return {n: {"mean": float(mid[i]), "sd": float(scale[i]), "lower": float(lo[i]),
                "upper": float(hi[i])} for i, n in enumerate(names)}


def alone_estimates(model, level: float = 0.9) -> dict[str, dict]:
    """Per demonstrator of a :class:`~bayesirl.posterior.groups.GroupModel`: the Laplace
    estimate of the module docstring, ``{feature: {mean, sd, lower, upper}}`` (free
    features only; ``mean`` is the mode) or ``{"failed": reason}``."""
    beta = (model.rationality_prior if model.rationality_prior is not None
            else model.fixed_rationality)
    out = {}
    for name, term in zip(model.group_names, model.evidence.terms, strict=True):
        own = term.likelihood
        # a cold copy: the run's likelihoods keep their warm starts (and checkpoints) as they were
        lik = BoltzmannLikelihood(own.mdp, own.demos, **likelihood_settings(own))
        one = PosteriorModel(lik, model.prior, beta, model.pin or None)
        out[name] = laplace(one, level)
    return out
