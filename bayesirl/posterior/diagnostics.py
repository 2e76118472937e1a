"""Convergence diagnostics after every run, with the thresholds named at their source."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from bayesirl import arviz_compat as arviz

# Vehtari, Gelman, Simpson, Carpenter & Buerkner (2021), "Rank-normalization, folding, and
# localization: an improved R-hat": use samples only when rank-normalised split R-hat < 1.01
# and bulk- and tail-ESS are at least 100 per chain (400 for the four chains they assume).
RHAT_MAX = 1.01
ESS_MIN = 400
# Betancourt (2016), "Diagnosing suboptimal cotangent disintegrations in Hamiltonian Monte
# Carlo": E-BFMI below 0.3 indicates the momentum resampling cannot explore the energy.
EBFMI_MIN = 0.3
# Betancourt (2017), "A conceptual introduction to HMC": any divergence signals a region the
# integrator cannot resolve, which biases the estimates.
DIVERGENCES_MAX = 0
# Ours (no published threshold): a chain whose adapted step size is a millionth of another
# chain's on the same posterior has stalled (seen: 1e-209 after the likelihood failed along
# its warmup path), so its draws barely move whatever R-hat says.
STEP_SIZE_RATIO_MIN = 1e-6


class Diagnostics(NamedTuple):
    """Per-parameter R-hat and ESS, plus run-level divergences and E-BFMI."""

    names: tuple[str, ...]
    rhat: np.ndarray
    ess_bulk: np.ndarray
    ess_tail: np.ndarray
    divergences: int
    ebfmi: np.ndarray  # per chain (NaN for the random-walk sampler)
    warnings: tuple[str, ...]

    @property
    def ok(self) -> bool:
        """True when no threshold failed."""
        return not self.warnings


def _per_param(dataset, func) -> np.ndarray:
    """``func`` of each scalar's ``(chain, draw)`` draws, variables flattened in order."""
    out = []
    for v in dataset.data_vars:
        x = np.asarray(dataset[v].values, dtype=float)
        flat = x.reshape(x.shape[0], x.shape[1], -1)
        out += [func(flat[:, :, k]) for k in range(flat.shape[2])]
    return np.asarray(out, dtype=float)


def compute(idata, names: tuple[str, ...], fixed=()) -> Diagnostics:
    """Diagnostics of ``idata.posterior`` (every variable, flattened in order).

    ``idata`` is ArviZ's container of either series (see :mod:`bayesirl.arviz_compat`).

    Names in ``fixed`` (pinned weights, constant by construction) get NaN R-hat and ESS and
    are exempt from the warnings.
    """
    post = idata.posterior
    with np.errstate(invalid="ignore", divide="ignore"):  # constant pinned draws
        rhat = _per_param(post, lambda x: arviz.rhat(x, method="rank"))
        bulk = _per_param(post, lambda x: arviz.ess(x, method="bulk"))
        tail = _per_param(post, lambda x: arviz.ess(x, method="tail"))
    for k, name in enumerate(names):
        if name in fixed:
            rhat[k] = bulk[k] = tail[k] = np.nan
    stats = idata.sample_stats
    div = int(stats["diverging"].values.sum()) if "diverging" in stats else 0
    energy = stats["energy"].values if "energy" in stats else None
    if energy is not None and np.all(np.isfinite(energy)):
        ebfmi = arviz.bfmi(energy)
    else:
        ebfmi = np.full(post.sizes["chain"], np.nan)
    warn = _warnings(names, rhat, bulk, tail, div, ebfmi, set(fixed))
    if "step_size" in stats:
        warn = warn + _stalled(np.asarray(stats["step_size"].values, dtype=float))
    return Diagnostics(names, rhat, bulk, tail, div, ebfmi, warn)


def _warnings(names, rhat, bulk, tail, div, ebfmi, fixed=frozenset()) -> tuple[str, ...]:
    out = []
    bad = [n for n, r in zip(names, rhat, strict=True) if n not in fixed and not r < RHAT_MAX]
    if bad:
        out.append(f"R-hat >= {RHAT_MAX} for {', '.join(bad)}: chains disagree; run longer")
    low = [n for n, b, t in zip(names, bulk, tail, strict=True)
           if n not in fixed and not min(b, t) >= ESS_MIN]
    if low:
        out.append(f"bulk- or tail-ESS < {ESS_MIN} for {', '.join(low)}: intervals are noisy")
    if div > DIVERGENCES_MAX:
        out.append(f"{div} divergent transitions: the estimates may be biased; "
                   "try a higher target acceptance or a dense mass matrix")
    if np.any(ebfmi < EBFMI_MIN):
        out.append(f"E-BFMI < {EBFMI_MIN} in {int(np.sum(ebfmi < EBFMI_MIN))} chain(s): "
                   "poor exploration of the energy")
    return tuple(out)


def _stalled(step_sizes: np.ndarray) -> tuple[str, ...]:
    """A warning naming chains whose step size collapsed (``(chains, draws)`` step sizes)."""
    if step_sizes.size == 0:
        return ()
    per_chain = np.median(step_sizes, axis=1)
    top = np.max(per_chain, initial=0.0, where=np.isfinite(per_chain))
    bad = [k for k, h in enumerate(per_chain)
           if not (np.isfinite(h) and h > 0 and (top == 0 or h >= STEP_SIZE_RATIO_MIN * top))]
    if not bad:
        return ()
    sizes = ", ".join(f"{per_chain[k]:.2g}" for k in bad)
    return (f"step size collapsed in chain(s) {', '.join(map(str, bad))} ({sizes}; largest "
            f"{top:.2g}): those chains barely moved, so their draws cannot be used; the "
            "likelihood probably failed along their path (see solver failures)",)
