"""Benchmark of the demonstration designer: rank every query state and every start state.

The estimator is measured on draws built around a point: per-draw log-policies are the
point's soft-optimal Q-values plus the reward change ``phi . (w_m - w0)`` (first order in
the reward, no re-solve), so the numbers isolate the estimator from the per-draw solves,
which are timed separately (a block of warm-started Newton solves on real draws) and
projected to all draws.
The plain-numpy competitor runs the same estimator with the kernels' numpy twins.
"""

from __future__ import annotations

import resource
import time
import tracemalloc

import numpy as np

from bayesirl.bench.problems import slippery_grid
from bayesirl.design import estimators as est
from bayesirl.design.kernels import (
    log_policy_from_q,
    nested_accumulate_ref,
    query_moments_ref,
)
from bayesirl.design.policies import CHUNK_BYTES, solve_block
from bayesirl.kernels import sample_episodes


class SyntheticPolicies:
    """Streams ``(m0, logpol)`` chunks like :class:`DrawPolicies`, without solving.

    A pool of ``chunk`` distinct perturbed policies is built once and every chunk is a view
    of it (draw ``m`` reuses pool entry ``m % chunk``), so generating inputs costs nothing
    next to the estimator and the working set stays one chunk.
    """

    def __init__(self, mdp, q0_by_action, dweights, chunk: int) -> None:
        self.mdp, self.n, self.tp = mdp, dweights.shape[0], 1
        self.chunk = int(min(chunk, dweights.shape[0]))
        phi = np.asarray(mdp.features_sa)  # (S, A, F)
        self.pool = np.stack([log_policy_from_q(np.ascontiguousarray(
            q0_by_action + (phi @ dweights[m]).T))[None] for m in range(self.chunk)])

    def one(self, m: int) -> np.ndarray:
        return self.pool[m % self.chunk]

    def chunks(self):
        for m0 in range(0, self.n, self.chunk):
            yield m0, self.pool[: min(self.n, m0 + self.chunk) - m0]


def _outer_demos(source, outer, length, rng):
    mdp = source.mdp
    tm = mdp.transitions
    starts = np.arange(mdp.n_states, dtype=np.int64)
    states = np.empty((mdp.n_states, outer.shape[0], length + 1), dtype=np.int64)
    actions = np.empty((mdp.n_states, outer.shape[0], length), dtype=np.int64)
    for j, m in enumerate(outer):
        u = rng.random((mdp.n_states, length, 2))
        s, a = sample_episodes(tm.indptr, tm.indices, tm.data, np.exp(source.one(int(m))),
                               starts, length, u)
        states[:, j], actions[:, j] = s, a
    return states, actions


def rank_all(source, n_outer: int, length: int, seed: int, numpy_twins: bool = False,
             trace: bool = False):
    """Gains of every query state and every start state: (seconds, peak traced bytes).

    With ``trace`` the run is under tracemalloc (which slows numpy's allocations, so timed
    runs leave it off and report 0 bytes).
    """
    rng = np.random.default_rng(seed)
    n_s = source.mdp.n_states
    outer = np.sort(rng.choice(source.n, size=n_outer, replace=False)).astype(np.int64)
    g = np.zeros(source.n)
    if trace:
        tracemalloc.start()
    t0 = time.perf_counter()
    kw = {"moments": query_moments_ref} if numpy_twins else {}
    est.query_first(source, np.arange(n_s), g, **kw)
    states, actions = _outer_demos(source, outer, length, rng)
    kw = {"accumulate": nested_accumulate_ref} if numpy_twins else {}
    est.start_given(source, states, actions, g, np.zeros((n_outer, source.n)), outer, **kw)
    seconds = time.perf_counter() - t0
    peak = tracemalloc.get_traced_memory()[1] if trace else 0
    if trace:
        tracemalloc.stop()
    return seconds, peak


def _solve_seconds(mdp, w0, dw, count: int) -> float:
    """Seconds per warm-started solve in a block of ``count`` draws (its cold first solve,
    1 in ``BLOCK_DRAWS`` in the designer, is timed alone and left out)."""
    w, ones = w0 + dw[:count], np.ones(count)
    solve_block(mdp, w, ones, 0, 1)  # kernel load
    t0 = time.perf_counter()
    solve_block(mdp, w, ones, 0, 1)
    t1 = time.perf_counter()
    solve_block(mdp, w, ones, 0, count)
    t2 = time.perf_counter()
    return max(t2 - t1 - (t1 - t0), 0.0) / (count - 1)


def run(quick: bool = False, log=print) -> dict:
    """S = 10^4 (quick: 900), 4000 draws (quick: 200); numpy twin on a subset, scaled."""
    side, n_draws, n_ref = (30, 200, 200) if quick else (100, 4000, 100)
    n_outer, length = 16, 10
    mdp = slippery_grid(side, n_features=8, discount=0.95, seed=0)
    rng = np.random.default_rng(0)
    w0 = rng.normal(size=mdp.n_features)
    dw = 0.05 * rng.normal(size=(n_draws, mdp.n_features))
    q0 = mdp.solve(w0).q_by_action
    per_draw = mdp.n_states * mdp.n_actions * 8
    ours = SyntheticPolicies(mdp, q0, dw, max(1, CHUNK_BYTES // per_draw))
    rank_all(SyntheticPolicies(mdp, q0, dw[:n_outer + 1], 8), n_outer, 2, 1)  # compile/load
    log(f"design: S={mdp.n_states}, {n_draws} draws (ours)")
    t_ours, _ = rank_all(ours, n_outer, length, seed=0)
    # Peak memory of the estimator's own arrays (a second, untimed run under tracemalloc),
    # plus the pool of policies it reads, which stands in for one chunk of solved draws.
    _, peak_ours = rank_all(ours, n_outer, length, seed=0, trace=True)
    peak_ours += ours.pool.nbytes
    log(f"design: plain numpy on {n_ref} draws")
    # Small chunks keep the numpy twin's (n, C, J, L) temporaries near 100 MB.
    ref = SyntheticPolicies(mdp, q0, dw[:n_ref], 2)
    t_ref, _ = rank_all(ref, n_outer, length, seed=0, numpy_twins=True)
    t_ref_scaled = t_ref * n_draws / n_ref  # both passes are linear in the draws
    solve_s = _solve_seconds(mdp, w0, dw, 6 if quick else 11)
    return {"states": mdp.n_states, "actions": mdp.n_actions, "draws": n_draws,
            "n_outer": n_outer, "length": length, "seconds": t_ours,
            "peak_bytes": peak_ours, "numpy_seconds_measured": t_ref, "numpy_draws": n_ref,
            "numpy_seconds": t_ref_scaled,
            "process_max_rss_bytes": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024,
            "speedup": t_ref_scaled / t_ours, "solve_seconds_per_draw": solve_s,
            "solve_seconds_projected": solve_s * n_draws}
