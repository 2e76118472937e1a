"""Combinations of weights: which ones the data leave undetermined, and what they fix instead.

Directions come from the generalised eigenproblem ``Cov_post v = r Cov_prior v`` over the free
weights: ``r`` is the share of the prior variance the data left along ``v``. A direction with
``r >= UNDETERMINED_RATIO`` is one the data did not move, whatever its interval says (its
interval is the prior's). Each is shown as a short rounded combination of named features, and
every number printed beside it is computed for that rounded combination.

Weights that take part in an undetermined combination of two or more features form a *group*
(``mud`` and ``wet`` when they always occur together). Within a group the data may still
determine other combinations (``mud + wet``); :func:`identified_groups` finds them from the same
eigenproblem restricted to the group, so the report can say plainly "mud + wet = -1.9
[-2.3, -1.5]; mud and wet separately: not identified by these data".
"""

from __future__ import annotations

import numpy as np
from scipy.linalg import eigh

from bayesirl.report import verdicts
from bayesirl.report.structural import describe

# A direction whose posterior variance is at least this fraction of its prior variance (that
# is, contraction <= 0.1) is reported as undetermined (our own cut-off, common practice for
# "the data did not move it").
UNDETERMINED_RATIO = 0.9
# A feature takes part in a direction when its coefficient is at least this share of the
# largest (smaller ones are rounding noise of the estimated eigenvector).
MEMBER_SHARE = 0.2
# Structural causes that make a combination invisible to any amount of such data.
STRUCTURAL = ("constant", "collinear", "shaping")


def _eig(draws: np.ndarray, prior_var: np.ndarray):
    cov_post = np.atleast_2d(np.cov(draws, rowvar=False))
    return eigh(cov_post, np.diag(prior_var))


def _ratio(values: np.ndarray, combo: dict, prior_var: dict) -> float:
    denom = sum(c * c * prior_var[n] for n, c in combo.items())
    return float(np.var(values, ddof=1) / denom) if denom > 0 else float("nan")


def directions(draws, names, prior_var, level: float = 0.9, tolerance=None) -> list[dict]:
    """Eigen-directions as short rounded combinations, most undetermined first.

    Parameters
    ----------
    draws : array (N, F)
        Draws of the free weights.
    names : sequence of str
        Their feature names.
    prior_var : array (F,)
        Their prior variances.
    level : float
    tolerance : float, optional

    Returns
    -------
    list of dict
        ``combination``, ``variance_ratio`` (of the rounded combination), ``verdict``
        (``undetermined`` or a word of :data:`verdicts.WORDS`), ``median``, ``interval``,
        ``text``.
    """
    if draws.shape[1] == 0:
        return []
    ratios, vecs = _eig(draws, prior_var)
    pv = dict(zip(names, prior_var, strict=True))
    out, seen = [], set()
    for raw, v in sorted(zip(ratios, vecs.T, strict=True), key=lambda t: -t[0]):
        combo, values, r = _short(draws, names, pv, v, float(raw))
        key = tuple(sorted(combo.items()))
        if not combo or key in seen:
            continue
        seen.add(key)
        summ = verdicts.summarise(values, level, tolerance)
        text = describe(combo)
        if r >= UNDETERMINED_RATIO:
            summ["verdict"] = "undetermined"
            text = f"{text} is undetermined (the data left {r:.0%} of its prior variance)"
        else:
            lo, hi = summ["interval"]
            text = (f"{text} = {verdicts.fmt(summ['median'])} [{verdicts.fmt(lo)}, "
                    f"{verdicts.fmt(hi)}] ({summ['verdict']})")
        out.append({"combination": combo, "variance_ratio": r, **summ, "text": text})
    return out


def _short(draws, names, pv: dict, v: np.ndarray, raw: float):
    """The shortest rounded form of direction ``v`` that keeps its meaning.

    Three terms read best, but dropping a term can break a combination the data determine
    (``mud + wet`` without ``wet`` is a weight the data do not see alone): a short form is
    kept only if its posterior sd is at most twice that of the exact direction (scaled the
    same way); otherwise more terms are shown, up to every term above the rounding cut-off.
    """
    exact = draws @ (v / v[np.argmax(np.abs(v) >= 0.95 * np.abs(v).max())])
    limit = 4.0 * float(np.var(exact, ddof=1))
    for terms in range(min(3, len(names)), len(names) + 1):
        combo = verdicts.round_combination(v, names, max_terms=terms)
        if not combo:
            return combo, None, float("nan")
        values = verdicts.combination_values(draws, names, combo)
        if raw >= UNDETERMINED_RATIO or np.var(values, ddof=1) <= limit:
            break
    return combo, values, _ratio(values, combo, pv)


def _groups(directions_: list[dict], structural: list[dict], names) -> list[list[str]]:
    """Features tied together by undetermined or structural combinations (merged if they
    share a feature), in feature order."""
    sets = [set(d["combination"]) for d in directions_ if d["verdict"] == "undetermined"]
    sets += [set(f["combination"]) & set(names) for f in structural
             if f.get("cause") in STRUCTURAL and f.get("combination")]
    merged: list[set] = []
    for s in filter(None, sets):
        overlapping = [m for m in merged if m & s]
        for m in overlapping:
            merged.remove(m)
            s = s | m
        merged.append(s)
    order = {n: k for k, n in enumerate(names)}
    return sorted((sorted(m, key=order.get) for m in merged), key=lambda g: order[g[0]])


def identified_groups(draws, names, prior_var, directions_, structural, level: float = 0.9,
                      tolerance=None) -> list[dict]:
    """Per group of entangled weights: the combinations the data do determine.

    Returns
    -------
    list of dict
        ``features`` (the group), ``identified``: list of ``{combination, median, interval,
        verdict, variance_ratio}`` (empty when nothing in the group is determined, e.g. a
        single constant feature) and ``text``, the plain sentence.
    """
    out = []
    pv = dict(zip(names, prior_var, strict=True))
    for group in _groups(directions_, structural, names):
        idx = [list(names).index(n) for n in group]
        found = []
        if len(group) > 1:
            ratios, vecs = _eig(draws[:, idx], np.asarray(prior_var)[idx])
            for r, v in sorted(zip(ratios, vecs.T, strict=True), key=lambda t: t[0]):
                if r >= UNDETERMINED_RATIO:
                    break
                combo = verdicts.round_combination(v, group)
                values = verdicts.combination_values(draws, names, combo)
                found.append({"combination": combo, "variance_ratio": _ratio(values, combo, pv),
                              **verdicts.summarise(values, level, tolerance)})
        out.append({"features": group, "identified": found, "text": _sentence(group, found)})
    return out


def _sentence(group: list[str], found: list[dict]) -> str:
    parts = []
    for f in found:
        lo, hi = f["interval"]
        word = "" if f["verdict"] == verdicts.DETERMINED else f" ({f['verdict']})"
        parts.append(f"{describe(f['combination'])} = {verdicts.fmt(f['median'])} "
                     f"[{verdicts.fmt(lo)}, {verdicts.fmt(hi)}]{word}")
    names = " and ".join([", ".join(group[:-1]), group[-1]]) if len(group) > 1 else group[0]
    tail = (f"{names} separately: not identified by these data" if len(group) > 1
            else f"{names}: not identified by these data")
    return "; ".join(parts + [tail])
