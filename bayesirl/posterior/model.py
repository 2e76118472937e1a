"""The log-posterior the samplers see: parameter layout, priors, pinning, rationality.

Unconstrained vector ``theta`` = (free weights on their prior's scale, then ``log(beta)``
when the rationality is unknown, then the log of each positive quantity that further evidence
samples, e.g. a judge's rationality, in the order of :attr:`PosteriorModel.extra_priors`).
When ``beta`` is sampled the data only see ``beta * w``, so the overall scale of ``w`` must be
pinned by fixing one named weight.
"""

from __future__ import annotations

import json
import math

import numpy as np

from bayesirl.errors import InputError, SolverError
from bayesirl.priors import DEFAULT_SCALE, LogNormal, Normal, from_json, to_json

_LOG_MAX = math.log(np.finfo(float).max)


class PosteriorModel:
    """``log p(theta | demos)`` up to a constant, with its gradient.

    Parameters
    ----------
    likelihood : BoltzmannLikelihood
    prior : prior object for the weights (default ``Normal(0, 5)``).
    rationality : None, float or LogNormal
        None or a number: fixed (None uses ``likelihood.rationality``). A prior: sampled.
    pin : dict {feature name: value} or None
        Weights held fixed. Required (one weight) when the rationality is sampled.
    extra : sequence of evidence terms
        Evidence beside the demonstrations (``bayesirl.evidence.PartialTerm``,
        ``ComparisonTerm``), each reading ``"weights"`` and perhaps ``"rationality"``, and
        any positive quantities of its own with their priors in the term's ``priors``
        (sampled on the log scale; see :attr:`extra_priors`).
    """

    pooling = "pooled"

    def __init__(self, likelihood, prior=None, rationality=None, pin=None, *,
                 extra=()) -> None:
        self.likelihood = likelihood
        # prior + sum of evidence terms: the one term of every episode together, then any
        # further evidence (its own keys; the demonstrations' term then needs one too)
        from bayesirl.evidence import (  # the likelihood stack, on first use
            BoltzmannTerm,
            Evidence,
            pooled_evidence,
        )

        self.extra = tuple(extra)
        self.evidence = (pooled_evidence(likelihood) if not self.extra else
                         Evidence([BoltzmannTerm(likelihood, key="demos"), *self.extra]))
        self.extra_priors = _extra_priors(self.extra)
        allowed = {"weights", "rationality", *self.extra_priors}
        if not set(self.evidence.reads) <= allowed:
            raise InputError(f"extra: terms may read weights, rationality and quantities "
                             f"they give a prior for ({sorted(self.extra_priors)}); got "
                             f"{list(self.evidence.reads)}")
        names = likelihood.mdp.feature_names
        self.feature_names = names
        self.prior = Normal(0.0, DEFAULT_SCALE) if prior is None else prior
        self.pin = _check_pin(pin, names)
        if rationality is None:  # the likelihood's own: a number, or a prior to sample
            rationality = getattr(likelihood, "rationality_prior", None)
        self.rationality_prior = rationality if hasattr(rationality, "log_density") else None
        if self.rationality_prior is None:
            beta = likelihood.rationality if rationality is None else rationality
            self.fixed_rationality = _positive_beta(beta)
        else:
            self.fixed_rationality = None
            if not isinstance(rationality, LogNormal):
                raise InputError("rationality: a sampled rationality needs a LogNormal prior")
            if not self.pin:
                raise InputError(
                    "rationality is sampled, so the overall scale of the weights is not "
                    "identified (the demonstrations only see rationality * weights). Pin one "
                    "weight, e.g. sample(..., pin={'" + names[0] + "': 1.0}), or fix the "
                    "rationality with a number."
                )
        self.free = np.array([i for i, n in enumerate(names) if n not in self.pin], dtype=int)
        if self.free.size == 0:
            raise InputError("pin: every weight is pinned; nothing is left to sample")
        self.pinned_values = np.array([self.pin.get(n, 0.0) for n in names])
        self.prior.params(len(names))  # per-feature parameters must cover all F features
        self._free_prior = _restrict(self.prior, self.free, len(names))
        self.solver_failures = 0

    @property
    def dim(self) -> int:
        """Length of ``theta``."""
        return self.free.size + (self.fixed_rationality is None) + len(self.extra_priors)

    @property
    def _extra_at(self) -> int:
        return self.free.size + (self.fixed_rationality is None)

    def extra_values(self, theta: np.ndarray) -> dict[str, float]:
        """``theta`` -> the further evidence's sampled quantities (e.g. a judge's
        rationality), by name; empty when there are none."""
        k = self._extra_at
        return {name: _exp(theta[k + i]) for i, name in enumerate(self.extra_priors)}

    def _extra_prior(self, theta: np.ndarray) -> tuple[float, np.ndarray]:
        k, total = self._extra_at, 0.0
        grads = np.empty(len(self.extra_priors))
        for i, prior in enumerate(self.extra_priors.values()):
            lp, g = prior.log_density(theta[k + i:k + i + 1])
            total, grads[i] = total + lp, g[0]
        return total, grads

    def unpack(self, theta: np.ndarray) -> tuple[np.ndarray, float]:
        """``theta`` -> (all weights, beta)."""
        k = self.free.size
        w = self.pinned_values.copy()
        w[self.free] = self._free_prior.transform(theta[:k])
        if self.fixed_rationality is not None:
            return w, self.fixed_rationality
        # Saturate instead of warning: beyond the float range the caller sees 0 or inf.
        return w, _exp(theta[k])

    def logdensity_and_grad(self, theta: np.ndarray) -> tuple[float, np.ndarray]:
        """Log-posterior (up to a constant) and its gradient in ``theta``.

        A point where the soft Bellman solve fails (extreme weights) gets ``-inf``, which
        the samplers treat as a divergence or a rejection; ``solver_failures`` counts them.
        """
        k = self.free.size
        prior = self._free_prior
        w, beta = self.unpack(theta)
        more = self.extra_values(theta)
        if not all(_representable(x) for x in (beta, *more.values())):
            return -np.inf, np.full(self.dim, np.nan)
        try:
            value = self.evidence.evaluate({"weights": w, "rationality": beta, **more})
        except SolverError:
            self.solver_failures += 1
            return -np.inf, np.full(self.dim, np.nan)
        lp_w, g_w = prior.log_density(theta[:k])
        grad = np.empty(self.dim)
        grad[:k] = value.grads["weights"][self.free] * prior.dtransform(theta[:k]) + g_w
        total = value.logp + lp_w
        if self.fixed_rationality is None:
            lp_b, g_b = self.rationality_prior.log_density(theta[k:k + 1])
            grad[k] = value.grads["rationality"] + g_b[0]
            total += lp_b
        if more:
            lp_x, g_x = self._extra_prior(theta)
            grad[self._extra_at:] = [value.grads.get(n, 0.0) for n in more] + g_x
            total += lp_x
        return float(total), grad

    def __call__(self, theta: np.ndarray) -> tuple[float, np.ndarray]:
        return self.logdensity_and_grad(theta)

    def logdensity(self, theta: np.ndarray) -> float:
        """Log-posterior without the gradient (for gradient-free samplers)."""
        k = self.free.size
        w, beta = self.unpack(theta)
        more = self.extra_values(theta)
        if not all(_representable(x) for x in (beta, *more.values())):
            return -np.inf
        try:
            data = self.evidence.evaluate({"weights": w, "rationality": beta, **more},
                                          gradient=False)
            total = data.logp + self._free_prior.log_density(theta[:k])[0]
        except SolverError:
            self.solver_failures += 1
            return -np.inf
        if self.fixed_rationality is None:
            total += self.rationality_prior.log_density(theta[k:k + 1])[0]
        if more:
            total += self._extra_prior(theta)[0]
        return float(total)

    def spec(self) -> dict:
        """JSON-ready description (prior, rationality, pin) for result files."""
        return {
            "prior": to_json(self.prior),
            "rationality": (to_json(self.rationality_prior) if self.rationality_prior
                            else self.fixed_rationality),
            "pin": self.pin,
        }

    @staticmethod
    def parse_spec(spec: dict) -> dict:
        """Inverse of :meth:`spec`: keyword arguments for the constructor."""
        rat = spec["rationality"]
        return {
            "prior": from_json(spec["prior"]),
            "rationality": from_json(rat) if isinstance(rat, str) else float(rat),
            "pin": dict(spec["pin"]),
        }


def _exp(log_x) -> float:
    """``exp`` saturating to inf instead of warning beyond the float range."""
    log_x = float(log_x)
    return math.inf if log_x > _LOG_MAX else math.exp(log_x)


def _extra_priors(terms) -> dict:
    """``{name: prior}`` of the quantities the terms sample (each a LogNormal, one name once)."""
    out = {}
    for term in terms:
        for name, prior in getattr(term, "priors", {}).items():
            if name in out or name in ("weights", "rationality"):
                raise InputError(f"extra: quantity {name!r} is sampled by two terms")
            if not isinstance(prior, LogNormal):
                raise InputError(f"extra: {name} needs a LogNormal prior (it is positive); "
                                 f"got {prior!r}")
            prior.params(1)
            out[name] = prior
    return out


def _representable(beta: float) -> bool:
    """False when ``exp(log beta)`` under- or overflowed (``|log beta| > ~709``).

    There the LogNormal prior density is below exp(-10^5) for any sensible prior scale, so
    treating the point as outside the support (-inf: a divergence or a rejection for the
    samplers) changes nothing measurable, while passing beta = 0 or inf on would be refused
    by the likelihood's input check and abort the run.
    """
    return 0.0 < beta < np.inf


def _restrict(prior, idx: np.ndarray, n: int):
    """The same prior family with per-feature parameters restricted to ``idx``."""
    fields = {k: np.broadcast_to(np.asarray(v, dtype=float), (n,))[idx]
              for k, v in prior.__dict__.items()}
    return type(prior)(**fields)


def _positive_beta(beta) -> float:
    try:
        b = float(beta)
    except (TypeError, ValueError):
        raise InputError(f"rationality: expected a number or a LogNormal; got {beta!r}") from None
    if not np.isfinite(b) or b <= 0:
        raise InputError(f"rationality: must be positive and finite; got {beta!r}")
    return b


def _check_pin(pin, names) -> dict:
    if pin is None:
        return {}
    if not isinstance(pin, dict):
        raise InputError(f"pin: expected a dict {{feature name: value}}; got {pin!r}")
    out = {}
    for name, value in pin.items():
        if name not in names:
            raise InputError(f"pin: unknown feature {name!r}; features are {list(names)}")
        try:
            v = float(value)
        except (TypeError, ValueError):
            v = float("nan")
        if not np.isfinite(v) or v == 0.0:
            raise InputError(
                f"pin: {name!r} must be pinned to a finite non-zero value; got {value!r}"
            )
        out[str(name)] = v
    return out


def dumps(spec: dict) -> str:
    """Compact JSON."""
    return json.dumps(spec, sort_keys=True)
