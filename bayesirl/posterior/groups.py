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
the spread is fixed), z (G x k, demonstrator-major), with per-demonstrator rationality
the block of :mod:`~bayesirl.posterior.group_rationality`, log beta if sampled); separate =
(w_d on the prior's scale, G x k, then log beta). ``k`` is the number of free features.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from bayesirl.errors import InputError, SolverError
from bayesirl.evidence.groups import rationality_name, weights_name
from bayesirl.posterior.group_rationality import RationalityBlock
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
    rationality_spread : HalfNormal, float or None
        ``partial`` only: None (default) gives every demonstrator the one rationality;
        otherwise each demonstrator's rationality is ``beta_d = beta * exp(s * u_d)``,
        ``u_d ~ N(0, 1)``, around the sampled population rationality ``beta`` (which then
        needs a LogNormal prior and a pinned weight, as in the pooled model), with the
        spread ``s`` of log-rationalities given this half-normal prior or fixed.
    """

    kind: str = "pooled"
    spread: HalfNormal | float = HalfNormal(DEFAULT_SPREAD)
    rationality_spread: HalfNormal | float | None = None

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise InputError(f"pooling: expected one of {list(KINDS)}; got {self.kind!r}")
        if not isinstance(self.spread, HalfNormal):
            v = _number(self.spread)
            if not (np.isfinite(v) and v >= 0):
                raise InputError("pooling: a fixed spread must be a number >= 0; got "
                                 f"{self.spread!r}")
        rs = self.rationality_spread
        if rs is not None and self.kind != "partial":
            raise InputError(f"pooling: per-demonstrator rationality needs partial pooling; "
                             f"kind is {self.kind!r}")
        if rs is not None and not isinstance(rs, HalfNormal):
            v = _number(rs)
            if not (np.isfinite(v) and v >= 0):
                raise InputError("pooling: a fixed rationality spread must be a number >= 0; "
                                 f"got {rs!r}")

    def spec(self) -> dict:
        """JSON-ready form."""
        out = {"kind": self.kind, "spread": _prior_or_number(self.spread)}
        if self.rationality_spread is not None:  # absent key: older files read the same
            out["rationality_spread"] = _prior_or_number(self.rationality_spread)
        return out

    @classmethod
    def from_spec(cls, spec: dict) -> Pooling:
        """Inverse of :meth:`spec`."""
        def read(x):
            return from_json(x) if isinstance(x, str) else x

        rs = spec.get("rationality_spread")
        return cls(spec["kind"], read(spec["spread"]), None if rs is None else read(rs))


def _prior_or_number(x):
    return to_json(x) if isinstance(x, HalfNormal) else float(x)


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
        self._rat = None
        if pooling.rationality_spread is not None:
            if self.rationality_prior is None:
                raise InputError("pooling: per-demonstrator rationality varies around a sampled "
                                 "population rationality; give the rationality a LogNormal "
                                 "prior and pin one weight")
            self._rat = RationalityBlock(pooling.rationality_spread, self.n_groups)
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
        own = self._rat.size if self._rat is not None else 0
        return weights + own + (self.fixed_rationality is None)

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
        if self._rat is not None:
            out["rationalities"] = np.exp(self._log_betas(theta))
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
    def _block(self, theta: np.ndarray) -> np.ndarray:
        return theta[-1 - self._rat.size:-1]

    def _log_betas(self, theta: np.ndarray) -> np.ndarray:
        return self._rat.log_rationalities(self._block(theta), float(theta[-1]))

    def _quantities(self, w: np.ndarray, beta: float, theta: np.ndarray) -> dict | None:
        """The evidence's inputs; None when a demonstrator's rationality is not a float."""
        q = {weights_name(i): self._full(x) for i, x in enumerate(w)}
        if self._rat is None:
            q["rationality"] = beta
            return q
        log_b = self._log_betas(theta)
        if np.any(log_b > _LOG_MAX) or not np.all(np.isfinite(log_b)):
            return None
        betas = np.exp(log_b)
        if not all(_representable(float(b)) for b in betas):
            return None
        q.update({rationality_name(i): float(b) for i, b in enumerate(betas)})
        return q

    def logdensity_and_grad(self, theta: np.ndarray) -> tuple[float, np.ndarray]:
        """Log-posterior (up to a constant) and its gradient in ``theta``; ``-inf`` where a
        solve fails (counted in ``solver_failures``), as in the pooled model."""
        beta = self._beta(theta)
        if not _representable(beta):
            return -np.inf, np.full(self.dim, np.nan)
        parts = self.split(theta)
        mu, tau, w = self._free_weights(parts)
        q = self._quantities(w, beta, theta)
        if q is None:
            return -np.inf, np.full(self.dim, np.nan)
        try:
            value = self.evidence.evaluate(q)
        except SolverError:
            self.solver_failures += 1
            return -np.inf, np.full(self.dim, np.nan)
        g = np.stack([np.asarray(value.grads[weights_name(i)])[self.free]
                      for i in range(self.n_groups)])  # (G, k): dlogL / dw_d
        total, grad = self._prior_and_chain(parts, tau, g)
        total = value.logp + total
        if self.fixed_rationality is not None:
            return float(total), grad
        g_beta = value.grads.get("rationality", 0.0)
        if self._rat is not None:
            g_d = np.array([float(value.grads[rationality_name(i)])
                            for i in range(self.n_groups)])
            lp_r, g_r, g_beta = self._rat.log_prior_and_chain(self._block(theta), g_d)
            total, grad = total + lp_r, np.concatenate([grad, g_r])
        lp_b, g_b = self.rationality_prior.log_density(theta[-1:])
        return float(total + lp_b), np.append(grad, g_beta + g_b[0])

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
        q = self._quantities(w, beta, theta)
        if q is None:
            return -np.inf
        try:
            data = self.evidence.evaluate(q, gradient=False)
        except SolverError:
            self.solver_failures += 1
            return -np.inf
        g0 = np.zeros((self.n_groups, self.free.size))
        total = data.logp + self._prior_and_chain(parts, tau, g0)[0]
        if self.fixed_rationality is None:
            total += self.rationality_prior.log_density(theta[-1:])[0]
        if self._rat is not None:
            total += self._rat.log_prior_and_chain(self._block(theta),
                                                   np.zeros(self.n_groups))[0]
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

    own = pooling.rationality_spread is not None
    return GroupModel(demonstrator_evidence(likelihood, own_rationality=own),
                      likelihood.mdp.feature_names, names, pooling, prior, beta, pin, likelihood)
