"""The one place bayesirl meets ArviZ: the 0.2x series (Python 3.10+) or 1.x (Python 3.12+).

ArviZ 1.x split into arviz-base (data on ``xarray.DataTree``) and arviz-stats; 0.2x keeps
everything in ``arviz`` on its own ``InferenceData``. Callers use the functions here on plain
arrays and read groups by attribute (``data.posterior["weights"]``), which works on both.

ArviZ is imported on first use, not with bayesirl: it costs seconds, and ArviZ 0.2x prints
a ``FutureWarning`` about its refactor (once a day per user) that is silenced here, where we
import it. Files are plain NetCDF-4 with one group per ArviZ group (posterior, sample_stats,
constant_data), written by h5netcdf, so ``xarray.open_datatree`` and either ArviZ read them.
"""

from __future__ import annotations

import warnings
from functools import cache
from importlib.metadata import version
from pathlib import Path
from types import ModuleType
from typing import NamedTuple

import numpy as np

# The NetCDF engine both series write with (0.2x's default; a declared dependency of ours).
ENGINE = "h5netcdf"
# Tail-ESS quantiles: 0.2x's default; arviz-stats 1.x's array layer needs them passed.
TAIL_PROB = (0.05, 0.95)


@cache
def series() -> int:
    """The installed ArviZ's major version (0 or 1), read without importing it."""
    return int(version("arviz").split(".")[0])


@cache
def _stats() -> ModuleType:
    """The module with rhat/ess/bfmi/hdi: arviz_stats (1.x) or arviz (0.2x)."""
    if series() >= 1:
        import arviz_stats

        return arviz_stats
    return _arviz0()


@cache
def _arviz0() -> ModuleType:
    with warnings.catch_warnings():
        # 0.2x announces the 1.x refactor on import; that is ArviZ's news, not the user's.
        warnings.simplefilter("ignore", FutureWarning)
        import arviz

    return arviz


def preload() -> None:
    """Import now what writing a posterior file needs (seconds), not when a run stops.

    A stopped ``bayesirl fit`` saves its draws on the way out; the import would otherwise
    land between the signal and the exit.
    """
    if series() >= 1:
        import arviz_base  # noqa: F401
        import xarray  # noqa: F401
    else:
        _arviz0()
    import h5netcdf  # noqa: F401


def _chains(x) -> np.ndarray:
    """``(chains, draws)``: a 1-D series is one chain, as 0.2x reads it."""
    x = np.asarray(x, dtype=float)
    if x.ndim == 1:
        return x[None, :]
    if x.ndim != 2:
        raise ValueError(f"expected (chains, draws) draws, got shape {x.shape}")
    return x


def rhat(x, method: str = "rank") -> float:
    """R-hat of one quantity's ``(chains, draws)`` draws (rank-normalised split by default)."""
    return float(_stats().rhat(_chains(x), method=method))


def ess(x, method: str = "bulk", prob=None) -> float:
    """Effective sample size of ``(chains, draws)`` draws (a 1-D series is one chain)."""
    if method == "tail" and prob is None:
        prob = TAIL_PROB
    return float(_stats().ess(_chains(x), method=method, prob=prob))


def bfmi(energy) -> np.ndarray:
    """E-BFMI per chain from the ``(chains, draws)`` Hamiltonian energies."""
    energy = _chains(energy)
    out = _stats().bfmi(energy)  # both series take (chains, draws) arrays
    return np.asarray(out, dtype=float).reshape(energy.shape[0])


def hdi(x, prob: float) -> tuple[float, float]:
    """Shortest interval holding ``prob`` of the 1-D draws ``x``."""
    x = np.asarray(x, dtype=float).ravel()
    if series() >= 1:
        lo, hi = _stats().hdi(x, prob=prob)
    else:
        lo, hi = _stats().hdi(x, hdi_prob=prob)
    return float(lo), float(hi)


def from_groups(groups: dict[str, dict], coords: dict, dims: dict, attrs: dict):
    """ArviZ's container (0.2x ``InferenceData``, 1.x ``xarray.DataTree``) of ``groups``.

    ``groups`` maps a group name (posterior, sample_stats, constant_data, ...) to its arrays;
    posterior and sample_stats arrays lead with ``(chain, draw)``. ``attrs`` go on every
    group (0.2x's behaviour, kept so that old and new files carry them in the same place).
    """
    if series() >= 1:
        import arviz_base

        return arviz_base.from_dict(groups, coords=coords, dims=dims,
                                    attrs={name: dict(attrs) for name in groups})
    return _arviz0().from_dict(**groups, coords=coords, dims=dims, attrs=attrs)


def to_netcdf(data, path) -> None:
    """Write ``data`` (from :func:`from_groups`) as NetCDF-4 with one group per ArviZ group."""
    if series() >= 1:
        # zlib on every numeric variable, as 0.2x's ``compress=True`` does.
        encoding = {node.path: {name: {"zlib": True} for name, var in node.data_vars.items()
                                if var.dtype.kind in "biuf"}
                    for node in data.subtree}
        data.to_netcdf(str(path), engine=ENGINE, encoding=encoding)
    else:
        data.to_netcdf(str(path), engine=ENGINE)


def from_netcdf(path: Path | str):
    """Read a file written by any bayesirl release, with every group loaded into memory."""
    if series() >= 1:
        import xarray as xr

        with xr.open_datatree(str(path), engine=ENGINE) as tree:
            return tree.load()
    data = _arviz0().from_netcdf(str(path), engine=ENGINE)
    for name in data.groups():
        data[name].load()
    return data


def group(data, name: str):
    """Group ``name`` of a container from :func:`from_netcdf` / :func:`from_groups` (an
    ``xarray.Dataset``-like mapping of variables), or None when the file has no such group."""
    names = data.groups() if callable(getattr(data, "groups", None)) else list(data.children)
    names = [n.strip("/") for n in names]
    if name not in names:
        return None
    return data[name] if series() < 1 else data[name].dataset


class Loo(NamedTuple):
    """PSIS-LOO (Vehtari, Gelman & Gabry 2017): expected log predictive density, its
    standard error, effective number of parameters, and per observation ``elpd_i`` and
    Pareto ``k``."""

    elpd: float
    se: float
    p: float
    elpd_i: np.ndarray
    pareto_k: np.ndarray


def loo(data, var_name: str) -> Loo:
    """PSIS-LOO of the ``log_likelihood`` variable ``var_name`` of ``data`` (a container
    from :func:`from_groups` or :func:`from_netcdf`; its posterior group gives the relative
    efficiency). ArviZ's warning about large ``k`` is silenced: callers report ``k``."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        if series() >= 1:
            r = _stats().loo(data, pointwise=True, var_name=var_name)
            return Loo(float(r.elpd), float(r.se), float(r.p), np.asarray(r.elpd_i),
                       np.asarray(r.pareto_k))
        r = _arviz0().loo(data, pointwise=True, var_name=var_name)
        return Loo(float(r.elpd_loo), float(r.se), float(r.p_loo), np.asarray(r.loo_i),
                   np.asarray(r.pareto_k))
