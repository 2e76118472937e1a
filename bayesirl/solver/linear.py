"""Solves of ``(I - g M) x = b`` and ``(I - g M^T) x = b`` for a policy matrix ``M``.

GMRES from a warm start, preconditioned, when the problem mixes slowly, by a sparse LU of an
earlier ``I - g M``. Consecutive calls (Newton steps, nearby weights along a sampler path) see
policies that differ by little, so a stale factorisation is an excellent preconditioner and
is rebuilt only when GMRES starts needing many iterations. A factorisation is only tried when
the fill it can produce is bounded (envelope of the reverse Cuthill-McKee ordering): on
fast-mixing random MDPs it would be dense, and there GMRES converges quickly without it.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.sparse.csgraph import reverse_cuthill_mckee

from bayesirl.errors import SolverError
from bayesirl.solver.krylov import gmres

# Unpreconditioned (or stale-preconditioned) GMRES gets this many mat-vecs before we factor.
_FACTOR_AFTER = 30
# Largest envelope (an upper bound on LU fill with a banded ordering) we accept: 6e7 entries,
# about 0.5 GB of float64, keeps a 10^5-state problem within a few GB.
_MAX_ENVELOPE = 6e7


class Preconditioner:
    """Per-chain store of the last LU factorisation of ``I - g M`` and whether one may be made."""

    def __init__(self) -> None:
        self.lu = None
        self.allowed: bool | None = None
        self.factorisations = 0

    def decide(self, matrix: sp.csr_matrix) -> bool:
        """Decide once, from the sparsity pattern, whether factorising is affordable."""
        if self.allowed is None:
            self.allowed = _envelope(matrix) <= _MAX_ENVELOPE
        return self.allowed

    def refresh(self, matrix: sp.csr_matrix, discount: float) -> None:
        """Factor ``I - g M`` for the current ``M``."""
        n = matrix.shape[0]
        system = (sp.identity(n, format="csr") - discount * matrix).tocsc()
        # I - gM is row diagonally dominant, so diagonal pivots are stable and keep the fill
        # of the symmetric ordering.
        self.lu = spla.splu(system, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0)
        self.factorisations += 1


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
    can_factor = precond is not None and precond.decide(matrix)
    used = 0
    if can_factor:
        # Stale factorisation first (or none yet); factor afresh only if the observed rate
        # says GMRES would need many more iterations (fast-mixing chains converge quickly
        # unpreconditioned, and their factorisations are expensive).
        pre = _apply(precond, transpose) if precond.lu is not None else None
        x, res, used, res0 = gmres(matvec, rhs, x, target, pre, maxiter=_FACTOR_AFTER)
        if res > target:
            if not _finishes_soon(res0, res, target, used):
                precond.refresh(matrix, discount)
                pre = _apply(precond, transpose)
            x, res, k, _ = gmres(matvec, rhs, x, target, pre, maxiter=maxiter)
            used += k
    else:
        x, res, used, _ = gmres(matvec, rhs, x, target, maxiter=maxiter)
    if not np.isfinite(res) or res > target:
        raise SolverError(
            f"{what}: GMRES stopped at relative residual {res / b_norm:.3e} "
            f"(wanted {rtol:.1e}) after {used} mat-vecs"
        )
    return x, used


def _finishes_soon(res0: float, res: float, target: float, used: int) -> bool:
    """Extrapolate GMRES's convergence rate: done within 2 more budgets of iterations?"""
    if not (res0 > res > 0) or used == 0:
        return False
    rate = np.log(res0 / res) / used
    return np.log(res / target) / rate <= 2 * _FACTOR_AFTER


def _apply(precond: Preconditioner, transpose: bool):
    lu = precond.lu
    trans = "T" if transpose else "N"
    return lambda v: lu.solve(v, trans=trans)
