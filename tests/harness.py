"""Shared statistical test harness: compare MCMC output with known or other-sampler moments.

Each checked quantity (a mean, an sd, a covariance, a quantile) gets a Monte-Carlo
standard error (MCSE) from arviz's effective sample size (ESS), and the check asserts
``|estimate - truth| < z * mcse`` with ``z`` chosen so that the whole set of checks has
family-wise false-alarm probability ``alpha`` (Bonferroni; default ``alpha = 1e-3``).

MCSE formulas (Vehtari, Gelman, Simpson, Carpenter & Buerkner 2021, Bayesian Analysis 16,
"Rank-normalization, folding, and localization: an improved R-hat"):

* mean: ``sd / sqrt(ESS_bulk)``;
* variance: ``sd((x - xbar)^2) / sqrt(ESS((x - xbar)^2))``, then the delta method for the
  sd, ``mcse_sd = mcse_var / (2 sd)``;
* covariance ``E[(x_i - mu_i)(x_j - mu_j)]``: the same for the product series;
* quantile ``q_p``: the binomial error of the proportion below it,
  ``s = sqrt(p (1 - p) / ESS_p)`` with ``ESS_p`` the ESS of the indicator
  ``1{x <= q_p}`` (arviz ``method="quantile"``), mapped back through the empirical
  quantile function: ``mcse = (q(p + s) - q(p - s)) / 2``. The indicator's ESS, not the
  bulk ESS, is used because tail quantiles mix more slowly than the centre.

Draws are ``(n, dim)`` for one chain or ``(chains, n, dim)``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any, NamedTuple

import numpy as np
from scipy import stats

# ArviZ of either series (0.2x or 1.x), on plain (chains, draws) arrays.
from bayesirl import arviz_compat as az
from bayesirl.sampler import ChainResult, run_chain

DEFAULT_ALPHA = 1e-3
DEFAULT_PROBS = (0.05, 0.5, 0.95)


class Check(NamedTuple):
    """Named estimates, references and their combined MCSE, with the critical ``z``."""

    names: list[str]
    estimate: np.ndarray
    reference: np.ndarray
    mcse: np.ndarray
    z_crit: float

    @property
    def z(self) -> np.ndarray:
        """Standardised errors ``(estimate - reference) / mcse``."""
        return (self.estimate - self.reference) / self.mcse

    @property
    def failed(self) -> list[str]:
        """Names of the quantities outside ``z_crit`` MCSEs."""
        return [n for n, z in zip(self.names, self.z, strict=True) if not abs(z) < self.z_crit]

    def report(self) -> str:
        """One line per quantity, failures marked."""
        lines = [f"family-wise critical z = {self.z_crit:.2f}"]
        for name, est, ref, se, z in zip(
            self.names, self.estimate, self.reference, self.mcse, self.z, strict=True
        ):
            mark = "  <-- FAIL" if not abs(z) < self.z_crit else ""
            lines.append(
                f"{name:>18}: est {est: .5g} ref {ref: .5g} mcse {se:.3g} z {z: .2f}{mark}"
            )
        return "\n".join(lines)


def bonferroni_z(alpha: float, n_checks: int) -> float:
    """Two-sided critical value giving family-wise level ``alpha`` over ``n_checks``."""
    return float(stats.norm.isf(alpha / (2.0 * n_checks)))


def as_chains(draws: np.ndarray) -> np.ndarray:
    """Return draws as ``(chains, n, dim)``."""
    draws = np.asarray(draws, dtype=float)
    if draws.ndim == 1:
        return draws[None, :, None]
    if draws.ndim == 2:
        return draws[None]
    return draws


def _ess(x: np.ndarray, method: str, prob: float | None = None) -> float:
    return az.ess(x, method=method, prob=prob)


def mean_mcse(x: np.ndarray) -> tuple[float, float]:
    """Mean of ``x`` (chains, n) and its MCSE from the bulk ESS."""
    return float(x.mean()), float(x.std(ddof=1) / math.sqrt(_ess(x, "bulk")))


def _centred_moment_mcse(prod: np.ndarray) -> tuple[float, float]:
    # Mean of a squared or cross-product deviation series; its own ESS governs the error.
    return float(prod.mean()), float(prod.std(ddof=1) / math.sqrt(_ess(prod, "mean")))


def sd_mcse(x: np.ndarray) -> tuple[float, float]:
    """Sample sd of ``x`` (chains, n) and its delta-method MCSE."""
    var, var_se = _centred_moment_mcse((x - x.mean()) ** 2)
    sd = math.sqrt(var)
    return sd, var_se / (2.0 * sd)


def quantile_mcse(x: np.ndarray, prob: float) -> tuple[float, float]:
    """Empirical ``prob``-quantile of ``x`` (chains, n) and its MCSE (see module doc)."""
    flat = x.ravel()
    ess = _ess(x, "quantile", prob)
    s = math.sqrt(prob * (1.0 - prob) / ess)
    lo, hi = np.quantile(flat, [max(prob - s, 0.0), min(prob + s, 1.0)])
    return float(np.quantile(flat, prob)), float((hi - lo) / 2.0)


def summarize(
    draws: np.ndarray, probs: Sequence[float] = DEFAULT_PROBS, cross: bool = False
) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Names, estimates and MCSEs of means, sds, quantiles (and covariances if ``cross``)."""
    chains = as_chains(draws)
    names, est, se = [], [], []

    def add(name: str, pair: tuple[float, float]) -> None:
        names.append(name)
        est.append(pair[0])
        se.append(pair[1])

    dim = chains.shape[2]
    for i in range(dim):
        x = chains[:, :, i]
        add(f"mean[{i}]", mean_mcse(x))
        add(f"sd[{i}]", sd_mcse(x))
        for p in probs:
            add(f"q{p:g}[{i}]", quantile_mcse(x, p))
    if cross:
        centred = chains - chains.mean(axis=(0, 1))
        for i in range(dim):
            for j in range(i + 1, dim):
                add(f"cov[{i},{j}]", _centred_moment_mcse(centred[:, :, i] * centred[:, :, j]))
    return names, np.array(est), np.array(se)


def _reference(mean, cov_or_sd, quantiles, probs, dim) -> tuple[np.ndarray, bool]:
    mean = np.broadcast_to(np.asarray(mean, dtype=float), (dim,))
    cov_or_sd = np.asarray(cov_or_sd, dtype=float)
    dense = cov_or_sd.ndim == 2
    sd = np.sqrt(np.diag(cov_or_sd)) if dense else np.broadcast_to(cov_or_sd, (dim,))
    ref = []
    for i in range(dim):
        ref += [mean[i], sd[i]] + [quantiles[p][i] for p in probs]
    if dense:
        ref += [cov_or_sd[i, j] for i in range(dim) for j in range(i + 1, dim)]
    return np.array(ref), dense


def moment_check(
    draws: np.ndarray,
    mean: np.ndarray,
    cov_or_sd: np.ndarray,
    quantiles: dict[float, np.ndarray] | None = None,
    alpha: float = DEFAULT_ALPHA,
) -> Check:
    """Compare draws with known means, sds (or a covariance) and optional quantiles.

    ``quantiles`` maps a probability to the true quantiles of each coordinate. With a
    2-D ``cov_or_sd`` the off-diagonal covariances are checked too.
    """
    chains = as_chains(draws)
    probs = tuple(sorted(quantiles)) if quantiles else ()
    ref, dense = _reference(mean, cov_or_sd, quantiles or {}, probs, chains.shape[2])
    names, est, se = summarize(chains, probs, cross=dense)
    return Check(names, est, ref, se, bonferroni_z(alpha, len(names)))


def check_moments(
    draws: np.ndarray,
    mean: np.ndarray,
    cov_or_sd: np.ndarray,
    quantiles: dict[float, np.ndarray] | None = None,
    alpha: float = DEFAULT_ALPHA,
) -> Check:
    """Assert that draws match known moments within family-wise Monte-Carlo error.

    Parameters
    ----------
    draws : numpy.ndarray
        ``(n, dim)`` or ``(chains, n, dim)``.
    mean : array_like
        True means, ``(dim,)`` or a scalar.
    cov_or_sd : array_like
        True sds ``(dim,)`` or covariance ``(dim, dim)`` (then covariances are checked).
    quantiles : dict, optional
        ``{prob: true quantiles (dim,)}``.
    alpha : float, default 1e-3
        Family-wise false-alarm probability (Bonferroni over all checked quantities).

    Returns
    -------
    Check
        The comparison, for further inspection.

    Raises
    ------
    AssertionError
        With a per-quantity report, if any quantity is outside ``z * mcse``.
    """
    check = moment_check(draws, mean, cov_or_sd, quantiles, alpha)
    assert not check.failed, "moments disagree with the truth:\n" + check.report()
    return check


def sample_check(
    draws_a: np.ndarray,
    draws_b: np.ndarray,
    probs: Sequence[float] = DEFAULT_PROBS,
    alpha: float = DEFAULT_ALPHA,
) -> Check:
    """Compare two samplers' means, sds and quantiles within their combined MCSE."""
    names, est_a, se_a = summarize(draws_a, probs)
    _, est_b, se_b = summarize(draws_b, probs)
    se = np.sqrt(se_a**2 + se_b**2)
    return Check(names, est_a, est_b, se, bonferroni_z(alpha, len(names)))


def check_agreement(
    draws_a: np.ndarray,
    draws_b: np.ndarray,
    probs: Sequence[float] = DEFAULT_PROBS,
    alpha: float = DEFAULT_ALPHA,
) -> Check:
    """Assert that two samplers agree within their combined Monte-Carlo error.

    Parameters
    ----------
    draws_a, draws_b : numpy.ndarray
        ``(n, dim)`` or ``(chains, n, dim)`` each; for an ensemble sampler pass the
        walkers as chains.
    probs : sequence of float
        Quantile levels compared besides means and sds.
    alpha : float, default 1e-3
        Family-wise false-alarm probability (Bonferroni).

    Returns
    -------
    Check
        ``estimate`` holds sampler A's values, ``reference`` sampler B's.

    Raises
    ------
    AssertionError
        With a per-quantity report, if any difference exceeds ``z * sqrt(mcse_a^2 +
        mcse_b^2)``.
    """
    check = sample_check(draws_a, draws_b, probs, alpha)
    assert not check.failed, "samplers disagree:\n" + check.report()
    return check


def gaussian(
    mean: np.ndarray, cov_or_sd: np.ndarray
) -> Callable[[np.ndarray], tuple[float, np.ndarray]]:
    """Log density (up to a constant) and gradient of a Gaussian.

    ``cov_or_sd`` holds sds if 1-D, a covariance if 2-D.
    """
    mean = np.asarray(mean, dtype=float)
    cov_or_sd = np.asarray(cov_or_sd, dtype=float)
    if cov_or_sd.ndim == 1:
        precision = np.diag(1.0 / cov_or_sd**2)
    else:
        precision = np.linalg.inv(cov_or_sd)

    def logdensity_and_grad(x: np.ndarray) -> tuple[float, np.ndarray]:
        g = -precision @ (x - mean)
        return 0.5 * float((x - mean) @ g), g

    return logdensity_and_grad


def gaussian_quantiles(
    mean: np.ndarray, sd: np.ndarray, probs: Sequence[float] = DEFAULT_PROBS
) -> dict[float, np.ndarray]:
    """True marginal quantiles of a Gaussian with the given means and sds."""
    mean, sd = np.asarray(mean, dtype=float), np.asarray(sd, dtype=float)
    return {p: mean + sd * stats.norm.ppf(p) for p in probs}


def run_sampler(
    logdensity_and_grad: Callable[[np.ndarray], tuple[float, np.ndarray]],
    initial_positions: np.ndarray,
    draws: int,
    warmup: int,
    seed: int,
    chains: int = 4,
    **kwargs: Any,
) -> tuple[np.ndarray, list[ChainResult]]:
    """Run independent, seeded chains with :func:`bayesirl.sampler.run_chain`.

    Parameters
    ----------
    logdensity_and_grad : callable
        ``theta -> (log density, gradient)``.
    initial_positions : numpy.ndarray
        ``(dim,)`` shared by all chains, or ``(chains, dim)``.
    draws, warmup : int
        Per chain.
    seed : int
        Root seed; chain seeds are spawned from ``SeedSequence(seed)``, so chains are
        independent and the whole run is reproducible.
    chains : int, default 4
        Number of chains (run one after the other).
    **kwargs
        Passed to ``run_chain`` (``method``, ``dense_mass``, ``target_accept``, ...).

    Returns
    -------
    draws : numpy.ndarray
        ``(chains, draws, dim)``, ready for :func:`check_moments`.
    results : list of ChainResult
        Per chain, for statistics and adapted settings.
    """
    starts = np.atleast_2d(np.asarray(initial_positions, dtype=float))
    starts = np.broadcast_to(starts, (chains, starts.shape[1]))
    seeds = np.random.SeedSequence(seed).spawn(chains)
    results = [
        run_chain(logdensity_and_grad, starts[c], draws, warmup, seeds[c], **kwargs)
        for c in range(chains)
    ]
    return np.stack([r.draws for r in results]), results
