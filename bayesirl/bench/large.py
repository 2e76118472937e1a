"""Large-problem benchmark: a full NUTS fit at S = 10^3, 10^4, 10^5 states and how cost grows.

Per size: the wall time of ``sample`` (4 chains on the default worker processes) split into
warmup and sampling by gradient evaluations (as ``bench/sampler.py`` does), ESS and R-hat,
tree statistics, peak memory of this process and of the chain workers, the first and the warm
per-gradient time in this process, and the solver work per gradient (``bench/solverwork.py``).

Peak memory comes from ``getrusage``: ``RUSAGE_SELF`` is this process's peak resident set so
far and ``RUSAGE_CHILDREN`` that of the largest child waited for so far (Linux, KiB). Both are
process-lifetime maxima, so sizes run in ascending order and each row reads its own problem's
peak; forked workers share the parent's pages at first, so main + largest child is an upper
bound on the total resident memory, not the total itself. The total itself is sampled: the
peak over the fit of the proportional set sizes of the main process and its workers summed
(``bench/memory.py``, Linux only), which counts each shared page once.
"""

from __future__ import annotations

import os
import resource
import sys
import threading
import time
from collections.abc import Callable, Iterable
from contextlib import contextmanager
from datetime import datetime, timezone

import numpy as np

from bayesirl.bench.memory import PeakPss
from bayesirl.bench.problems import demonstrations_for, random_mdp
from bayesirl.bench.report import machine
from bayesirl.bench.solverwork import profile
from bayesirl.execution import sample
from bayesirl.execution.backend import Processes
from bayesirl.likelihood import BoltzmannLikelihood

SIZES = (10**3, 10**4, 10**5)
CHAINS = 4
DRAWS = 1000
WARMUP = 300
EPISODES, LENGTH = 200, 100
WARM_REPEATS = 10  # gradients after 1% weight changes, for the warm per-gradient median
PROFILE_POINTS = 20  # gradients along the solver profile's random walk
HEARTBEAT = 300.0  # seconds between "still sampling" lines during a fit
PSS_EVERY = 1.0  # seconds between samples of the total proportional set size (bench/memory.py)


def problem(n_states: int):
    """The benchmark MDP with ``n_states`` states, its true weights and demonstrations.

    Parameters
    ----------
    n_states : int

    Returns
    -------
    tuple
        ``(mdp, weights, demonstrations)``: A = 4, 4 successors, F = 8, discount 0.95, seed
        0, 200 demonstrations of 100 steps.
    """
    mdp = random_mdp(n_states, n_actions=4, successors=4, n_features=8, discount=0.95, seed=0)
    w, demos = demonstrations_for(mdp, episodes=EPISODES, length=LENGTH, seed=0)
    return mdp, w, demos


def _peak_bytes(who: int) -> int:
    peak = resource.getrusage(who).ru_maxrss
    return int(peak if sys.platform == "darwin" else peak * 1024)  # bytes on macOS, else KiB


def _current_rss_bytes() -> int | None:
    """This process's resident set now (Linux ``/proc``), or None elsewhere."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return None


class _Clock:
    def __init__(self, log) -> None:
        self.log, self.t0 = log, time.perf_counter()

    def line(self, text: str) -> None:
        self.log(f"[{time.perf_counter() - self.t0:8.1f} s] {text}")


@contextmanager
def _heartbeat(clock: _Clock, label: str, every: float):
    """A line every ``every`` seconds while the body runs (a fit at 10^5 takes an hour)."""
    done = threading.Event()
    start = time.perf_counter()

    def beat():
        while not done.wait(every):
            clock.line(f"{label}: still running ({time.perf_counter() - start:.0f} s)")

    thread = threading.Thread(target=beat, daemon=True)
    thread.start()
    try:
        yield
    finally:
        done.set()
        thread.join()


def _fit(lik, draws, warmup, chains, processes, seed=0) -> tuple[dict, object]:
    before = _current_rss_bytes()
    t0 = time.perf_counter()
    with PeakPss(PSS_EVERY) as pss:
        post = sample(lik, chains=chains, draws=draws, warmup=warmup, seed=seed,
                      progress=False, backend=Processes(processes))
    wall = time.perf_counter() - t0
    main, child = _peak_bytes(resource.RUSAGE_SELF), _peak_bytes(resource.RUSAGE_CHILDREN)
    f = post.weights.shape[-1]
    d = post.diagnostics
    n_steps = post.stats["n_steps"]
    sampling_evals = int(n_steps.sum())
    total_evals = int(sum(a["n_evals"] for a in post.settings["adapted"]))
    sampling_s = wall * sampling_evals / max(total_evals, 1)
    bulk, tail = float(np.min(d.ess_bulk[:f])), float(np.min(d.ess_tail[:f]))
    n_proc = min(chains, os.cpu_count() or 1) if processes is None else processes
    return {
        "wall_s": wall, "warmup_s": wall - sampling_s, "sampling_s": sampling_s,
        "total_evals": total_evals, "sampling_evals": sampling_evals,
        "min_bulk_ess": bulk, "min_tail_ess": tail, "ess_per_s": bulk / sampling_s,
        "evals_per_ess": sampling_evals / bulk, "max_rhat": float(np.max(d.rhat[:f])),
        "divergences": int(d.divergences),
        "mean_tree_depth": float(np.mean(post.stats["tree_depth"])),
        "mean_leapfrog": float(np.mean(n_steps)),
        "step_sizes": [a["step_size"] for a in post.settings["adapted"]],
        "processes": n_proc, "fit_s_per_gradient": wall * n_proc / max(total_evals, 1),
        "main_rss_at_fit_bytes": before, "peak_main_bytes": main, "peak_child_bytes": child,
        "peak_sum_bytes": main + child, "peak_total_pss_bytes": pss.peak_bytes,
        "pss_processes": pss.peak_processes,
    }, post


def _warm_seconds(mdp, demos, w, seed=0) -> float:
    """Median seconds per gradient after 1% weight changes (as ``engine.measure_case``)."""
    lik = BoltzmannLikelihood(mdp, demos)
    lik.evaluate(w)
    rng = np.random.default_rng(seed + 7)
    x, times = np.array(w, dtype=float), []
    for _ in range(WARM_REPEATS):
        x = x * (1.0 + 0.01 * rng.standard_normal(x.shape))
        t0 = time.perf_counter()
        lik.evaluate(x)
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def measure_size(n_states: int, draws: int = DRAWS, warmup: int = WARMUP, chains: int = CHAINS,
                 processes: int | None = None, log: Callable[[str], object] = print,
                 first: bool = False) -> dict:
    """One row of the large benchmark: build, fit, then time and profile in this process.

    Parameters
    ----------
    n_states : int
    draws, warmup, chains : int
        Passed to :func:`bayesirl.sample` (seed 0, no progress bar).
    processes : int, optional
        Worker processes; default that of ``sample`` (``min(chains, cpu count)``).
    log : callable
        Receives one line per phase, with the elapsed time.
    first : bool
        Whether this is the first size of the run: its build time (simulating the
        demonstrations solves the MDP) then includes loading the compiled kernels.

    Returns
    -------
    dict
        JSON-ready row (see ``reports/benchmark-large.md`` for the fields' meaning).
    """
    clock = _Clock(log)
    tag = f"S={n_states}"
    clock.line(f"{tag}: building the MDP and {EPISODES} demonstrations of {LENGTH} steps")
    t0 = time.perf_counter()
    mdp, w, demos = problem(n_states)
    build_s = time.perf_counter() - t0
    cold = BoltzmannLikelihood(mdp, demos)
    t0 = time.perf_counter()
    cold.evaluate(w)
    first_s = time.perf_counter() - t0
    del cold  # its warm starts would otherwise be copied into every forked worker
    clock.line(f"{tag}: built in {build_s:.1f} s, first evaluation {first_s:.2f} s; fitting "
               f"{chains} chains x {draws} draws after {warmup} warmup (started {_now()})")
    load_before = os.getloadavg()[0]  # other work on the machine inflates the wall times
    with _heartbeat(clock, f"{tag} fit", HEARTBEAT):
        fit, post = _fit(BoltzmannLikelihood(mdp, demos), draws, warmup, chains, processes)
    fit["load_1min"] = [load_before, os.getloadavg()[0]]
    clock.line(f"{tag}: fit {fit['wall_s']:.1f} s, min bulk-ESS {fit['min_bulk_ess']:.0f}, "
               f"ESS/s {fit['ess_per_s']:.3g}, max R-hat {fit['max_rhat']:.3f}, peak "
               f"{fit['peak_main_bytes'] / 2**20:.0f} + {fit['peak_child_bytes'] / 2**20:.0f} MB")
    warm = _warm_seconds(mdp, demos, w)
    clock.line(f"{tag}: warm gradient {warm * 1e3:.1f} ms")
    centre, sd = post.weights.mean(axis=(0, 1)), post.weights.std(axis=(0, 1))
    prof = profile(BoltzmannLikelihood(mdp, demos), centre, 0.1 * sd, PROFILE_POINTS)
    clock.line(f"{tag}: solver profile {prof.get('newton_steps', float('nan')):.2f} Newton "
               f"steps, {prof.get('value_matvecs', float('nan')):.1f} + "
               f"{prof.get('adjoint_matvecs', float('nan')):.1f} mat-vecs per gradient")
    return {"states": n_states, "transitions_nnz": int(mdp.transitions.nnz), "draws": draws,
            "warmup": warmup, "chains": chains, "date": _now(), "machine": machine(),
            "first_in_process": first, **fit, "build_s": build_s, "first_eval_s": first_s,
            "warm_s_per_gradient": warm, "profile": prof}


def _now() -> str:
    return datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


def run(sizes: Iterable[int] = SIZES, draws: int = DRAWS, warmup: int = WARMUP,
        chains: int = CHAINS, processes: int | None = None,
        log: Callable[[str], object] = print,
        on_row: Callable[[dict], object] | None = None) -> dict:
    """Measure every size in ascending order.

    Parameters
    ----------
    sizes : iterable of int
        State counts (default 10^3, 10^4, 10^5).
    draws, warmup, chains : int
        Per chain; defaults :data:`DRAWS`, :data:`WARMUP`, :data:`CHAINS`.
    processes : int, optional
        Worker processes of the fits (default: ``sample``'s).
    log : callable
        Progress lines.
    on_row : callable, optional
        Called with the results so far after each size (e.g. to write them, so that a
        crash at 10^5 keeps the smaller rows).

    Returns
    -------
    dict
        ``{"machine", "settings", "rows"}``, JSON-ready; rows keyed by ``states``.
    """
    settings = {"chains": chains, "draws": draws, "warmup": warmup, "default_warmup": WARMUP,
                "default_draws": DRAWS, "episodes": EPISODES, "length": LENGTH}
    results = {"machine": machine(), "settings": settings, "rows": []}
    for k, n in enumerate(sorted(set(int(s) for s in sizes))):
        results["rows"].append(measure_size(n, draws, warmup, chains, processes, log,
                                            first=k == 0))
        if on_row is not None:
            on_row(results)
    return results
