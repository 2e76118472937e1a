"""Engine benchmark: seconds per ``value_and_grad``, cold and warm, against the plain baseline."""

from __future__ import annotations

import time

import numpy as np

from bayesirl.bench.problems import demonstrations_for, random_mdp, slippery_grid
from bayesirl.bench.reference import reference_value_and_grad
from bayesirl.kernels import soft_max_actions
from bayesirl.likelihood import BoltzmannLikelihood


def _median_time(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def _cases(quick: bool):
    sizes = [10**3, 10**4] if quick else [10**3, 10**4, 10**5]
    for g in (0.95, 0.99):
        for n in sizes:
            yield f"random S={n:.0e}".replace("+0", ""), lambda n=n, g=g: random_mdp(n, discount=g)
        for side in (32, 100):
            yield f"grid {side}x{side}", lambda side=side, g=g: slippery_grid(side, discount=g)


def measure_case(mdp, repeats: int = 7, seed: int = 0) -> dict:
    """Time one problem: ours cold and warm (1% weight changes), the baseline, one sweep."""
    w, demos = demonstrations_for(mdp, episodes=50, length=50, seed=seed)
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

    t_warm = _median_time(warm, repeats)
    big = mdp.n_states >= 10**5
    t_ref = _median_time(lambda: reference_value_and_grad(mdp, demos, w), 1 if big else 3)
    ours = lik.evaluate(w)
    ref = reference_value_and_grad(mdp, demos, w)
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
    out = {"first_call_s": first_call_seconds(), "cases": []}
    for name, make in _cases(quick):
        row = {"problem": name, **measure_case(make())}
        log(
            f"  {name:<16} g={row['discount']}: warm {row['warm_s'] * 1e3:8.1f} ms "
            f"({row['warm_sweeps']:.0f} sweeps), x{row['speedup_warm']:.0f} vs baseline"
        )
        out["cases"].append(row)
    return out
