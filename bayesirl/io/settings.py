"""The ``[prior]``, ``[rationality]``, ``[sampler]`` and ``[solver]`` tables of a problem file."""

from __future__ import annotations

import numpy as np

from bayesirl.errors import InputError
from bayesirl.io.fields import Table
from bayesirl.priors import DEFAULT_SCALE, PRIORS, LogNormal
from bayesirl.solver.defaults import (
    ADJOINT_RTOL,
    DEFAULT_TOL,
    MAX_LINEAR_ITERATIONS,
    MAX_NEWTON_STEPS,
)

# Weight priors by name and the parameters each takes (with defaults).
WEIGHT_PRIORS = {"normal": {"loc": 0.0, "scale": DEFAULT_SCALE},
                 "laplace": {"loc": 0.0, "scale": 1.0},
                 "uniform": {"low": -1.0, "high": 1.0}}
SAMPLER_KEYS = {"chains": 4, "draws": 1000, "warmup": 1000, "seed": 0}


def _per_feature(table: Table, key: str, default: float, features: list[str]):
    """A number, or a list with one number per feature."""
    v = table.data.get(key, default)
    if isinstance(v, list):
        ok = len(v) == len(features) and all(
            isinstance(x, int | float) and not isinstance(x, bool) and np.isfinite(x) for x in v)
        if not ok:
            raise table.fail(key, v, f"a number or a list of {len(features)} finite numbers "
                                     f"(one per feature: {', '.join(features)})")
        return np.asarray(v, dtype=np.float64)
    return table.number(key, default)


def prior_from(table: Table, features: list[str]):
    """The prior on the weights (default: normal with scale 5)."""
    kind = table.data.get("kind", "normal")
    if kind not in WEIGHT_PRIORS:
        raise table.fail("kind", kind, "one of " + ", ".join(repr(k) for k in WEIGHT_PRIORS))
    params = WEIGHT_PRIORS[kind]
    table.only({"kind", *params})
    values = {k: _per_feature(table, k, d, features) for k, d in params.items()}
    if "scale" in values and np.any(np.asarray(values["scale"]) <= 0):
        raise table.fail("scale", table.data["scale"], "a positive number (or one per feature)")
    prior = PRIORS[kind](**values)
    try:
        prior.params(len(features))
    except InputError as err:
        raise InputError(f"{table.file}: [{table.name}] {err}") from None
    return prior


def rationality_from(table: Table, features: list[str]) -> tuple[object, dict]:
    """``value = b`` (fixed, default 1) or ``log_mean``/``log_sd`` + ``pin`` (sampled)."""
    table.only({"value", "log_mean", "log_sd", "pin"})
    sampled = "log_mean" in table or "log_sd" in table
    pin = {}
    if "pin" in table:
        pins = table.table("pin")
        for name, v in pins.data.items():
            if name not in features:
                raise InputError(f"{pins.where(name)}: unknown feature; features are "
                                 f"{', '.join(features)}")
            if pins.number(name) == 0.0:
                raise pins.fail(name, v, "a non-zero number (it sets the weights' scale)")
            pin[name] = float(v)
    if sampled:
        if "value" in table:
            raise InputError(f"{table.where('value')}: give either a fixed value or "
                             "log_mean/log_sd for a sampled rationality, not both")
        if len(pin) != 1:
            raise InputError(
                f"{table.where('pin')}: a sampled rationality needs exactly one pinned weight, "
                f"e.g. pin = {{ {features[0]} = 1.0 }}; the demonstrations only see "
                "rationality * weights")
        prior = LogNormal(table.number("log_mean", 0.0),
                          table.number("log_sd", 1.0, low=0.0, low_open=True))
        return prior, pin
    value = table.number("value", 1.0, low=0.0, low_open=True)
    if pin:
        raise InputError(f"{table.where('pin')}: pinning a weight goes with a sampled "
                         "rationality (log_mean/log_sd); with a fixed rationality the "
                         "weights' scale is already set, so drop pin")
    return value, pin


def _positive_setting(table: Table, key: str, default):
    """A positive number (fixed) or ``{ log_mean, log_sd }`` (sampled: a LogNormal prior)."""
    if key not in table:
        return default
    if isinstance(table.data[key], dict):
        sub = table.table(key)
        sub.only({"log_mean", "log_sd"})
        return LogNormal(sub.number("log_mean", 0.0),
                         sub.number("log_sd", 1.0, low=0.0, low_open=True))
    return table.number(key, low=0.0, low_open=True)


def judge_from(table: Table) -> dict:
    """``[judge]``: the rationality of whoever answered the comparisons (a number, default 1,
    or ``{ log_mean, log_sd }`` to sample it) and Davidson's tie parameter ``tie`` (the same
    forms; give it when "no preference" was a possible answer; absent: it was not)."""
    table.only({"rationality", "tie"})
    return {"rationality": _positive_setting(table, "rationality", 1.0),
            "tie": _positive_setting(table, "tie", None)}


def sampler_from(table: Table) -> dict:
    """Keyword arguments for :func:`bayesirl.sample`."""
    table.only({*SAMPLER_KEYS, "method", "target_accept", "max_depth", "dense_mass", "start"})
    out = {"chains": table.integer("chains", 4, low=1), "draws": table.integer("draws", 1000,
                                                                               low=1),
           "warmup": table.integer("warmup", 1000, low=0), "seed": table.integer("seed", 0,
                                                                                 low=0),
           "method": table.string("method", "nuts", choices=("nuts", "random-walk")),
           "max_depth": table.integer("max_depth", 10, low=1),
           "dense_mass": table.boolean("dense_mass", False)}
    if "start" in table:  # absent unless given, so earlier runs' records are unchanged
        out["start"] = table.string("start", "uniform", choices=("uniform", "pathfinder"))
    if "target_accept" in table:
        out["target_accept"] = table.number("target_accept", low=0.0, high=1.0, low_open=True,
                                            high_open=True)
    return out


# [solver] keys: the BoltzmannLikelihood arguments of the same names, with their defaults.
SOLVER_KEYS = {"tol": DEFAULT_TOL, "gradient_rtol": ADJOINT_RTOL,
               "max_newton_steps": MAX_NEWTON_STEPS,
               "max_linear_iterations": MAX_LINEAR_ITERATIONS}
# Caps on the iteration limits: beyond these a solve would run for hours, not converge.
_MOST = {"max_newton_steps": 10_000, "max_linear_iterations": 1_000_000}


def solver_from(table: Table) -> dict:
    """Keyword arguments for :class:`bayesirl.BoltzmannLikelihood` (its numerical settings)."""
    table.only(set(SOLVER_KEYS))
    out = {"tol": table.number("tol", SOLVER_KEYS["tol"], low=0.0, high=1e-3),
           "gradient_rtol": table.number("gradient_rtol", SOLVER_KEYS["gradient_rtol"],
                                         low=0.0, high=1e-2, low_open=True)}
    for key, most in _MOST.items():
        value = table.integer(key, SOLVER_KEYS[key], low=1)
        if value > most:
            raise table.fail(key, value, f"an integer between 1 and {most}")
        out[key] = value
    return out


def report_from(table: Table) -> dict:
    """``[report]``: the credible ``level`` and the ``tolerance`` (reward units) the report's
    verdicts use; command-line ``--level`` / ``--tolerance`` override them."""
    table.only({"level", "tolerance"})
    out = {"level": table.number("level", 0.9, low=0.0, high=1.0, low_open=True,
                                 high_open=True)}
    if "tolerance" in table:
        out["tolerance"] = table.number("tolerance", low=0.0, low_open=True)
    return out
