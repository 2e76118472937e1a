"""Per-demonstrator rationality around a population rationality (partial pooling).

``log beta_d = log beta + s u_d`` with ``u_d ~ N(0, 1)`` (non-centred, as the weights) and
the spread ``s`` of the log-rationalities half-normal or fixed. The population ``beta`` is
the model's sampled rationality (LogNormal prior) and the overall scale stays pinned by a
fixed weight, as in the pooled model: a demonstrator's ``beta_d * w_d`` is all their
episodes see, so without the pin neither could be told apart from the other.

Block of ``theta`` (just before ``log beta``): ``(log s, u_1..u_G)``, or ``u`` alone when
``s`` is fixed. With ``g_d = dL/dlog beta_d``: ``dL/dlog beta = sum_d g_d``,
``dL/du_d = s g_d``, ``dL/dlog s = s sum_d g_d u_d``.
"""

from __future__ import annotations

import math

import numpy as np

from bayesirl.priors import HalfNormal

_HALF_LOG_2PI = 0.5 * math.log(2.0 * math.pi)


class RationalityBlock:
    """The ``(log s, u)`` block of ``n_groups`` demonstrators.

    Parameters
    ----------
    spread : HalfNormal or float
        Prior of ``s`` or its fixed value.
    n_groups : int
    """

    def __init__(self, spread, n_groups: int) -> None:
        self.prior = spread if isinstance(spread, HalfNormal) else None
        if self.prior is not None:
            self.prior.params(1)
        self.fixed = None if self.prior is not None else float(spread)
        self.n_groups = int(n_groups)
        self.size = self.n_groups + (self.prior is not None)

    def spread(self, block: np.ndarray) -> float:
        """``s`` at ``block``."""
        return float(np.exp(block[0])) if self.prior is not None else self.fixed

    def log_rationalities(self, block: np.ndarray, log_beta: float) -> np.ndarray:
        """``log beta_d`` of every demonstrator."""
        return log_beta + self.spread(block) * block[-self.n_groups:]

    def log_prior_and_chain(self, block: np.ndarray,
                            g_d: np.ndarray) -> tuple[float, np.ndarray, float]:
        """(log prior of the block, its gradient with the chain rule through ``beta_d``,
        ``dL/dlog beta`` of the population rationality)."""
        s, u = self.spread(block), block[-self.n_groups:]
        lp = -0.5 * float(u @ u) - u.size * _HALF_LOG_2PI
        grads = [s * g_d - u]
        if self.prior is not None:
            lp_s, g_s = self.prior.log_density(block[:1])
            lp += lp_s
            grads.insert(0, np.array([s * float(g_d @ u) + g_s[0]]))
        return lp, np.concatenate(grads), float(g_d.sum())
