"""NUTS side by side: bayesirl's sampler against numpyro's on the JAX competitor's density.

Same problem, demonstrations and prior (``Normal(0, 5)`` on every weight, rationality fixed
at 1), target acceptance 0.8, tree depth <= 10, diagonal mass matrix, 4 chains. The chains
run one after another in this process, alternating between the two codes (our chain 1,
their chain 1, our chain 2, ...), so both meet the same machine load; each chain is timed
by process CPU time, split into warmup and sampling.

Ours: ``sample(chains=1, backend=Processes(1))`` per chain with its own likelihood; the sampling
share of its CPU time is its share of gradient evaluations (as in ``bench/sampler.py``).
numpyro: its NUTS kernel driven one compiled step at a time (``_Numpyro`` says why),
warmup and sampling timed separately, the one compilation reported and kept out. Its
density is anchored at the posterior mode found first by L-BFGS (``scipy.optimize``) on
the JAX gradient; that set-up is reported, not charged.
"""

from __future__ import annotations

import time

import numpy as np
import scipy.optimize

from bayesirl import arviz_compat
from bayesirl.bench import jaxmodel
from bayesirl.bench.problems import demonstrations_for
from bayesirl.execution import sample
from bayesirl.execution.backend import Processes
from bayesirl.likelihood import BoltzmannLikelihood

PRIOR_SCALE = 5.0  # bayesirl.priors.DEFAULT_SCALE, the default prior of sample()


def lengths(n_states: int, quick: bool) -> tuple[int, int]:
    """``(draws, warmup)`` per chain."""
    if quick:
        return 200, 200
    return (500, 500) if n_states >= 10**4 else (1000, 1000)


def _mode(jl, w0: np.ndarray) -> np.ndarray:
    """Posterior mode under the ``Normal(0, PRIOR_SCALE)`` prior, by L-BFGS."""
    def neg(w):
        v, g = jl.value_and_grad(w)
        return -(v - 0.5 * w @ w / PRIOR_SCALE**2), -(g - w / PRIOR_SCALE**2)

    return scipy.optimize.minimize(neg, w0, jac=True, method="L-BFGS-B").x


class _Numpyro:
    """numpyro's NUTS kernel on the competitor's potential, one compiled step reused.

    ``MCMC.warmup``/``run`` rebuilt and recompiled their loops for every chain (measured: 15
    compilations, ~25 s per chain on a loaded machine), so the kernel is driven directly:
    ``NUTS(potential_fn=...)``, ``init`` per chain, and one ``jax.jit`` of ``sample`` whose
    compiled code every iteration of every chain reuses (what numpyro's own progress-bar
    loop does). Compile time is the first step's, measured once and kept out.
    """

    def __init__(self, jl, n_features: int, warmup: int):
        from numpyro.infer import NUTS

        jax, jnp = jl.jax, jl.jax.numpy

        def potential(w):
            return -(jl._loglik(jl.params, w) - 0.5 * jnp.sum(w * w) / PRIOR_SCALE**2)

        self.jax, self.n_features, self.warmup = jax, n_features, warmup
        self.kernel = NUTS(potential_fn=potential, target_accept_prob=0.8, max_tree_depth=10,
                           dense_mass=False)
        self.step = jax.jit(lambda state: self.kernel.sample(state, (), {}))
        self.compile_s = None

    def chain(self, seed: int, draws: int) -> dict:
        jax = self.jax
        key, start = jax.random.split(jax.random.PRNGKey(seed))
        # numpyro's default initialisation: uniform in (-2, 2) on the unconstrained scale
        w0 = jax.random.uniform(start, (self.n_features,), minval=-2.0, maxval=2.0)
        state = self.kernel.init(key, self.warmup, init_params=w0, model_args=(),
                                 model_kwargs={})
        if self.compile_s is None:
            t0 = time.process_time()
            jax.block_until_ready(self.step(state))  # trace + compile; result discarded
            self.compile_s = time.process_time() - t0
        out, steps = [], []
        t0 = time.process_time()
        for i in range(self.warmup + draws):
            if i == self.warmup:
                t1 = time.process_time()
            state = self.step(state)
            steps.append(state.num_steps)
            if i >= self.warmup:
                out.append(state.z)
        out, steps = np.asarray(jax.device_get(out)), np.asarray(jax.device_get(steps))
        t2 = time.process_time()
        return {"warmup_s": t1 - t0, "sampling_s": t2 - t1, "draws": out,
                "warmup_evals": int(steps[: self.warmup].sum()),
                "sampling_evals": int(steps[self.warmup:].sum()),
                "divergences": None}


def _our_chain(mdp, demos, draws: int, warmup: int, seed: int) -> dict:
    lik = BoltzmannLikelihood(mdp, demos)
    t0 = time.process_time()
    post = sample(lik, chains=1, draws=draws, warmup=warmup, seed=seed, backend=Processes(1),
                  progress=False)
    total = time.process_time() - t0
    sampling_evals = int(post.stats["n_steps"].sum())
    total_evals = int(sum(a["n_evals"] for a in post.settings["adapted"]))
    share = sampling_evals / max(total_evals, 1)
    return {"warmup_s": total * (1 - share), "sampling_s": total * share,
            "draws": np.asarray(post.weights)[0], "sampling_evals": sampling_evals,
            "warmup_evals": total_evals - sampling_evals,
            "divergences": int(post.diagnostics.divergences)}


def _summary(chains: list[dict]) -> dict:
    x = np.stack([c["draws"] for c in chains])  # (chains, draws, F)
    ess = [arviz_compat.ess(x[:, :, f]) for f in range(x.shape[2])]
    rhat = [arviz_compat.rhat(x[:, :, f]) for f in range(x.shape[2])]
    sampling = sum(c["sampling_s"] for c in chains)
    total = sampling + sum(c["warmup_s"] for c in chains)
    evals = sum(c["sampling_evals"] for c in chains)
    return {"min_bulk_ess": float(min(ess)), "max_rhat": float(max(rhat)),
            "sampling_cpu_s": sampling, "total_cpu_s": total,
            "ess_per_sampling_cpu_s": float(min(ess)) / sampling,
            "ess_per_total_cpu_s": float(min(ess)) / total,
            "evals_per_ess": evals / float(min(ess)),
            "cpu_s_per_eval": sampling / max(evals, 1),
            "mean": x.reshape(-1, x.shape[2]).mean(axis=0).tolist(),
            "sd": x.reshape(-1, x.shape[2]).std(axis=0).tolist(),
            "ess": [float(e) for e in ess]}


def _agreement(a: dict, b: dict) -> float:
    """Largest |mean difference| over weights in units of its Monte-Carlo standard error."""
    z = [abs(ma - mb) / np.hypot(sa / np.sqrt(ea), sb / np.sqrt(eb))
         for ma, mb, sa, sb, ea, eb in zip(a["mean"], b["mean"], a["sd"], b["sd"],
                                           a["ess"], b["ess"], strict=True)]
    return float(max(z))


def compare(name: str, mdp, method: str, quick: bool = False, log=print, chains: int = 4,
            seed: int = 1, draws: int | None = None, warmup: int | None = None) -> dict:
    """Both samplers on one problem; returns a JSON-ready row (draws left out).

    ``draws``, ``warmup``: per chain (default :func:`lengths`)."""
    from bayesirl.bench.competitor import load

    d, wu = lengths(mdp.n_states, quick)
    draws, warmup = draws or d, warmup or wu
    w, demos = demonstrations_for(mdp, episodes=50, length=50, seed=0)
    loads = [load()]
    jl = jaxmodel.JaxLikelihood(mdp, demos, method=method)
    t0 = time.process_time()
    jl.anchor(_mode(jl, w))
    setup = time.process_time() - t0
    theirs_nuts = _Numpyro(jl, mdp.n_features, warmup)
    ours, theirs = [], []
    for c in range(chains):
        ours.append(_our_chain(mdp, demos, draws, warmup, seed + c))
        theirs.append(theirs_nuts.chain(seed + c, draws))
        loads.append(load())
        log(f"    {name} chain {c + 1}/{chains}: ours {ours[-1]['sampling_s']:.1f} s, "
            f"numpyro {theirs[-1]['sampling_s']:.1f} s sampling CPU, load {loads[-1]:.1f}")
    compile_s = theirs_nuts.compile_s
    a, b = _summary(ours), _summary(theirs)
    a["divergences"] = sum(c["divergences"] for c in ours)
    row = {"problem": name, "states": mdp.n_states, "discount": mdp.discount,
           "draws": draws, "warmup": warmup, "chains": chains, "jax_method": method,
           "load_1min": loads, "jax_compile_s": compile_s, "jax_setup_s": setup,
           "ours": a, "jax": b, "mean_gap_mcse": _agreement(a, b),
           "ratio_sampling": a["ess_per_sampling_cpu_s"] / b["ess_per_sampling_cpu_s"],
           "ratio_total": a["ess_per_total_cpu_s"] / b["ess_per_total_cpu_s"]}
    log(f"  {name}: ESS per sampling CPU-s ours {a['ess_per_sampling_cpu_s']:.3g}, numpyro "
        f"{b['ess_per_sampling_cpu_s']:.3g} (ours/JAX {row['ratio_sampling']:.2f})")
    return row
