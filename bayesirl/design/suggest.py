"""``suggest(posterior)``: which extra demonstrations would narrow the posterior most."""

from __future__ import annotations

import os
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from bayesirl.design import estimators as est
from bayesirl.design import ranking
from bayesirl.design.batch import RANKING, Batch, child_rng, outer_samples
from bayesirl.design.groups import NEW, NEWCOMER, people
from bayesirl.design.listing import Suggestions
from bayesirl.design.newcomer import NewcomerBackend
from bayesirl.design.policies import CACHE_BYTES, CHUNK_BYTES, DrawPolicies, posterior_draws
from bayesirl.design.targets import target_values
from bayesirl.design.work import LocalBackend, groups
from bayesirl.errors import InputError
from bayesirl.execution.backend import Backend, Processes, Serial, backend_of
from bayesirl.execution.progress import StatusLine
from bayesirl.resources import MAX_BUDGET, MEASURABLE_Z

if TYPE_CHECKING:
    from bayesirl.posterior import Posterior

KINDS = ("start-states", "query-states")


class Suggestion(NamedTuple):
    """One ranked candidate. ``gain`` and ``stderr`` in nats; sds in the target's units."""

    candidate: object  # state index, or a label "start:3" / "query:5" for explicit lists
    gain: float  # expected information gain about the weights, given the earlier picks
    stderr: float  # its Monte-Carlo standard error
    target_sd: float  # expected posterior sd of the target afterwards (nan without one)
    target_reduction: float  # current sd minus target_sd (nan without a target)
    kind: str  # "start" (a whole demonstration) or "query" (one action)
    state: int
    step: int  # 1..budget for the greedy picks, 0 for the rest of the ranking
    current_sd: float = float("nan")  # the target's posterior sd now (nan without a target)
    cumulative_gain: float = float("nan")  # picks 1..step together (chain rule); nan if step 0
    cumulative_stderr: float = float("nan")
    p_best: float = float("nan")  # greedy picks: P(this pick is the best at its step)
    rank_interval: tuple = ()  # greedy picks: 90% interval of its rank at its step
    settled: bool = False  # greedy picks: p_same >= ranking.SETTLED
    # The Monte-Carlo estimate before ``gain`` is clipped to the bound (an information gain is
    # never negative; clipping can only bring an estimate closer to the true value).
    gain_estimate: float = float("nan")
    measurable: bool = False  # gain_estimate - MEASURABLE_Z * stderr > 0
    p_same: float = float("nan")  # greedy picks: P(a run with another seed picks it again)
    # whose demonstration: "" with one reward, else a demonstrator's name or groups.NEW
    demonstrator: str = ""


def _parse_candidates(candidates, n_states: int) -> tuple[list[str], np.ndarray, bool]:
    if isinstance(candidates, str):
        if candidates not in KINDS:
            raise InputError(f"suggest: unknown candidates {candidates!r}; expected one of "
                             f"{list(KINDS)} or a list of states")
        kind = "start" if candidates == "start-states" else "query"
        return [kind] * n_states, np.arange(n_states, dtype=np.int64), False
    kinds, states = [], []
    for k, item in enumerate(list(candidates)):
        kind, s = "start", item
        if isinstance(item, str) and ":" in item:
            kind, s = item.split(":", 1)
        elif isinstance(item, tuple) and len(item) == 2:
            kind, s = item
        try:
            s_int = int(s)
        except (TypeError, ValueError):
            s_int = None
        if kind not in ("start", "query") or s_int is None or s_int != s and str(s_int) != s:
            raise InputError(f"suggest: candidates[{k}] = {item!r}; expected a state index, "
                             "'start:<state>' or 'query:<state>'")
        if not 0 <= s_int < n_states:
            raise InputError(f"suggest: candidates[{k}] = {item!r}; state out of range "
                             f"0..{n_states - 1}")
        kinds.append(kind)
        states.append(s_int)
    if not states:
        raise InputError("suggest: candidates is an empty list")
    return kinds, np.asarray(states, dtype=np.int64), True


def _demo_length(mdp, demos, length) -> int:
    if length is None:
        length = int(np.median(demos.lengths))
    if int(length) != length or length < 1:
        raise InputError(f"suggest: length must be a positive integer; got {length!r}")
    if mdp.horizon is not None and length > mdp.horizon:
        raise InputError(f"suggest: length {length} exceeds the horizon {mdp.horizon}")
    return int(length)


def _check_budget(budget, n_candidates: int) -> int:
    if isinstance(budget, bool) or not isinstance(budget, (int, np.integer)) or budget < 1:
        raise InputError(f"suggest: budget must be an integer >= 1; got {budget!r}")
    if budget > MAX_BUDGET:  # each pick re-scores every candidate: bounded up front
        raise InputError(f"suggest: budget {budget} is more than the limit of {MAX_BUDGET} "
                         "demonstrations chosen together")
    return int(budget)


def _step_scores(backend, batch, kinds, states, first: bool) -> est.Scores:
    """Scores of every candidate given the picks so far (first step: exact for queries)."""
    n = states.shape[0]
    is_q = np.array([k == "query" for k in kinds], dtype=bool)
    q_index = np.flatnonzero(is_q)
    work = groups("start", batch.start_index, batch.states, batch.actions)
    work += groups("query", q_index, states[q_index])
    gain, stderr, sd = np.zeros(n), np.zeros(n), np.full(n, np.nan)
    per_outer = np.full((n, batch.prev.shape[0]), np.nan)
    for grp, sc in zip(work, backend.score(work, batch.prev, first), strict=True):
        gain[grp.index], stderr[grp.index], sd[grp.index] = sc[:3]
        if sc.per_outer is not None:
            per_outer[grp.index] = sc.per_outer
    return est.Scores(gain, stderr, sd, per_outer)


# Outer samples by default: on the bundled park example the top walks' gains differ by ~0.005
# nats with an outer-sample se of ~0.01 at 1024; no affordable number settles such a ranking,
# so the output reports how settled it is (bayesirl.design.ranking) instead.
N_OUTER = 512
# Fresh z per posterior draw for a new demonstrator (see bayesirl.design.newcomer).
NEW_DRAWS = 8


def suggest(posterior: Posterior,
            candidates: str | Sequence[int | str | tuple[str, int]] = "start-states", *,
            budget: int = 1, target: str | None = None,
            seed: int = 0, length: int | None = None, n_outer: int = N_OUTER,
            max_draws: int | None = None, chunk_bytes: int = CHUNK_BYTES,
            cache_bytes: int = CACHE_BYTES, progress: bool = False,
            backend: Backend | None = None,
            demonstrator: str | Sequence[str] | None = None,
            new_draws: int = NEW_DRAWS) -> list[Suggestion]:
    """Rank extra demonstrations by how much they are expected to tell about the weights.

    Parameters
    ----------
    posterior : Posterior
    candidates : "start-states", "query-states" or a list
        ``"start-states"``: a whole demonstration of ``length`` steps from each state;
        ``"query-states"``: the demonstrator's action at each state (time 0 with a horizon);
        a list of states (demonstrations) or labels ``"start:<s>"`` / ``"query:<s>"``.
    budget : int
        Greedy batch size: pick ``k`` gives its gain given the simulated outcomes of picks
        ``1..k-1`` (joint outcomes), so redundant candidates are not picked twice.
    target : None, feature name, ratio ``"a/b"`` or ``"policy-risk"``
        Also report the expected posterior sd of this quantity after each pick, by
        importance reweighting of the existing draws.
    seed : int
        Seeds the outer samples and the simulated outcomes: each comes from its own child
        of ``numpy.random.SeedSequence(seed)`` (per candidate, per pick), so the result
        depends on the seed alone, not on the order or the place of the work.
    length : demonstration length (default: the median demonstrated length).
    n_outer : outer samples of the nested Monte-Carlo estimate (simulated outcomes).
    max_draws : use at most this many evenly spaced posterior draws (default: all).
    chunk_bytes, cache_bytes : memory bounds for the per-draw policies.
    progress : bool
        A status line (greedy step, per-draw policy solves) on a terminal; never elsewhere.
    backend : Serial or Cluster, optional
        Where the work runs (:mod:`bayesirl.execution.backend`); default ``Serial()``, this
        process. ``Cluster("local" | address | client)`` splits it across a Dask cluster
        (``"local"``: a ``LocalCluster`` of processes for this call). The problem is sent to
        every worker once; the per-draw policy solves run as one task per block of draws
        (fixed blocks of up to ``policies.BLOCK_DRAWS`` draws, each starting cold) and each
        greedy step scores candidates in tasks of ``work.CANDIDATE_CHUNK``. A local run uses
        the same blocks and groups, so the same seed gives bit-identical suggestions with or
        without a cluster, whatever its number of workers. The greedy picks stay sequential.
        Needs ``bayesirl[cluster]``.
    demonstrator : str or list of str, optional
        Required for a posterior with several demonstrators (and refused otherwise): rank
        more demonstrations from this demonstrator, or from each of several, and with
        ``groups.NEW`` (``"(new demonstrator)"``, partial pooling only) from a person not in
        the data yet, all in one list (see :mod:`bayesirl.design.groups`); each row names
        whose it is. ``target`` still refers to the headline (population mean) weights.
        Several people or a new one rank one pick (``budget`` 1), in this process.
    new_draws : int
        A new demonstrator's fresh ``z`` per posterior draw (their weights integrated out by
        this many draws; the policy solves grow in proportion).

    Returns
    -------
    Suggestions
        A list of Suggestion (a notebook shows it as a table): the ``budget`` greedy
        picks in order (``step`` 1..k, with the cumulative gain of the batch so far, the
        probability that the pick is the best at its step and its rank interval, see
        :mod:`bayesirl.design.ranking`), then every other candidate ranked by its gain at the
        last step (``step`` 0). Query-state gains at the first
        step are exact over actions given the draws; ``stderr`` is then their error from
        the finite set of draws (treated as independent). Other gains are nested
        Monte-Carlo estimates and ``stderr`` is the outer-sample standard error.

    Raises
    ------
    InputError
        Bad arguments, or a cluster that cannot be reached or runs another version.
    """
    where = backend_of(backend, Serial())
    if isinstance(where, Processes):
        where.session(0)  # refused there, with the reason, before any work
    lik = posterior.model.likelihood
    mdp = lik.mdp
    kinds, states, explicit = _parse_candidates(candidates, mdp.n_states)
    budget = _check_budget(budget, states.shape[0])
    length = _demo_length(mdp, lik.demos, length)
    if int(n_outer) != n_outer or n_outer < 2:
        raise InputError(f"suggest: n_outer must be an integer >= 2; got {n_outer!r}")
    weights, betas = posterior_draws(posterior, max_draws)
    who = people(posterior, demonstrator, weights, betas, max_draws, seed, new_draws)
    g = target_values(posterior, weights, target)
    status = StatusLine(enabled=progress)
    try:
        if who is not None and (len(who) > 1 or who[0].label == NEW):
            if budget != 1 or not isinstance(where, Serial):
                raise InputError("suggest: several demonstrators, or a new one, are ranked "
                                 "for one pick (budget 1) in this process (no cluster); got "
                                 f"budget {budget} and backend {where!r}")
            rows = _rank_people(who, mdp, lik.q_function, (kinds, states, explicit), length,
                                g, seed, int(n_outer), (chunk_bytes, cache_bytes))
            return Suggestions(rows, grid_shape=mdp.grid_shape)
        policies = DrawPolicies(mdp, weights if who is None else who[0].weights,
                                betas if who is None else who[0].rationalities,
                                lik.q_function, chunk_bytes, cache_bytes)
        outer = outer_samples(policies.n, int(n_outer), seed)
        gg = np.zeros(policies.n) if g is None else g
        with _work(where, policies, gg, outer) as work:
            rows = _greedy(work, policies, kinds, states, explicit, budget, length, g, seed,
                           status)
        label = "" if who is None else who[0].label
        return Suggestions([r._replace(demonstrator=label) for r in rows],
                           grid_shape=mdp.grid_shape)
    finally:
        status.close()


def _rank_people(who, mdp, q, cands, length, g, seed, n_outer, memory) -> list[Suggestion]:
    """One greedy pick over every (person, candidate): the same gain ``I(y; theta)`` over
    the same draws and outer samples for each person, ranked together."""
    kinds, states, explicit = cands
    starts = np.flatnonzero([k == "start" for k in kinds])
    scores, labels = [], []
    for person in who:
        k = person.per_draw
        policies = DrawPolicies(mdp, person.weights, person.rationalities, q, *memory)
        n = policies.n // k
        gg = np.zeros(n) if g is None else g
        outer = outer_samples(n, n_outer, seed)
        if k > 1:
            policies.chunk = max(k, policies.chunk // k * k)  # whole groups per block
            which = child_rng(seed, NEWCOMER, 1).integers(0, k, size=outer.shape[0])
            work = NewcomerBackend(policies, k, gg, outer, which)
        else:
            work = LocalBackend(policies, gg, outer)
        batch = Batch(work, starts, states[starts], length, seed)
        scores.append(_step_scores(work, batch, kinds, states, first=True))
        labels += [person.label] * states.shape[0]
    sc = est.Scores(*(np.concatenate([getattr(s, f) for s in scores])
                      for f in ("gain", "stderr", "target_sd", "per_outer")))
    if g is None:
        sc.target_sd[:] = np.nan
    n_c = states.shape[0]
    all_kinds, all_states = kinds * len(who), np.tile(states, len(who))
    order = np.argsort(-sc.gain, kind="stable")
    best = int(order[0])
    conf = ranking.confidence(sc.gain, sc.stderr, sc.per_outer, best,
                              child_rng(seed, RANKING, 1))
    sd_now = float(np.std(g, ddof=1)) if g is not None else np.nan
    rows = [_record(sc, int(i), all_kinds, all_states, explicit, sd_now, int(i == best))
            ._replace(demonstrator=labels[i]) for i in order]
    rows[0] = rows[0]._replace(
        cumulative_gain=rows[0].gain, cumulative_stderr=rows[0].stderr, p_best=conf.p_best,
        rank_interval=conf.rank_interval, settled=conf.settled, p_same=conf.p_same)
    assert len(rows) == n_c * len(who)
    return rows


@contextmanager
def _work(where: Backend, policies, g, outer) -> Iterator[object]:
    """The designer's work on ``where``: in this process, or as tasks through its client."""
    with where.session(os.cpu_count() or 1) as client:
        if client is None:
            yield LocalBackend(policies, g, outer)
            return
        from bayesirl.design.cluster import DaskBackend

        work = DaskBackend(client, policies, g, outer)
        try:
            yield work
        finally:
            work.close()


def _greedy(backend, policies, kinds, states, explicit, budget, length, g, seed,
            status) -> list[Suggestion]:
    """The greedy batch: score every candidate, keep the best, condition on it, repeat."""
    step = 1
    n_draws = policies.n
    local = isinstance(backend, LocalBackend)

    def show(solves: int) -> None:
        work = f"policy solves {solves}" if local else "tasks on the cluster"
        status.update(f"suggest: pick {step}/{budget}, {work} (draws: {n_draws})")

    policies.on_solve = show
    is_start = np.array([k == "start" for k in kinds], dtype=bool)
    start_index = np.flatnonzero(is_start)
    batch = Batch(backend, start_index, states[start_index], length, seed)
    sd_now = float(np.std(g, ddof=1)) if g is not None else np.nan
    start_pos = np.cumsum(is_start) - 1
    picks: list[Suggestion] = []
    total, total_var = 0.0, 0.0
    for step in range(1, budget + 1):
        show(policies.solves)
        sc = _step_scores(backend, batch, kinds, states, first=step == 1)
        if g is None:
            sc.target_sd[:] = np.nan
        order = np.argsort(-sc.gain, kind="stable")
        best = int(order[0])
        conf = ranking.confidence(sc.gain, sc.stderr, sc.per_outer, best,
                                  child_rng(seed, RANKING, step))
        # The batch's gain is the sum of its conditional gains (chain rule of mutual
        # information); the variance adds as for independent estimates (an approximation:
        # the steps share outer samples).
        total += max(float(sc.gain[best]), 0.0)
        total_var += float(sc.stderr[best]) ** 2
        row = _record(sc, best, kinds, states, explicit, sd_now, step)._replace(
            cumulative_gain=total, cumulative_stderr=float(np.sqrt(total_var)),
            p_best=conf.p_best, rank_interval=conf.rank_interval, settled=conf.settled,
            p_same=conf.p_same)
        picks.append(row)
        if step == budget:
            rest = [_record(sc, int(i), kinds, states, explicit, sd_now, 0) for i in order[1:]]
            return picks + rest
        if kinds[best] == "start":
            batch.add_start(int(start_pos[best]))
        else:
            batch.add_query(int(states[best]), step)
    raise AssertionError("unreachable")  # pragma: no cover


def _record(sc, i, kinds, states, explicit, sd_now, step) -> Suggestion:
    label = f"{kinds[i]}:{int(states[i])}" if explicit else int(states[i])
    sd = float(sc.target_sd[i])
    raw, se = float(sc.gain[i]), float(sc.stderr[i])
    return Suggestion(label, max(raw, 0.0), se, sd,
                      sd_now - sd if np.isfinite(sd) else float("nan"), kinds[i],
                      int(states[i]), step, current_sd=sd_now, gain_estimate=raw,
                      measurable=bool(raw - MEASURABLE_Z * se > 0.0))
