"""The competitor suite: bayesirl against the same model in JAX + numpyro (issue 19).

Per-gradient CPU time of a warm ``value_and_grad`` (ours) against the JAX competitor's
compiled ``value_and_grad`` (``bench/jaxmodel.py``, both of its fixed-point solvers), then
bulk-ESS per CPU second of NUTS (``bench/competitor_nuts.py``). Times are process CPU time
(``time.process_time``: every thread of this process, so a multi-threaded library is not
flattered by wall clock on a loaded machine), medians of repeats; the two implementations'
repeats are interleaved call by call, so a change of machine load hits both alike. JAX
compile time is measured separately and kept out. The 1-minute load average is recorded
with every row: on 2 cores, a load above ~2 means other work shared the CPU and the absolute
times are inflated (their ratios less so, thanks to the interleaving).
"""

from __future__ import annotations

import cProfile
import os
import pstats
import time
from pathlib import Path

import numpy as np

from bayesirl.bench import competitor_nuts, jaxmodel
from bayesirl.bench.problems import demonstrations_for, random_mdp, slippery_grid
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.threads import one_blas_thread

METHODS = ("vi", "newton")


def problems(quick: bool = False):
    """``(name, mdp)``: random sparse S = 10^3 and 10^4 at 0.95, a 30x30 grid at 0.99."""
    yield "random S=1e3", random_mdp(10**3, discount=0.95, seed=11)
    if not quick:
        yield "random S=1e4", random_mdp(10**4, discount=0.95, seed=11)
    yield "grid 30x30", slippery_grid(30, discount=0.99, seed=11)


def load() -> float:
    """The 1-minute load average."""
    return float(os.getloadavg()[0])


def _cpu(fn) -> float:
    t0 = time.process_time()
    fn()
    return time.process_time() - t0


def _walk(w: np.ndarray, n: int, seed: int) -> np.ndarray:
    """``n`` points, each a 1% multiplicative change of the last (the engine suite's walk)."""
    rng = np.random.default_rng(seed)
    return w * np.cumprod(1.0 + 0.01 * rng.standard_normal((n, w.size)), axis=0)


def gradient_row(name: str, mdp, repeats: int = 30, seed: int = 0) -> dict:
    """Interleaved per-gradient CPU times of ours (warm) and the JAX solvers on one problem.

    The JAX likelihood is anchored at the walk's start (``JaxLikelihood.anchor``), as it is
    at the posterior mode inside a fit; ours warm-starts from its previous call, as in a fit.
    """
    w, demos = demonstrations_for(mdp, episodes=50, length=50, seed=seed)
    loads = [load()]
    ours = BoltzmannLikelihood(mdp, demos)
    theirs, compile_s, setup_s = {}, {}, {}
    for m in METHODS:
        jl = jaxmodel.JaxLikelihood(mdp, demos, method=m)
        compile_s[m] = _cpu(lambda jl=jl: jl.value_and_grad(w))  # first call: trace + compile
        setup_s[m] = _cpu(lambda jl=jl: jl.anchor(w))  # includes the anchor's own compile
        jl.value_and_grad(w)
        theirs[m] = jl
    ours.evaluate(w)  # compiled kernels loaded, caches allocated
    points = _walk(w, repeats, seed + 7)
    times = {"ours": [], **{m: [] for m in METHODS}}
    before = dict(ours.work)
    with one_blas_thread():
        for i, x in enumerate(points):
            order = ["ours", *METHODS]
            for who in order[i % 3:] + order[: i % 3]:  # rotate who goes first
                f = ours.value_and_grad if who == "ours" else theirs[who].value_and_grad
                times[who].append(_cpu(lambda f=f, x=x: f(x)))
    work = {k: (ours.work[k] - before[k]) / repeats for k in before}
    loads.append(load())
    return _row(name, mdp, ours, theirs, points, times, work, compile_s, setup_s, loads)


def _row(name, mdp, ours, theirs, points, times, work, compile_s, setup_s, loads) -> dict:
    v = np.ones(mdp.n_states)
    sweep = float(np.median([_cpu(lambda: mdp.transitions @ v) for _ in range(201)]))
    x = points[-1]
    l0, g0 = ours.value_and_grad(x)
    row = {"problem": name, "states": mdp.n_states, "discount": mdp.discount,
           "repeats": len(points), "load_1min": loads, "sweep_s": sweep,
           "ours_s": float(np.median(times["ours"])), "work": work, "jax": {}}
    for m, jl in theirs.items():
        l1, g1 = jl.value_and_grad(x)
        row["jax"][m] = {
            "seconds": float(np.median(times[m])), "compile_s": compile_s[m],
            "setup_s": setup_s[m],
            "iterations": int(jl.iterations(jl.params, jl.jax.numpy.asarray(x))),
            "loglik_rel_gap": abs(l1 - l0) / abs(l0),
            "grad_rel_gap": float(np.max(np.abs(g1 - g0)) / np.max(np.abs(g0)))}
    best = min(row["jax"], key=lambda m: row["jax"][m]["seconds"])
    row["jax_best"] = best
    row["ours_over_jax"] = row["ours_s"] / row["jax"][best]["seconds"]
    return row


def profile(mdp, calls: int = 40, seed: int = 0, top: int = 8) -> list[dict]:
    """Where a warm ``value_and_grad`` spends its time: cProfile's own time by source file."""
    w, demos = demonstrations_for(mdp, episodes=50, length=50, seed=seed)
    lik = BoltzmannLikelihood(mdp, demos)
    lik.evaluate(w)
    prof = cProfile.Profile()
    with one_blas_thread():
        prof.enable()
        for x in _walk(w, calls, seed + 7):
            lik.value_and_grad(x)
        prof.disable()
    by_file: dict[str, float] = {}
    for (path, _line, func), (_cc, _nc, tottime, _ct, _callers) in pstats.Stats(prof).stats.items():
        key = _where(path, func)
        by_file[key] = by_file.get(key, 0.0) + tottime
    total = sum(by_file.values())
    ranked = sorted(by_file.items(), key=lambda kv: -kv[1])[:top]
    return [{"where": k, "share": t / total, "ms_per_call": 1e3 * t / calls} for k, t in ranked]


def _where(path: str, func: str) -> str:
    if path == "~":  # C functions: name them (scipy's csr mat-vec, numpy reductions, ...)
        return func.strip("<>")
    parts = Path(path).parts
    for root in ("bayesirl", "scipy", "numpy", "numba"):
        if root in parts:
            return "/".join(parts[parts.index(root):])
    return Path(path).name


def run(quick: bool = False, log=print, nuts: bool = True, only=None,
        lengths: tuple[int, int] | None = None) -> dict:
    """Run the suite; ``only``: problem names to measure (default all of :func:`problems`);
    ``lengths``: NUTS ``(draws, warmup)`` per chain (default ``competitor_nuts.lengths``).

    Raises ``jaxmodel.MissingExtra`` (naming the extra to install) without jax/numpyro.
    """
    jaxmodel.require()
    import jax

    out = {"jax": jax.__version__, "numpyro": __import__("numpyro").__version__,
           "gradient": [], "profile": {}, "nuts": [], "quick": quick,
           "nuts_lengths": None if lengths is None else list(lengths)}
    chosen = [(n, m) for n, m in problems(quick) if only is None or n in only]
    for name, mdp in chosen:
        row = gradient_row(name, mdp, repeats=10 if quick else 30)
        log(f"  {name}: ours {row['ours_s'] * 1e3:.2f} ms, JAX "
            + ", ".join(f"{m} {r['seconds'] * 1e3:.2f} ms" for m, r in row["jax"].items())
            + f" per gradient (CPU), load {row['load_1min'][0]:.1f}")
        out["gradient"].append(row)
        if mdp.n_states in (10**3, 10**4) and not quick:
            out["profile"][name] = profile(mdp)
    if nuts:
        for row, (name, mdp) in zip(out["gradient"], chosen, strict=True):
            draws, warmup = lengths or (None, None)
            out["nuts"].append(competitor_nuts.compare(
                name, mdp, method=row["jax_best"], quick=quick, log=log, draws=draws,
                warmup=warmup))
    return out
