"""The posterior object: draws, sampler statistics, diagnostics and the problem behind them."""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np

from bayesirl import arviz_compat as arviz
from bayesirl.posterior import diagnostics as diag
from bayesirl.posterior import storage
from bayesirl.posterior.group_draws import (
    add_groups,
    group_columns,
    group_draws,
    group_heading,
    group_names,
    read_groups,
)
from bayesirl.posterior.loglik import (
    add_log_likelihood,
    is_current,
    pointwise_log_likelihood,
    read_log_likelihood,
)
from bayesirl.posterior.model import PosteriorModel

# Names in ArviZ's sample_stats convention.
_STAT_NAMES = {"step_size": "step_size", "tree_depth": "tree_depth", "n_steps": "n_steps",
               "divergent": "diverging", "acceptance": "acceptance_rate", "energy": "energy",
               "logdensity": "lp"}


class Posterior:
    """Posterior draws of the reward weights (and rationality), with their provenance.

    Attributes
    ----------
    weights : array ``(chains, draws, F)``
    rationality : array ``(chains, draws)`` when sampled, else None
    feature_names : tuple of str
    stats : dict of ``(chains, draws)`` arrays in ArviZ's naming (step_size, tree_depth,
        n_steps = gradient evaluations, diverging, acceptance_rate, energy, lp)
    wall_time, chain_times : seconds
    seed : the run's seed (chain ``k`` used child ``k`` of ``SeedSequence(seed)``)
    settings : sampler settings; ``adapted`` holds each chain's step size and inverse mass
    model : the PosteriorModel (likelihood with MDP and demonstrations, prior, rationality, pin)
    complete : False for the draws so far of an interrupted run (see ``bayesirl.Interrupted``)
    groups : None, or with several demonstrators (``pooling`` separate or partial) a dict:
        ``demonstrator_weights`` ``(chains, draws, G, F)``, ``demonstrators`` (G names) and,
        for partial pooling, ``spread`` ``(chains, draws, F)``. ``weights`` then holds the
        population mean (partial) or the mean of the G demonstrators' weights (separate).
    extra_draws : dict
        ``{name: (chains, draws)}`` of the positive quantities further evidence samples (a
        judge's rationality ``judge_rationality``, Davidson's tie parameter ``judge_tie``);
        empty when there are none. Saved as posterior variables of those names.
    log_likelihood : None, or ``{"episodes": (chains, draws, E)}`` (with comparisons
        ``"comparisons": (chains, draws, K)``, and ``"steps": (chains, draws, N)`` if asked):
        each draw's log-likelihood per episode (demonstrations, then episodes with
        unrecorded parts), per comparison answer, per step; filled by
        :meth:`compute_log_likelihood`, saved as ArviZ's log_likelihood group.
    """

    def __init__(self, weights, rationality, stats, model: PosteriorModel, settings: dict,
                 seed: int, wall_time: float, chain_times, complete: bool = True,
                 groups: dict | None = None, extra_draws: dict | None = None) -> None:
        self.weights = weights
        self.extra_draws = dict(extra_draws or {})
        self.groups = groups
        self.rationality = rationality
        self.stats = stats
        self.model = model
        self.feature_names = tuple(model.feature_names)
        self.settings = settings
        self.seed = seed
        self.wall_time = float(wall_time)
        self.chain_times = [float(t) for t in chain_times]
        self.complete = bool(complete)
        self._diagnostics = None
        self.log_likelihood: dict | None = None

    def compute_log_likelihood(self, *, steps: bool = False) -> dict:
        """Each draw's log-likelihood per episode (and per step with ``steps``), kept in
        :attr:`log_likelihood` and saved with the posterior (one solve per draw)."""
        have = self.log_likelihood or {}
        if not is_current(have, self.model) or (steps and "steps" not in have):
            self.log_likelihood = pointwise_log_likelihood(self, steps=steps)
        return self.log_likelihood

    # -- construction -------------------------------------------------------------------
    @classmethod
    def from_chains(cls, model, results, settings, seed, wall_time, chain_times,
                    complete: bool = True) -> Posterior:
        """Assemble from :class:`~bayesirl.sampler.ChainResult` objects (one per chain)."""
        thetas = np.stack([r.draws for r in results])  # (C, D, dim)
        c, d, _ = thetas.shape
        f = len(model.feature_names)
        weights = np.empty((c, d, f))
        beta = np.empty((c, d))
        for i in range(c):
            for j in range(d):
                weights[i, j], beta[i, j] = model.unpack(thetas[i, j])
        sampled = model.fixed_rationality is None
        names = tuple(getattr(model, "extra_priors", ()))
        extra = {n: np.array([[model.extra_values(t)[n] for t in chain] for chain in thetas])
                 for n in names}
        stats = {_STAT_NAMES[k]: np.stack([r.stats[k] for r in results]) for k in _STAT_NAMES}
        adapted = [{"step_size": float(r.step_size), "inv_mass": np.asarray(r.inv_mass).tolist(),
                    "n_evals": int(r.n_evals)} for r in results]
        settings = {**settings, "adapted": adapted}
        groups = group_draws(model, thetas) if hasattr(model, "group_names") else None
        return cls(weights, beta if sampled else None, stats, model, settings, seed,
                   wall_time, chain_times, complete, groups, extra)

    # -- summaries ---------------------------------------------------------------------
    @property
    def n_chains(self) -> int:
        """Number of chains."""
        return self.weights.shape[0]

    @property
    def n_draws(self) -> int:
        """Draws per chain."""
        return self.weights.shape[1]

    @property
    def param_names(self) -> tuple[str, ...]:
        """Names of every sampled quantity, in ArviZ's flattened order."""
        names = self.feature_names
        names = names + (("rationality",) if self.rationality is not None else ())
        return (names + group_names(self.groups, self.feature_names)
                + tuple(self.extra_draws))

    def _fixed_names(self) -> tuple[str, ...]:
        pinned = tuple(self.model.pin)
        return pinned + group_names(self.groups, pinned)

    @property
    def diagnostics(self) -> diag.Diagnostics:
        """R-hat, ESS, divergences and E-BFMI (computed once)."""
        if self._diagnostics is None:
            self._diagnostics = diag.compute(self.to_arviz(), self.param_names,
                                             fixed=self._fixed_names())
        return self._diagnostics

    def warn(self, stream=None) -> None:
        """Print any diagnostic warning."""
        out = stream if stream is not None else sys.stderr
        for w in self.diagnostics.warnings:
            print(f"warning: {w}", file=out)

    def summary(self, level: float = 0.9) -> str:
        """A compact table: mean, sd, equal-tailed interval, R-hat, bulk/tail ESS."""
        if self.n_draws == 0:  # an interrupted run that had not finished warmup
            return f"{self.n_chains} chains x 0 draws ({self.settings['method']}): no draws yet"
        d = self.diagnostics
        lo, hi = 50 * (1 - level), 50 * (1 + level)
        cols = [self.weights[..., i] for i in range(self.weights.shape[-1])]
        if self.rationality is not None:
            cols.append(self.rationality)
        cols += group_columns(self.groups) + list(self.extra_draws.values())
        head = (f"{'parameter':<14}{'mean':>9}{'sd':>8}{f'{lo:g}%':>9}{f'{hi:g}%':>9}"
                f"{'R-hat':>7}{'ESS bulk':>10}{'ESS tail':>10}")
        rows = [head] + group_heading(self.groups)
        for k, (name, x) in enumerate(zip(self.param_names, cols, strict=True)):
            q = np.percentile(x, [lo, hi])
            rows.append(f"{name:<14}{x.mean():9.3f}{x.std(ddof=1):8.3f}{q[0]:9.3f}{q[1]:9.3f}"
                        f"{d.rhat[k]:7.3f}{d.ess_bulk[k]:10.0f}{d.ess_tail[k]:10.0f}")
        failed = sum(self.settings.get("solver_failures", ()))
        rows.append(f"{self.n_chains} chains x {self.n_draws} draws ({self.settings['method']}),"
                    f" {d.divergences} divergent, {self.wall_time:.1f} s"
                    + (f", {failed} failed solves (rejected)" if failed else ""))
        rows += [f"warning: {w}" for w in d.warnings]
        return "\n".join(rows)

    def __repr__(self) -> str:
        return (f"Posterior(features={list(self.feature_names)}, chains={self.n_chains}, "
                f"draws={self.n_draws}{'' if self.complete else ', complete=False'})")

    def _repr_html_(self) -> str:
        """Notebook display: the summary table and the diagnostics (escaped HTML)."""
        from bayesirl.posterior.notebook import posterior_html

        return posterior_html(self)

    # -- ArviZ and files ---------------------------------------------------------------
    def to_arviz(self):
        """ArviZ's container with posterior, sample_stats and the problem as constant_data.

        An ``InferenceData`` under ArviZ 0.2x, an ``xarray.DataTree`` under ArviZ 1.x.
        """
        post = {"weights": self.weights}
        dims = {"weights": ["feature"]}
        coords = {"feature": list(self.feature_names)}
        if self.rationality is not None:
            post["rationality"] = self.rationality
        add_groups(self.groups, post, dims, coords)
        post.update(self.extra_draws)
        arrays, const_dims = storage.problem_arrays(self.model)
        dims.update(const_dims)
        const, observed = storage.split_observed(arrays)
        meta = {"bayesirl_run": json.dumps(self._meta(), sort_keys=True)}
        groups = {"posterior": post, "sample_stats": self.stats, "observed_data": observed,
                  "constant_data": const}
        add_log_likelihood(self.log_likelihood, groups, dims)
        return arviz.from_groups(groups, coords=coords, dims=dims, attrs=meta)

    def _meta(self) -> dict:
        return {"format": storage.FORMAT, "seed": self.seed, "wall_time": self.wall_time,
                "chain_times": self.chain_times, "settings": self.settings,
                "complete": self.complete,
                "model": self.model.spec(), "problem": storage.problem_meta(self.model)}

    def save(self, path) -> Path:
        """Write a NetCDF file (``arviz.from_netcdf``, ``xarray.open_datatree``), atomically."""
        return storage.write_netcdf(self.to_arviz(), Path(path))

    @classmethod
    def load(cls, path) -> Posterior:
        """Restore a posterior, with its MDP, demonstrations, prior and settings."""
        idata = arviz.from_netcdf(path)
        meta = json.loads(idata.constant_data.attrs["bayesirl_run"])
        observed = arviz.group(idata, "observed_data")
        model = storage.rebuild_model(idata.constant_data, meta, observed)
        stats = {k: idata.sample_stats[k].values for k in _STAT_NAMES.values()}
        post = idata.posterior
        beta = post["rationality"].values if "rationality" in post else None
        out = cls(post["weights"].values, beta, stats, model, meta["settings"], meta["seed"],
                  meta["wall_time"], meta["chain_times"], meta.get("complete", True),
                  read_groups(post),
                  {n: post[n].values for n in getattr(model, "extra_priors", ()) if n in post})
        out.log_likelihood = read_log_likelihood(idata)
        return out
