"""Compare runs on the same demonstrations by leave-one-episode-out predictive accuracy.

The difference between two runs and its standard error are computed from the paired
per-episode values, ``se = sqrt(E * var(elpd_i^a - elpd_i^b))`` (Vehtari, Gelman & Gabry
2017, eq. 24; the same formula as ArviZ's ``compare``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.partial import PartialTerm
from bayesirl.modelfit.loo import K_LIMIT, EpisodeLoo, episode_loo

# A difference within this many standard errors is reported as no clear difference
# (common practice; the normal approximation behind it is rough with few episodes).
CLEAR_SE = 2.0
# Below this many episodes the standard error itself is unreliable (Sivula, Magnusson &
# Vehtari 2020 discuss small-n LOO comparison; the number 20 is from memory, common practice).
FEW_EPISODES = 20


@dataclass
class Row:
    """One run in a comparison: its elpd, and its difference to the best with that
    difference's standard error (0 for the best)."""

    name: str
    description: str
    loo: EpisodeLoo
    diff: float
    diff_se: float


@dataclass
class Comparison:
    """Runs ranked by expected log predictive density (best first), with a conclusion."""

    rows: list[Row]
    n_episodes: int  # observations left out in turn (episodes, or answers)
    over: str = "episodes"

    @property
    def conclusion(self) -> str:
        """Plain words; never stronger than the difference and its standard error allow."""
        return conclusion(self)

    def table(self) -> str:
        """The comparison as a text table followed by the conclusion."""
        head = (f"{'run':<22}{'elpd':>10}{'se':>8}{'diff':>10}{'diff se':>9}"
                f"{'k>0.7':>7}  model")
        lines = [head]
        for r in self.rows:
            lines.append(f"{r.name[:21]:<22}{r.loo.elpd:10.2f}{r.loo.se:8.2f}{r.diff:10.2f}"
                         f"{r.diff_se:9.2f}{len(r.loo.unreliable):7d}  {r.description}")
        return "\n".join(lines + ["", self.conclusion])

    def __repr__(self) -> str:
        return self.table()


def compare(runs, names=None, *, refit: bool = False, over: str = "episodes") -> Comparison:
    """Rank ``runs`` (Posterior objects on the same data) by PSIS-LOO per episode.

    Parameters
    ----------
    runs : sequence of Posterior
        At least two, each fitted to the same demonstrations (InputError otherwise).
    names : sequence of str, optional
        Labels for the table (default ``run 1``, ``run 2``, ...).
    refit : bool
        Refit exactly the episodes whose Pareto k exceeds 0.7 (one new run each).
    over : {"episodes", "comparisons"}
        What is left out in turn: an episode (demonstrations and episodes with unrecorded
        parts) or, for runs with comparisons, a comparison answer. Never both in one sum.
    """
    runs = list(runs)
    names = [f"run {i + 1}" for i in range(len(runs))] if names is None else list(names)
    if len(runs) < 2:
        raise InputError("compare: give at least two runs")
    if len(names) != len(runs):
        raise InputError(f"compare: {len(names)} names for {len(runs)} runs")
    same_data(runs, names)
    loos = [episode_loo(r, refit=refit, over=over) for r in runs]
    best = int(np.argmax([x.elpd for x in loos]))
    rows = []
    for name, run, x in zip(names, runs, loos, strict=True):
        d = loos[best].elpd_i - x.elpd_i
        se = float(np.sqrt(d.size * np.var(d)))
        rows.append(Row(name, describe(run), x, float(d.sum()), se))
    rows.sort(key=lambda r: r.diff)
    return Comparison(rows, int(loos[0].elpd_i.size), over)


def same_data(runs, names) -> None:
    """InputError unless every run was fitted to the same data: demonstrations, state space
    and the further evidence (episodes with unrecorded parts, comparison answers)."""
    first = runs[0].model
    for name, run in zip(names[1:], runs[1:], strict=True):
        why = _difference(first.likelihood, run.model.likelihood) or _extra_difference(
            first, run.model)
        if why:
            raise InputError(f"compare: {name} was fitted to other data than {names[0]} "
                             f"({why}); LOO comparisons need the same data")


def _difference(a, b) -> str:
    if a.mdp.n_states != b.mdp.n_states or a.mdp.n_actions != b.mdp.n_actions:
        return (f"{a.mdp.n_states} states x {a.mdp.n_actions} actions against "
                f"{b.mdp.n_states} x {b.mdp.n_actions}")
    da, db = a.demos, b.demos
    if da.n_episodes != db.n_episodes:
        return f"{da.n_episodes} fully recorded episodes against {db.n_episodes}"
    for e, ((sa, aa), (sb, ab)) in enumerate(zip(da.episodes, db.episodes, strict=True)):
        if not (np.array_equal(aa, ab) and np.array_equal(sa[:aa.size], sb[:ab.size])):
            return f"episode {e} differs"
    return ""


def _extra_difference(a, b) -> str:
    """What differs in the further evidence. Comparison answers are stored as differences of
    discounted feature sums: under other features only their number can be checked."""
    ea, eb = getattr(a, "extra", ()), getattr(b, "extra", ())
    kinds = ([type(t).__name__ for t in ea], [type(t).__name__ for t in eb])
    if kinds[0] != kinds[1]:
        return f"further evidence {kinds[0] or 'none'} against {kinds[1] or 'none'}"
    same_features = np.array_equal(a.likelihood.mdp.features, b.likelihood.mdp.features)
    for ta, tb in zip(ea, eb, strict=True):
        if isinstance(ta, PartialTerm):
            pa, pb = ta.episodes.episodes, tb.episodes.episodes
            if len(pa) != len(pb) or not all(
                    np.array_equal(x[0], y[0]) and np.array_equal(x[1], y[1])
                    for x, y in zip(pa, pb, strict=True)):
                return "the episodes with unrecorded parts differ"
        elif len(ta) != len(tb):
            return f"{len(ta)} comparison answers against {len(tb)}"
        elif same_features and not np.array_equal(ta.differences, tb.differences):
            return "the comparison answers differ"
    return ""


def describe(run) -> str:
    """The model in a few words: demonstrator model, features, pooling, rationality."""
    model = run.model
    rat = ("rationality sampled" if model.fixed_rationality is None
           else f"rationality {model.fixed_rationality:g}")
    pooling = getattr(model.pooling, "kind", model.pooling)
    return (f"{model.likelihood.q_function}, features {','.join(model.feature_names)}, {pooling}, "
            f"{rat}")


def conclusion(c: Comparison) -> str:
    """Plain-words reading of a comparison."""
    best, rest = c.rows[0], c.rows[1:]
    unit = "episodes" if c.over == "episodes" else "comparison answers"
    data = "demonstrations" if c.over == "episodes" else "comparison answers"
    out = []
    clear = [r for r in rest if r.diff > CLEAR_SE * r.diff_se]
    unclear = [r for r in rest if r not in clear]
    if unclear:
        out.append(f"No clear difference between {best.name} and "
                   f"{', '.join(r.name for r in unclear)}: the difference in elpd is within "
                   f"{CLEAR_SE:g} standard errors (a common-practice threshold), so the "
                   f"{data} do not tell these models apart.")
    if clear:
        out.append(f"{best.name} predicts left-out {unit} better than "
                   f"{', '.join(r.name for r in clear)} (difference more than "
                   f"{CLEAR_SE:g} standard errors). This ranks predictive accuracy on these "
                   f"{data}; it does not make the better model true.")
    if c.n_episodes < FEW_EPISODES:
        out.append(f"Only {c.n_episodes} {unit}: the standard errors are themselves rough.")
    shaky = [f"{_numbers(r.loo.unreliable)} of {r.name}" for r in c.rows if r.loo.unreliable]
    if shaky:
        out.append(f"Pareto k > {K_LIMIT:g} for {unit} {'; '.join(shaky)}: their LOO "
                   "estimates are unreliable; refit them exactly (compare --refit).")
    done = [f"{_numbers(r.loo.refitted)} of {r.name}" for r in c.rows if r.loo.refitted]
    if done:
        out.append(f"Refitted exactly (Pareto k > {K_LIMIT:g}; sampled again without each): "
                   f"{unit} {'; '.join(done)}.")
    return "\n".join(out)


def _numbers(indices) -> str:
    """``#0, #3``: positions in the log_likelihood group (counting from 0; fully recorded
    episodes first, in file order, then those with unrecorded parts)."""
    return ", ".join(f"#{int(i)}" for i in indices)
