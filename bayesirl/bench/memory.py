"""Sampled total memory of this process and its child processes (Linux ``/proc``).

``getrusage`` gives each process's peak resident set, but forked workers share most of their
pages with the parent, so adding peaks counts those pages twice. The proportional set size
(PSS, ``/proc/PID/smaps_rollup``) charges a shared page to its sharers in equal parts, so the
sum over the main process and its children is the memory the group really holds. This module
samples that sum in a background thread and keeps its peak (a peak shorter than the sampling
interval can be missed).
"""

from __future__ import annotations

import os
import threading
from pathlib import Path

_PROC = Path("/proc")


def _pss_bytes(pid: int) -> int | None:
    try:
        with open(_PROC / str(pid) / "smaps_rollup", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Pss:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError):
        return None
    return None


def _children(pid: int) -> list[int]:
    out = []
    for entry in _PROC.iterdir():
        if not entry.name.isdigit():
            continue
        try:
            stat = (entry / "stat").read_text(encoding="ascii", errors="replace")
        except OSError:
            continue
        fields = stat.rsplit(")", 1)[-1].split()
        if len(fields) > 1 and fields[1] == str(pid):
            out.append(int(entry.name))
    return out


def available() -> bool:
    """Whether PSS can be read on this system."""
    return _pss_bytes(os.getpid()) is not None


class PeakPss:
    """Context manager: peak of (PSS of this process + PSS of its children), sampled.

    Parameters
    ----------
    every : float
        Seconds between samples.

    Attributes
    ----------
    peak_bytes : int or None
        Largest sampled total (None where ``/proc`` offers no PSS).
    peak_processes : int
        Number of processes in the sample that gave the peak.
    """

    def __init__(self, every: float = 1.0) -> None:
        self.every = float(every)
        self.peak_bytes: int | None = None
        self.peak_processes = 0
        self._done = threading.Event()
        self._thread: threading.Thread | None = None

    def sample(self) -> None:
        """Take one sample now."""
        me = os.getpid()
        sizes = [_pss_bytes(p) for p in [me, *_children(me)]]
        sizes = [s for s in sizes if s is not None]
        if sizes and (self.peak_bytes is None or sum(sizes) > self.peak_bytes):
            self.peak_bytes, self.peak_processes = sum(sizes), len(sizes)

    def _loop(self) -> None:
        while not self._done.wait(self.every):
            self.sample()

    def __enter__(self) -> PeakPss:
        if available():
            self.sample()
            self._thread = threading.Thread(target=self._loop, daemon=True)
            self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self._done.set()
        if self._thread is not None:
            self._thread.join()
