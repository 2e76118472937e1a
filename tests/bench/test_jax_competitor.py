"""The benchmark's JAX competitor computes the same log-likelihood and gradient as bayesirl.

The competitor (bench/jaxmodel.py) is only worth timing if it solves the same problem. Its
reference here is ``BoltzmannLikelihood.value_and_grad`` with a tight adjoint tolerance, which
tests/reference checks against scipy (``scipy.optimize.root``, an ``spsolve`` policy
iteration) and central finite differences. Skipped when the ``bench`` extra is missing.
"""

from __future__ import annotations

import sys

import numpy as np
import pytest

from bayesirl.bench import jaxmodel
from bayesirl.bench.problems import demonstrations_for, random_mdp, slippery_grid
from bayesirl.likelihood import BoltzmannLikelihood

needs_jax = pytest.mark.skipif(
    not jaxmodel.available(),
    reason="jax/numpyro not installed (pip install 'bayesirl[bench]'): the JAX competitor "
           "of the benchmark cannot be checked",
)

# The brief's agreement: 1e-6 relative. Both codes stop the value solve at span tolerance
# 1e-10 (log-likelihood error <= ~2 * 600 steps * 1e-10 ~ 1e-7 absolute, relative ~1e-10
# here) and solve the adjoint to relative 1e-11, so a correct competitor agrees to ~1e-9.
RTOL = 1e-6


def _problems():
    yield "random", random_mdp(150, discount=0.95, seed=5)
    yield "grid", slippery_grid(8, discount=0.99, seed=2)


def _compare(jl, ref, w):
    l1, g1 = jl.value_and_grad(w)
    l0, g0 = ref.value_and_grad(w)
    return abs(l1 - l0) / abs(l0), np.max(np.abs(g1 - g0)) / np.max(np.abs(g0))


@needs_jax
@pytest.mark.parametrize("method", ["vi", "newton"])
@pytest.mark.parametrize("name,mdp", list(_problems()))
def test_log_density_and_gradient_match_bayesirl(name, mdp, method):
    w, demos = demonstrations_for(mdp, episodes=20, length=30, seed=4)
    ref = BoltzmannLikelihood(mdp, demos, gradient_rtol=1e-11)
    jl = jaxmodel.JaxLikelihood(mdp, demos, method=method, gradient_rtol=1e-11)
    assert max(_compare(jl, ref, w)) < RTOL
    # From the linearised start at an anchor (how the competitor runs inside NUTS), at a
    # point 5% away: the start must change the work only, never the answer.
    jl.anchor(w)
    assert max(_compare(jl, ref, 1.05 * w)) < RTOL


@needs_jax
def test_a_different_discount_disagrees():
    # Negative control: the same problem at discount 0.96 instead of 0.95 must be caught by
    # the comparison above (it moves the log-likelihood and gradient by ~1e-2 relative).
    _, mdp = next(_problems())
    w, demos = demonstrations_for(mdp, episodes=20, length=30, seed=4)
    ref = BoltzmannLikelihood(mdp, demos, gradient_rtol=1e-11)
    other = random_mdp(150, discount=0.96, seed=5)
    jl = jaxmodel.JaxLikelihood(other, demos, method="vi", gradient_rtol=1e-11)
    dl, dg = _compare(jl, ref, w)
    assert dl > 100 * RTOL and dg > 100 * RTOL


def test_a_missing_extra_is_named(monkeypatch):
    monkeypatch.setitem(sys.modules, "numpyro", None)  # as if not installed
    with pytest.raises(jaxmodel.MissingExtra, match=r"pip install 'bayesirl\[bench\]'"):
        jaxmodel.require()
    assert not jaxmodel.available()
