"""Learned dynamics: the cost of the cut posterior against the plug-in fit (issue 21).

A random sparse MDP at S = 10^3 (``bench/problems.py``, A = 4, 4 successors per row, F = 4,
discount 0.95), 20 episodes of 50 steps; the dynamics posterior counts the demonstrations'
transitions plus 5 logged outcomes per row (Dirichlet(1) prior on the successors). Per row
of the table: the plug-in fit (one ``sample`` run, 4 chains in the default worker
processes) and the cut fit with ``D`` = 8 and 32 dynamics draws (``D`` runs of the same
settings, one after another, plus its own plug-in). Reported: wall time, the wall time per
run and per chain, the ratio to the plug-in, and the largest dynamics share of variance.
The load average at the start and end of each row is recorded: on a shared machine only
ratios within a row mean much.
"""

from __future__ import annotations

import os
import time

import numpy as np

from bayesirl.bench.problems import random_mdp
from bayesirl.execution import sample
from bayesirl.execution.cut import sample_cut
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.model import simulate
from bayesirl.model.transitions import (
    DynamicsPosterior,
    TransitionLog,
    join_logs,
    log_from_demonstrations,
    support_of,
)
from bayesirl.priors import Normal

SIZE, DRAWS_D = 10**3, (8, 32)
EPISODES, LENGTH, FEATURES, LOGGED = 20, 50, 4, 5
CHAINS, DRAWS, WARMUP = 4, 500, 500
PRIOR = Normal(0.0, 2.0)


def problem(n_states: int, seed: int = 21):
    """The likelihood and the dynamics posterior of one case."""
    mdp = random_mdp(n_states, n_features=FEATURES, discount=0.95, seed=seed)
    rng = np.random.default_rng(seed)
    demos = simulate(mdp, rng.normal(size=FEATURES), episodes=EPISODES, length=LENGTH,
                     seed=seed + 1)
    p = mdp.transitions
    rows = np.repeat(np.arange(p.shape[0]), LOGGED)
    nxt = np.array([rng.choice(p.indices[p.indptr[r]:p.indptr[r + 1]],
                               p=p.data[p.indptr[r]:p.indptr[r + 1]]) for r in rows])
    logged = TransitionLog(rows // mdp.n_actions, rows % mdp.n_actions, nxt.astype(np.int64),
                           np.ones(rows.size))
    log = join_logs(logged, log_from_demonstrations(demos))
    post = DynamicsPosterior(support_of("model", p, mdp.n_actions), log,
                             n_actions=mdp.n_actions)
    return BoltzmannLikelihood(mdp, demos), post


def run(quick: bool = False, log=print, size: int = SIZE, draws_d=DRAWS_D) -> dict:
    """Every row; ``quick``: S = 100, D = 2, 2 chains x 40 draws (a smoke run)."""
    if quick:
        size, draws_d = 100, (2,)
    settings = {"chains": 2, "draws": 40, "warmup": 40} if quick else {
        "chains": CHAINS, "draws": DRAWS, "warmup": WARMUP}
    lik, post = problem(size)
    load0 = os.getloadavg()[0]
    t0 = time.perf_counter()  # first call: loads or compiles the kernels; kept out of rows
    sample(lik, PRIOR, seed=0, progress=False, chains=1, draws=5, warmup=5)
    first = time.perf_counter() - t0
    t0 = time.perf_counter()
    sample(lik, PRIOR, seed=1, progress=False, **settings)
    plug = time.perf_counter() - t0
    rows = []
    for d in draws_d:
        load = os.getloadavg()[0]
        t0 = time.perf_counter()
        cut = sample_cut(lik, PRIOR, dynamics=post, dynamics_draws=d, seed=1,
                         progress=False, **settings)
        wall = time.perf_counter() - t0
        runs = d + 1  # the cut fit also fits its plug-in
        row = {"states": size, "dynamics_draws": d, "chains": settings["chains"],
               "draws": settings["draws"], "plug_in_s": plug, "wall_s": wall,
               "s_per_run": wall / runs, "s_per_chain": wall / (runs * settings["chains"]),
               "ratio": wall / plug, "max_share": float(np.max(cut.split().share)),
               "load_1min": [round(load, 2), round(os.getloadavg()[0], 2)]}
        rows.append(row)
        log(f"  S={size}, D={d}: {wall:.1f} s ({row['ratio']:.1f} x plug-in "
            f"{plug:.1f} s); {row['s_per_chain']:.2f} s per chain; load {row['load_1min']}")
    return {"rows": rows, "quick": quick, "load_start": round(load0, 2), "first_call_s": first}


def markdown(results: dict) -> list[str]:
    """The benchmark.md section."""
    lines = ["## Learned dynamics (cut posterior)", "",
             f"Random sparse MDP, A = 4, F = {FEATURES}, discount 0.95; {EPISODES} episodes x "
             f"{LENGTH} steps, {LOGGED} logged outcomes per row; `bench/dynamics.py`. The cut "
             "fit runs D reward fits one after another (plus its plug-in); \"x plug-in\" is "
             "its wall time over one plug-in fit's.", "",
             "| states | D | chains x draws | plug-in s | cut s | s/run | s/chain | "
             "x plug-in | max share | load |", "|---|---|---|---|---|---|---|---|---|---|"]
    for r in results["rows"]:
        lines.append(
            f"| {r['states']} | {r['dynamics_draws']} | {r['chains']} x {r['draws']} | "
            f"{r['plug_in_s']:.1f} | {r['wall_s']:.1f} | {r['s_per_run']:.1f} | "
            f"{r['s_per_chain']:.2f} | {r['ratio']:.1f} | {r['max_share']:.0%} | "
            f"{r['load_1min'][0]:.1f}-{r['load_1min'][1]:.1f} |")
    return lines + [""]
