"""Controls of the rank test: posteriors known to be right, and deliberately wrong ones.

A test that cannot fail proves nothing, so the report shows the same machinery rejecting

* a conjugate normal posterior computed with the prior scale doubled, when the data are weak
  enough for the prior to matter (sigma = 5, one observation: the analyst's posterior is
  too wide, sd of the standardised true value sqrt(0.353) = 0.59, derived in
  :data:`DOUBLED_PRIOR`);
* exact but strongly autocorrelated draws ranked without thinning;
* each calibration run's own thinned draws shifted by one posterior standard deviation;

and accepting the exact conjugate posterior, thinned, as a positive control.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl.validation.ranks import ALPHA, choose_bins
from bayesirl.validation.ranks import uniformity as chi_square
from bayesirl.validation.runner import SBCResult, SBCSettings, run_sbc
from bayesirl.validation.toys import ConjugateNormal

CONTROL_REPLICATIONS = 200
# rho = 0.95 AR(1) chains: ESS of 2 x 4000 draws about 8000 (1 - rho) / (1 + rho) = 205, so
# thinning to 99 draws succeeds without doubling.
TOY_SETTINGS = SBCSettings(n_draws=99, draws=4000)
EXACT = ConjugateNormal(dim=2, tau=1.0, sigma=5.0, n_obs=1, rho=0.95)
# Generating prior N(0, 1), analyst prior N(0, 4), one observation with sigma = 5: analyst
# posterior variance v = 1 / (1/4 + 1/25) = 3.448; theta - E[theta | y] has variance
# (1 - v/25)^2 + (v/25)^2 25 = 1.219 = 0.353 v, so the true value sits too near the centre of
# the posterior and the ranks bunch in the middle bins.
DOUBLED_PRIOR = ConjugateNormal(dim=2, tau=1.0, sigma=5.0, n_obs=1, rho=0.95, analyst_scale=2.0)
# Shift of the MDP runs' draws, in posterior sd. With a near-normal posterior the share of
# replications in the lowest quarter of ranks becomes Phi(1 - 0.674) = 0.63 instead of 0.25.
SHIFT_SD = 1.0


class Control(NamedTuple):
    """One control: its p-values and whether they came out as expected."""

    title: str
    names: tuple[str, ...]
    p_values: tuple[float, ...]
    expect_reject: bool

    @property
    def ok(self) -> bool:
        """Every p-value below ``ALPHA`` when rejection is expected, above it otherwise."""
        if self.expect_reject:
            return all(p < ALPHA for p in self.p_values)
        return all(p > ALPHA for p in self.p_values)


def shifted(draws: np.ndarray, by: float = SHIFT_SD) -> np.ndarray:
    """Thinned draws ``(L, P)`` moved up by ``by`` of their own standard deviations."""
    return draws + by * draws.std(axis=0, ddof=1)


def shift_control(title: str, result: SBCResult, by: float = SHIFT_SD) -> Control:
    """Re-rank a calibration run's stored draws after :func:`shifted`; expects rejection."""
    ranks = result.reranked(lambda d: shifted(d, by))
    b = choose_bins(ranks.shape[0], result.settings.n_draws)
    tests = [chi_square(n, ranks[:, k], result.settings.n_draws, b)
             for k, n in enumerate(result.names)]
    return Control(title, result.names, tuple(t.p_value for t in tests), True)


def _toy(title: str, problem: ConjugateNormal, settings: SBCSettings, seed: int,
         expect_reject: bool, processes: int | None) -> Control:
    result = run_sbc(problem, CONTROL_REPLICATIONS, seed=seed, settings=settings,
                     processes=processes)
    return Control(title, result.names, tuple(t.p_value for t in result.tests()), expect_reject)


def run_controls(runs: dict[str, SBCResult], processes: int | None = 1) -> list[Control]:
    """The controls listed in the module docstring, for the calibration ``runs`` given."""
    unthinned = SBCSettings(n_draws=TOY_SETTINGS.n_draws, draws=TOY_SETTINGS.draws, thin=False)
    out = [
        _toy("exact conjugate posterior, AR(1) chains thinned by ESS", EXACT, TOY_SETTINGS, 11,
             False, processes),
        _toy("conjugate posterior with the prior scale doubled (weak data)", DOUBLED_PRIOR,
             TOY_SETTINGS, 12, True, processes),
        _toy("exact conjugate posterior, AR(1) chains (rho 0.95) not thinned", EXACT,
             unthinned, 13, True, processes),
    ]
    for key, result in runs.items():
        out.append(shift_control(f"run '{key}': thinned draws shifted by {SHIFT_SD:g} sd",
                                 result))
    return out
