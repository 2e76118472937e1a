"""Solves of ``(I - g M) x = b`` and ``(I - g M^T) x = b`` for a policy matrix ``M``.

GMRES from a warm start, preconditioned by a sparse LU of an earlier ``I - g M``.
Consecutive calls (Newton steps, nearby weights along a sampler path) see policies that
differ by little, so a stale factorisation is an excellent preconditioner. When to factor
afresh is decided by a deterministic cost model (counts of non-zeros and iterations, never
clock time, so the same seed always takes the same path): refactor when the predicted cost
of iterating with the stale factors exceeds that of a new factorisation. Small problems end
up factoring at every solve (direct solves), slow-mixing large ones reuse factors, and
fast-mixing random MDPs, whose factors would fill in densely (bounded beforehand by the
reverse Cuthill-McKee envelope), run plain GMRES, which converges quickly there.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.sparse.csgraph import reverse_cuthill_mckee

from bayesirl.errors import SolverError
from bayesirl.solver.krylov import gmres

# GMRES gets this many mat-vecs before a factorisation is considered (when none exists).
FACTOR_AFTER = 30
# Largest envelope (a bound on LU fill with a banded ordering) we accept: 6e7 entries,
# about 0.5 GB of float64, keeps a 10^5-state problem within a few GB.
_MAX_ENVELOPE = 6e7
# Envelopes this small are factored at the first solve (factorising is then cheap).
_SMALL_ENVELOPE = 5e4
# Cost model in nanoseconds, calibrated once on a 2-core x86-64 machine (bench/engine.py
# problems): mat-vec per non-zero, triangular solve per factor non-zero, factorisation
# ~ c * nnz(LU)^1.5, Arnoldi per vector entry and basis vector, fixed Python overheads.
_NS_MATVEC, _NS_SOLVE, _NS_FACTOR, _NS_ARNOLDI = 1.5, 2.0, 0.3, 4.0
_NS_ITERATION, _NS_FACTOR_CALL = 30e3, 100e3


class Preconditioner:
    """Per-chain store of the last LU factorisation of ``I - g M`` and its cost estimates."""

    def __init__(self) -> None:
        self.lu = None
        self.allowed: bool | None = None
        self.small = False
        self.stale_iterations: float | None = None  # running mean with stale factors
        self.factorisations = 0
        # What was factored, so a saved sampler state can rebuild the same factors.
        self.source: tuple[sp.csr_matrix, float] | None = None

    def decide(self, matrix: sp.csr_matrix) -> bool:
        """Decide once, from the sparsity pattern, whether factorising is affordable."""
        if self.allowed is None:
            envelope = _envelope(matrix)
            self.allowed = envelope <= _MAX_ENVELOPE
            self.small = envelope <= _SMALL_ENVELOPE
        return self.allowed

    def refresh(self, matrix: sp.csr_matrix, discount: float) -> None:
        """Factor ``I - g M`` for the current ``M``."""
        n = matrix.shape[0]
        system = (sp.identity(n, format="csr") - discount * matrix).tocsc()
        # I - gM is row diagonally dominant, so diagonal pivots are stable and keep the fill
        # of the symmetric ordering.
        self.lu = spla.splu(system, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0)
        self.factorisations += 1
        self.source = (matrix, float(discount))
        # The running mean described the old factors. Keeping it made the rule self-
        # perpetuating: fresh factors are never "stale", so the mean was never updated and
        # one early high count (a cold start) refactored at every later solve (measured on
        # the 30x30 grid at 0.99: 3.5 factorisations per gradient). Forget it; the next
        # solve iterates with these factors and records what they cost.
        self.stale_iterations = None

    def copy(self) -> Preconditioner:
        """A shallow copy: the factors are replaced on refresh, never changed in place."""
        out = Preconditioner()
        out.__dict__.update(self.__dict__)
        return out

    def to_arrays(self) -> dict[str, np.ndarray]:
        """The state as arrays; the factors as the matrix they came from (see from_arrays)."""
        nan = float("nan")
        flags = [nan if self.allowed is None else float(self.allowed), float(self.small),
                 nan if self.stale_iterations is None else float(self.stale_iterations),
                 float(self.factorisations)]
        out = {"flags": np.array(flags)}
        if self.source is not None:
            matrix, discount = self.source
            out.update(indptr=matrix.indptr, indices=matrix.indices, data=matrix.data,
                       shape=np.array(matrix.shape), discount=np.array(discount))
        return out

    @classmethod
    def from_arrays(cls, arrays: dict[str, np.ndarray]) -> Preconditioner:
        """Inverse of :meth:`to_arrays`; refactoring the same matrix gives the same factors
        (SuperLU is deterministic), so solves continue bit for bit."""
        out = cls()
        allowed, small, stale, count = arrays["flags"].tolist()
        if "indptr" in arrays:
            matrix = sp.csr_matrix((arrays["data"], arrays["indices"], arrays["indptr"]),
                                   shape=tuple(int(n) for n in arrays["shape"]))
            out.refresh(matrix, float(arrays["discount"]))
        out.allowed = None if np.isnan(allowed) else bool(allowed)
        out.small = bool(small)
        out.stale_iterations = None if np.isnan(stale) else stale
        out.factorisations = int(count)
        return out

    def fresh_is_cheaper(self, matrix: sp.csr_matrix) -> bool:
        """Predicted: new factors + ~2 iterations beat iterating with the stale ones."""
        if self.lu is None:
            return self.small
        if self.stale_iterations is None:
            return False
        n = matrix.shape[0]
        lu_nnz = self.lu.L.nnz + self.lu.U.nnz
        per_iteration = (_NS_MATVEC * matrix.nnz + _NS_SOLVE * lu_nnz
                         + _NS_ARNOLDI * n * 10 + _NS_ITERATION)
        factor = _NS_FACTOR * lu_nnz**1.5 + _NS_FACTOR_CALL
        return factor < (self.stale_iterations - 2.0) * per_iteration

    def record_stale(self, iterations: int) -> None:
        """Update the running mean of iterations needed with stale factors."""
        prev = self.stale_iterations
        self.stale_iterations = iterations if prev is None else 0.7 * prev + 0.3 * iterations


def _envelope(matrix: sp.csr_matrix) -> float:
    pattern = (abs(matrix) + abs(matrix.T) + sp.identity(matrix.shape[0])).tocsr()
    perm = reverse_cuthill_mckee(pattern, symmetric_mode=True)
    permuted = pattern[perm][:, perm].tocsr()
    rows = np.repeat(np.arange(permuted.shape[0]), np.diff(permuted.indptr))
    first = np.full(permuted.shape[0], np.iinfo(np.int64).max)
    np.minimum.at(first, rows, permuted.indices)
    return float(2 * np.sum(np.arange(permuted.shape[0]) - first))


def solve_discounted(
    matrix: sp.csr_matrix,
    discount: float,
    rhs: np.ndarray,
    x0: np.ndarray | None = None,
    rtol: float = 1e-11,
    transpose: bool = False,
    precond: Preconditioner | None = None,
    maxiter: int = 3000,
    what: str = "linear system",
) -> tuple[np.ndarray, int]:
    """Solve ``(I - discount * M) x = rhs`` (``M.T`` with ``transpose``) to relative ``rtol``.

    Returns the solution and the number of mat-vecs used; raises :class:`SolverError` when
    the residual cannot be brought below ``rtol * ||rhs||``.
    """
    n = rhs.shape[0]
    b_norm = float(np.linalg.norm(rhs))
    if b_norm == 0.0:
        return np.zeros(n), 0
    op_m = matrix.T if transpose else matrix  # CSC view: no copy

    def matvec(x):
        return x - discount * (op_m @ x)

    target = rtol * b_norm
    x = np.zeros(n) if x0 is None else np.asarray(x0, dtype=float)
    if precond is not None and precond.decide(matrix):
        x, res, used = _with_factors(precond, matrix, discount, matvec, rhs, x, target,
                                     transpose, maxiter)
    else:
        x, res, used = _deflated(matvec, discount, rhs, x, target, transpose, maxiter)
    if not np.isfinite(res) or res > target:
        raise SolverError(
            f"{what}: GMRES stopped at relative residual {res / b_norm:.3e} "
            f"(wanted {rtol:.1e}) after {used} mat-vecs"
        )
    return x, used


def _with_factors(precond, matrix, discount, matvec, rhs, x, target, transpose, maxiter):
    fresh = precond.fresh_is_cheaper(matrix)
    if fresh:
        precond.refresh(matrix, discount)
    pre = _apply(precond, transpose) if precond.lu is not None else None
    x, res, used, res0 = gmres(matvec, rhs, x, target, pre, maxiter=FACTOR_AFTER)
    if pre is not None and not fresh:
        precond.record_stale(used)
    if res > target:
        # Slow: factor afresh unless the observed rate says GMRES is nearly done.
        if pre is None and _finishes_soon(res0, res, target, used):
            x, res, k, _ = gmres(matvec, rhs, x, target, maxiter=maxiter)
        else:
            precond.refresh(matrix, discount)
            x, res, k, _ = gmres(matvec, rhs, x, target, _apply(precond, transpose),
                                 maxiter=maxiter)
        used += k
    return x, res, used


def _deflated(matvec, discount, rhs, x, target, transpose, maxiter):
    """GMRES with the eigenvalue ``1 - g`` of ``I - g M`` moved to 1 (rank-one deflation).

    ``M`` is row-stochastic, so ``M 1 = 1`` and ``A = I - g M`` has the isolated eigenvalue
    ``1 - g`` (0.05 at g = 0.95), which costs GMRES several iterations. By Brauer's theorem
    ``A + a (1-g) 1 u^T`` keeps every other eigenvalue of ``A`` and sends that one to
    ``(1-g)(1 + a u^T 1)``; with ``u = 1/n`` and ``a = g/(1-g)`` it becomes 1. That matrix is
    ``A R`` with the right preconditioner ``R = I + a 1 u^T``: solve ``A R y = b``, then
    ``x = R y`` (the residual is the true one). Measured on random MDPs at g = 0.95: 32
    instead of 37 mat-vecs to 1e-11. The transposed system would need the left version,
    which measured no gain (1 mat-vec in 37), so it runs plain GMRES.
    """
    a = discount / (1.0 - discount) if discount < 1.0 else 0.0
    if a == 0.0 or transpose:
        x, res, used, _ = gmres(matvec, rhs, x, target, maxiter=maxiter)
        return x, res, used

    def lift(v):  # R v
        return v + a * v.mean()

    # y0 = R^{-1} x0, with R^{-1} = I - a/(1+a) 1 u^T.
    y = x - (a / (1.0 + a)) * x.mean() if np.any(x) else x
    y, res, used, _ = gmres(lambda v: matvec(lift(v)), rhs, y, target, maxiter=maxiter)
    return lift(y), res, used


def _finishes_soon(res0: float, res: float, target: float, used: int) -> bool:
    """Extrapolate GMRES's convergence rate: done within 2 more budgets of iterations?"""
    if not (res0 > res > 0) or used == 0:
        return False
    rate = np.log(res0 / res) / used
    return np.log(res / target) / rate <= 2 * FACTOR_AFTER


def _apply(precond: Preconditioner, transpose: bool):
    lu = precond.lu
    trans = "T" if transpose else "N"
    return lambda v: lu.solve(v, trans=trans)
