"""Further evidence: the price of not recording actions, and the memory of gaps.

At S = 10^3 and 10^4 (a random sparse MDP whose actions share successors: each state has 4
random neighbour states and each of its A = 4 actions a Dirichlet(1) distribution over those
same neighbours; F = 4 state features ~ N(0, 1); discount 0.95), 20 episodes of 50 steps
are simulated from ``w ~ N(0, 1)`` (seed 20). The same walks
are then given two ways:

* **actions recorded**: the Boltzmann likelihood (``BoltzmannTerm``);
* **state-only**: the same states, no action (``PartialTerm``: each step sums over actions).

Per case: seconds per ``value_and_grad`` of the term (warm: median of repeats at small random
moves around the truth, as neighbouring leapfrog positions) and NUTS on prior ``N(0, 2^2)`` +
term (``run_chain``, chains one after another in this process): the smallest bulk-ESS over
the weights per second of sampling, and gradient evaluations per ESS. The state-only
posterior is wider (less is known), so ESS/s compares the cost of a usable draw, not of the
same posterior. (On ``bench/problems.random_mdp`` each action has its own random successors,
so the next state almost always reveals the action and the two posteriors coincide to 1e-10:
measured, not a useful comparison.)

**Memory of the forward pass with gaps**: the same walks with only every ``(g+1)``-th state
recorded (gaps of ``g`` hidden states, no action) for ``g`` in 1, 5, 20; the peak of
Python-tracked allocations (``tracemalloc``, which numpy reports to) during the forward-
backward pass over the pieces at a solved policy (``PartialTerm._pass`` with expected
counts), and during one whole ``evaluate`` with gradient (which adds the soft Bellman and
adjoint solves). The machine's 1-minute load
average is recorded per row: on a shared machine times compare only within a row.
"""

from __future__ import annotations

import os
import time
import tracemalloc

import numpy as np
import scipy.sparse as sp

from bayesirl import arviz_compat
from bayesirl.errors import SolverError
from bayesirl.evidence.boltzmann import BoltzmannTerm
from bayesirl.evidence.partial import PartialEpisodes, PartialTerm, state_only
from bayesirl.likelihood import BoltzmannLikelihood, marginal
from bayesirl.model import TabularMDP, simulate
from bayesirl.sampler import run_chain

SIZES = (10**3, 10**4)
GAPS = (1, 5, 20)
EPISODES, LENGTH, FEATURES, SEED = 20, 50, 4, 20
CHAINS, DRAWS, WARMUP, PRIOR_SD = 2, 500, 500, 2.0


def shared_mdp(n_states: int, n_actions: int = 4, neighbours: int = 4, seed: int = SEED):
    """Each state's actions are Dirichlet(1) distributions over the same random neighbours."""
    rng = np.random.default_rng(seed)
    near = rng.integers(0, n_states, size=(n_states, neighbours))
    cols = np.repeat(near, n_actions, axis=0)  # row s*A + a: the neighbours of s
    probs = rng.dirichlet(np.ones(neighbours), size=n_states * n_actions)
    m = sp.csr_matrix((probs.ravel(), (np.repeat(np.arange(n_states * n_actions), neighbours),
                                       cols.ravel())), shape=(n_states * n_actions, n_states))
    m.sum_duplicates()  # a neighbour drawn twice: its probabilities add
    return TabularMDP(m, rng.normal(size=(n_states, FEATURES)), discount=0.95)


def problem(n_states: int, episodes: int = EPISODES, length: int = LENGTH):
    """The MDP, the truth and the simulated walks of one size."""
    mdp = shared_mdp(n_states)
    w = np.random.default_rng(SEED).normal(size=FEATURES)
    return mdp, w, simulate(mdp, w, episodes=episodes, length=length, seed=SEED + 1)


def terms(mdp, demos) -> dict:
    """The two readings of the same walks."""
    return {"actions": BoltzmannTerm(BoltzmannLikelihood(mdp, demos)),
            "state-only": PartialTerm(mdp, state_only([s for s, _ in demos.episodes]))}


def density(term):
    """``log N(w; 0, PRIOR_SD^2) + term`` and its gradient (the sampler's coordinates are w)."""
    def f(w):
        try:
            v = term.evaluate({"weights": w, "rationality": 1.0})
        except SolverError:
            return -np.inf, np.full(w.size, np.nan)
        return (v.logp - 0.5 * w @ w / PRIOR_SD**2,
                v.grads["weights"] - w / PRIOR_SD**2)
    return f


def per_gradient(f, w: np.ndarray, repeats: int, seed: int = 0) -> float:
    """Median seconds of a warm value_and_grad near ``w``."""
    rng = np.random.default_rng(seed)
    f(w)
    times = []
    for _ in range(repeats):
        t = w + 1e-3 * rng.standard_normal(w.size)
        t0 = time.perf_counter()
        f(t)
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def ess_rate(f, n_features: int, chains: int, draws: int, warmup: int) -> dict:
    """NUTS chains one after another; smallest bulk-ESS over weights per sampling second."""
    seeds = np.random.SeedSequence(SEED).spawn(chains)
    results, wall = [], 0.0
    for s in seeds:
        t0 = time.perf_counter()
        results.append(run_chain(f, np.zeros(n_features), draws, warmup, s))
        wall += time.perf_counter() - t0
    x = np.stack([r.draws for r in results])  # (C, D, F)
    sampling = float(sum(np.sum(r.stats["n_steps"]) for r in results))
    total = float(sum(r.n_evals for r in results))
    sampling_s = wall * sampling / max(total, 1.0)
    ess = min(arviz_compat.ess(x[..., i]) for i in range(n_features))
    return {"ess": ess, "ess_per_s": ess / sampling_s, "evals_per_ess": sampling / ess,
            "sampling_s": sampling_s, "sd": x.reshape(-1, n_features).std(axis=0).tolist(),
            "divergences": int(sum(np.sum(r.stats["divergent"]) for r in results))}


def gap_memory(mdp, demos, gap: int) -> dict:
    """Peak tracked bytes of one evaluate with gradient, every (gap+1)-th state recorded."""
    states = []
    for s, _ in demos.episodes:
        hidden = s.copy()
        keep = np.zeros(s.size, dtype=bool)
        keep[::gap + 1] = True
        keep[-1] = True
        hidden[~keep] = -1
        states.append(hidden)
    term = PartialTerm(mdp, PartialEpisodes(states, [[-1] * (s.size - 1) for s in states]))
    q = {"weights": np.zeros(mdp.n_features), "rationality": 1.0}
    term.evaluate(q)  # the solver's first-call work out of the way
    policy = marginal.solve_policy(mdp, term._cache, q["weights"], 1.0, term.work).policy
    out = {"gap": gap, "gaps": len(term.gaps),
           "policy_bytes": mdp.n_states * mdp.n_actions * 8}
    for what, fn in (("pass", lambda: term._pass(policy, True)),
                     ("evaluate", lambda: term.evaluate(q))):
        tracemalloc.start()
        t0 = time.perf_counter()
        fn()
        out[f"{what}_seconds"] = time.perf_counter() - t0
        out[f"{what}_peak_bytes"] = int(tracemalloc.get_traced_memory()[1])
        tracemalloc.stop()
    return out


def case(n_states: int, chains: int, draws: int, warmup: int, repeats: int,
         episodes: int = EPISODES, length: int = LENGTH, gaps=GAPS) -> dict:
    """One row per size (see the module docstring)."""
    load0 = os.getloadavg()[0]
    mdp, w, demos = problem(n_states, episodes, length)
    row = {"states": n_states, "episodes": episodes, "length": length}
    for name, term in terms(mdp, demos).items():
        f = density(term)
        row[name] = {"s_per_gradient": per_gradient(f, w, repeats),
                     **ess_rate(f, mdp.n_features, chains, draws, warmup)}
    row["price"] = row["state-only"]["s_per_gradient"] / row["actions"]["s_per_gradient"]
    row["memory"] = [gap_memory(mdp, demos, g) for g in gaps if g < length]
    row["load_1min"] = [round(load0, 2), round(os.getloadavg()[0], 2)]
    return row


def run(quick: bool = False, log=print, sizes=SIZES) -> dict:
    """Every size; ``quick``: S = 200, 4 walks x 10 steps, 1 chain x 40 draws (smoke run)."""
    if quick:
        rows = [case(200, 1, 40, 40, 3, episodes=4, length=10, gaps=(1, 5))]
    else:
        rows = [case(n, CHAINS, DRAWS, WARMUP, 20) for n in sizes]
    for r in rows:
        log(f"  S={r['states']}: gradient {r['actions']['s_per_gradient'] * 1e3:.2f} ms with "
            f"actions, {r['state-only']['s_per_gradient'] * 1e3:.2f} ms state-only "
            f"(x{r['price']:.2f}); ESS/s {r['actions']['ess_per_s']:.3g} vs "
            f"{r['state-only']['ess_per_s']:.3g}; load {r['load_1min']}")
    return {"rows": rows, "quick": quick}


def markdown(results: dict) -> list[str]:
    """The benchmark.md section."""
    lines = ["## Further evidence: state-only walks and gaps", "",
             f"Random sparse MDP whose actions share successors, A = 4, F = {FEATURES}, "
             "discount 0.95; the same simulated "
             "walks with actions recorded and state-only (`bench/evidence.py`). s/gradient: "
             "warm value_and_grad of the term; ESS/s: smallest bulk-ESS over the weights per "
             "second of NUTS sampling (the state-only posterior is wider). Load: 1-minute "
             "load average at the start and end of the row.", "",
             "| states | walks | s/gradient actions | s/gradient state-only | x | "
             "ESS/s actions | ESS/s state-only | evals/ESS actions | evals/ESS state-only | "
             "load |", "|---|---|---|---|---|---|---|---|---|---|"]
    for r in results["rows"]:
        a, s = r["actions"], r["state-only"]
        lines.append(
            f"| {r['states']} | {r['episodes']} x {r['length']} | {a['s_per_gradient']:.3g} | "
            f"{s['s_per_gradient']:.3g} | {r['price']:.2f} | {a['ess_per_s']:.3g} | "
            f"{s['ess_per_s']:.3g} | {a['evals_per_ess']:.1f} | {s['evals_per_ess']:.1f} | "
            f"{r['load_1min'][0]:.1f}-{r['load_1min'][1]:.1f} |")
    lines += ["", "Memory with gaps of g hidden states (peak of tracked allocations of the "
              "forward-backward pass, and of a whole evaluate with gradient; one policy array "
              "S x A x 8 bytes for scale):", "",
              "| states | g | gaps | pass MB | pass s | evaluate MB | evaluate s | policy MB |",
              "|---|---|---|---|---|---|---|---|"]
    for r in results["rows"]:
        for m in r["memory"]:
            lines.append(f"| {r['states']} | {m['gap']} | {m['gaps']} | "
                         f"{m['pass_peak_bytes'] / 1e6:.2f} | {m['pass_seconds']:.3g} | "
                         f"{m['evaluate_peak_bytes'] / 1e6:.2f} | "
                         f"{m['evaluate_seconds']:.3g} | {m['policy_bytes'] / 1e6:.3f} |")
    return lines + [""]
