"""A conjugate normal problem with exact posterior chains: checks of the SBC machinery itself.

``theta ~ N(0, tau^2)`` (``dim`` independent coordinates), ``n_obs`` observations
``y_i ~ N(theta, sigma^2)``; the posterior is ``N(m, v)`` with
``v = 1 / (1 / tau^2 + n_obs / sigma^2)`` and ``m = v * sum(y) / sigma^2`` (standard
conjugacy). The "chains" are stationary Gaussian AR(1) processes with that marginal and lag-1
correlation ``rho``, so every draw is an exact posterior draw but neighbours are correlated:
SBC must thin them before ranking (with ``rho`` near 1 the unthinned ranks pile up at 0 and
``L``).

``analyst_scale`` is the prior scale the "posterior" uses. Any value other than ``tau`` is a
deliberately wrong posterior, the classic SBC negative control.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import signal

from bayesirl.validation.grid import PosteriorDraws


@dataclass(frozen=True)
class ConjugateNormal:
    """SBC problem with known posterior; see the module docstring.

    Parameters
    ----------
    dim : int
        Independent coordinates.
    tau, sigma : float
        Prior and noise scales.
    n_obs : int
        Observations per replication.
    rho : float
        Lag-1 autocorrelation of the posterior chains, in ``[0, 1)``.
    chains : int
    analyst_scale : float, optional
        Prior scale used for the posterior (default ``tau``: correct).
    shift : float
        Added to every posterior draw, in posterior standard deviations (0: correct).
    """

    dim: int = 2
    tau: float = 1.0
    sigma: float = 1.0
    n_obs: int = 1
    rho: float = 0.0
    chains: int = 2
    analyst_scale: float | None = None
    shift: float = 0.0

    @property
    def names(self) -> tuple[str, ...]:
        """``theta0, theta1, ...``."""
        return tuple(f"theta{i}" for i in range(self.dim))

    def simulate(self, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
        """True ``theta`` from the prior and the observations' sum."""
        theta = self.tau * rng.standard_normal(self.dim)
        y = theta[None, :] + self.sigma * rng.standard_normal((self.n_obs, self.dim))
        return theta, y.sum(axis=0)

    def posterior(self, y_sum: np.ndarray, draws: int, seed: int) -> PosteriorDraws:
        """Stationary AR(1) chains with the (analyst's) conjugate posterior as marginal."""
        scale = self.tau if self.analyst_scale is None else self.analyst_scale
        var = 1.0 / (1.0 / scale**2 + self.n_obs / self.sigma**2)
        mean = var * y_sum / self.sigma**2
        sd = np.sqrt(var)
        rng = np.random.default_rng(seed)
        noise = rng.standard_normal((self.chains, int(draws), self.dim))
        # z_0 ~ N(0, 1), z_t = rho z_{t-1} + sqrt(1 - rho^2) e_t: stationary, unit variance.
        noise[:, 1:] *= np.sqrt(1.0 - self.rho**2)
        z = signal.lfilter([1.0], [1.0, -self.rho], noise, axis=1)
        return PosteriorDraws(mean + sd * (z + self.shift), 0)

    def describe(self) -> dict[str, str]:
        """Settings for a report."""
        scale = self.tau if self.analyst_scale is None else self.analyst_scale
        return {
            "model": (f"theta ~ N(0, {self.tau:g}^2) in {self.dim} coordinates, {self.n_obs} "
                      f"observation(s) ~ N(theta, {self.sigma:g}^2)"),
            "posterior": (f"exact conjugate posterior under prior scale {scale:g}, shifted by "
                          f"{self.shift:g} sd, as {self.chains} AR(1) chains (rho {self.rho:g})"),
        }
