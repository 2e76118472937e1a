"""Plain-array view of an MDP's dynamics used by the solvers."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import scipy.sparse as sp

# Up to this many states the solvers use dense compiled Newton steps (LU of I - g P_pi).
# Against the compiled sparse Newton-Krylov path (docs/solver.md, warm gradients, 1% walk):
# dense wins at 50 states (0.20 vs 0.32 ms random, 0.25 vs 0.45 ms grid at 0.99), is about
# even at 100 (0.49 vs 0.42, 0.63 vs 0.58) and loses 2.6-4x at 200 (its O(S^3) LU).
DENSE_MAX_STATES = 100


class Dynamics(NamedTuple):
    """CSR transition arrays, row ``s*A + a`` holding ``P(.|s, a)``."""

    indptr: np.ndarray  # int64 (S*A + 1,)
    indices: np.ndarray  # int64 (nnz,)
    data: np.ndarray  # float64 (nnz,)
    n_states: int
    n_actions: int
    by_state: sp.csr_matrix  # the same matrix as a scipy object (its C mat-vec is fastest)
    by_action: sp.csr_matrix  # rows reordered to a*S + s, so E[V'] comes out as (A, S)
    dense: np.ndarray | None  # (A, S, S) copy for small problems (see DENSE_MAX_STATES)
    max_row_nnz: int  # most successors of any (s, a): the rounding bound of a backup uses it
    # (indptr, indices) of by_state and of by_action for the compiled kernels, as uint32 when
    # they fit: numba adds no negative-index check for unsigned indices and the gathers move
    # half the bytes (a CSR mat-vec at S = 10^4: 154 -> 101 us, scipy's own 95 us).
    kernel_index: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]

    @classmethod
    def from_csr(cls, matrix: sp.csr_matrix, n_actions: int) -> Dynamics:
        """Wrap a canonical ``(S*A, S)`` CSR matrix."""
        n_s = matrix.shape[1]
        order = np.arange(n_s * n_actions).reshape(n_s, n_actions).T.ravel()
        dense = None
        if n_s <= DENSE_MAX_STATES:
            dense = np.ascontiguousarray(
                matrix.toarray().reshape(n_s, n_actions, n_s).transpose(1, 0, 2)
            )
        by_action = matrix[order].tocsr()
        itype = np.uint32 if matrix.nnz < 2**32 - 1 else np.int64
        kernel_index = tuple(np.ascontiguousarray(a, dtype=itype) for a in (
            matrix.indptr, matrix.indices, by_action.indptr, by_action.indices))
        return cls(
            matrix.indptr.astype(np.int64),
            matrix.indices.astype(np.int64),
            matrix.data.astype(np.float64),
            n_s,
            n_actions,
            matrix,
            by_action,
            dense,
            int(np.diff(matrix.indptr).max(initial=1)),
            kernel_index,
        )

    def expected_next(self, values: np.ndarray) -> np.ndarray:
        """``E[V(s') | s, a]`` as an ``(S, A)`` array (one CSR sweep)."""
        return (self.by_state @ values).reshape(self.n_states, self.n_actions)

    def expected_next_by_action(self, values: np.ndarray) -> np.ndarray:
        """``E[V(s') | s, a]`` as an action-major ``(A, S)`` array (one CSR sweep)."""
        return (self.by_action @ values).reshape(self.n_actions, self.n_states)

    def policy_matrix(self, policy: np.ndarray) -> sp.csr_matrix:
        """``P_pi`` (S, S) for a stochastic policy ``(S, A)``."""
        from bayesirl.kernels import scale_rows  # numba loads on the first solve, not import

        data = scale_rows(self.indptr, self.data, np.ascontiguousarray(policy).ravel())
        ptr = self.indptr[:: self.n_actions]
        return sp.csr_matrix((data, self.indices, ptr), shape=(self.n_states, self.n_states))

    def policy_matrix_by_action(self, policy_am: np.ndarray) -> sp.csr_matrix:
        """``P_pi`` (S, S) for an action-major stochastic policy ``(A, S)``."""
        from bayesirl.kernels import scale_rows_by_policy

        data = scale_rows_by_policy(self.indptr, self.data, policy_am)
        ptr = self.indptr[:: self.n_actions]
        return sp.csr_matrix((data, self.indices, ptr), shape=(self.n_states, self.n_states))

    def greedy_matrix(self, actions: np.ndarray) -> sp.csr_matrix:
        """``P_g`` (S, S) for a deterministic policy given as one action per state."""
        rows = np.arange(self.n_states, dtype=np.int64) * self.n_actions + actions
        from bayesirl.kernels import select_rows

        ptr, idx, dat = select_rows(self.indptr, self.indices, self.data, rows)
        return sp.csr_matrix((dat, idx, ptr), shape=(self.n_states, self.n_states))

    def matrix(self) -> sp.csr_matrix:
        """The ``(S*A, S)`` transition matrix."""
        return self.by_state
