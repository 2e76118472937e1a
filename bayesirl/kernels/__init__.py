"""Numba kernels on plain float64/int64 arrays, each with a plain-numpy reference.

Nothing here imports from the rest of the package. Transitions are a CSR matrix of shape
``(S*A, S)`` whose row ``s*A + a`` is ``P(.|s, a)``, passed as ``(indptr, indices, data)``.
"""

from bayesirl.kernels.csr import (
    csr_matvec,
    csr_matvec_ref,
    csr_rmatvec,
    csr_rmatvec_ref,
    scale_rows,
    scale_rows_ref,
    select_rows,
    select_rows_ref,
)
from bayesirl.kernels.dense import (
    adjoint_dense,
    adjoint_dense_ref,
    soft_newton_dense,
    soft_newton_dense_ref,
)
from bayesirl.kernels.softmax import (
    exp_into,
    exp_into_ref,
    scale_rows_by_policy,
    scale_rows_by_policy_ref,
    soft_max_actions,
    soft_max_actions_ref,
)
from bayesirl.kernels.trajectories import sample_episodes, sample_episodes_ref

__all__ = [
    "adjoint_dense",
    "adjoint_dense_ref",
    "soft_newton_dense",
    "soft_newton_dense_ref",
    "csr_matvec",
    "csr_matvec_ref",
    "csr_rmatvec",
    "csr_rmatvec_ref",
    "scale_rows",
    "scale_rows_ref",
    "select_rows",
    "select_rows_ref",
    "exp_into",
    "exp_into_ref",
    "scale_rows_by_policy",
    "scale_rows_by_policy_ref",
    "soft_max_actions",
    "soft_max_actions_ref",
    "sample_episodes",
    "sample_episodes_ref",
]
