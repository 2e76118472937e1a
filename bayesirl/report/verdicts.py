"""Verdict words: what the data determine about a weight or a combination of weights.

A verdict is read from the credible interval alone, never from how far the posterior moved
away from the prior (that is the *contraction* column, which a broad prior inflates: with a
prior sd of 5, an interval of [-2.1, 0.5] is a contraction of 0.97 and still leaves the sign
open). Two questions decide it:

1. Is the sign settled? An interval that contains zero never reads as determined.
2. Is the size known to a useful precision? The scale is the weight's own magnitude by
   default: the interval's ends must lie within a factor of :data:`FACTOR` (2) of each
   other, i.e. its half-width is at most a third of its midpoint's distance from zero. A
   linear reward's weights act through their ratios (the overall scale trades off against
   the rationality), so a relative precision is the natural default; the factor 2 is our own
   choice, not a standard. A user who knows what size matters in reward units states a *tolerance*
   instead: the half-width must then be at most the tolerance, and an interval inside
   ``[-tolerance, tolerance]`` reads as negligible.

:data:`WORDS` defines each word once; the HTML page and the README print these definitions.
"""

from __future__ import annotations

import numpy as np

# Printed on every report, text and HTML (kept here, with the words, so the renderers and
# the report object read it from one module that imports neither).
CAUTION = (
    "These intervals are conditional on the features, the dynamics and the Boltzmann-rational "
    "demonstrator model given to the tool. Where they inform a behaviour that can hurt someone "
    "(a robot, a vehicle), they are not a safety certification: defer to the applicable "
    "standards and to qualified review."
)

# The interval's ends within this factor of each other: "determined" (our choice, see the
# module doc).
FACTOR = 2.0

DETERMINED, SIGN_KNOWN, SIGN_OPEN = "determined", "sign known", "sign open"
NEGLIGIBLE, COMBINATION_ONLY = "negligible", "only in combination"
NOT_IDENTIFIED, PINNED = "not identified", "pinned by assumption"

WORDS = {
    DETERMINED: "the interval excludes zero and is narrow: its ends lie within a factor of 2 "
                "of each other or, with a stated tolerance, its half-width is at most the "
                "tolerance",
    SIGN_KNOWN: "the interval excludes zero, so the sign is settled, but it is too wide to "
                "call the size determined",
    SIGN_OPEN: "the interval contains zero: the data do not say whether the feature is "
               "liked or avoided",
    NEGLIGIBLE: "only with a stated tolerance: the whole interval lies within plus or minus "
                "the tolerance, so the weight is too small to matter at that scale",
    COMBINATION_ONLY: "the weight takes part in a combination the data leave undetermined; "
                      "the report names the combination of it that they do determine",
    NOT_IDENTIFIED: "the data left at least 90% of the prior variance of this weight (or it "
                    "cannot be learned from such demonstrations at all): its interval is the "
                    "prior's",
    PINNED: "fixed by the problem (a pinned weight), not learned",
}


def check_tolerance(tolerance) -> float | None:
    """A positive finite tolerance in reward units, or None."""
    if tolerance is None:
        return None
    from bayesirl.errors import InputError

    try:
        t = float(tolerance)
    except (TypeError, ValueError):
        raise InputError(f"tolerance: expected a positive number; got {tolerance!r}") from None
    if not np.isfinite(t) or t <= 0:
        raise InputError(f"tolerance: expected a positive number; got {tolerance!r}")
    return t


def value_verdict(lo: float, hi: float, tolerance: float | None = None) -> str:
    """Verdict word of a credible interval ``[lo, hi]`` (see the module doc).

    Parameters
    ----------
    lo, hi : float
        The interval's ends.
    tolerance : float, optional
        Precision that matters, in the units of the quantity.

    Returns
    -------
    str
        One of ``determined``, ``sign known``, ``sign open``, ``negligible``.
    """
    if not lo > 0 and not hi < 0:  # contains zero (or touches it): never determined
        if tolerance is not None and -tolerance <= lo and hi <= tolerance:
            return NEGLIGIBLE
        return SIGN_OPEN
    if tolerance is not None:
        return DETERMINED if 0.5 * (hi - lo) <= tolerance else SIGN_KNOWN
    small, large = sorted((abs(lo), abs(hi)))
    return DETERMINED if large <= FACTOR * small else SIGN_KNOWN


def round_combination(coefs, names, max_terms: int = 3, drop: float = 0.2) -> dict:
    """A short readable combination: largest coefficient 1, one decimal, few terms.

    Coefficients below ``drop`` of the largest are left out and at most ``max_terms`` are
    kept; the caller computes the interval of the rounded combination itself, so the numbers
    shown always belong to the combination shown.
    """
    v = np.asarray(coefs, dtype=float)
    if not np.any(v):
        return {}
    # The first of the near-largest coefficients is scaled to +1, so that "mud - wet" and
    # "-mud + wet" do not flip with the estimation noise of the eigenvector.
    k = int(np.flatnonzero(np.abs(v) >= 0.95 * np.abs(v).max())[0])
    v = v / v[k]
    keep = [i for i in np.argsort(-np.abs(v), kind="stable")[:max_terms] if abs(v[i]) >= drop]
    out = {}
    for i in sorted(keep):
        c = round(float(v[i]), 1)
        if c != 0:
            out[names[i]] = c
    # Nearly equal sizes read better as equal ("mud + wet", not "mud + 0.9 wet").
    mags = np.array([abs(c) for c in out.values()])
    if mags.size > 1 and mags.min() >= 0.85 * mags.max():
        out = {n: float(np.sign(c)) for n, c in out.items()}
    return out


def combination_values(draws: np.ndarray, names, combo: dict) -> np.ndarray:
    """Per-draw value of ``sum c_i w_i`` for a combination ``{name: c}``."""
    idx = [list(names).index(n) for n in combo]
    return draws[:, idx] @ np.array(list(combo.values()))


def summarise(values: np.ndarray, level: float, tolerance: float | None = None) -> dict:
    """Median, central interval at ``level`` and verdict word of per-draw values."""
    lo, hi = (float(np.quantile(values, q)) for q in (0.5 * (1 - level), 0.5 * (1 + level)))
    return {"median": float(np.median(values)), "interval": [lo, hi],
            "verdict": value_verdict(lo, hi, tolerance)}


def fmt(x: float) -> str:
    """A number for a sentence: three significant digits."""
    return f"{x:.3g}"
