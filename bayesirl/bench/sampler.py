"""Sampler benchmark: bulk-ESS per second for NUTS, random-walk Metropolis and emcee.

emcee (Foreman-Mackey et al. 2013) stands for what a user would do by hand: an ensemble
sampler driving a plain numpy log-density that solves the soft Bellman equation from zero at
every call (``bench/reference.py``). Running it long enough for a stable ESS at 10^4 states
would take hours, so its chain is run on our fast log-density (same values to ~1e-9) and each
evaluation is charged the measured median cost of the plain one. Its ESS comes from emcee's
integrated autocorrelation time, ``ESS = walkers * steps / tau`` (the emcee documentation's
recommendation for ensembles, whose walkers are not independent chains). At 10^4 states even
that run is too long; there we reuse the evaluations-per-ESS measured at 10^3 states (the
stretch move is affine invariant, so its efficiency depends on dimension and shape, not on the
cost of the density) and charge the plain density's measured cost at 10^4.
"""

from __future__ import annotations

import time

import numpy as np

from bayesirl import arviz_compat
from bayesirl.bench.problems import demonstrations_for, random_mdp
from bayesirl.bench.reference import reference_value_and_grad
from bayesirl.execution import sample
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.posterior import PosteriorModel


def _min_bulk_ess(posterior) -> float:
    return float(np.min(posterior.diagnostics.ess_bulk[: posterior.weights.shape[-1]]))


def _run_ours(lik, method: str, draws: int, warmup: int, seed: int) -> dict:
    t0 = time.perf_counter()
    post = sample(lik, chains=4, draws=draws, warmup=warmup, seed=seed, method=method,
                  progress=False)
    wall = time.perf_counter() - t0
    # ESS per second of sampling after warmup: each chain's share of its time is its share
    # of gradient evaluations spent after warmup.
    sampling_evals = post.stats["n_steps"].sum()
    total_evals = sum(a["n_evals"] for a in post.settings["adapted"])
    sampling_time = wall * sampling_evals / max(total_evals, 1)
    ess = _min_bulk_ess(post)
    return {"method": method, "wall_s": wall, "sampling_s": sampling_time,
            "min_bulk_ess": ess, "ess_per_s": ess / sampling_time,
            "evals_per_ess": float(sampling_evals) / ess,
            "max_rhat": float(np.max(post.diagnostics.rhat)),
            "divergences": int(post.diagnostics.divergences)}


def _run_emcee(lik, mdp, demos, steps: int, seed: int) -> dict:
    import emcee

    model = PosteriorModel(lik)
    dim = model.dim
    walkers = 2 * dim + 2
    rng = np.random.default_rng(seed)
    p0 = rng.uniform(-0.5, 0.5, size=(walkers, dim))
    ens = emcee.EnsembleSampler(walkers, dim, lambda th: model(th)[0])
    ens.random_state = np.random.RandomState(seed).get_state()  # its own stream, not global
    ens.run_mcmc(p0, steps, progress=False)
    burn = steps // 2
    tau = ens.get_autocorr_time(discard=burn, quiet=True)
    ess = float(np.min(walkers * (steps - burn) / tau))
    per_eval = _plain_cost(mdp, demos, 3)
    evals = walkers * (steps - burn)
    flat = ens.get_chain(discard=burn)  # (steps, walkers, dim)
    by_walker = np.swapaxes(flat, 0, 1)  # (walkers, steps, dim): a walker as a chain
    rhat = max(arviz_compat.rhat(by_walker[:, :, k]) for k in range(dim))
    return {"method": "emcee (plain density)", "wall_s": per_eval * walkers * steps,
            "sampling_s": per_eval * evals, "min_bulk_ess": ess,
            "ess_per_s": ess / (per_eval * evals), "evals_per_ess": evals / ess,
            "seconds_per_eval": per_eval, "max_rhat": rhat, "divergences": 0}


def _plain_cost(mdp, demos, repeats: int) -> float:
    w = np.full(mdp.n_features, 0.1)
    costs = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        reference_value_and_grad(mdp, demos, w)
        costs.append(time.perf_counter() - t0)
    return float(np.median(costs))


def _emcee_by_proxy(measured: dict, per_eval: float) -> dict:
    evals_per_ess = measured["evals_per_ess"]
    return {"method": "emcee (plain density)", "seconds_per_eval": per_eval,
            "evals_per_ess": evals_per_ess, "ess_per_s": 1.0 / (evals_per_ess * per_eval),
            "min_bulk_ess": float("nan"), "max_rhat": float("nan"), "divergences": 0,
            "wall_s": float("nan"), "sampling_s": float("nan"), "proxy": "evals/ESS from S=1000"}


# (draws, warmup) per chain for NUTS; the random walk gets four times as many iterations.
_LENGTHS = {10**3: (1000, 1000), 10**4: (500, 500)}


def run(quick: bool = False, log=print) -> dict:
    """NUTS, random walk and emcee on F=8, A=4, discount 0.95, 50 demos of length 50."""
    sizes = [10**3] if quick else [10**3, 10**4]
    out = {"cases": []}
    emcee_row = None
    for n in sizes:
        draws, warmup = (300, 300) if quick else _LENGTHS[n]
        mdp = random_mdp(n, discount=0.95, seed=11)
        _, demos = demonstrations_for(mdp, episodes=50, length=50, seed=11)
        lik = BoltzmannLikelihood(mdp, demos)
        rows = [_run_ours(lik, "nuts", draws, warmup, seed=1),
                _run_ours(lik, "random-walk", 4 * draws, 4 * warmup, seed=1)]
        if emcee_row is None:
            emcee_row = _run_emcee(lik, mdp, demos, steps=300 if quick else 1500, seed=1)
            rows.append(emcee_row)
        else:
            rows.append(_emcee_by_proxy(emcee_row, _plain_cost(mdp, demos, 2)))
        base = rows[2]["ess_per_s"]
        for r in rows:
            r["vs_emcee"] = r["ess_per_s"] / base
            log(f"  S={n}: {r['method']:<22} ESS/s {r['ess_per_s']:.3g} "
                f"(x{r['vs_emcee']:.1f} emcee), evals/ESS {r['evals_per_ess']:.1f}, "
                f"max R-hat {r['max_rhat']:.3f}")
        out["cases"].append({"states": n, "draws": draws, "warmup": warmup, "rows": rows})
    return out
