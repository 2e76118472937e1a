"""Warm-started Krylov solves of ``(I - g M) x = b`` and ``(I - g M^T) x = b``."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from bayesirl.errors import SolverError

# Restart length for GMRES: long enough for slow-mixing grids at discount 0.99, short enough
# that the Gram-Schmidt work stays below the cost of the mat-vecs at S = 10^4.
_RESTART = 60


def solve_discounted(
    matrix: sp.csr_matrix,
    discount: float,
    rhs: np.ndarray,
    x0: np.ndarray | None = None,
    rtol: float = 1e-11,
    transpose: bool = False,
    maxiter: int = 2000,
    what: str = "linear system",
) -> tuple[np.ndarray, int]:
    """Solve ``(I - discount * M) x = rhs`` (or with ``M.T``) by GMRES from ``x0``.

    Returns the solution and the number of mat-vecs used. Raises :class:`SolverError` when
    the relative residual does not reach ``rtol``.
    """
    n = rhs.shape[0]
    op_m = matrix.T if transpose else matrix  # CSC view: no copy
    counter = [0]

    def matvec(x):
        counter[0] += 1
        return x - discount * (op_m @ x)

    op = spla.LinearOperator((n, n), matvec=matvec, dtype=np.float64)
    b_norm = float(np.linalg.norm(rhs))
    if b_norm == 0.0:
        return np.zeros(n), 0
    x_start = np.zeros(n) if x0 is None else x0
    if x0 is not None and np.linalg.norm(matvec(x0) - rhs) <= rtol * b_norm:
        return x0.copy(), counter[0]
    x, info = spla.gmres(
        op, rhs, x0=x_start, rtol=rtol, atol=0.0, restart=min(_RESTART, n), maxiter=maxiter
    )
    residual = float(np.linalg.norm(matvec(x) - rhs))
    if info != 0 or not np.isfinite(residual) or residual > 10 * rtol * b_norm:
        raise SolverError(
            f"{what}: GMRES stopped at relative residual {residual / b_norm:.3e} "
            f"(wanted {rtol:.1e}) after {counter[0]} mat-vecs"
        )
    return x, counter[0]
