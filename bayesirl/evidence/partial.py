"""Episodes with unrecorded actions (state-only walks) or unrecorded states (gaps).

Motion capture, video and animal tracking record where the demonstrator went, not what it
chose; logs drop samples. An episode is then ``states[0..T]`` and ``actions[0..T-1]`` with
``-1`` (or ``None``) where nothing was recorded, and its likelihood marginalises what is
missing under the soft (maximum-causal-entropy) Boltzmann policy:

    log p = log P(recorded states after the first, recorded actions | first state, w, beta)
          = sum over pieces (see :mod:`bayesirl.evidence.hidden`),

e.g. ``log P(s_{t+1} | s_t) = log sum_a pi(a|s_t) P(s_{t+1}|s_t,a)`` for a step without its
action. Unlike :class:`~bayesirl.evidence.BoltzmannTerm`, the dynamics factors are included
(with a missing action or state they depend on ``w``): a fully recorded episode gives the
Boltzmann log-likelihood plus the constant ``sum_t log P(s_{t+1}|s_t,a_t)``. The gradient is
exact (:mod:`bayesirl.likelihood.marginal`), its ``log(beta)`` part is ``w . dL/dw``.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.episodes import PartialEpisodes, first_impossible, state_only
from bayesirl.evidence.hidden import gap_batch_pass, gap_pass, step_pass
from bayesirl.evidence.term import Pointwise, TermValue
from bayesirl.likelihood import marginal, soft, warm

__all__ = ["PartialEpisodes", "PartialTerm", "first_impossible", "state_only"]


class PartialTerm(warm.WarmStarts):
    """Evidence term of :class:`PartialEpisodes` under the soft Boltzmann demonstrator.

    Parameters
    ----------
    mdp : TabularMDP
    episodes : PartialEpisodes
        Checked against ``mdp``: ranges, horizon, and that the recorded parts of every
        piece are possible under the dynamics (a soft policy gives every action positive
        probability, so possibility does not depend on the weights).
    key, weights, rationality : str
        The term's key and the names of the quantities it reads.
    tol, gradient_rtol : float
        Tolerances of the soft Bellman and adjoint solves (as for BoltzmannLikelihood);
        kept in ``settings``.
    max_newton_steps, max_linear_iterations : int
        Caps on the Newton steps of a value solve and the iterations of a linear solve (the
        problem file's ``[solver]``, as for BoltzmannLikelihood); kept in ``settings``.
    """

    def __init__(self, mdp, episodes: PartialEpisodes, key: str = "partial",
                 weights: str = "weights", rationality: str = "rationality",
                 tol: float = 1e-10, gradient_rtol: float = soft.ADJOINT_RTOL,
                 max_newton_steps: int = soft.MAX_NEWTON_STEPS,
                 max_linear_iterations: int = soft.MAX_LINEAR_ITERATIONS) -> None:
        if not isinstance(episodes, PartialEpisodes):
            raise InputError(f"episodes: expected PartialEpisodes; got {type(episodes).__name__}")
        self.mdp, self.episodes, self.key = mdp, episodes, key
        self.weights_name, self.rationality_name = weights, rationality
        self.reads = (weights, rationality)
        self.steps, self.gaps = episodes.pieces(mdp)
        self.settings = {"tol": float(tol), "gradient_rtol": float(gradient_rtol),
                         "max_newton_steps": int(max_newton_steps),
                         "max_linear_iterations": int(max_linear_iterations)}
        self._check_possible()
        self._cache = marginal.new_cache(mdp, self.settings)
        self.n_evaluations = 0
        self.work = soft.new_work()

    def __repr__(self) -> str:
        return (f"PartialTerm(key={self.key!r}, episodes={self.episodes.n_episodes}, "
                f"steps={self.steps.source.size}, gaps={len(self.gaps)})")

    def subset(self, keep) -> PartialTerm:
        """The same term (settings, names) on the episodes ``keep`` (indices), e.g. to leave
        one out; it starts cold."""
        eps = [self.episodes.episodes[int(k)] for k in keep]
        return PartialTerm(self.mdp, PartialEpisodes([s for s, _ in eps], [a for _, a in eps]),
                           key=self.key, weights=self.weights_name,
                           rationality=self.rationality_name, **self.settings)

    def _check_possible(self) -> None:
        found = first_impossible(self.mdp, self.steps, self.gaps)
        if found is not None:
            raise InputError(f"partial episodes: episode {found[0]} {found[2]}")

    # -- evaluation -------------------------------------------------------------------------
    def _pass(self, policy: np.ndarray, counts: bool):
        """Per-episode log-probabilities and (if asked) the expected step counts."""
        mdp = self.mdp
        finite = mdp.horizon is not None
        per_episode = np.zeros(self.episodes.n_episodes)
        with np.errstate(invalid="ignore"):  # 0/0 only where the piece is impossible
            logp, post = step_pass(self.steps, policy, finite)
        np.add.at(per_episode, self.steps.episode, logp)
        shape = (mdp.horizon, mdp.n_states * mdp.n_actions) if finite else (
            mdp.n_states * mdp.n_actions,)
        n_sa = np.zeros(shape) if counts else None
        if counts:
            rows = self.steps.source[:, None] * mdp.n_actions + np.arange(mdp.n_actions)
            if finite:
                np.add.at(n_sa, (self.steps.time[:, None], rows), post)
            else:
                np.add.at(n_sa, rows, post)
        if not finite and self.gaps:  # stationary policy: equal-length gaps together
            lp, n_gap = gap_batch_pass(mdp.dynamics, self.gaps, policy, counts)
            np.add.at(per_episode, [g.episode for g in self.gaps], lp)
            if counts:
                n_sa += n_gap.ravel()
            return per_episode, n_sa
        policy_at = (lambda t: policy[t]) if finite else (lambda t: policy)
        for gap in self.gaps:
            lp, parts = gap_pass(mdp.dynamics, gap, policy_at, counts)
            per_episode[gap.episode] += lp
            for t, n_t in parts:
                if finite:
                    n_sa[t] += n_t.ravel()
                else:
                    n_sa += n_t.ravel()
        return per_episode, n_sa

    def _unpack(self, quantities):
        w = self.mdp.check_weights(quantities[self.weights_name])
        beta = float(quantities[self.rationality_name])
        if not np.isfinite(beta) or beta <= 0:
            raise InputError(f"rationality: must be a positive finite number; got {beta!r}")
        return w, beta

    def evaluate(self, quantities: Mapping[str, object], gradient: bool = True) -> TermValue:
        """Log-likelihood; gradient in the weights and in ``log(rationality)``."""
        w, beta = self._unpack(quantities)
        solved = marginal.solve_policy(self.mdp, self._cache, w, beta, self.work)
        per_episode, n_sa = self._pass(solved.policy, gradient)
        self.n_evaluations += 1
        logp = float(per_episode.sum())
        if not gradient:
            return TermValue(logp, {})
        if not np.isfinite(logp):
            # At extreme weights a policy entry can underflow to 0 and leave a recorded piece
            # no probability: a rejected point (its true likelihood is below exp(-700)).
            return TermValue(-np.inf, {self.weights_name: np.full(w.size, np.nan),
                                       self.rationality_name: np.nan})
        g = marginal.gradient(self.mdp, self._cache, solved, n_sa, w, beta, self.work)
        return TermValue(logp, {self.weights_name: g, self.rationality_name: float(w @ g)})

    def pointwise(self, quantities: Mapping[str, object]) -> Pointwise:
        """Log-likelihood per episode (they sum to :meth:`evaluate`'s) and, when no episode
        has a gap of unrecorded states, per step.

        The episodes are the term's own (numbered after the demonstrations). Given the
        reward, an episode's pieces are independent (the process is Markov), so a step
        between two recorded states is an observation of its own: its value is
        ``log P(recorded action, next state | state)``; a step after an episode's last
        recorded state or action records nothing and has the value 0 (log 1). A gap's
        hidden states tie its steps together: then no per-step values are given.
        """
        w, beta = self._unpack(quantities)
        solved = marginal.solve_policy(self.mdp, self._cache, w, beta, self.work)
        self.n_evaluations += 1
        per_episode = self._pass(solved.policy, False)[0]
        return Pointwise(None, per_episode, None if self.gaps else self._steps(solved.policy))

    def _steps(self, policy: np.ndarray) -> np.ndarray:
        """Per-step values of gap-free episodes, in order (episode, then time)."""
        lengths = np.array([a.size for _, a in self.episodes.episodes], dtype=np.int64)
        first = np.concatenate([[0], np.cumsum(lengths)[:-1]])
        out = np.zeros(int(lengths.sum()))
        with np.errstate(invalid="ignore"):
            logp, _ = step_pass(self.steps, policy, self.mdp.horizon is not None)
        out[first[self.steps.episode] + self.steps.time] = logp
        return out

    # -- warm starts (the discounted cache of likelihood.soft) ------------------------------
    def load_warm_start_arrays(self, arrays: dict[str, np.ndarray]) -> None:
        """Inverse of :meth:`warm_start_arrays` (no arrays: start cold)."""
        fresh = marginal.new_cache(self.mdp, self.settings)
        if "n_evaluations" not in arrays:
            self._cache = fresh
            return
        self._cache = warm.from_arrays(fresh, arrays)
        self.n_evaluations = int(arrays["n_evaluations"])
