"""A test-only likelihood that sleeps before each evaluation, so a chain lasts long enough
for a test to kill its worker mid-run. Values are those of the wrapped computation."""

from __future__ import annotations

import time

import bayesirl as bi


class SlowLikelihood(bi.BoltzmannLikelihood):
    """``BoltzmannLikelihood`` whose ``evaluate`` first sleeps ``delay`` seconds."""

    delay = 0.0

    def evaluate(self, weights, rationality=None):
        time.sleep(self.delay)
        return super().evaluate(weights, rationality)


def slow_copy(lik: bi.BoltzmannLikelihood, delay: float) -> SlowLikelihood:
    """The same problem as ``lik`` with a ``delay`` per evaluation."""
    out = SlowLikelihood(lik.mdp, lik.demos, rationality=lik.rationality,
                    q_function=lik.q_function, tol=lik.tol)
    out.delay = delay
    return out


class CountingLikelihood(bi.BoltzmannLikelihood):
    """Counts how often it is pickled in this process (``pickled``, a class attribute)."""

    pickled = 0

    def __getstate__(self) -> dict:
        type(self).pickled += 1
        return super().__getstate__()


class NowhereLikelihood(bi.BoltzmannLikelihood):
    """Log-likelihood ``-inf`` everywhere: every chain fails to find an initial point."""

    def evaluate(self, weights, rationality=None):
        value = super().evaluate(weights, rationality)
        return value._replace(loglik=-float("inf"))
