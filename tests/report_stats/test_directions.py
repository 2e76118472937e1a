"""``report.directions`` on the park with ``mud2`` identical to ``mud``.

With identical features the likelihood depends on ``w_mud + w_mud2`` only. Under the
isotropic prior N(0, 5^2 I) the coordinates ``u = (w_mud - w_mud2) / sqrt 2`` and
``s = (w_mud + w_mud2) / sqrt 2`` are independent a priori and the likelihood involves ``s``
(and the other weights) only, so the posterior of ``w_mud - w_mud2`` is exactly its prior,
N(0, 50). That gives an exact reference for the "undetermined" direction, checked with the
shared harness (MCSE from arviz's ESS, Vehtari et al. 2021).
"""

from __future__ import annotations

import math
import re

import numpy as np
from harness import bonferroni_z, check_moments, gaussian_quantiles, sd_mcse

from bayesirl.report import ambiguity

from .problems import mud2_posterior, mud2_report, park_posterior

PRIOR_SD = 5.0  # bayesirl's default prior Normal(0, 5), used by mud2_posterior
DIFF_SD = math.sqrt(2.0) * PRIOR_SD
# Plain words: "<combination> is undetermined (the data left N% of its prior variance)",
# where the combination is feature names joined by + / -, each with at most a short
# coefficient ("mud - mud2", "-1 mud + 1 mud2", "0.5 mud - mud2").
TERM = r"(?:\d+(?:\.\d+)? )?[A-Za-z_][A-Za-z0-9_]*"
TEXT = re.compile(rf"^(-?{TERM}(?: [+-] {TERM})*) is undetermined "
                  r"\(the data left (\d+)% of its prior variance\)$")


def _undetermined(report):
    return [d for d in report.directions if d["verdict"] == "undetermined"]


def test_mud_minus_mud2_is_the_one_undetermined_direction():
    report = mud2_report()
    und = _undetermined(report)
    assert len(und) == 1, report.directions
    combo = und[0]["combination"]
    assert set(combo) == {"mud", "mud2"}, combo
    # Opposite signs, equal size: the generalised eigenvector is estimated from 2000 draws;
    # its tilt is ~sqrt(r_2 / ESS) ~ sqrt(0.01 / 500) ~ 0.005 (r_2 the next ratio), so the
    # two coefficients agree to 0.03 (6 such errors) and other features fall below the 0.05
    # display cut-off.
    assert combo["mud"] * combo["mud2"] < 0
    assert abs(abs(combo["mud"]) - abs(combo["mud2"])) < 0.03
    assert max(abs(v) for v in combo.values()) == 1.0
    # Every other direction is determined (the sum mud + mud2 and the other weights).
    assert all(d["variance_ratio"] < 0.9 for d in report.directions if d is not und[0])


def test_undetermined_text_is_plain_words():
    d = _undetermined(mud2_report())[0]
    m = TEXT.match(d["text"])
    assert m, d["text"]
    names = re.findall(r"[A-Za-z_][A-Za-z0-9_]*", m.group(1))
    assert sorted(names) == ["mud", "mud2"]
    assert int(m.group(2)) == round(100 * d["variance_ratio"])


def test_mud_minus_mud2_keeps_its_prior():
    # The exact reference: w_mud - w_mud2 ~ N(0, 50) a posteriori (see the module doc).
    post = mud2_posterior()
    diff = post.weights[..., 0] - post.weights[..., 1]  # (chains, draws)
    check_moments(diff[..., None], 0.0, [DIFF_SD],
                  gaussian_quantiles([0.0], [DIFF_SD], (0.05, 0.5, 0.95)))
    # The reported ratio r is the largest generalised eigenvalue, the maximum over v of
    # var(draws . v) / var_prior(v), so it is at least the exact direction's quotient q
    # (linear algebra on the same draws: rounding only), and at most q + theta^2 r with
    # theta the tilt of the reported vector (< 0.03, see above): r - q < 1e-3.
    ratio = _undetermined(mud2_report())[0]["variance_ratio"]
    q = float(np.var(diff, ddof=1)) / DIFF_SD**2
    assert q - 1e-12 <= ratio <= q + 1e-3
    # Hence r = 1 within the sampling error of the sd of diff (harness MCSE, z at 1e-3).
    sd, se = sd_mcse(diff)
    assert abs(math.sqrt(ratio) - 1.0) < bonferroni_z(1e-3, 1) * se / DIFF_SD + 1e-3


def test_well_determined_park_has_no_undetermined_direction():
    # Negative control: the same report on the park as given.
    report = ambiguity(park_posterior())
    assert _undetermined(report) == []
    assert len(report.directions) == 4
