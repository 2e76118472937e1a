"""Boundary checks for model inputs; each failure names what is wrong, where, and the value."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from bayesirl.errors import InputError

ROW_SUM_TOL = 1e-8


def transition_matrix(transitions) -> tuple[sp.csr_matrix, int, int]:
    """Return the canonical ``(S*A, S)`` CSR matrix, ``S`` and ``A`` after checking it."""
    if sp.issparse(transitions):
        m = sp.csr_matrix(transitions, dtype=np.float64, copy=True)  # never alias the caller
        n_rows, n_s = m.shape
        if n_s == 0 or n_rows % n_s != 0:
            raise InputError(
                f"transitions: sparse matrix must have shape (S*A, S); got {m.shape}, "
                f"and {n_rows} rows is not a multiple of {n_s} states"
            )
        n_a = n_rows // n_s
    else:
        dense = np.asarray(transitions, dtype=np.float64)
        if dense.ndim != 3 or dense.shape[0] != dense.shape[2] or dense.shape[0] == 0:
            raise InputError(
                f"transitions: dense array must have shape (S, A, S); got {dense.shape}"
            )
        n_s, n_a = dense.shape[0], dense.shape[1]
        bad = ~np.isfinite(dense) | (dense < 0)
        if bad.any():
            s, a, s2 = (int(i) for i in np.argwhere(bad)[0])
            raise InputError(
                f"transitions: P(s'={s2} | s={s}, a={a}) = {dense[s, a, s2]!r}; "
                "probabilities must be finite and non-negative"
            )
        m = sp.csr_matrix(dense.reshape(n_s * n_a, n_s))
    if n_a == 0:
        raise InputError("transitions: there must be at least one action")
    m.sum_duplicates()
    bad = ~np.isfinite(m.data) | (m.data < 0)
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        row = int(np.searchsorted(m.indptr, k, side="right") - 1)
        raise InputError(
            f"transitions: P(s'={int(m.indices[k])} | s={row // n_a}, a={row % n_a}) = "
            f"{float(m.data[k])!r}; probabilities must be finite and non-negative"
        )
    m.eliminate_zeros()
    m.sort_indices()
    sums = np.asarray(m.sum(axis=1)).ravel()
    off = np.abs(sums - 1.0) > ROW_SUM_TOL
    if off.any():
        row = int(np.flatnonzero(off)[0])
        raise InputError(
            f"transitions: row for (s={row // n_a}, a={row % n_a}) sums to {float(sums[row])!r}, "
            f"expected 1 within {ROW_SUM_TOL:g} ({int(off.sum())} row(s) off in total)"
        )
    return m, n_s, n_a


def feature_array(features, n_s: int, n_a: int) -> np.ndarray:
    """Check ``(S, F)`` or ``(S, A, F)`` features: shape and finiteness."""
    try:
        f = np.array(features, dtype=np.float64)  # a copy: later writes can't leak in
    except (TypeError, ValueError) as err:
        raise InputError(f"features: not a numeric array ({err})") from None
    ok = (f.ndim == 2 and f.shape[0] == n_s) or (f.ndim == 3 and f.shape[:2] == (n_s, n_a))
    if not ok or f.shape[-1] == 0:
        raise InputError(
            f"features: expected shape ({n_s}, F) or ({n_s}, {n_a}, F) with F >= 1; "
            f"got {f.shape}"
        )
    bad = ~np.isfinite(f)
    if bad.any():
        where = tuple(int(i) for i in np.argwhere(bad)[0])
        label = "(s, f)" if f.ndim == 2 else "(s, a, f)"
        value = float(f[where])
        raise InputError(f"features: entry {label} = {where} is {value!r}; must be finite")
    return f


def horizon_and_discount(discount, horizon) -> tuple[float, int | None]:
    """Check the discount (``[0, 1)`` when infinite, ``[0, 1]`` with a horizon) and horizon."""
    if horizon is not None:
        whole_float = isinstance(horizon, float | np.floating) and float(horizon).is_integer()
        ok = isinstance(horizon, int | np.integer) or whole_float
        ok = ok and not isinstance(horizon, bool)
        if not ok or horizon <= 0:
            raise InputError(f"horizon: must be a positive integer or None; got {horizon!r}")
        horizon = int(horizon)
    try:
        g = float(discount)
    except (TypeError, ValueError):
        raise InputError(f"discount: must be a number; got {discount!r}") from None
    upper_ok = g <= 1.0 if horizon is not None else g < 1.0
    if not np.isfinite(g) or g < 0.0 or not upper_ok:
        span = "[0, 1]" if horizon is not None else "[0, 1) for an infinite horizon"
        raise InputError(f"discount: must lie in {span}; got {discount!r}")
    return g, horizon


def distribution(p, n_s: int, what: str) -> np.ndarray:
    """Check a probability vector over states."""
    d = np.array(p, dtype=np.float64)
    if d.shape != (n_s,):
        raise InputError(f"{what}: expected a distribution of shape ({n_s},); got {d.shape}")
    bad = ~np.isfinite(d) | (d < 0)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(
            f"{what}: entry {i} is {float(d[i])!r}; must be finite and non-negative"
        )
    if abs(d.sum() - 1.0) > ROW_SUM_TOL:
        raise InputError(
            f"{what}: sums to {float(d.sum())!r}, expected 1 within {ROW_SUM_TOL:g}"
        )
    return d


def names(feature_names, n_f: int) -> tuple[str, ...]:
    """Default or checked feature names: ``n_f`` distinct non-empty strings."""
    if feature_names is None:
        return tuple(f"f{i}" for i in range(n_f))
    out = tuple(str(n) for n in feature_names)
    if len(out) != n_f:
        raise InputError(f"feature_names: {len(out)} names given for {n_f} features")
    seen: set[str] = set()
    for i, n in enumerate(out):
        if not n.strip():
            raise InputError(f"feature_names: name {i} is empty")
        if n in seen:
            raise InputError(f"feature_names: {n!r} appears more than once")
        seen.add(n)
    return out


def grid_shape(shape, n_s: int) -> tuple[int, int] | None:
    """Check an optional ``(rows, cols)`` map shape covering at most ``n_s`` states."""
    if shape is None:
        return None
    try:
        rows, cols = (int(x) for x in shape)
    except (TypeError, ValueError):
        raise InputError(f"grid_shape: expected (rows, cols); got {shape!r}") from None
    if rows <= 0 or cols <= 0 or rows * cols > n_s:
        raise InputError(
            f"grid_shape: {rows} x {cols} cells must be positive and fit in {n_s} states"
        )
    return rows, cols
