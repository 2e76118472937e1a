"""Boundary checks for model inputs; each failure names what is wrong, where, and the value."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from bayesirl.errors import InputError
from bayesirl.resources import MAX_HORIZON

ROW_SUM_TOL = 1e-8
# Features beyond this magnitude make weight x feature rewards meaningless at the priors'
# scales and swamp the other features in the structural analysis's rank decisions.
FEATURE_LIMIT = 1e6
NUMERIC = "biuf"  # bool, signed and unsigned integers, floats


def _numeric(arr, what: str) -> None:
    """Refuse arrays of strings, objects, dates or complex numbers before converting them."""
    dtype = getattr(arr, "dtype", None)
    if dtype is None:
        try:
            dtype = np.asarray(arr).dtype
        except (TypeError, ValueError) as err:
            raise InputError(f"{what}: not a numeric array ({err})") from None
    if dtype.kind not in NUMERIC:
        raise InputError(f"{what}: array of dtype {dtype}; expected real numbers")


def row_tolerance(dtype) -> float:
    """Row-sum tolerance for probabilities stored as ``dtype``.

    Each entry is rounded by at most half an ulp relative, so a row of non-negative entries
    that sums to 1 exactly is off by at most ``eps / 2`` after storage; ``4 eps`` leaves room.
    """
    if np.dtype(dtype).kind == "f":
        return max(ROW_SUM_TOL, 4.0 * float(np.finfo(dtype).eps))
    return ROW_SUM_TOL


def csr_arrays(data, indices, indptr, n_cols: int, what: str = "transitions") -> None:
    """Check raw CSR arrays before any kernel (scipy's included) reads through them."""
    for name, arr in (("data", data), ("indices", indices), ("indptr", indptr)):
        if not isinstance(arr, np.ndarray) or arr.ndim != 1:
            raise InputError(f"{what}: {name} must be a 1-d array; got "
                             f"{getattr(arr, 'shape', type(arr).__name__)}")
    _numeric(data, f"{what}: data")
    for name, arr in (("indices", indices), ("indptr", indptr)):
        if arr.dtype.kind not in "iu":
            raise InputError(f"{what}: {name} has dtype {arr.dtype}; expected integers")
    if indptr.size == 0 or int(indptr[0]) != 0:
        first = int(indptr[0]) if indptr.size else "nothing"
        raise InputError(f"{what}: indptr must start at 0; starts at {first}")
    steps = np.diff(indptr.astype(np.int64))
    if (steps < 0).any():
        k = int(np.flatnonzero(steps < 0)[0])
        raise InputError(f"{what}: indptr decreases at position {k + 1} "
                         f"({int(indptr[k])} -> {int(indptr[k + 1])}); it must not decrease")
    if int(indptr[-1]) != indices.size or indices.size != data.size:
        raise InputError(f"{what}: indptr ends at {int(indptr[-1])} but there are "
                         f"{indices.size} indices and {data.size} values; all three must agree")
    bad = (indices < 0) | (indices >= n_cols)
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        row = int(np.searchsorted(indptr, k, side="right") - 1)
        raise InputError(f"{what}: column index {int(indices[k])} (entry {k}, row {row}) is "
                         f"outside 0..{n_cols - 1}")


def _as_csr(transitions) -> tuple[sp.csr_matrix, int, int]:
    """A float64 CSR copy of sparse ``(S*A, S)`` or dense ``(S, A, S)`` transitions."""
    if sp.issparse(transitions):
        if transitions.format == "csr":
            csr_arrays(transitions.data, transitions.indices, transitions.indptr,
                       transitions.shape[1])
            if transitions.indptr.size != transitions.shape[0] + 1:
                raise InputError(f"transitions: indptr has {transitions.indptr.size} entries "
                                 f"for {transitions.shape[0]} rows; expected rows + 1")
        _numeric(transitions, "transitions")
        m = sp.csr_matrix(transitions, dtype=np.float64, copy=True)  # never alias the caller
        n_rows, n_s = m.shape
        if n_s == 0 or n_rows % n_s != 0:
            raise InputError(
                f"transitions: sparse matrix must have shape (S*A, S); got {m.shape}, "
                f"and {n_rows} rows is not a multiple of {n_s} states"
            )
        return m, n_s, n_rows // n_s
    _numeric(transitions, "transitions")
    try:
        dense = np.asarray(transitions, dtype=np.float64)
    except (TypeError, ValueError) as err:
        raise InputError(f"transitions: not a numeric array ({err})") from None
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
    return sp.csr_matrix(dense.reshape(n_s * n_a, n_s)), n_s, n_a


def transition_matrix(transitions) -> tuple[sp.csr_matrix, int, int]:
    """Return the canonical ``(S*A, S)`` CSR matrix, ``S`` and ``A`` after checking it."""
    dtype = np.dtype(getattr(transitions, "dtype", np.float64))
    m, n_s, n_a = _as_csr(transitions)
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
    tol = row_tolerance(dtype)
    off = np.abs(sums - 1.0) > tol
    if off.any():
        row = int(np.flatnonzero(off)[0])
        raise InputError(
            f"transitions: row for (s={row // n_a}, a={row % n_a}) sums to {float(sums[row])!r}, "
            f"expected 1 within {tol:g} ({int(off.sum())} row(s) off in total)"
        )
    if tol > ROW_SUM_TOL:  # stored in lower precision: round to the nearest stochastic rows
        m.data /= np.repeat(sums, np.diff(m.indptr))
    return m, n_s, n_a


def feature_array(features, n_s: int, n_a: int) -> np.ndarray:
    """Check ``(S, F)`` or ``(S, A, F)`` features: shape and finiteness."""
    _numeric(features, "features")
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
    big = np.abs(f) > FEATURE_LIMIT
    if big.any():
        where = tuple(int(i) for i in np.argwhere(big)[0])
        label = "(s, f)" if f.ndim == 2 else "(s, a, f)"
        raise InputError(
            f"features: entry {label} = {where} is {float(f[where])!r}, beyond +-{FEATURE_LIMIT:g};"
            " rescale that feature (e.g. to thousands or millions of its unit) so its values "
            "are of order 1 to 100: weights are read on the features' scale")
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
        if horizon > MAX_HORIZON:
            raise InputError(f"horizon: {horizon} is more than the limit of {MAX_HORIZON} "
                             "steps; for long tasks use an infinite horizon with a discount")
    try:
        if isinstance(discount, str | bytes | bool):
            raise TypeError
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
    _numeric(p, what)
    try:
        d = np.array(p, dtype=np.float64)
    except (TypeError, ValueError) as err:
        raise InputError(f"{what}: not a numeric array ({err})") from None
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
