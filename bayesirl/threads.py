"""Chains run with one BLAS thread, wherever they run.

numpy and scipy call OpenBLAS, which starts one thread per core in every process. The
solvers' Gram-Schmidt products are BLAS calls, so two chain workers on two cores ran four
busy threads; OpenBLAS threads spin while they wait, and a 10^5-state fit measured 5x
slower per gradient than one worker alone (1.35 s against 0.26 s). With one BLAS thread per
worker, two workers together run as fast as each alone (measured: 81 s against 77 s for the
same 30 warmup iterations). A single chain in the main process loses little with one thread
(the products are short), and fixing the count everywhere keeps the rounding of those
products, and so the draws, the same in the main process, in workers and on a cluster.
"""

from __future__ import annotations

from threadpoolctl import threadpool_limits


def one_blas_thread() -> threadpool_limits:
    """Limit the loaded BLAS libraries to one thread.

    Use it as a context manager around chains run in this process; in a worker process,
    call it once at start (the limit then lasts for the life of the process: it is undone
    only on leaving a ``with`` block).
    """
    return threadpool_limits(limits=1, user_api="blas")
