"""Comparisons between episodes: "episode A is preferred over episode B", or "no preference".

A person shown two episodes chooses the one whose discounted return is higher, Boltzmann-
rationally (Bradley-Terry / Luce choice on returns):

    P(A over B | w) = sigmoid(z),   z = beta_c (R_A - R_B),   R = sum_t g^t phi(s_t, a_t) . w,

with its own rationality ``beta_c`` (the person judging need not be the one demonstrating):
a fixed number, or a positive quantity the sampler moves (its prior is the problem file's
``[judge]`` table; with the demonstrator's rationality fixed, or a weight pinned, the scale
of ``w`` is set and ``beta_c`` is identified by the answers).

When the judge may answer "no preference", Davidson's (1970) extension of Bradley-Terry
gives that answer its own probability, with a tie parameter ``nu > 0``:

    P(A over B) = e^{z/2} / D,   P(no preference) = nu / D,   D = e^{z/2} + e^{-z/2} + nu.

It is symmetric in A and B, is largest for the tie when the returns are equal (``nu / (2 +
nu)``), and reduces to the logistic model at ``nu = 0``. Whether it applies depends on the
question asked, not on the answers: a judge offered the option who never used it still
answered under this model. ``nu`` is fixed or sampled like ``beta_c``. The returns are linear
in ``w``, so each answer is summarised by the difference of its episodes' discounted feature
sums, computed once; the term needs no Bellman solve.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from bayesirl.errors import InputError
from bayesirl.evidence.term import Pointwise, TermValue


def discounted_features(mdp, states: np.ndarray, actions: np.ndarray) -> np.ndarray:
    """``sum_t g^t phi(s_t, a_t)`` over an episode's recorded steps, ``(F,)``.

    Every step's state must be recorded, and its action too unless the features depend on
    the state only (then the return does not need it).
    """
    states, actions = np.asarray(states, np.int64), np.asarray(actions, np.int64)
    n = actions.size
    if np.any(states[:n] < 0) or (not mdp.state_features and np.any(actions < 0)):
        raise InputError("comparisons: an episode's return needs every state"
                         + ("" if mdp.state_features else " and action") + " recorded")
    disc = mdp.discount ** np.arange(n)
    phi = (mdp.features[states[:n]] if mdp.state_features
           else mdp.features[states[:n], actions])
    return disc @ phi


# Names of the term's sampled quantities when given a prior (one comparison term per model).
SAMPLED_NAMES = {"rationality": "judge_rationality", "tie": "judge_tie"}


def _positive(value, what: str, priors: dict) -> tuple[str | None, float | None]:
    """``(name, None)`` for a sampled quantity, ``(None, value)`` for a fixed number. A prior
    (an object with ``log_density``, e.g. ``bayesirl.LogNormal``) samples the quantity under
    its :data:`SAMPLED_NAMES` name and is kept in ``priors``."""
    if isinstance(value, str):
        return value, None
    if hasattr(value, "log_density"):
        priors[SAMPLED_NAMES[what]] = value
        return SAMPLED_NAMES[what], None
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = float("nan")
    if not np.isfinite(v) or v <= 0:
        raise InputError(f"comparisons: {what} must be positive; got {value!r}")
    return None, v


class ComparisonTerm:
    """``sum_k log P(answer_k | w, beta_c[, nu])`` (Bradley-Terry, or Davidson with ties).

    Parameters
    ----------
    differences : array (K, F)
        Per answer, the preferred episode's discounted feature sum minus the other's (for a
        "no preference" answer, either order: the model is symmetric); see
        :func:`discounted_features`.
    rationality : float, str or LogNormal
        A fixed ``beta_c`` (positive); a prior, to sample it as ``"judge_rationality"``
        (kept in :attr:`priors`, read by the posterior); or the name of a quantity someone
        else provides. A sampled quantity's gradient is reported in ``log(beta_c)``.
    key, weights : str
        The term's key and the name of the weights it reads.
    ties : array of bool (K,), optional
        True where the answer was "no preference". Needs ``tie``.
    tie : float, str or LogNormal, optional
        Davidson's tie parameter ``nu``, as ``rationality`` (sampled as ``"judge_tie"``;
        gradient in ``log(nu)``). None: the judge was not offered "no preference"
        (Bradley-Terry).

    Attributes
    ----------
    priors : dict
        ``{quantity name: prior}`` of the quantities this term samples (empty if none).
    """

    def __init__(self, differences, rationality: float | str = 1.0, key: str = "comparisons",
                 weights: str = "weights", *, ties=None, tie: float | str | None = None) -> None:
        d = np.asarray(differences, dtype=np.float64)
        if d.ndim != 2 or d.shape[0] == 0 or not np.all(np.isfinite(d)):
            raise InputError(f"comparisons: expected a finite (K, F) array with K >= 1; got "
                             f"shape {d.shape}")
        self.differences, self.key, self.weights_name = d, key, weights
        self.ties = (np.zeros(d.shape[0], dtype=bool) if ties is None
                     else np.asarray(ties, dtype=bool).reshape(-1))
        if self.ties.size != d.shape[0]:
            raise InputError(f"comparisons: {self.ties.size} tie flags for {d.shape[0]} answers")
        if self.ties.any() and tie is None:
            raise InputError("comparisons: 'no preference' answers need the tie parameter "
                             "(Davidson 1970); the logistic choice model has no such outcome")
        self.priors: dict = {}
        self.rationality_name, self.fixed = _positive(rationality, "rationality", self.priors)
        self.tie_name, self.tie_fixed = ((None, None) if tie is None
                                         else _positive(tie, "tie", self.priors))
        self.reads = tuple(n for n in (weights, self.rationality_name, self.tie_name)
                           if n is not None)
        self.n_evaluations = 0

    @classmethod
    def from_episodes(cls, mdp, episodes: Mapping, pairs: Sequence[tuple[str, str]],
                      **kwargs) -> ComparisonTerm:
        """From named episodes ``{name: (states, actions)}`` and (preferred, other) pairs."""
        cache = {}
        rows = []
        for k, (win, lose) in enumerate(pairs):
            for name in (win, lose):
                if name not in episodes:
                    raise InputError(f"comparisons: pair {k} names episode {name!r}, which "
                                     "the episodes do not hold")
                if name not in cache:
                    cache[name] = discounted_features(mdp, *episodes[name])
            if win == lose:
                raise InputError(f"comparisons: pair {k} compares episode {win!r} with itself")
            rows.append(cache[win] - cache[lose])
        return cls(np.asarray(rows), **kwargs)

    def __repr__(self) -> str:
        beta = self.rationality_name if self.fixed is None else self.fixed
        tie = "" if not self.davidson else (
            f", ties={int(self.ties.sum())}, tie={self.tie_name or self.tie_fixed}")
        return (f"ComparisonTerm(key={self.key!r}, comparisons={len(self)}, "
                f"rationality={beta}{tie})")

    def __len__(self) -> int:
        return self.differences.shape[0]

    @property
    def davidson(self) -> bool:
        """True when "no preference" was a possible answer (Davidson's model)."""
        return self.tie_name is not None or self.tie_fixed is not None

    def _beta(self, quantities) -> float:
        return self.fixed if self.fixed is not None else float(quantities[self.rationality_name])

    def _nu(self, quantities) -> float:
        if not self.davidson:
            return 0.0
        return self.tie_fixed if self.tie_fixed is not None else float(
            quantities[self.tie_name])

    def _parts(self, quantities):
        """``(z, log D, log P per answer)`` with ``D = e^{z/2} + e^{-z/2} + nu``."""
        w = np.asarray(quantities[self.weights_name], dtype=np.float64)
        z = self._beta(quantities) * (self.differences @ w)
        log_d = np.logaddexp(z / 2, -z / 2)
        nu = self._nu(quantities)
        if nu > 0:
            log_d = np.logaddexp(log_d, np.log(nu))
        top = np.where(self.ties, np.log(nu) if nu > 0 else -np.inf, z / 2)
        return z, log_d, top - log_d

    def answer_log_probabilities(self, quantities: Mapping[str, object]) -> np.ndarray:
        """Log-probability of each answer ``(K,)`` (they sum to :meth:`evaluate`'s)."""
        return self._parts(quantities)[2]

    def pointwise(self, quantities: Mapping[str, object]) -> Pointwise:
        """No episodes; one value per answer (each answer is an observation of its own)."""
        none = np.zeros(0)
        return Pointwise(np.zeros(0, dtype=np.int64), none, none,
                         self.answer_log_probabilities(quantities))

    def subset(self, keep) -> ComparisonTerm:
        """The same term on the answers ``keep`` (indices), e.g. to leave one out."""
        keep = np.asarray(keep, dtype=np.int64)
        beta = self.rationality_name if self.fixed is None else self.fixed
        tie = None if not self.davidson else (
            self.tie_name if self.tie_fixed is None else self.tie_fixed)
        out = ComparisonTerm(self.differences[keep], rationality=beta, key=self.key,
                             weights=self.weights_name, ties=self.ties[keep], tie=tie)
        out.priors = dict(self.priors)  # a sampled judge keeps its priors in the subset
        return out

    def evaluate(self, quantities: Mapping[str, object], gradient: bool = True) -> TermValue:
        """Log-likelihood; gradient in the weights and (if sampled) in ``log(beta_c)`` and
        ``log(nu)``."""
        z, log_d, logp_k = self._parts(quantities)
        self.n_evaluations += 1
        logp = float(logp_k.sum())
        if not gradient:
            return TermValue(logp, {})
        # dlogD/dz = (e^{z/2} - e^{-z/2}) / (2D), without overflow; dlogD/dlog nu = nu / D
        half = 0.5 * (np.exp(z / 2 - log_d) - np.exp(-z / 2 - log_d))
        dz = np.where(self.ties, 0.0, 0.5) - half
        beta = self._beta(quantities)
        grads = {self.weights_name: beta * (dz @ self.differences)}
        if self.fixed is None:
            grads[self.rationality_name] = float(dz @ z)
        if self.tie_name is not None:
            share = np.exp(np.log(self._nu(quantities)) - log_d)
            grads[self.tie_name] = float(np.sum(self.ties) - share.sum())
        return TermValue(logp, grads)

    def hessian_weights(self, quantities: Mapping[str, object]) -> np.ndarray:
        """``d^2 log p / dw^2 = -beta^2 sum_k v_k d_k d_k^T`` with ``v_k = d^2 log D / dz^2``
        (for Laplace checks; ``s (1 - s)`` in the logistic model)."""
        beta = self._beta(quantities)
        z, log_d, _ = self._parts(quantities)
        plus, minus = np.exp(z / 2 - log_d), np.exp(-z / 2 - log_d)
        v = 0.25 * (plus + minus) - 0.25 * (plus - minus) ** 2
        return -(beta ** 2) * (self.differences.T * v) @ self.differences

    # No warm starts: the term is a closed form.
    def warm_start(self) -> int:
        """The evaluation count (the only state)."""
        return self.n_evaluations

    def restore_warm_start(self, snapshot: int) -> None:
        """Back to a :meth:`warm_start` snapshot."""
        self.n_evaluations = int(snapshot)

    def warm_start_arrays(self) -> dict[str, np.ndarray]:
        """The evaluation count as an array."""
        return {"n_evaluations": np.array(self.n_evaluations)}

    def load_warm_start_arrays(self, arrays: dict[str, np.ndarray]) -> None:
        """Inverse of :meth:`warm_start_arrays`."""
        if "n_evaluations" in arrays:
            self.n_evaluations = int(arrays["n_evaluations"])
