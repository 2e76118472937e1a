"""Plain-array view of an MDP's dynamics used by the solvers."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import scipy.sparse as sp

from bayesirl.kernels import csr_matvec, scale_rows, select_rows


class Dynamics(NamedTuple):
    """CSR transition arrays, row ``s*A + a`` holding ``P(.|s, a)``."""

    indptr: np.ndarray  # int64 (S*A + 1,)
    indices: np.ndarray  # int64 (nnz,)
    data: np.ndarray  # float64 (nnz,)
    n_states: int
    n_actions: int

    @classmethod
    def from_csr(cls, matrix: sp.csr_matrix, n_actions: int) -> Dynamics:
        """Wrap a canonical ``(S*A, S)`` CSR matrix."""
        return cls(
            matrix.indptr.astype(np.int64),
            matrix.indices.astype(np.int64),
            matrix.data.astype(np.float64),
            matrix.shape[1],
            n_actions,
        )

    def expected_next(self, values: np.ndarray) -> np.ndarray:
        """``E[V(s') | s, a]`` as an ``(S, A)`` array (one CSR sweep)."""
        out = csr_matvec(self.indptr, self.indices, self.data, values)
        return out.reshape(self.n_states, self.n_actions)

    def policy_matrix(self, policy: np.ndarray) -> sp.csr_matrix:
        """``P_pi`` (S, S) for a stochastic policy ``(S, A)``."""
        data = scale_rows(self.indptr, self.data, np.ascontiguousarray(policy).ravel())
        ptr = self.indptr[:: self.n_actions]
        return sp.csr_matrix((data, self.indices, ptr), shape=(self.n_states, self.n_states))

    def greedy_matrix(self, actions: np.ndarray) -> sp.csr_matrix:
        """``P_g`` (S, S) for a deterministic policy given as one action per state."""
        rows = np.arange(self.n_states, dtype=np.int64) * self.n_actions + actions
        ptr, idx, dat = select_rows(self.indptr, self.indices, self.data, rows)
        return sp.csr_matrix((dat, idx, ptr), shape=(self.n_states, self.n_states))

    def matrix(self) -> sp.csr_matrix:
        """The ``(S*A, S)`` transition matrix."""
        return sp.csr_matrix(
            (self.data, self.indices, self.indptr),
            shape=(self.n_states * self.n_actions, self.n_states),
        )
