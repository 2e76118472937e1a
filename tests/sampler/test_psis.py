"""PSIS k-hat and smoothed weights against ArviZ (Vehtari et al. 2024 implementation)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from bayesirl import arviz_compat
from bayesirl.sampler.psis import khat_threshold, psis


def _arviz_psislw():
    """ArviZ's PSIS on a 1-D array: arviz.psislw (0.2x) or arviz_stats.psislw (1.x)."""
    if arviz_compat.series() >= 1:
        import arviz_stats

        fn = getattr(arviz_stats, "psislw", None)
        if fn is None:
            pytest.skip("this arviz-stats has no psislw")
        return fn
    return arviz_compat._arviz0().psislw


def _cases():
    rng = np.random.default_rng(3)
    return {
        "light": 0.3 * rng.normal(size=1000),  # log-normal ratios, small sd: k near 0
        "student-t": np.log(np.abs(rng.standard_t(1.5, size=4000))),  # tail index 1.5
        "heavy": 3.0 * rng.normal(size=2000),  # log-normal with sd 3: k > 0.7
        "short": rng.normal(size=60),
    }


@pytest.mark.parametrize("name", list(_cases()))
def test_k_hat_and_weights_match_arviz(name):
    # Source: ArviZ's psislw on the same log ratios; the same algorithm, so equal up to
    # floating-point summation order (1e-12).
    lr = _cases()[name]
    ours = psis(lr)
    lw, k = _arviz_psislw()(lr.copy())
    assert ours.k_hat == pytest.approx(float(k), abs=1e-12)
    np.testing.assert_allclose(ours.log_weights, np.asarray(lw), atol=1e-12)


def test_k_hat_tracks_the_tail_index():
    # Importance ratios with a Pareto(alpha) tail have k = 1/alpha (Vehtari et al. 2024,
    # sec. 3). alpha = 1.25 gives k = 0.8; the estimate's sd at 4000 draws is about 0.1
    # (from memory of the paper's simulations), so 0.8 +- 0.25 is a 2.5-sd band; the
    # negative control (alpha = 5, k = 0.2) must land on the other side of 0.5.
    rng = np.random.default_rng(11)
    heavy = psis(np.log(rng.pareto(1.25, size=4000) + 1.0))
    light = psis(np.log(rng.pareto(5.0, size=4000) + 1.0))
    assert abs(heavy.k_hat - 0.8) < 0.25 and not heavy.trusted
    assert light.k_hat < 0.5 and light.trusted


def test_threshold_follows_the_sample_size():
    # Vehtari et al. (2024), sec. 3.2.4: min(1 - 1/log10(S), 0.7).
    assert khat_threshold(100) == pytest.approx(0.5)
    assert khat_threshold(1000) == pytest.approx(1 - 1 / 3)
    assert khat_threshold(10_000) == 0.7
    assert khat_threshold(5) == 0.0


def test_minus_infinity_is_a_zero_weight_and_nan_is_refused():
    lr = np.r_[np.zeros(99), -math.inf]
    out = psis(lr)
    assert out.log_weights[-1] == -math.inf
    assert np.exp(out.log_weights).sum() == pytest.approx(1.0)
    with pytest.raises(ValueError, match="psis"):
        psis(np.r_[np.zeros(9), math.nan])
