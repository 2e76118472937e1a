"""The calibration problem: a small slippery grid and Boltzmann-rational demonstrations on it.

The grid is invented for validation: 4 x 4 cells, moves north, east, south, west; a move
goes to one of the other three directions with probability ``slip`` (split evenly) and a
move off the grid stays put. State features (first ``n_features`` of):

* ``goal``  - 1 in the south-east corner cell;
* ``water`` - 1 on three cells near the centre;
* ``east``  - the column index scaled to ``[0, 1]``.

No feature is constant, so none is invisible to a discounted demonstrator (a constant reward
only shifts the values).
"""

from __future__ import annotations

import contextlib
import functools
import io
from dataclasses import dataclass, field
from typing import Any, NamedTuple

import numpy as np

from bayesirl.errors import InputError
from bayesirl.execution import sample
from bayesirl.execution.backend import Processes
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.model import Demonstrations, TabularMDP, simulate
from bayesirl.priors import LogNormal, Normal

SIDE = 4
FEATURE_NAMES = ("goal", "water", "east")
_WATER = ((1, 1), (1, 2), (2, 1))
_MOVES = ((-1, 0), (0, 1), (1, 0), (0, -1))


def sbc_grid(n_features: int = 3, slip: float = 0.2, discount: float = 0.9) -> TabularMDP:
    """The 16-state slippery grid described in the module docstring.

    Parameters
    ----------
    n_features : int
        1 to 3; the first ``n_features`` of ``goal, water, east``.
    slip : float
        Probability that a move goes in another direction.
    discount : float

    Returns
    -------
    TabularMDP
    """
    if not 1 <= int(n_features) <= len(FEATURE_NAMES):
        raise InputError(f"sbc_grid: n_features must be 1..{len(FEATURE_NAMES)}; got {n_features}")
    n = SIDE * SIDE
    row, col = np.divmod(np.arange(n), SIDE)
    targets = np.empty((n, 4), dtype=np.int64)
    for a, (dr, dc) in enumerate(_MOVES):
        targets[:, a] = np.clip(row + dr, 0, SIDE - 1) * SIDE + np.clip(col + dc, 0, SIDE - 1)
    transitions = np.zeros((n, 4, n))
    for a in range(4):
        for b in range(4):
            # += merges moves that both bounce off a wall into "stay".
            transitions[np.arange(n), a, targets[:, b]] += 1.0 - slip if a == b else slip / 3.0
    water = np.zeros(n)
    water[[r * SIDE + c for r, c in _WATER]] = 1.0
    goal = np.zeros(n)
    goal[n - 1] = 1.0
    feats = np.stack([goal, water, col / (SIDE - 1.0)], axis=1)[:, : int(n_features)]
    return TabularMDP(transitions, feats, discount=discount,
                      feature_names=list(FEATURE_NAMES[: int(n_features)]))


class PosteriorDraws(NamedTuple):
    """What a problem's posterior returns to the runner."""

    draws: np.ndarray  # (chains, n, P), in the order of the problem's ``names``
    divergences: int


@dataclass(frozen=True)
class GridSBC:
    """SBC problem: reward weights (and rationality) of a Boltzmann-rational demonstrator.

    One replication draws the free weights from ``prior`` (pinned weights keep their pinned
    value and are not drawn), the rationality from its ``LogNormal`` prior when it is
    unknown, simulates ``episodes`` demonstrations of ``length`` steps on :func:`sbc_grid`,
    and samples the posterior with :func:`bayesirl.sample` in this process.

    Parameters
    ----------
    n_features, slip, discount
        Passed to :func:`sbc_grid`.
    prior : Normal, Laplace or Uniform
        Prior of the weights, used both to generate and to infer.
    rationality : float or LogNormal
        Known inverse temperature, or the prior of an unknown one (then ``pin`` is required).
    pin : dict, optional
        ``{feature name: value}`` held fixed in simulation and inference.
    episodes, length : int
        Demonstrations per replication.
    chains, warmup : int
        Sampler settings (``draws`` per chain come from the runner).
    target_accept : float, optional
        NUTS target acceptance (default that of :func:`bayesirl.sample`).
    sampler_prior : prior, optional
        Prior given to the sampler instead of ``prior``.
    sampler_rationality : float, optional
        Known rationality the sampler assumes instead of ``rationality`` (fixed case only).
        Either ``sampler_*`` setting other than ``None`` makes the posterior deliberately
        wrong: they exist for negative controls.
    """

    n_features: int = 3
    slip: float = 0.2
    discount: float = 0.9
    prior: Any = field(default_factory=lambda: Normal(0.0, 1.0))
    rationality: Any = 1.0
    pin: dict | None = None
    episodes: int = 10
    length: int = 20
    chains: int = 2
    warmup: int = 300
    target_accept: float | None = None
    sampler_prior: Any = None
    sampler_rationality: float | None = None

    @functools.cached_property
    def mdp(self) -> TabularMDP:
        """The grid (built once per object)."""
        return sbc_grid(self.n_features, self.slip, self.discount)

    @property
    def sampled_rationality(self) -> bool:
        """True when the rationality has a prior."""
        return isinstance(self.rationality, LogNormal)

    @property
    def free(self) -> np.ndarray:
        """Indices of the weights that are drawn and sampled."""
        pin = self.pin or {}
        return np.array([i for i, n in enumerate(self.mdp.feature_names) if n not in pin])

    @property
    def names(self) -> tuple[str, ...]:
        """Ranked parameters: free weights, then ``rationality`` when it is sampled."""
        free = tuple(self.mdp.feature_names[i] for i in self.free)
        return free + (("rationality",) if self.sampled_rationality else ())

    def simulate(self, rng: np.random.Generator) -> tuple[np.ndarray, Demonstrations]:
        """Draw the true parameters from the prior and demonstrations given them."""
        names = self.mdp.feature_names
        weights = np.array([(self.pin or {}).get(n, 0.0) for n in names], dtype=float)
        weights[self.free] = _restricted(self.prior, self.free, len(names)).draw(
            rng, self.free.size)
        beta = float(self.rationality.draw(rng, 1)[0]) if self.sampled_rationality else float(
            self.rationality)
        demos = simulate(self.mdp, weights, episodes=self.episodes, length=self.length,
                         rationality=beta,
                         seed=rng)
        truth = weights[self.free]
        return (np.append(truth, beta) if self.sampled_rationality else truth), demos

    def posterior(self, demos: Demonstrations, draws: int, seed: int) -> PosteriorDraws:
        """``chains`` NUTS chains of ``draws`` draws each, in this process."""
        fixed = not self.sampled_rationality
        assumed = self.rationality if self.sampler_rationality is None else (
            self.sampler_rationality)
        lik = BoltzmannLikelihood(self.mdp, demos, rationality=float(assumed) if fixed else 1.0)
        # sample() prints its diagnostic warnings; the runner keeps its own record instead.
        with contextlib.redirect_stderr(io.StringIO()):
            post = sample(
                lik, self.prior if self.sampler_prior is None else self.sampler_prior,
                chains=self.chains, draws=int(draws), warmup=self.warmup, seed=int(seed),
                progress=False, rationality=None if fixed else self.rationality, pin=self.pin,
                target_accept=self.target_accept, backend=Processes(1),
            )
        out = post.weights[:, :, self.free]
        if not fixed:
            out = np.concatenate([out, post.rationality[:, :, None]], axis=2)
        return PosteriorDraws(out, int(np.sum(post.stats["diverging"])))

    def describe(self) -> dict[str, str]:
        """Human-readable settings for the report."""
        mdp = self.mdp
        rat = (f"unknown, prior LogNormal(mu={self.rationality.mu:g}, "
               f"sigma={self.rationality.sigma:g})" if self.sampled_rationality
               else f"fixed at {float(self.rationality):g}")
        return {
            "MDP": (f"{SIDE}x{SIDE} slippery grid (slip {self.slip:g}), {mdp.n_states} states, "
                    f"{mdp.n_actions} actions, discount {self.discount:g}, infinite horizon"),
            "features": ", ".join(mdp.feature_names),
            "weight prior": _prior_text(self.prior),
            "rationality": rat,
            "pinned": ", ".join(f"{k} = {v:g}" for k, v in (self.pin or {}).items()) or "none",
            "demonstrations": (f"{self.episodes} episodes x {self.length} steps, uniform start, "
                               "simulated from the soft-optimal (Boltzmann) policy"),
            "sampler": (f"bayesirl.sample, NUTS, {self.chains} chains, warmup {self.warmup}, "
                        f"target accept {self.target_accept or 0.8:g}, diagonal mass"),
        }


def _prior_text(prior) -> str:
    fields = ", ".join(f"{k}={np.asarray(v).tolist()}" for k, v in prior.__dict__.items())
    return f"{type(prior).__name__}({fields})"


def _restricted(prior, idx: np.ndarray, n: int):
    """The same independent prior with per-feature parameters restricted to ``idx``."""
    fields = {k: np.broadcast_to(np.asarray(v, dtype=float), (n,))[idx]
              for k, v in prior.__dict__.items()}
    return type(prior)(**fields)
