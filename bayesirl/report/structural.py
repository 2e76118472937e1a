"""Structural identifiability: what no amount of these demonstrations can determine.

Computed from the model and the demonstrations alone, without sampling. Under a
Boltzmann-rational demonstrator (soft or optimal Q) the policy is unchanged by adding a
constant to every reward, and in the discounted model by adding a potential-based shaping term
``g E[Phi(s')|s,a] - Phi(s)`` for any ``Phi`` (Ng, Harada & Russell 1999). Only the
state-action pairs reachable from the demonstrations' start states matter. A direction ``c`` in
weight space is therefore undetermined when ``features @ c`` restricted to those pairs lies in
the span of the constant vector and (discounted model) the shaping terms. We find all such
directions at once from the SVD of the features' residual after projecting onto that span.
"""

from __future__ import annotations

from collections import deque
from typing import NamedTuple

import numpy as np

# A singular value below this fraction of the largest counts as zero (a numerical rank rule,
# common practice for floating-point data, not a statistical threshold).
RANK_RTOL = 1e-8
# Fewer demonstrated steps than this per feature is flagged as thin data (our own rule of
# thumb, documented as such; it does not make a weight unidentifiable).
MIN_STEPS_PER_FEATURE = 10
# Largest number of reachable (state, action) rows for the dense shaping projection.
MAX_DENSE_ROWS = 20_000


class Finding(NamedTuple):
    """One structural finding: the features involved, a short cause code and a sentence."""

    features: list[str]
    cause: str  # constant | collinear | shaping | unvisited | thin-data | ...
    message: str
    combination: dict[str, float]


def reachable_states(mdp, starts: np.ndarray) -> np.ndarray:
    """Sorted states reachable from ``starts`` under some sequence of actions."""
    p = mdp.transitions
    n_a = mdp.n_actions
    seen = np.zeros(mdp.n_states, dtype=bool)
    queue = deque(int(s) for s in np.unique(starts))
    seen[list(queue)] = True
    while queue:
        s = queue.popleft()
        for succ in p.indices[p.indptr[s * n_a] : p.indptr[(s + 1) * n_a]]:
            if not seen[succ]:
                seen[succ] = True
                queue.append(int(succ))
    return np.flatnonzero(seen)


def _invariance_basis(mdp, states: np.ndarray) -> np.ndarray:
    """Orthonormal basis of constant + shaping reward vectors on the reachable (s, a) rows."""
    n_a, n_r = mdp.n_actions, states.shape[0]
    rows = (states[:, None] * n_a + np.arange(n_a)).ravel()
    cols = [np.ones((rows.shape[0], 1))]
    if mdp.horizon is None and mdp.discount > 0:
        # Columns: for each reachable state u, the shaping reward of Phi = e_u.
        local = np.full(mdp.n_states, -1)
        local[states] = np.arange(n_r)
        p = mdp.transitions[rows][:, states].toarray()  # successors stay in the reachable set
        own = np.zeros((rows.shape[0], n_r))
        own[np.arange(rows.shape[0]), np.repeat(local[states], n_a)] = 1.0
        cols.append(mdp.discount * p - own)
    basis = np.hstack(cols)
    u, s, _ = np.linalg.svd(basis, full_matrices=False)
    keep = s > RANK_RTOL * s.max()
    return u[:, keep], rows


def undetermined_directions(mdp, starts) -> list[tuple[np.ndarray, str]]:
    """Unit directions ``c`` with ``features @ c`` invariant-only, each with its cause code."""
    states = reachable_states(mdp, np.asarray(starts))
    if states.shape[0] * mdp.n_actions > MAX_DENSE_ROWS:
        return _constant_only(mdp, states)
    basis, rows = _invariance_basis(mdp, states)
    phi = np.asarray(mdp.features_sa).reshape(-1, mdp.n_features)[rows]
    resid = phi - basis @ (basis.T @ phi)
    return _null_directions(resid, phi, rows, mdp)


def _constant_only(mdp, states):
    rows = (states[:, None] * mdp.n_actions + np.arange(mdp.n_actions)).ravel()
    phi = np.asarray(mdp.features_sa).reshape(-1, mdp.n_features)[rows]
    return _null_directions(phi - phi.mean(axis=0), phi, rows, mdp)


def _null_directions(resid, phi, rows, mdp):
    scale = max(np.linalg.norm(phi, 2), 1e-300)
    _, s, vt = np.linalg.svd(resid, full_matrices=True)
    s = np.concatenate([s, np.zeros(vt.shape[0] - s.shape[0])])
    out = []
    for c in sparse_basis(vt[s <= RANK_RTOL * scale]):
        values = phi @ c
        constant = np.ptp(values) <= RANK_RTOL * scale
        single = np.count_nonzero(np.abs(c) > 1e-9) == 1
        cause = ("constant" if single else "collinear") if constant else "shaping"
        out.append((c, cause))
    return out


def sparse_basis(rows: np.ndarray, tol: float = 1e-9) -> list[np.ndarray]:
    """A readable basis of the span of ``rows``: reduced row echelon form.

    Each vector then involves as few features as possible (e.g. ``mud - mud2`` and
    ``const`` rather than two dense mixtures), scaled so its largest coefficient is 1.
    """
    a = np.array(rows, dtype=float)
    k, n = a.shape
    r = 0
    for col in range(n):
        if r == k:
            break
        piv = r + int(np.argmax(np.abs(a[r:, col])))
        if abs(a[piv, col]) <= tol:
            continue
        a[[r, piv]] = a[[piv, r]]
        a[r] /= a[r, col]
        for i in range(k):
            if i != r:
                a[i] -= a[i, col] * a[r]
        r += 1
    out = []
    for v in a[:r]:
        v[np.abs(v) < tol] = 0.0
        out.append(v / np.abs(v).max())
    return out


def findings(mdp, demos) -> list[Finding]:
    """All structural findings for ``mdp`` and ``demos``, each with its cause."""
    names = mdp.feature_names
    out = []
    for c, cause in undetermined_directions(mdp, demos.start_states):
        out.append(_direction_finding(names, c, cause, mdp))
    out += _unvisited(mdp, demos, {n for f in out for n in f.features})
    steps = demos.n_steps
    if steps < MIN_STEPS_PER_FEATURE * mdp.n_features:
        out.append(Finding(list(names), "thin-data",
                           f"only {steps} demonstrated steps for {mdp.n_features} features "
                           f"(fewer than {MIN_STEPS_PER_FEATURE} per feature, our rule of "
                           "thumb): expect wide intervals", {}))
    return out


def _direction_finding(names, c, cause, mdp) -> Finding:
    involved = [n for n, x in zip(names, c, strict=True) if x != 0]
    combo = {n: float(x) for n, x in zip(names, c, strict=True) if x != 0}
    text = describe(combo)
    reason = {
        "constant": "takes the same value at every state-action pair reachable from the "
                    "demonstrations' start states (absorbing states included), and adding a "
                    "constant to every reward does not change a soft-optimal policy",
        "collinear": "is constant over the reachable state-action pairs: these features are "
                     "linearly dependent there, so only other combinations of them are "
                     "identified",
        "shaping": "is a potential-based shaping term g E[Phi(s')|s,a] - Phi(s) over the "
                   "reachable pairs, which changes no soft-optimal policy "
                   "(Ng, Harada & Russell 1999)",
    }[cause]
    return Finding(involved, cause, f"{text} {reason}; no number of demonstrations "
                   "determines it.", combo)


def _unvisited(mdp, demos, already: set[str]) -> list[Finding]:
    st = demos.steps
    visited = np.unique(st.states)
    phi = np.asarray(mdp.features_sa)
    out = []
    for i, name in enumerate(mdp.feature_names):
        if name in already:
            continue
        at_visited = phi[visited, :, i]
        if np.ptp(at_visited) == 0.0 and np.ptp(phi[..., i]) > 0.0:
            out.append(Finding([name], "unvisited",
                               f"{name} has the same value at every demonstrated state; it varies "
                               "only at states the demonstrations never visit, so only its effect "
                               "on future values informs it: expect a weakly determined weight",
                               {name: 1.0}))
    return out


def describe(combination: dict[str, float]) -> str:
    """Plain-words form of a combination, e.g. ``mud + slope`` or ``0.71 mud - 0.71 slope``."""
    items = list(combination.items())
    if len(items) == 1:
        return items[0][0]
    mags = np.array([abs(v) for _, v in items])
    equal = np.allclose(mags, mags[0], rtol=1e-6)
    parts = []
    for k, (name, v) in enumerate(items):
        coef = "" if equal or abs(v) == 1 else f"{abs(v):.2g} "
        sign = ("-" if v < 0 else "") if k == 0 else (" - " if v < 0 else " + ")
        parts.append(f"{sign}{coef}{name}")
    return "".join(parts)


def fisher_findings(likelihood, weights, rtol: float = 1e-6) -> list[Finding]:
    """Near-zero eigenvalues of the observed information at ``weights``.

    The information is the negative Hessian of the log-likelihood, taken by central
    differences of the exact gradient (2F gradient evaluations).
    """
    w = np.asarray(weights, dtype=float)
    f = w.shape[0]
    h = 1e-4 * max(1.0, float(np.abs(w).max()))
    hess = np.empty((f, f))
    for i in range(f):
        e = np.zeros(f)
        e[i] = h
        up, down = likelihood.value_and_grad(w + e)[1], likelihood.value_and_grad(w - e)[1]
        hess[i] = (up - down) / (2 * h)
    info = -0.5 * (hess + hess.T)
    vals, vecs = np.linalg.eigh(info)
    top = max(vals.max(), 1e-300)
    names = likelihood.mdp.feature_names
    out = []
    flat = vecs[:, vals <= rtol * top].T
    if flat.shape[0] == 0:
        return out
    for v in sparse_basis(flat, tol=1e-6):
        combo = {n: float(x) for n, x in zip(names, v, strict=True) if x != 0}
        # An information is >= 0; a tiny negative value is finite-difference rounding.
        lam = max(float(v @ info @ v / (v @ v)), 0.0)
        size = "zero within rounding" if lam == 0.0 else f"{lam:.2g}"
        out.append(Finding(list(combo), "flat-information",
                           f"{describe(combo)}: the Fisher information in this direction is "
                           f"{size}, below {rtol:g} of the largest eigenvalue ({top:.3g}); "
                           "the likelihood is flat along it near these weights", combo))
    return out


