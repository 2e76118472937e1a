"""Test targets with known moments, shared by the NUTS, random-walk and chain tests."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from harness import gaussian, gaussian_quantiles


class Target(NamedTuple):
    logdensity_and_grad: object
    mean: np.ndarray
    cov_or_sd: np.ndarray  # sds (1-D) or covariance (2-D)
    sd: np.ndarray

    @property
    def dim(self) -> int:
        return self.mean.shape[0]

    def quantiles(self) -> dict[float, np.ndarray]:
        return gaussian_quantiles(self.mean, self.sd)

    def starts(self, chains: int, seed: int) -> np.ndarray:
        """Over-dispersed starting points: mean + 2 sd * N(0, 1) (common practice)."""
        rng = np.random.default_rng(seed)
        return self.mean + 2.0 * self.sd * rng.standard_normal((chains, self.dim))

    def exact_draws(self, n: int, seed: int) -> np.ndarray:
        rng = np.random.default_rng(seed)
        cov = self.cov_or_sd if self.cov_or_sd.ndim == 2 else np.diag(self.sd**2)
        return rng.multivariate_normal(self.mean, cov, size=n)


def _gaussian_target(mean, cov_or_sd) -> Target:
    mean = np.asarray(mean, dtype=float)
    cov_or_sd = np.asarray(cov_or_sd, dtype=float)
    sd = np.sqrt(np.diag(cov_or_sd)) if cov_or_sd.ndim == 2 else cov_or_sd
    return Target(gaussian(mean, cov_or_sd), mean, cov_or_sd, sd)


_RHO = 0.95
GAUSSIANS = {
    "isotropic-3d": _gaussian_target([1.0, -1.0, 0.5], [1.0, 1.0, 1.0]),
    # Four orders of magnitude between the smallest and largest sd.
    "badly-scaled-5d": _gaussian_target(
        [0.0, 1.0, -1.0, 5.0, -20.0], [0.01, 0.1, 1.0, 10.0, 100.0]
    ),
    "correlated-2d": _gaussian_target(
        [0.5, -0.5], [[1.0, _RHO * 2.0], [_RHO * 2.0, 4.0]]
    ),
}
