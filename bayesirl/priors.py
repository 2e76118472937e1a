"""Priors with log-density and gradient on an unconstrained scale.

Each prior acts coordinate-wise on a vector of length ``n`` (scalars broadcast). It maps an
unconstrained ``z`` to the parameter ``x = transform(z)`` and gives ``log p(x) + log|dx/dz|``
with its gradient in ``z``, so samplers always move on the whole real line.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Protocol, runtime_checkable

import numpy as np
from scipy.special import expit

from bayesirl.errors import InputError

# The default prior on reward weights: weak (features of unit scale make weights of a few
# units already near-deterministic behaviour) but proper, so the posterior always exists.
DEFAULT_SCALE = 5.0


@runtime_checkable
class Prior(Protocol):
    """The prior role (``Normal``, ``Laplace``, ``Uniform``, ``LogNormal``, ``HalfNormal``).

    Coordinate-wise on ``n`` unconstrained values ``z``; a prior with a bounded support also
    has ``transform(z)`` and ``dtransform(z)`` (the map to the parameter and its derivative).
    """

    kind: str  # the name in problem files and result files ("normal", ...)

    def params(self, n: int) -> tuple[np.ndarray, ...]:
        """The parameters broadcast to length ``n`` and checked (InputError)."""
        ...

    def log_density(self, z: np.ndarray) -> tuple[float, np.ndarray]:
        """``log p(x) + log|dx/dz|`` at ``x = transform(z)`` and its gradient in ``z``."""
        ...

    def variance(self, n: int) -> np.ndarray:
        """The prior variance of each of ``n`` parameters (for contraction)."""
        ...

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """One draw of the parameter vector (length ``n``; not of ``z``)."""
        ...


def _vector(x, n: int, what: str) -> np.ndarray:
    arr = np.broadcast_to(np.asarray(x, dtype=np.float64), (n,)) if np.ndim(x) == 0 else None
    if arr is None:
        arr = np.asarray(x, dtype=np.float64)
        if arr.shape != (n,):
            raise InputError(f"prior: {what} has shape {arr.shape}; expected a scalar or ({n},)")
    if not np.all(np.isfinite(arr)):
        raise InputError(f"prior: {what} must be finite; got {arr.tolist()}")
    return np.array(arr)


@dataclass(frozen=True)
class Normal:
    """Independent normal prior ``N(loc, scale^2)`` per coordinate."""

    loc: float | np.ndarray = 0.0
    scale: float | np.ndarray = DEFAULT_SCALE

    kind = "normal"

    def params(self, n: int) -> tuple[np.ndarray, np.ndarray]:
        """``(loc, scale)`` broadcast to length ``n`` and checked."""
        loc, scale = _vector(self.loc, n, "loc"), _vector(self.scale, n, "scale")
        if np.any(scale <= 0):
            raise InputError(f"prior: Normal scale must be positive; got {scale.tolist()}")
        return loc, scale

    def transform(self, z: np.ndarray) -> np.ndarray:
        """Identity: the normal lives on the real line."""
        return z

    def dtransform(self, z: np.ndarray) -> np.ndarray:
        """``dx/dz``."""
        return np.ones_like(z)

    def log_density(self, z: np.ndarray) -> tuple[float, np.ndarray]:
        """``log p(z)`` and its gradient."""
        loc, scale = self.params(z.shape[0])
        u = (z - loc) / scale
        lp = -0.5 * u @ u - np.sum(np.log(scale)) - 0.5 * z.shape[0] * np.log(2 * np.pi)
        return float(lp), -u / scale

    def variance(self, n: int) -> np.ndarray:
        """Prior variance of each coordinate."""
        return self.params(n)[1] ** 2

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """One draw of the parameter vector."""
        loc, scale = self.params(n)
        return loc + scale * rng.standard_normal(n)


@dataclass(frozen=True)
class Laplace:
    """Independent Laplace prior (density ``exp(-|x - loc| / scale) / (2 scale)``)."""

    loc: float | np.ndarray = 0.0
    scale: float | np.ndarray = 1.0

    kind = "laplace"

    def params(self, n: int) -> tuple[np.ndarray, np.ndarray]:
        """``(loc, scale)`` broadcast to length ``n`` and checked."""
        loc, scale = _vector(self.loc, n, "loc"), _vector(self.scale, n, "scale")
        if np.any(scale <= 0):
            raise InputError(f"prior: Laplace scale must be positive; got {scale.tolist()}")
        return loc, scale

    transform = Normal.transform
    dtransform = Normal.dtransform

    def log_density(self, z: np.ndarray) -> tuple[float, np.ndarray]:
        """``log p(z)`` and its gradient (sub-gradient 0 at the kink)."""
        loc, scale = self.params(z.shape[0])
        d = z - loc
        lp = -np.sum(np.abs(d) / scale) - np.sum(np.log(2 * scale))
        return float(lp), -np.sign(d) / scale

    def variance(self, n: int) -> np.ndarray:
        """Prior variance of each coordinate."""
        return 2.0 * self.params(n)[1] ** 2

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """One draw of the parameter vector."""
        loc, scale = self.params(n)
        return rng.laplace(loc, scale)


@dataclass(frozen=True)
class Uniform:
    """Independent uniform prior on ``(low, high)``, sampled as ``x = low + w * sigmoid(z)``."""

    low: float | np.ndarray = -1.0
    high: float | np.ndarray = 1.0

    kind = "uniform"

    def params(self, n: int) -> tuple[np.ndarray, np.ndarray]:
        """``(low, high)`` broadcast to length ``n`` and checked."""
        low, high = _vector(self.low, n, "low"), _vector(self.high, n, "high")
        if np.any(high <= low):
            raise InputError(
                f"prior: Uniform needs low < high; got {low.tolist()}, {high.tolist()}"
            )
        return low, high

    def transform(self, z: np.ndarray) -> np.ndarray:
        """``low + (high - low) * sigmoid(z)``."""
        low, high = self.params(z.shape[0])
        return low + (high - low) * expit(z)  # stable where exp(-z) would overflow

    def dtransform(self, z: np.ndarray) -> np.ndarray:
        """``dx/dz``."""
        low, high = self.params(z.shape[0])
        return (high - low) * expit(z) * expit(-z)

    def log_density(self, z: np.ndarray) -> tuple[float, np.ndarray]:
        """Density of ``z``: the uniform's constant cancels the Jacobian's range factor."""
        # log sigmoid(z) + log sigmoid(-z), written stably.
        lp = -np.sum(np.logaddexp(0.0, -z) + np.logaddexp(0.0, z))
        return float(lp), -np.tanh(z / 2.0)

    def variance(self, n: int) -> np.ndarray:
        """Prior variance of each coordinate."""
        low, high = self.params(n)
        return (high - low) ** 2 / 12.0

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """One draw of the parameter vector."""
        low, high = self.params(n)
        return rng.uniform(low, high)


@dataclass(frozen=True)
class LogNormal:
    """Log-normal prior for a positive scalar such as the rationality ``beta``.

    Sampled on ``z = log(beta)``, where it is ``N(mu, sigma^2)`` (the Jacobian is absorbed).
    """

    mu: float = 0.0
    sigma: float = 1.0

    kind = "lognormal"

    def params(self, n: int) -> tuple[np.ndarray, np.ndarray]:
        """``(mu, sigma)`` broadcast to length ``n`` and checked."""
        mu, sigma = _vector(self.mu, n, "mu"), _vector(self.sigma, n, "sigma")
        if np.any(sigma <= 0):
            raise InputError(f"prior: LogNormal sigma must be positive; got {sigma.tolist()}")
        return mu, sigma

    def transform(self, z: np.ndarray) -> np.ndarray:
        """``exp(z)``."""
        return np.exp(z)

    def dtransform(self, z: np.ndarray) -> np.ndarray:
        """``dx/dz``."""
        return np.exp(z)

    def log_density(self, z: np.ndarray) -> tuple[float, np.ndarray]:
        """Density of ``z = log(x)``: normal."""
        return Normal(self.mu, self.sigma).log_density(z)

    def variance(self, n: int) -> np.ndarray:
        """Variance of ``x`` itself."""
        mu, s = self.params(n)
        return (np.exp(s**2) - 1.0) * np.exp(2 * mu + s**2)

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """One draw."""
        mu, s = self.params(n)
        return np.exp(mu + s * rng.standard_normal(n))


@dataclass(frozen=True)
class HalfNormal:
    """Half-normal prior ``|N(0, scale^2)|`` for positive scales (such as the spread of
    demonstrators' weights under partial pooling), per coordinate.

    Sampled on ``z = log(x)``: ``log p(z) = log(2 / (scale sqrt(2 pi))) - x^2 / (2 scale^2) + z``
    (the last term is the Jacobian ``dx/dz = x``).
    """

    scale: float | np.ndarray = 1.0

    kind = "halfnormal"

    def params(self, n: int) -> tuple[np.ndarray]:
        """``(scale,)`` broadcast to length ``n`` and checked."""
        scale = _vector(self.scale, n, "scale")
        if np.any(scale <= 0):
            raise InputError(f"prior: HalfNormal scale must be positive; got {scale.tolist()}")
        return (scale,)

    transform = LogNormal.transform
    dtransform = LogNormal.dtransform

    def log_density(self, z: np.ndarray) -> tuple[float, np.ndarray]:
        """Density of ``z = log(x)`` and its gradient."""
        (scale,) = self.params(z.shape[0])
        u = np.exp(z) / scale
        lp = np.sum(0.5 * np.log(2.0 / np.pi) - np.log(scale) - 0.5 * u * u + z)
        return float(lp), 1.0 - u * u

    def variance(self, n: int) -> np.ndarray:
        """Variance of ``x``: ``scale^2 (1 - 2 / pi)``."""
        return self.params(n)[0] ** 2 * (1.0 - 2.0 / np.pi)

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """One draw."""
        return self.params(n)[0] * np.abs(rng.standard_normal(n))


PRIORS = {cls.kind: cls for cls in (Normal, Laplace, Uniform, LogNormal, HalfNormal)}


def to_json(prior) -> str:
    """Serialise a prior (for result files)."""
    fields = {k: np.asarray(v).tolist() for k, v in prior.__dict__.items()}
    return json.dumps({"kind": prior.kind, **fields})


def from_json(text: str):
    """Inverse of :func:`to_json`."""
    spec = json.loads(text)
    kind = spec.pop("kind")
    if kind not in PRIORS:
        raise InputError(f"prior: unknown kind {kind!r}; known: {sorted(PRIORS)}")
    return PRIORS[kind](**{k: np.asarray(v) if isinstance(v, list) else v
                           for k, v in spec.items()})
