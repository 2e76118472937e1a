"""Several demonstrators: partial pooling at S = 10^3 and 10^4 with 10 and 30 demonstrators.

Each case is a random sparse MDP (``bench/problems.py``, discount 0.95, A = 4, F = 4
features to keep the 30-demonstrator model at 4 + 4 + 120 = 128 dimensions), population
weights ``mu ~ N(0, 1)``, spread 0.5 on every feature, ``w_d = mu + 0.5 z_d``, and 10
episodes of 50 steps simulated per demonstrator. The fit is ``bayesirl.sample`` with
``pooling="partial"`` (NUTS, 4 chains in the default worker processes). Reported per case:

* ESS per second of sampling of ``mu`` and ``tau`` (the smallest bulk-ESS over features,
  divided by the sampling share of the wall time, as in ``bench/sampler.py``);
* gradient evaluations per ESS (after warm-up, over all chains);
* divergences;
* seconds per gradient of the partial model, warm (median of repeats around a posterior
  draw), against one warm pooled gradient of all the same episodes (one soft-Bellman
  solve): the partial model solves once per demonstrator, so the ratio should grow no
  faster than the number of demonstrators.

The machine's 1-minute load average is recorded at the start and end of every case: on a
shared machine the times are only comparable within a row.
"""

from __future__ import annotations

import os
import time

import numpy as np

from bayesirl.bench.problems import random_mdp
from bayesirl.execution import sample
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.model import Demonstrations, simulate
from bayesirl.posterior.groups import Pooling, make_model
from bayesirl.priors import HalfNormal, Normal

SIZES = (10**3, 10**4)
GROUPS = (10, 30)
EPISODES, LENGTH, FEATURES, SPREAD = 10, 50, 4, 0.5
CHAINS, DRAWS, WARMUP = 4, 500, 500
PRIOR = Normal(0.0, 2.0)


def problem(n_states: int, n_groups: int, seed: int = 16):
    """The MDP and labelled demonstrations of one case."""
    mdp = random_mdp(n_states, n_features=FEATURES, discount=0.95, seed=seed)
    rng = np.random.default_rng(seed)
    mu = rng.normal(size=FEATURES)
    episodes, names = [], []
    for d in range(n_groups):
        w = mu + SPREAD * rng.standard_normal(FEATURES)
        demos = simulate(mdp, w, episodes=EPISODES, length=LENGTH, seed=seed + 1 + d)
        episodes += list(demos.episodes)
        names += [f"d{d}"] * demos.n_episodes
    return mdp, Demonstrations(episodes, demonstrators=names)


def _per_gradient(density, theta: np.ndarray, repeats: int, rng) -> float:
    """Median seconds of a warm gradient near ``theta`` (small random moves, as a sampler's
    neighbouring leapfrog positions)."""
    density(theta)
    times = []
    for _ in range(repeats):
        t = theta + 1e-3 * rng.standard_normal(theta.size)
        t0 = time.perf_counter()
        density(t)
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def _costs(lik, post, repeats: int) -> dict:
    """Seconds per gradient: the partial model against one pooled solve of all episodes."""
    rng = np.random.default_rng(0)
    partial = make_model(lik, PRIOR, pooling=Pooling("partial", HalfNormal(1.0)))
    # an unconstrained point near the posterior: population mean, log spread, z = 0
    k = len(partial.feature_names)
    theta = np.zeros(partial.dim)
    theta[:k] = post.weights.reshape(-1, k).mean(axis=0)
    theta[k:2 * k] = np.log(post.groups["spread"].reshape(-1, k).mean(axis=0))
    pooled = make_model(BoltzmannLikelihood(lik.mdp, lik.demos), PRIOR)
    t_partial = _per_gradient(partial, theta, repeats, rng)
    t_pooled = _per_gradient(pooled, theta[:k].copy(), repeats, rng)
    return {"s_per_gradient": t_partial, "s_per_pooled_gradient": t_pooled,
            "ratio": t_partial / t_pooled}


def case(n_states: int, n_groups: int, draws: int, warmup: int, chains: int,
         repeats: int) -> dict:
    """One row (see the module docstring)."""
    load0 = os.getloadavg()[0]
    mdp, demos = problem(n_states, n_groups)
    lik = BoltzmannLikelihood(mdp, demos)
    t0 = time.perf_counter()
    post = sample(lik, PRIOR, chains=chains, draws=draws, warmup=warmup, seed=1,
                  progress=False, pooling=Pooling("partial", HalfNormal(1.0)))
    wall = time.perf_counter() - t0
    sampling_evals = float(post.stats["n_steps"].sum())
    total_evals = sum(a["n_evals"] for a in post.settings["adapted"])
    sampling_s = wall * sampling_evals / max(total_evals, 1)
    d = post.diagnostics
    f = FEATURES
    ess_mu = float(np.min(d.ess_bulk[:f]))
    names = post.param_names
    spread_idx = [names.index(f"spread[{n}]") for n in mdp.feature_names]
    ess_tau = float(np.min(np.asarray(d.ess_bulk)[spread_idx]))
    row = {"states": n_states, "demonstrators": n_groups, "steps": demos.n_steps,
           "chains": chains, "draws": draws, "warmup": warmup, "dim": post.model.dim,
           "wall_s": wall, "sampling_s": sampling_s,
           "ess_mu": ess_mu, "ess_tau": ess_tau, "ess_per_s_mu": ess_mu / sampling_s,
           "ess_per_s_tau": ess_tau / sampling_s,
           "evals_per_ess": sampling_evals / min(ess_mu, ess_tau),
           "divergences": int(d.divergences), "max_rhat": float(np.nanmax(d.rhat)),
           **_costs(lik, post, repeats)}
    row["ratio_per_demonstrator"] = row["ratio"] / n_groups
    row["load_1min"] = [round(load0, 2), round(os.getloadavg()[0], 2)]
    return row


def run(quick: bool = False, log=print, sizes=SIZES, groups=GROUPS) -> dict:
    """Every case; ``quick``: S = 10^3, 10 demonstrators, 2 chains x 60 draws (a smoke run)."""
    if quick:
        sizes, groups = (10**3,), (10,)
    draws, warmup, chains = (60, 60, 2) if quick else (DRAWS, WARMUP, CHAINS)
    rows = []
    for n in sizes:
        for g in groups:
            r = case(n, g, draws, warmup, chains, repeats=5 if quick else 20)
            rows.append(r)
            log(f"  S={n}, {g} demonstrators: ESS/s mu {r['ess_per_s_mu']:.3g}, tau "
                f"{r['ess_per_s_tau']:.3g}; evals/ESS {r['evals_per_ess']:.1f}; "
                f"{r['divergences']} divergences; gradient {r['s_per_gradient'] * 1e3:.1f} ms "
                f"= {r['ratio']:.1f} pooled solves; load {r['load_1min']}")
    return {"rows": rows, "quick": quick}


def markdown(results: dict) -> list[str]:
    """The benchmark.md section."""
    lines = ["## Several demonstrators (partial pooling)", "",
             f"Random sparse MDP, A = 4, F = {FEATURES}, discount 0.95; {EPISODES} episodes x "
             f"{LENGTH} steps per demonstrator; NUTS (`bench/groups.py`). \"x pooled\" is one "
             "warm gradient of the partial model over one warm pooled gradient of the same "
             "episodes; it should stay at or below the number of demonstrators. Load: the "
             "machine's 1-minute load average at the start and end of the row.", "",
             "| states | demonstrators | dim | chains x draws | ESS/s mu | ESS/s tau | "
             "evals/ESS | divergences | max R-hat | s/gradient | x pooled | load |",
             "|---|---|---|---|---|---|---|---|---|---|---|---|"]
    for r in results["rows"]:
        lines.append(
            f"| {r['states']} | {r['demonstrators']} | {r['dim']} | {r['chains']} x "
            f"{r['draws']} | {r['ess_per_s_mu']:.3g} | {r['ess_per_s_tau']:.3g} | "
            f"{r['evals_per_ess']:.1f} | {r['divergences']} | {r['max_rhat']:.3f} | "
            f"{r['s_per_gradient']:.3g} | {r['ratio']:.1f} | "
            f"{r['load_1min'][0]:.1f}-{r['load_1min'][1]:.1f} |")
    return lines + [""]
