"""Engine benchmark: seconds per ``value_and_grad``, cold and warm, against the plain baseline."""

from __future__ import annotations

import os
import time

import numpy as np

from bayesirl.bench.problems import (
    BUS_TRUTH,
    bus_engine,
    demonstrations_for,
    random_mdp,
    slippery_grid,
)
from bayesirl.bench.reference import reference_newton_value_and_grad, reference_value_and_grad
from bayesirl.kernels import soft_max_actions
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.model import simulate


def _median_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


# From this discount on, the baseline is Newton's method (value iteration from zero would
# need ~log(1/tol) / (1 - g) sweeps: 230,000 at 0.9999).
HIGH = 0.999


def _cases(quick: bool):
    sizes = [10**3, 10**4] if quick else [10**3, 10**4, 10**5]
    for g in (0.95, 0.99):
        for n in sizes:
            yield f"random S={n:.0e}".replace("+0", ""), lambda n=n, g=g: random_mdp(n, discount=g)
        for side in (32, 100):
            yield f"grid {side}x{side}", lambda side=side, g=g: slippery_grid(side, discount=g)
    for g in (HIGH, 0.9999):  # the discounts of dynamic discrete choice
        yield "random S=1e4", lambda g=g: random_mdp(10**4, discount=g)
        yield "grid 100x100", lambda g=g: slippery_grid(100, discount=g)
    for g in (0.95, HIGH, 0.9999):
        yield "bus engine", lambda g=g: bus_engine(g)


def _data(mdp, seed):
    if mdp.feature_names == ("theta1", "RC"):  # the bus engine: 100 buses x 100 months
        return BUS_TRUTH, simulate(mdp, BUS_TRUTH, episodes=100, length=100, seed=seed, start=0)
    return demonstrations_for(mdp, episodes=50, length=50, seed=seed)


def _baseline(mdp, direct: bool):
    """``(name, function)``: value iteration, or Newton at high discounts (see HIGH) with
    sparse LU steps (``direct``: grids and small problems) or GMRES (random sparse ones)."""
    if mdp.discount < HIGH:
        return "value iteration", reference_value_and_grad
    return ("Newton + spsolve" if direct else "Newton + GMRES",
            lambda m, d, w: reference_newton_value_and_grad(m, d, w, direct=direct))


def measure_case(mdp, repeats: int = 7, seed: int = 0, direct: bool = True) -> dict:
    """Time one problem: ours cold and warm (1% weight changes), the baseline, one sweep.

    ``direct``: at high discounts the Newton baseline factors its steps (see _baseline)."""
    w, demos = _data(mdp, seed)
    lik = BoltzmannLikelihood(mdp, demos)
    lik.evaluate(w)  # warm-up: compiled kernels loaded, caches allocated

    def cold():
        lik.reset()
        lik.evaluate(w)

    t_cold = _median_time(cold, max(3, repeats // 2))
    rng = np.random.default_rng(seed + 7)
    lik.evaluate(w)
    state = {"w": w}

    def warm():
        state["w"] = state["w"] * (1.0 + 0.01 * rng.standard_normal(w.shape))
        lik.evaluate(state["w"])

    before = dict(lik.work)
    t_warm = _median_time(warm, repeats)
    work = {k: (lik.work[k] - before[k]) / repeats for k in before}
    big = mdp.n_states >= 10**5
    name, baseline = _baseline(mdp, direct)
    t_ref = _median_time(lambda: baseline(mdp, demos, w), 1 if big else 3)
    ours = lik.evaluate(w)
    ref = baseline(mdp, demos, w)
    v = np.ones(mdp.n_states)
    t_sweep = _median_time(lambda: mdp.transitions @ v, 51)
    q = np.random.default_rng(1).normal(size=(mdp.n_actions, mdp.n_states))
    t_softmax = _median_time(lambda: soft_max_actions(q), 51)
    return {
        "states": mdp.n_states,
        "discount": mdp.discount,
        "cold_s": t_cold,
        "warm_s": t_warm,
        "reference_s": t_ref,
        "sweep_s": t_sweep,
        "exp_log_sweeps": t_softmax / t_sweep,
        "warm_sweeps": t_warm / t_sweep,
        "cold_sweeps": t_cold / t_sweep,
        "speedup_warm": t_ref / t_warm,
        "speedup_cold": t_ref / t_cold,
        "loglik_gap": abs(ours.loglik - ref[0]),
        "grad_gap": float(np.max(np.abs(ours.grad_weights - ref[1]))),
        "grad_scale": float(np.max(np.abs(ref[1]))),
        "baseline": name,
        "warm_newton_steps": work["newton_steps"],
        "warm_value_matvecs": work["value_matvecs"],
        "warm_adjoint_matvecs": work["adjoint_matvecs"],
    }


def first_call_seconds() -> float:
    """Seconds for the first evaluation in this process (compiled-kernel load or compile)."""
    mdp = random_mdp(50, discount=0.9, seed=3)
    w, demos = demonstrations_for(mdp, episodes=2, length=5)
    t0 = time.perf_counter()
    BoltzmannLikelihood(mdp, demos).evaluate(w)
    return time.perf_counter() - t0


def run(quick: bool = False, log=print) -> dict:
    """Run every engine case; returns a JSON-ready dict."""
    # Other work on the machine inflates the times: the 1-minute load at start and end.
    out = {"first_call_s": first_call_seconds(), "cases": [],
           "load_1min": [os.getloadavg()[0]]}
    for name, make in _cases(quick):
        row = {"problem": name, **measure_case(make(), direct=not name.startswith("random"))}
        log(
            f"  {name:<16} g={row['discount']}: warm {row['warm_s'] * 1e3:8.1f} ms "
            f"({row['warm_sweeps']:.0f} sweeps), x{row['speedup_warm']:.0f} vs baseline"
        )
        out["cases"].append(row)
    out["load_1min"].append(os.getloadavg()[0])
    return out
