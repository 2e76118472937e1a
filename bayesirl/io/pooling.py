"""The ``[pooling]`` table of a problem file: how several demonstrators share a reward.

::

    [pooling]
    kind = "partial"        # "pooled" (default), "separate" or "partial"
    spread_scale = 1.0      # partial: half-normal prior scale of the per-feature spread
                            #          (a number or one per feature)
    # spread = 0.5          # partial: a fixed spread instead of a prior (>= 0)
    # rationality_spread_scale = 0.5  # partial: each demonstrator's own rationality around
    #                                 # the population's, log-scale spread half-normal (needs
    #                                 # a sampled rationality and a pinned weight)
    # rationality_spread = 0.3        # ... or that spread fixed (>= 0)

Demonstrators are named in the demonstration file (CSV column or JSON Lines key
``demonstrator``); ``separate`` and ``partial`` need every episode named.
"""

from __future__ import annotations

import numpy as np

from bayesirl.errors import InputError
from bayesirl.io.fields import Table
from bayesirl.io.settings import _per_feature
from bayesirl.posterior.groups import DEFAULT_SPREAD, KINDS, Pooling
from bayesirl.priors import HalfNormal

KEYS = {"kind", "spread_scale", "spread", "rationality_spread_scale", "rationality_spread"}


def pooling_from(table: Table, features: list[str]) -> Pooling:
    """The pooling choice of ``[pooling]`` (an absent table: pooled)."""
    table.only(KEYS)
    kind = table.string("kind", "pooled", choices=KINDS)
    given = [k for k in ("spread_scale", "spread") if k in table]
    if given and kind != "partial":
        raise InputError(f"{table.where(given[0])}: only partial pooling has a spread; "
                         f"kind is {kind!r}")
    if len(given) == 2:
        raise InputError(f"{table.where('spread')}: give either spread_scale (a prior) or "
                         "spread (a fixed value), not both")
    own = _rationality_spread(table, kind)
    if "spread" in table:
        return Pooling(kind, table.number("spread", low=0.0), own)
    scale = _per_feature(table, "spread_scale", DEFAULT_SPREAD, features)
    if np.any(np.asarray(scale) <= 0):
        raise table.fail("spread_scale", table.data["spread_scale"],
                         "a positive number (or one per feature)")
    return Pooling(kind, HalfNormal(scale), own)


def _rationality_spread(table: Table, kind: str):
    """None (one rationality for all), a HalfNormal prior or a fixed number."""
    given = [k for k in ("rationality_spread_scale", "rationality_spread") if k in table]
    if not given:
        return None
    if kind != "partial":
        raise InputError(f"{table.where(given[0])}: only partial pooling has per-demonstrator "
                         f"rationality; kind is {kind!r}")
    if len(given) == 2:
        raise InputError(f"{table.where('rationality_spread')}: give either "
                         "rationality_spread_scale (a prior) or rationality_spread (a fixed "
                         "value), not both")
    if "rationality_spread" in table:
        return table.number("rationality_spread", low=0.0)
    return HalfNormal(table.number("rationality_spread_scale", low=0.0, low_open=True))
