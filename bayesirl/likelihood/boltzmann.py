"""Log-likelihood of demonstrations under a Boltzmann-rational demonstrator, with gradients.

``q_function="soft"``: actions ~ exp(beta Q_soft), the maximum-causal-entropy model.
``q_function="optimal"``:
actions ~ exp(beta Q*) with Q* of the hard-optimal policy (the classic Bayesian-IRL model).
The gradient comes from one adjoint solve; derivations in docs/likelihood.md.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, NamedTuple, Protocol

import numpy as np

from bayesirl.errors import InputError
from bayesirl.likelihood import optimal, pointwise, soft, warm
from bayesirl.likelihood.counts import demo_counts

if TYPE_CHECKING:
    from bayesirl.model import Demonstrations, TabularMDP


class LikelihoodValue(NamedTuple):
    """Log-likelihood and its gradients in the weights and in ``log(beta)``."""

    loglik: float
    grad_weights: np.ndarray  # (F,)
    grad_log_rationality: float


class BoltzmannLikelihood(warm.WarmStarts):
    """``L(w, beta) = sum_t log pi(a_t | s_t)`` for a Boltzmann-rational demonstrator.

    Parameters
    ----------
    mdp : TabularMDP
    demos : Demonstrations
        Checked against ``mdp`` (ranges, horizon, every recorded transition).
    rationality : float or LogNormal
        The inverse temperature ``beta``, in the same forms as :func:`bayesirl.sample`'s
        ``rationality``: a positive number (fixed), or a prior such as
        ``bayesirl.LogNormal(0, 1)``, which ``sample`` then samples (pin one weight). With a
        prior, ``evaluate``/``value`` without an explicit rationality use its median
        ``exp(mu)``.
    q_function : {"soft", "optimal"}
        The Q-function of the Boltzmann policy: soft (maximum causal entropy) or optimal.
    tol : float
        Span tolerance of the soft Bellman solve (discounted model): the log-likelihood is
        then accurate to about ``2 * n_steps * tol``.
    gradient_rtol : float
        Relative tolerance of the adjoint solve; the gradient's relative error is about
        this. The default suits samplers (see :mod:`bayesirl.likelihood.soft`); pass 1e-11
        or less to compare gradients with another code to many digits.
    max_newton_steps : int
        Most Newton steps of one soft Bellman solve before it fails (a failed warm-started
        solve is retried once from scratch).
    max_linear_iterations : int
        Most GMRES iterations (mat-vecs) of one linear solve (Newton step or adjoint).

    Notes
    -----
    The object keeps the last value vector, greedy policy and adjoint vector and warm-starts
    the next call from them; that makes it stateful, so give each chain its own copy.
    The policy depends on ``beta * w`` only, hence ``dL/dlog(beta) = w . dL/dw`` exactly.
    """

    def __init__(
        self, mdp: TabularMDP, demos: Demonstrations, *,
        rationality: float | RationalityPrior = 1.0,
        q_function: str = "soft",
        tol: float = 1e-10,
        gradient_rtol: float = soft.ADJOINT_RTOL,
        max_newton_steps: int = soft.MAX_NEWTON_STEPS,
        max_linear_iterations: int = soft.MAX_LINEAR_ITERATIONS,
    ) -> None:
        if q_function not in ("soft", "optimal"):
            raise InputError(f"q_function: expected 'soft' or 'optimal'; got {q_function!r}")
        if not hasattr(demos, "check") or not hasattr(demos, "episodes"):
            raise InputError(f"demos: expected Demonstrations; got {type(demos).__name__}")
        demos.check(mdp)
        self.mdp, self.demos, self.q_function = mdp, demos, q_function
        self.rationality_prior, self.rationality = _rationality(rationality)
        self.counts = demo_counts(mdp, demos)
        self._model = soft if q_function == "soft" else optimal
        self.tol = float(tol)
        self.gradient_rtol = float(gradient_rtol)
        if not 0.0 < self.gradient_rtol < 1.0:
            raise InputError(f"gradient_rtol: expected a number in (0, 1); got {gradient_rtol!r}")
        if not 0.0 <= self.tol < 1.0:  # 0: as tight as floating point allows
            raise InputError(f"tol: expected a number in [0, 1); got {tol!r}")
        self.max_newton_steps = _count(max_newton_steps, "max_newton_steps")
        self.max_linear_iterations = _count(max_linear_iterations, "max_linear_iterations")
        self._cache = self._new_cache()
        self.n_evaluations = 0
        # Cumulative solver effort (soft model, discounted): Newton steps, mat-vecs, adjoint
        # solves, cold retries after a failed warm start (soft.new_work). Read, never reset.
        self.work = soft.new_work()

    def __getstate__(self) -> dict:
        # Warm starts (and the LU factorisation, which does not pickle) stay behind: a copy
        # sent to another process starts cold and builds its own.
        state = self.__dict__.copy()
        state["_cache"] = None
        state["_model"] = None  # a module; restored from ``q_function``
        return state

    def __setstate__(self, state: dict) -> None:
        self.__dict__.update(state)
        self._model = soft if self.q_function == "soft" else optimal
        self._cache = self._new_cache()

    def _new_cache(self) -> dict:
        return self._model.new_cache(self.mdp, self.counts, self.tol, self.gradient_rtol,
                                     self.max_newton_steps, self.max_linear_iterations)

    @property
    def n_features(self) -> int:
        """Number of reward weights."""
        return self.mdp.n_features

    def reset(self) -> None:
        """Forget the warm starts (the next call solves from scratch)."""
        self._cache = self._new_cache()

    def load_warm_start_arrays(self, arrays: dict[str, np.ndarray]) -> None:
        """Inverse of :meth:`warm_start_arrays`: evaluations then continue bit for bit."""
        fresh = self._new_cache()
        self._cache = warm.from_arrays(fresh, arrays)
        self.n_evaluations = int(arrays["n_evaluations"])

    def evaluate(self, weights, rationality: float | None = None) -> LikelihoodValue:
        """Log-likelihood with gradients in ``weights`` and ``log(rationality)``."""
        w = self.mdp.check_weights(weights)
        beta = self.rationality if rationality is None else _positive(rationality)
        loglik, grad_w = self._evaluate(w, beta, True)
        self.n_evaluations += 1
        return LikelihoodValue(float(loglik), grad_w, float(w @ grad_w))

    def value(self, weights, rationality: float | None = None) -> float:
        """Log-likelihood without the gradient (skips the adjoint solve)."""
        w = self.mdp.check_weights(weights)
        beta = self.rationality if rationality is None else _positive(rationality)
        loglik, _ = self._evaluate(w, beta, False)
        self.n_evaluations += 1
        return float(loglik)

    def _evaluate(self, w, beta, gradient):
        return self._model.evaluate(self.mdp, self.counts, self._cache, w, beta, gradient,
                                    self.work)

    def value_and_grad(self, weights) -> tuple[float, np.ndarray]:
        """``(log_likelihood, gradient in weights)`` at the default rationality."""
        v = self.evaluate(weights)
        return v.loglik, v.grad_weights

    def log_likelihood(self, weights, rationality: float | None = None) -> float:
        """Log-likelihood only; an alias of :meth:`value`."""
        return self.value(weights, rationality)

    def step_log_likelihood(self, weights, rationality: float | None = None) -> np.ndarray:
        """``log pi(a_t | s_t)`` of every demonstrated step (``demos.steps`` order).

        Solved afresh, without the warm starts (which stay as they were); the sum equals
        :meth:`value` to the solver's tolerance.
        """
        w = self.mdp.check_weights(weights)
        beta = self.rationality if rationality is None else _positive(rationality)
        log_pi, _ = pointwise.log_policy(self.mdp, self.q_function, w, beta)
        return pointwise.step_values(log_pi, self.demos)

    def episode_log_likelihood(self, weights, rationality: float | None = None) -> np.ndarray:
        """Log-likelihood of each episode (sum of its steps), in the order of ``demos``."""
        return pointwise.episode_values(self.step_log_likelihood(weights, rationality),
                                        self.demos)


def _count(value, name: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise InputError(f"{name}: expected a whole number >= 1; got {value!r}")
    return int(value)


class RationalityPrior(Protocol):
    """A prior on the rationality (``bayesirl.LogNormal``): sampled on ``log(beta)``."""

    mu: float
    sigma: float

    def log_density(self, z: np.ndarray) -> tuple[float, np.ndarray]: ...


def _rationality(value) -> tuple[RationalityPrior | None, float]:
    """``(prior or None, default beta)``: a prior's default is its median ``exp(mu)``."""
    if hasattr(value, "log_density"):
        mu = getattr(value, "mu", None)
        if np.ndim(mu) != 0 or not np.isfinite(float(mu)):
            raise InputError(f"rationality: a prior needs one finite log_mean (mu); got {value!r}")
        return value, _positive(float(np.exp(float(mu))))
    if isinstance(value, str | bytes | bool | np.bool_):  # float("1.0") would pass
        raise InputError(f"rationality: expected a positive number or a LogNormal prior; got "
                         f"{value!r}")
    return None, _positive(value)


def _positive(beta) -> float:
    b = float(beta)
    if not np.isfinite(b) or b <= 0:
        raise InputError(f"rationality: must be a positive finite number; got {beta!r}")
    return b
