"""Simulated replications for the slow calibration suites (coverage and policy risk).

Each replication draws the true weights from the prior (the condition under which Bayesian
intervals have their nominal frequency coverage: averaged over the prior, P(w in I(D)) equals
the credible level; Cook, Gelman & Rubin 2006; Talts et al. 2018), simulates demonstrations on
the 16-state grid, samples the posterior with bayesirl and records the report's intervals and
policy-risk bounds, together with the true expected value difference computed independently
(``evd.howard``: our own policy iteration with spsolve evaluations).
"""

from __future__ import annotations

from functools import cache
from multiprocessing import get_context

import numpy as np

import bayesirl as bi
from bayesirl.execution.backend import Processes
from bayesirl.report.derived import policy_risk
from bayesirl.report.weights import weights_table

from . import evd
from .problems import SMALL_PRIOR, grid_transitions, small_grid

N_REPS = 200
EPISODES, LENGTH = 5, 8  # 40 steps: the prior still matters (mean contraction ~0.8)
FIT = {"chains": 2, "draws": 500, "warmup": 300, "progress": False, "backend": Processes(1)}
LEVELS = (0.5, 0.9)
ALPHAS = (0.5, 0.95)


def one(rep: int) -> dict:
    """Replication ``rep``: truth ~ prior, data, posterior, intervals, bounds, true EVD."""
    mdp = small_grid()
    rng = np.random.default_rng([7, rep])
    loc, scale = SMALL_PRIOR.params(mdp.n_features)
    truth = rng.normal(loc, scale)
    demos = bi.simulate(mdp, truth, episodes=EPISODES, length=LENGTH, seed=rng)
    post = bi.sample(bi.BoltzmannLikelihood(mdp, demos), SMALL_PRIOR, seed=rep, **FIT)
    out = {"truth": truth, "ok": post.diagnostics.ok}
    for level in LEVELS:
        out[f"interval{level}"] = np.array([r["interval"] for r in weights_table(post, level)])
    out["contraction"] = np.array([r["contraction"] for r in weights_table(post)])
    for alpha in ALPHAS:
        risk = policy_risk(post, alpha)
        out[f"bound{alpha}"] = risk["bound"]
    out["risk_mean"] = risk["mean"]
    out["estimate"] = np.array(risk["estimate"])
    out["true_evd"] = true_evd(mdp, truth, out["estimate"])
    return out


def true_evd(mdp, truth, estimate) -> float:
    """``d0 . (V*_truth - V^pi_hat_truth)``, pi_hat optimal for ``estimate`` (independent)."""
    p = grid_transitions(4, 4)
    phi = np.asarray(mdp.features)
    g = mdp.discount
    _, pi_hat = evd.howard(p, evd.rewards(phi, estimate), g)
    r = evd.rewards(phi, truth)
    v_star, _ = evd.howard(p, r, g)
    return float(mdp.start @ (v_star - evd.policy_value(p, r, g, pi_hat)))


@cache
def replications(n: int = N_REPS, processes: int = 2) -> list[dict]:
    """All replications, in order (fork workers; each fit runs its chains in-process)."""
    with get_context("fork").Pool(processes) as pool:
        return pool.map(one, range(n), chunksize=1)
