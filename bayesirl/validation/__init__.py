"""Validation layer: simulation-based calibration (SBC) of the posterior, and its report.

* :func:`run_sbc` runs seeded replications (truth from the prior, data, posterior, ranks) in
  parallel processes; :class:`SBCResult` holds the ranks and tests their uniformity.
* :class:`GridSBC` is the calibration problem on :func:`sbc_grid`, a 16-state slippery grid;
  :class:`ConjugateNormal` is a problem with an exact posterior, for checking the machinery.
* :mod:`~bayesirl.validation.ranks` has the rank statistic, thinning and chi-square test.
* :func:`validate_command` writes ``reports/validation.md`` and its rank histograms.
"""

from bayesirl.validation.grid import GridSBC, PosteriorDraws, sbc_grid
from bayesirl.validation.ranks import Uniformity, binomial_band, choose_bins, ranks_of
from bayesirl.validation.runner import Replication, SBCResult, SBCSettings, run_sbc
from bayesirl.validation.toys import ConjugateNormal

__all__ = [
    "ConjugateNormal",
    "GridSBC",
    "PosteriorDraws",
    "Replication",
    "SBCResult",
    "SBCSettings",
    "Uniformity",
    "binomial_band",
    "choose_bins",
    "ranks_of",
    "run_sbc",
    "sbc_grid",
]
