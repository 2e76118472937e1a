"""A Gaussian evidence term for the partial-pooling machinery, with no MDP behind it.

``y_j ~ Normal(theta_j, sigma_j^2)``: demonstrator ``j``'s "weights" are its effect
``theta_j``. Satisfies bayesirl.evidence.EvidenceTerm (it keeps no warm starts).
"""

from __future__ import annotations

import numpy as np

from bayesirl.evidence import TermValue, weights_name


class GaussianTerm:
    """``log N(y; w[0], sigma^2)`` for the quantity ``weights/{index}``."""

    def __init__(self, index: int, y: float, sigma: float) -> None:
        self.key = f"g{index}"
        self.name = weights_name(index)
        self.reads = (self.name,)
        self.y, self.sigma = float(y), float(sigma)
        self.n_evaluations = 0

    def evaluate(self, quantities, gradient: bool = True) -> TermValue:
        self.n_evaluations += 1
        u = (self.y - quantities[self.name][0]) / self.sigma
        logp = -0.5 * u * u - np.log(self.sigma) - 0.5 * np.log(2 * np.pi)
        return TermValue(float(logp), {self.name: np.array([u / self.sigma])} if gradient else {})

    def warm_start(self):
        return None

    def restore_warm_start(self, snapshot) -> None:
        pass

    def warm_start_arrays(self) -> dict:
        return {}

    def load_warm_start_arrays(self, arrays) -> None:
        pass
