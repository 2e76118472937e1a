"""Whether ``fit`` should sample with a dense mass matrix, decided before sampling.

NUTS with a diagonal mass matrix crosses a narrow, tilted ridge (two features that always
occur together: only their sum is learned) with tiny steps and very deep trees; a dense mass
matrix adapted in warmup rescales the ridge away (Betancourt 2017, "A Conceptual Introduction
to Hamiltonian Monte Carlo", sec. 4.2; Stan's ``dense_e`` metric). The decision is made here,
above the sampler, from two cheap looks at the problem:

1. the structural findings of ``bayesirl check`` (a constant, collinear or shaping
   combination makes an exact ridge under any data), and
2. a Laplace approximation at the posterior mode (a few dozen gradients): the covariance
   ``(I(w) + Prior precision)^-1`` with ``I`` the observed information. A correlation of at
   least :data:`CORRELATION` between two weights there means a ridge too.

Only for a fixed rationality without pinned weights (the common case); otherwise the
problem's own setting stands.
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import minimize

from bayesirl.errors import SolverError

# |correlation| at least this at the mode switches the dense mass matrix on (our own
# threshold: at 0.9 a diagonal metric's step is about sqrt(1 - 0.9^2) ~ 0.44 of the ridge's
# width along its narrow axis, and trees deepen quickly beyond it).
CORRELATION = 0.9
MAX_ITER = 60


def _laplace_correlation(lik, prior_var: np.ndarray, prior_loc: np.ndarray):
    """Largest |correlation| of the Laplace approximation, and the pair having it."""
    f = prior_var.shape[0]

    def neg(w):
        value, grad = lik.value_and_grad(w)
        d = (w - prior_loc) / prior_var
        return -value + 0.5 * float(d @ (w - prior_loc)), -grad + d

    res = minimize(neg, prior_loc.copy(), jac=True, method="L-BFGS-B",
                   options={"maxiter": MAX_ITER})
    w = res.x
    h = 1e-4 * max(1.0, float(np.abs(w).max()))
    hess = np.empty((f, f))
    for i in range(f):
        e = np.zeros(f)
        e[i] = h
        hess[i] = (lik.value_and_grad(w + e)[1] - lik.value_and_grad(w - e)[1]) / (2 * h)
    precision = -0.5 * (hess + hess.T) + np.diag(1.0 / prior_var)
    try:
        cov = np.linalg.inv(precision)
    except np.linalg.LinAlgError:
        return 1.0, (0, min(1, f - 1))
    cov = 0.5 * (cov + cov.T)  # inv() of a symmetric matrix is symmetric only to rounding
    sd = np.sqrt(np.clip(np.diag(cov), 1e-300, None))
    corr = np.triu(cov / np.outer(sd, sd), k=1)  # each pair once, named in feature order
    i, j = np.unravel_index(int(np.argmax(np.abs(corr))), corr.shape)
    return float(abs(corr[i, j])), (int(i), int(j))


def choose(problem, lik, settings: dict) -> tuple[dict, str | None]:
    """``settings`` with ``dense_mass`` switched on where a ridge is found, and the reason.

    Parameters
    ----------
    problem : Problem
        The problem read from its file (prior, rationality, pin).
    lik : BoltzmannLikelihood
    settings : dict
        Sampler settings (``method``, ``dense_mass``, ...).

    Returns
    -------
    (dict, str or None)
        The settings to sample with, and a sentence saying why the dense mass matrix was
        switched on (None when nothing changed).
    """
    if settings.get("dense_mass") or settings.get("method", "nuts") != "nuts":
        return settings, None
    from bayesirl.report import structural

    names = lik.mdp.feature_names
    ridge = [f for f in structural.findings(lik.mdp, lik.demos)
             if f.cause in ("constant", "collinear", "shaping")]
    if ridge:
        reason = (f"check found {ridge[0].cause} features ({', '.join(ridge[0].features)}): "
                  "the posterior is a ridge along which the data say nothing")
        return {**settings, "dense_mass": True}, reason
    if problem.pin or not isinstance(problem.rationality, float) or len(names) < 2:
        return settings, None
    prior_var = np.asarray(problem.prior.variance(len(names)), dtype=float)
    loc = getattr(problem.prior, "loc", 0.0)
    prior_loc = np.broadcast_to(np.asarray(loc, dtype=float), prior_var.shape).copy()
    try:
        rho, (i, j) = _laplace_correlation(lik, prior_var, prior_loc)
    except SolverError:  # no decision; sampling reports the solver's trouble in full
        return settings, None
    if rho < CORRELATION:
        return settings, None
    reason = (f"{names[i]} and {names[j]} are correlated {rho:.2f} near the posterior mode "
              "(a ridge)")
    return {**settings, "dense_mass": True}, reason
