"""Coverage under heterogeneity: pooled against partially pooled intervals for the population.

Ten demonstrators whose weights differ (``w_d = mu + tau z_d``, truths drawn from the prior
the partial model uses) each give 4 episodes of 10 steps on the 5-state random MDP of
:class:`~bayesirl.validation.partial.PartialSBC`. Each replication fits both models to the
same data with NUTS (2 chains, 150 warm-up, 300 draws): the pooled model (one reward for
every episode, today's default) and partial pooling. Each posterior is thinned by its ESS to
``L = 99`` draws (as in simulation-based calibration, Talts et al. 2018), and the 90%
interval is ``[x_(5), x_(95)]`` of the sorted thinned draws: the true value lies inside it
exactly when its rank is in ``5..94``, i.e. 90 of the 100 equally likely ranks of a
calibrated posterior. So the partial model's coverage of ``mu`` is Binomial(n, 0.9) if its
posterior is right (averaged over the prior, Theorem 1 of Talts et al.), while the pooled
model's interval is centred on a compromise between the demonstrators and is as narrow as
if they were one person: it undercovers.

``python -m bayesirl.validation.coverage`` runs the replications (logging each to
``reports/coverage-heterogeneity.jsonl``, so a stopped run continues) and writes
``reports/coverage-heterogeneity.json`` and ``.png``; ``--figure`` redraws the figure from
the JSON. ``tests/groups/test_coverage_slow.py`` runs the same replications (same seed) and
tests the counts.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import time
from dataclasses import dataclass, field
from multiprocessing import get_all_start_methods, get_context
from pathlib import Path

import numpy as np
from scipy import stats

from bayesirl.execution import sample
from bayesirl.execution.backend import Processes
from bayesirl.files import write_json
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.priors import Normal
from bayesirl.validation import runner
from bayesirl.validation.grid import PosteriorDraws
from bayesirl.validation.partial import PartialSBC
from bayesirl.validation.runner import Replication, SBCResult, SBCSettings, run_sbc

LEVEL = 0.9
REPLICATIONS = 100
SEED = 1616
SETTINGS = SBCSettings(n_draws=99, draws=300, doublings=1, restarts=0)
# Level of the binomial tests on the coverage counts (as the SBC tests, common practice).
ALPHA = 0.01
OUT = Path("reports") / "coverage-heterogeneity.json"


@dataclass(frozen=True)
class HeterogeneityCoverage:
    """The run_sbc problem: ranks of ``mu`` under both models and of the spread."""

    groups: PartialSBC = field(default_factory=lambda: PartialSBC(
        n_groups=10, episodes=4, length=10, warmup=150))

    names = ("mu, partial", "mu, pooled", "spread, partial")

    def simulate(self, rng: np.random.Generator):
        """Truth ``(mu, mu, tau)`` and ten demonstrators' labelled episodes."""
        truth, demos = self.groups.simulate(rng)
        return np.array([truth[0], truth[0], truth[1]]), demos

    def posterior(self, data, draws: int, seed: int) -> PosteriorDraws:
        """Both fits on the same data; draws stacked as ``(chains, draws, 3)``."""
        g = self.groups
        partial = g.posterior(data, draws, seed)
        pooled = sample(BoltzmannLikelihood(g.mdp, data), Normal(0.0, g.mu_scale),
                        chains=g.chains, draws=draws, warmup=g.warmup, seed=seed,
                        progress=False, backend=Processes(1))
        out = np.stack([partial.draws[..., 0], pooled.weights[..., 0],
                        partial.draws[..., 1]], axis=-1)
        return PosteriorDraws(out, partial.divergences + int(pooled.stats["diverging"].sum()))

    def describe(self) -> dict[str, str]:
        """Settings for the record."""
        return {**self.groups.describe(), "pooled": "one reward for every episode, "
                f"prior N(0, {self.groups.mu_scale:g}^2), same sampler settings"}


def covered(ranks: np.ndarray, n_draws: int, level: float = LEVEL) -> np.ndarray:
    """Whether ``[x_(k), x_(L+1-k)]`` of ``L`` sorted draws holds the truth, from its rank.

    ``k = (L + 1)(1 - level) / 2`` must be a whole number (5 for ``L = 99``, level 0.9).
    """
    k = (n_draws + 1) * (1 - level) / 2
    if abs(k - round(k)) > 1e-9 or round(k) < 1:
        raise ValueError(f"(L + 1)(1 - level)/2 must be a positive integer; got {k}")
    k = round(k)
    return (ranks >= k) & (ranks <= n_draws - k)


def _interval(thinned: np.ndarray, level: float) -> list[float]:
    k = round((len(thinned) + 1) * (1 - level) / 2)
    x = np.sort(thinned)
    return [float(x[k - 1]), float(x[len(x) - k])]


def coverage_record(result: SBCResult, level: float = LEVEL) -> dict:
    """Counts, binomial tests and per-replication intervals as a JSON-ready record."""
    n_draws, n = result.settings.n_draws, len(result.replications)
    hits = covered(result.ranks, n_draws, level)  # (n, 3)
    models = {}
    for j, name in enumerate(result.names):
        k = int(hits[:, j].sum())
        ci = stats.binomtest(k, n, level).proportion_ci(0.95, method="exact")
        models[name] = {"covered": k, "of": n, "rate": k / n,
                        "ci95": [float(ci.low), float(ci.high)],
                        "p_two_sided": float(stats.binomtest(k, n, level).pvalue),
                        "p_less": float(stats.binomtest(k, n, level,
                                                        alternative="less").pvalue)}
    reps = [{"truth": r.truth.tolist(), "ranks": r.ranks.tolist(),
             "intervals": [_interval(r.thinned[:, j], level) for j in range(len(r.truth))],
             "divergences": int(r.divergences), "ess": float(r.ess), "short": bool(r.short),
             "cpu_seconds": round(r.cpu_seconds, 2)} for r in result.replications]
    return {"level": level, "replications": n, "seed": result.seed,
            "n_draws": n_draws, "settings": vars(result.settings).copy(),
            "description": result.description, "names": list(result.names),
            "models": models, "processes": result.processes,
            "wall_seconds": round(result.wall_time, 1),
            "cpu_seconds": round(sum(r.cpu_seconds for r in result.replications), 1),
            "load_average_1min_at_end": round(os.getloadavg()[0], 2), "runs": reps}


def run(replications: int = REPLICATIONS, seed: int = SEED, processes: int | None = None,
        log=None) -> dict:
    """The replications of the module docstring, as a :func:`coverage_record`."""
    load = round(os.getloadavg()[0], 2)
    result = run_sbc(HeterogeneityCoverage(), replications, seed=seed, settings=SETTINGS,
                     processes=processes, log=log)
    return {**coverage_record(result), "load_average_1min_at_start": load}


def _to_json(rep: Replication) -> dict:
    return {k: (v.tolist() if isinstance(v, np.ndarray) else v)
            for k, v in rep._asdict().items()}


def _from_json(row: dict) -> Replication:
    arrays = {"truth", "thinned", "ranks"}
    return Replication(**{k: (np.asarray(v, dtype=float if k != "ranks" else int)
                              if k in arrays else tuple(v) if k == "restarts" else v)
                          for k, v in row.items()})


def run_logged(path: Path, replications: int = REPLICATIONS, seed: int = SEED,
               processes: int | None = None) -> SBCResult:
    """:func:`run` that appends each replication to ``path`` (JSON Lines) as it finishes
    and skips those already there, so a stopped run continues where it was. Replication
    ``r`` depends only on ``r`` and ``seed`` (see :mod:`~bayesirl.validation.runner`), so
    the continued run's results equal an uninterrupted one's; the first ``k`` of them are
    also exactly the first ``k`` of any longer run."""
    done = {}
    if path.exists():
        for line in path.read_text(encoding="utf-8").splitlines():
            if line.strip():
                rep = _from_json(json.loads(line))
                done[rep.index] = rep
    tasks = [t for t in enumerate(np.random.SeedSequence(seed).spawn(replications))
             if t[0] not in done]
    problem, t0 = HeterogeneityCoverage(), time.perf_counter()
    n_proc = max(1, min(processes or os.cpu_count() or 1, len(tasks) or 1))
    ctx = get_context("fork" if "fork" in get_all_start_methods() else "spawn")
    with path.open("a", encoding="utf-8") as out, ctx.Pool(
            n_proc, initializer=runner._install, initargs=(problem, SETTINGS)) as pool:
        for rep in pool.imap_unordered(runner._work, tasks, chunksize=1):
            out.write(json.dumps(_to_json(rep)) + "\n")
            out.flush()
            done[rep.index] = rep
            print(f"{len(done)}/{replications} replications, "
                  f"{time.perf_counter() - t0:.0f} s", flush=True)
    reps = [done[i] for i in sorted(done) if i < replications]
    return SBCResult(problem.names, problem.describe(), SETTINGS, seed, reps, n_proc,
                     time.perf_counter() - t0)


def first_complete(path: Path) -> SBCResult:
    """The longest unbroken prefix ``0..k-1`` of the replications logged in ``path``."""
    reps = {}
    for line in path.read_text(encoding="utf-8").splitlines():
        if line.strip():
            rep = _from_json(json.loads(line))
            reps[rep.index] = rep
    k = 0
    while k in reps:
        k += 1
    problem = HeterogeneityCoverage()
    return SBCResult(problem.names, problem.describe(), SETTINGS, SEED,
                     [reps[i] for i in range(k)], 0, math.nan)


def main(argv=None) -> int:
    """``python -m bayesirl.validation.coverage [--replications N] [--figure JSON]``.

    Runs (or continues) the replications, logging each to ``OUT.jsonl``, then writes the
    record ``OUT`` and its figure. ``--prefix`` writes the record of the replications
    ``0..k-1`` logged so far instead (for a run stopped early; the record says ``k``).
    """
    ap = argparse.ArgumentParser(prog="python -m bayesirl.validation.coverage")
    ap.add_argument("--replications", type=int, default=REPLICATIONS)
    ap.add_argument("--processes", type=int, default=None)
    ap.add_argument("--out", type=Path, default=OUT)
    ap.add_argument("--figure", action="store_true", help="only redraw the figure of --out")
    ap.add_argument("--prefix", action="store_true",
                    help="record the replications logged so far, without running more")
    args = ap.parse_args(argv)
    from bayesirl.validation.coverage_plot import coverage_figure
    from bayesirl.validation.plots import save_png

    log = args.out.with_suffix(".jsonl")
    if not args.figure:
        load = round(os.getloadavg()[0], 2)
        args.out.parent.mkdir(parents=True, exist_ok=True)
        result = (first_complete(log) if args.prefix else
                  run_logged(log, args.replications, processes=args.processes))
        record = {**coverage_record(result), "load_average_1min_at_start": load}
        if args.prefix:  # the load now says nothing about the run that made the log
            record.update(load_average_1min_at_start=None, load_average_1min_at_end=None,
                          note=f"first {len(result.replications)} replications of a stopped "
                               "run, recorded with --prefix")
        write_json(args.out, record)
        print(json.dumps(record["models"], indent=1))
    record = json.loads(args.out.read_text(encoding="utf-8"))
    save_png(coverage_figure(record), args.out.with_suffix(".png"))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
