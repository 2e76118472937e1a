"""Several demonstrators: separate rewards or partial pooling around a population reward.

``Pooling("partial")`` (non-centred, so NUTS does not meet the funnel between the spread and
the individual weights; Betancourt & Girolami 2015, "Hamiltonian Monte Carlo for
hierarchical models")::

    mu ~ prior                    population mean weights (the user's weight prior)
    tau_f ~ HalfNormal(spread)    per-feature spread of the demonstrators' weights
    z_d ~ Normal(0, I)            one standard-normal vector per demonstrator
    w_d = mu + tau * z_d          demonstrator d's weights; its episodes' evidence reads w_d

``Pooling("separate")``: each ``w_d`` has the weight prior on its own, nothing is shared but
the rationality. Pinned weights are the same for every demonstrator (no mu, tau or z for
them). The rationality is one shared number, fixed or sampled as in the pooled model.

Unconstrained vector ``theta``: partial = (mu on its prior's scale (k), log tau (k, unless
the spread is fixed), z (G x k, demonstrator-major), log beta if sampled); separate =
(w_d on the prior's scale, G x k, then log beta). ``k`` is the number of free features.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bayesirl.errors import InputError, SolverError
from bayesirl.evidence.groups import weights_name
from bayesirl.posterior.model import (
    _LOG_MAX,
    PosteriorModel,
    _check_pin,
    _positive_beta,
    _representable,
    _restrict,
)
from bayesirl.priors import DEFAULT_SCALE, HalfNormal, LogNormal, Normal, from_json, to_json

KINDS = ("pooled", "separate", "partial")
# Default prior scale of the spread: demonstrators' weights differing by about one unit on
# features of unit scale already means clearly different behaviour (a weakly informative
# choice, common practice for hierarchical scales; Gelman 2006, Bayesian Analysis 1).
DEFAULT_SPREAD = 1.0
_HALF_LOG_2PI = 0.5 * math.log(2.0 * math.pi)


@dataclass(frozen=True)
class Pooling:
    """How episodes of different demonstrators share a reward.

    Parameters
    ----------
    kind : {"pooled", "separate", "partial"}
    spread : HalfNormal or float
        ``partial`` only: the prior of the per-feature spread ``tau`` or a fixed value
        (``0`` makes every demonstrator's weights the population's).
    """

    kind: str = "pooled"
    spread: HalfNormal | float = HalfNormal(DEFAULT_SPREAD)

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise InputError(f"pooling: expected one of {list(KINDS)}; got {self.kind!r}")
        if not isinstance(self.spread, HalfNormal):
            v = _number(self.spread)
            if not (np.isfinite(v) and v >= 0):
                raise InputError("pooling: a fixed spread must be a number >= 0; got "
                                 f"{self.spread!r}")

    def spec(self) -> dict:
        """JSON-ready form."""
        spread = (to_json(self.spread) if isinstance(self.spread, HalfNormal)
                  else float(self.spread))
        return {"kind": self.kind, "spread": spread}

    @classmethod
    def from_spec(cls, spec: dict) -> Pooling:
        """Inverse of :meth:`spec`."""
        spread = spec["spread"]
        return cls(spec["kind"], from_json(spread) if isinstance(spread, str) else spread)


def _number(x) -> float:
    try:
        return float(x)
    except (TypeError, ValueError):
        return math.nan


class GroupModel:
    """``log p(theta | demos)`` for several demonstrators, with its gradient.

    Parameters
    ----------
    evidence : Evidence
        Reads ``weights/{d}`` for ``d < n_groups`` and ``rationality``.
    feature_names : sequence of str
    group_names : sequence of str
        One name per demonstrator (``n_groups = len(group_names)``).
    pooling : Pooling
        ``separate`` or ``partial``.
    prior, rationality, pin
        As for :class:`~bayesirl.posterior.PosteriorModel`; ``rationality`` must be given
        (a number or a LogNormal).
    likelihood : BoltzmannLikelihood, optional
        All episodes together: the problem written to result files.
    """

    def __init__(self, evidence, feature_names, group_names, pooling: Pooling, prior=None,
                 rationality=1.0, pin=None, likelihood=None) -> None:
        if pooling.kind not in ("separate", "partial"):
            raise InputError(f"GroupModel: pooling must be separate or partial; got "
                             f"{pooling.kind!r}")
        self.evidence, self.likelihood, self.pooling = evidence, likelihood, pooling
        self.feature_names = tuple(feature_names)
        self.group_names = tuple(group_names)
        n_f, self.n_groups = len(self.feature_names), len(self.group_names)
        self.prior = Normal(0.0, DEFAULT_SCALE) if prior is None else prior
        self.pin = _check_pin(pin, self.feature_names)
        self.rationality_prior = rationality if hasattr(rationality, "log_density") else None
        self.fixed_rationality = None
        if self.rationality_prior is None:
            self.fixed_rationality = _positive_beta(rationality)
        elif not isinstance(rationality, LogNormal):
            raise InputError("rationality: a sampled rationality needs a LogNormal prior")
        elif not self.pin:
            raise InputError("rationality is sampled, so the overall scale of the weights is "
                             "not identified; pin one weight or fix the rationality")
        self.free = np.array([i for i, n in enumerate(self.feature_names)
                              if n not in self.pin], dtype=int)
        if self.free.size == 0:
            raise InputError("pin: every weight is pinned; nothing is left to sample")
        self.pinned_values = np.array([self.pin.get(n, 0.0) for n in self.feature_names])
        self.prior.params(n_f)
        self._free_prior = _restrict(self.prior, self.free, n_f)
        # separate rewards: the free-feature prior repeated for each demonstrator (G * k)
        self._each_prior = _restrict(self.prior, np.tile(self.free, self.n_groups), n_f)
        spread = pooling.spread
        if isinstance(spread, HalfNormal):
            spread.params(n_f)  # per-feature scales must cover all F features
        self._spread_prior = (_restrict(spread, self.free, n_f)
                              if isinstance(spread, HalfNormal) else None)
        self._fixed_spread = None if self._spread_prior else float(spread)
        self.solver_failures = 0

    # -- layout -----------------------------------------------------------------------
    @property
    def partial(self) -> bool:
        """True for partial pooling."""
        return self.pooling.kind == "partial"

    @property
    def _n_spread(self) -> int:
        return self.free.size if self.partial and self._spread_prior is not None else 0

    @property
    def dim(self) -> int:
        """Length of ``theta``."""
        k, g = self.free.size, self.n_groups
        weights = k + self._n_spread + g * k if self.partial else g * k
        return weights + (self.fixed_rationality is None)

    def _beta(self, theta: np.ndarray) -> float:
        if self.fixed_rationality is not None:
            return self.fixed_rationality
        log_beta = float(theta[-1])
        return math.inf if log_beta > _LOG_MAX else math.exp(log_beta)

    def split(self, theta: np.ndarray) -> dict[str, np.ndarray]:
        """``theta``'s blocks: ``mu``, ``spread`` (log scale), ``z`` (G, k) or ``w`` (G, k)."""
        k, g = self.free.size, self.n_groups
        if not self.partial:
            return {"w": theta[: g * k].reshape(g, k)}
        s = self._n_spread
        return {"mu": theta[:k], "spread": theta[k:k + s],
                "z": theta[k + s:k + s + g * k].reshape(g, k)}

    def _free_weights(self, parts: dict) -> tuple[np.ndarray, np.ndarray | None, np.ndarray]:
        """(free population mean or None, free spread, free weights (G, k))."""
        if not self.partial:
            return None, None, self._each_prior.transform(parts["w"].ravel()).reshape(
                self.n_groups, -1)
        mu = self._free_prior.transform(parts["mu"])
        tau = (np.exp(parts["spread"]) if self._spread_prior is not None
               else np.full(self.free.size, self._fixed_spread))
        return mu, tau, mu + tau * parts["z"]

    def _full(self, free: np.ndarray) -> np.ndarray:
        w = self.pinned_values.copy()
        w[self.free] = free
        return w

    def draw(self, theta: np.ndarray) -> dict:
        """Named quantities at ``theta``: ``weights`` (G, F), ``population`` (F) and
        ``spread`` (F; 0 for pinned features) for partial pooling, ``rationality``."""
        mu, tau, w = self._free_weights(self.split(theta))
        out = {"weights": np.stack([self._full(x) for x in w]), "rationality": self._beta(theta)}
        if self.partial:
            out["population"] = self._full(mu)
            spread = np.zeros(len(self.feature_names))
            spread[self.free] = tau
            out["spread"] = spread
        return out

    def unpack(self, theta: np.ndarray) -> tuple[np.ndarray, float]:
        """(headline weights, beta): the population mean for partial pooling, the mean of
        the demonstrators' weights for separate rewards (no population model there)."""
        d = self.draw(theta)
        head = d["population"] if self.partial else d["weights"].mean(axis=0)
        return head, d["rationality"]

    # -- density ----------------------------------------------------------------------
    def _quantities(self, w: np.ndarray, beta: float) -> dict:
        q = {weights_name(i): self._full(x) for i, x in enumerate(w)}
        q["rationality"] = beta
        return q

    def logdensity_and_grad(self, theta: np.ndarray) -> tuple[float, np.ndarray]:
        """Log-posterior (up to a constant) and its gradient in ``theta``; ``-inf`` where a
        solve fails (counted in ``solver_failures``), as in the pooled model."""
        beta = self._beta(theta)
        if not _representable(beta):
            return -np.inf, np.full(self.dim, np.nan)
        parts = self.split(theta)
        mu, tau, w = self._free_weights(parts)
        try:
            value = self.evidence.evaluate(self._quantities(w, beta))
        except SolverError:
            self.solver_failures += 1
            return -np.inf, np.full(self.dim, np.nan)
        g = np.stack([np.asarray(value.grads[weights_name(i)])[self.free]
                      for i in range(self.n_groups)])  # (G, k): dlogL / dw_d
        total, grad = self._prior_and_chain(parts, tau, g)
        total = value.logp + total
        if self.fixed_rationality is not None:
            return float(total), grad
        lp_b, g_b = self.rationality_prior.log_density(theta[-1:])
        return float(total + lp_b), np.append(grad, value.grads["rationality"] + g_b[0])

    def _prior_and_chain(self, parts, tau, g) -> tuple[float, np.ndarray]:
        """Log prior of the weight blocks and the gradient through ``w_d(theta)``."""
        prior = self._free_prior
        if not self.partial:
            prior = self._each_prior
            t = parts["w"].ravel()
            lp, g_p = prior.log_density(t)
            return lp, g.ravel() * prior.dtransform(t) + g_p
        lp_mu, g_mu = prior.log_density(parts["mu"])
        blocks = [g.sum(axis=0) * prior.dtransform(parts["mu"]) + g_mu]
        z = parts["z"]
        lp = lp_mu
        if self._spread_prior is not None:
            lp_s, g_s = self._spread_prior.log_density(parts["spread"])
            lp += lp_s
            blocks.append((g * z).sum(axis=0) * tau + g_s)
        lp += -0.5 * float(np.sum(z * z)) - z.size * _HALF_LOG_2PI
        blocks.append((g * tau - z).ravel())
        return lp, np.concatenate(blocks)

    def __call__(self, theta: np.ndarray) -> tuple[float, np.ndarray]:
        return self.logdensity_and_grad(theta)

    def logdensity(self, theta: np.ndarray) -> float:
        """Log-posterior without the gradient (for gradient-free samplers)."""
        beta = self._beta(theta)
        if not _representable(beta):
            return -np.inf
        parts = self.split(theta)
        _, tau, w = self._free_weights(parts)
        try:
            data = self.evidence.evaluate(self._quantities(w, beta), gradient=False)
        except SolverError:
            self.solver_failures += 1
            return -np.inf
        g0 = np.zeros((self.n_groups, self.free.size))
        total = data.logp + self._prior_and_chain(parts, tau, g0)[0]
        if self.fixed_rationality is None:
            total += self.rationality_prior.log_density(theta[-1:])[0]
        return float(total)

    # -- files ------------------------------------------------------------------------
    def spec(self) -> dict:
        """JSON-ready description (prior, rationality, pin, pooling) for result files."""
        return {
            "prior": to_json(self.prior),
            "rationality": (to_json(self.rationality_prior) if self.rationality_prior
                            else self.fixed_rationality),
            "pin": self.pin,
            "pooling": self.pooling.spec(),
        }


def as_pooling(pooling) -> Pooling:
    """``None`` (pooled), a kind name or a :class:`Pooling`."""
    if pooling is None:
        return Pooling()
    if isinstance(pooling, Pooling):
        return pooling
    if isinstance(pooling, str):
        return Pooling(pooling)
    raise InputError(f"pooling: expected 'pooled', 'separate', 'partial' or a Pooling; got "
                     f"{pooling!r}")


def make_model(likelihood, prior=None, rationality=None, pin=None, pooling=None, extra=()):
    """The posterior model of ``likelihood``'s demonstrations under ``pooling``.

    ``pooled`` gives :class:`~bayesirl.posterior.PosteriorModel` (every episode one
    demonstrator, names ignored); ``separate`` and ``partial`` need episodes that name
    their demonstrator and give a :class:`GroupModel` with one evidence term (and one warm
    start) per demonstrator.
    """
    pooling = as_pooling(pooling)
    if rationality is None:  # the likelihood's own: a number, or a prior to sample
        rationality = getattr(likelihood, "rationality_prior", None)
    if pooling.kind == "pooled":
        return PosteriorModel(likelihood, prior, rationality, pin, extra=extra)
    if extra:
        raise InputError(f"pooling {pooling.kind!r}: evidence beside the demonstrations "
                         "(state-only episodes, comparisons) needs pooling 'pooled' for now")
    if likelihood.demos.demonstrators is None:
        raise InputError(f"pooling {pooling.kind!r} needs episodes that name their "
                         "demonstrator (CSV column or JSON Lines key 'demonstrator'); none do")
    names = list(likelihood.demos.groups())
    beta = likelihood.rationality if rationality is None else rationality
    from bayesirl.evidence import demonstrator_evidence  # the likelihood stack, on use

    return GroupModel(demonstrator_evidence(likelihood), likelihood.mdp.feature_names, names,
                      pooling, prior, beta, pin, likelihood)
