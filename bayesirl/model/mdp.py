"""The tabular MDP with linear reward features."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np
import scipy.sparse as sp
from numpy.typing import ArrayLike

from bayesirl.errors import InputError
from bayesirl.model import validate
from bayesirl.solver.defaults import DEFAULT_TOL
from bayesirl.solver.dynamics import Dynamics

if TYPE_CHECKING:
    from bayesirl.solver import FiniteSolution, SoftSolution


class TabularMDP:
    """A finite MDP with reward ``r(s, a) = features(s, a) . w``.

    Parameters
    ----------
    transitions : array ``(S, A, S)`` or scipy.sparse matrix ``(S*A, S)``
        ``P(s' | s, a)``; in the sparse form row ``s*A + a`` is ``P(.|s, a)``. Stored as CSR.
        Absorbing states are ordinary states that loop to themselves.
    features : array ``(S, F)`` (state features) or ``(S, A, F)`` (state-action features).
    discount : float
        In ``[0, 1)`` for the infinite-horizon model, ``[0, 1]`` with a horizon.
    horizon : int or None
        ``None``: infinite-horizon discounted, stationary policy. An integer ``H``: episodes of at
        most ``H`` steps starting at time 0, time-dependent policy, ``V_H = 0``.
    start : array ``(S,)`` or None
        Initial-state distribution (used by simulation and by policy-value summaries).
    feature_names : sequence of str or None
        Defaults to ``f0, f1, ...``.
    grid_shape : (rows, cols) or None
        For maps in reports: state ``s < rows * cols`` is the cell ``divmod(s, cols)``;
        further states (e.g. an added absorbing state) are off the map.
    """

    def __init__(
        self,
        transitions: ArrayLike | sp.spmatrix | sp.sparray,
        features: ArrayLike,
        *,
        discount: float = 0.95,
        horizon: int | None = None,
        start: ArrayLike | None = None,
        feature_names: Sequence[str] | None = None,
        grid_shape: tuple[int, int] | None = None,
    ) -> None:
        matrix, n_s, n_a = validate.transition_matrix(transitions)
        self.transitions: sp.csr_matrix = matrix
        self.n_states, self.n_actions = n_s, n_a
        self.features: np.ndarray = validate.feature_array(features, n_s, n_a)
        self.n_features = self.features.shape[-1]
        self.state_features = self.features.ndim == 2
        self.discount, self.horizon = validate.horizon_and_discount(discount, horizon)
        self.start = None if start is None else validate.distribution(start, n_s, "start")
        self.feature_names = validate.names(feature_names, self.n_features)
        self.grid_shape = validate.grid_shape(grid_shape, n_s)
        self.dynamics = Dynamics.from_csr(matrix, n_a)
        # Validated arrays are frozen: a model is immutable once checked.
        for arr in (matrix.data, matrix.indices, matrix.indptr, self.features, self.start):
            if arr is not None:
                arr.setflags(write=False)

    def __repr__(self) -> str:
        h = "infinite" if self.horizon is None else str(self.horizon)
        return (
            f"TabularMDP(S={self.n_states}, A={self.n_actions}, F={self.n_features}, "
            f"discount={self.discount}, horizon={h})"
        )

    @property
    def features_sa(self) -> np.ndarray:
        """Features as ``(S, A, F)``; a read-only broadcast view for state features."""
        if self.state_features:
            shape = (self.n_states, self.n_actions, self.n_features)
            return np.broadcast_to(self.features[:, None, :], shape)
        return self.features

    def check_weights(self, weights) -> np.ndarray:
        """Return ``weights`` as a float array of shape ``(F,)`` or raise :class:`InputError`."""
        w = np.asarray(weights, dtype=np.float64)
        if w.shape != (self.n_features,):
            raise InputError(f"weights: expected shape ({self.n_features},); got {w.shape}")
        if not np.all(np.isfinite(w)):
            raise InputError(f"weights: must be finite; got {w.tolist()}")
        return w

    def reward(self, weights) -> np.ndarray:
        """Reward table ``(S, A)`` for the given weights."""
        w = self.check_weights(weights)
        if self.state_features:
            return np.repeat((self.features @ w)[:, None], self.n_actions, axis=1)
        return self.features @ w

    def solve(
        self,
        weights,
        rationality: float = 1.0,
        values0: np.ndarray | None = None,
        method: str = "newton",
        tol: float = DEFAULT_TOL,
    ) -> SoftSolution | FiniteSolution:
        """Soft-optimal solution for reward ``rationality * features . weights``.

        ``method`` is ``"newton"`` (soft policy iteration, default) or ``"value-iteration"``;
        it is ignored with a finite horizon, where the backward recursion is exact.
        """
        # The solvers (numba, sparse linear algebra) load on the first solve, not at import.
        from bayesirl.solver import soft_backward, soft_newton, soft_value_iteration

        beta = _check_rationality(rationality)
        reward = beta * self.reward(weights)
        if self.horizon is not None:
            return soft_backward(self.dynamics, reward, self.discount, self.horizon)
        if method == "newton":
            return soft_newton(self.dynamics, reward, self.discount, values0, tol=tol)
        if method == "value-iteration":
            return soft_value_iteration(self.dynamics, reward, self.discount, values0, tol=tol)
        raise InputError(f"method: expected 'newton' or 'value-iteration'; got {method!r}")

    def soft_policy(self, weights, rationality: float = 1.0) -> np.ndarray:
        """Boltzmann-rational (soft-optimal) policy: ``(S, A)``, or ``(H, S, A)`` with a horizon."""
        return self.solve(weights, rationality).policy

    @classmethod
    def from_gymnasium(cls, env, features, discount: float = 0.95, **kwargs) -> TabularMDP:
        """Build from a gymnasium toy-text environment's table ``env.unwrapped.P``.

        Duplicate outcomes are merged; an outcome flagged ``terminated`` leads to a state that
        is made absorbing (see :mod:`bayesirl.model.gym`). Extra keyword arguments go to the
        constructor (``horizon``, ``start``, ``feature_names``).
        """
        from bayesirl.model.gym import check_feature_rows, gymnasium_transitions

        matrix, start = gymnasium_transitions(env)
        check_feature_rows(env, features, matrix.shape[1])
        kwargs.setdefault("start", start)
        return cls(matrix, features, discount=discount, **kwargs)


def _check_rationality(rationality) -> float:
    beta = float(rationality)
    if not np.isfinite(beta) or beta <= 0:
        raise InputError(f"rationality: must be a positive finite number; got {rationality!r}")
    return beta
