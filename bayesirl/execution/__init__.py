"""Execution layer: running the chains of ``sample`` and the designer's work.

Between the posterior object (below) and the report and designer (above): worker processes,
signals and exact resume (:mod:`~bayesirl.execution.interrupt`,
:mod:`~bayesirl.execution.chains`, :mod:`~bayesirl.execution.checkpoint`), progress lines and
Dask clusters. See docs/checkpoints.md.
"""

from bayesirl.execution.run import sample

__all__ = ["sample"]
