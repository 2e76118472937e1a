"""Resource bounds checked before work starts: a request that cannot fit is refused up front.

Each limit is named in the message, so a user knows what to change. Memory estimates are
lower bounds of what a run holds (the arrays it must keep); a request is refused when the
estimate exceeds half the memory the system reports available, leaving room for the
solvers' work arrays and for other programs.
"""

from __future__ import annotations

import os

from bayesirl.errors import InputError

MAX_CHAINS = 1000  # more chains than this is a typo, not a plan: each is a process's work
MAX_HORIZON = 10**6  # the finite-horizon solver keeps a policy per step
# A suggestion's gain within this many standard errors of zero is "no measurable gain": a mutual
# information is never negative, and an estimate that noisy says nothing about its size (two
# standard errors: common practice).
MEASURABLE_Z = 2.0
MAX_BUDGET = 100  # demonstrations chosen together by suggest: each pick re-scores all
MEMORY_SHARE = 0.5
STATS_PER_DRAW = 8  # sampler statistics kept beside each draw (step size, depth, ...)


def available_memory() -> int:
    """Bytes of memory available to new allocations (``MemAvailable``), else physical RAM."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        return os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (ValueError, OSError, AttributeError):
        return 1 << 40  # unknown: do not refuse on a guess


def _size(nbytes: float) -> str:
    for unit in ("bytes", "KiB", "MiB", "GiB", "TiB", "PiB"):
        if nbytes < 1024 or unit == "PiB":
            return f"{nbytes:.0f} {unit}" if unit == "bytes" else f"{nbytes:.1f} {unit}"
        nbytes /= 1024
    return f"{nbytes:.1f} EiB"  # pragma: no cover


def check_memory(nbytes: float, what: str, advice: str) -> None:
    """Refuse a request whose arrays need more than half the available memory."""
    limit = MEMORY_SHARE * available_memory()
    if nbytes > limit:
        raise InputError(f"{what} need at least {_size(nbytes)}, more than half the memory "
                         f"available ({_size(limit)} allowed); {advice}")


def check_sampling(chains: int, draws: int, warmup: int, n_params: int) -> None:
    """Chains within :data:`MAX_CHAINS` and the draws' memory within bounds."""
    if chains > MAX_CHAINS:
        raise InputError(f"chains: {chains} is more than the limit of {MAX_CHAINS}")
    per_draw = 8.0 * (n_params + STATS_PER_DRAW)
    # Warmup draws are kept in the checkpoint; the posterior is copied once when saved.
    need = 2.0 * chains * (draws + warmup) * per_draw
    check_memory(need, f"chains x (draws + warmup) = {chains} x ({draws} + {warmup}) draws "
                       f"of {n_params} parameters", "reduce draws or chains")


def check_horizon(horizon: int | None, n_states: int, n_actions: int) -> None:
    """A finite horizon within :data:`MAX_HORIZON` whose per-step policies fit in memory."""
    if horizon is None:
        return
    if horizon > MAX_HORIZON:
        raise InputError(f"horizon: {horizon} is more than the limit of {MAX_HORIZON} steps; "
                         "for long tasks use an infinite horizon with a discount")
    # Per step: a policy and Q (S x A) and a value (S), for the values and for the adjoint.
    need = 2.0 * 8 * horizon * n_states * (2 * n_actions + 1)
    check_memory(need, f"horizon {horizon} x {n_states} states x {n_actions} actions",
                 "shorten the horizon or use an infinite horizon with a discount")
