"""One progress line per chain on a terminal; silent elsewhere."""

from __future__ import annotations

import sys
import time


class ChainProgress:
    """Renders ``chain k: i/n draws, step size, divergences`` lines in place."""

    def __init__(self, chains: int, total: int, stream=None, enabled: bool = True) -> None:
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = enabled and getattr(self.stream, "isatty", lambda: False)()
        self.total = total
        self.rows = [(0, float("nan"), 0) for _ in range(chains)]
        self._first: list[tuple[float, int] | None] = [None] * chains  # (time, done) first seen
        self._eta = [""] * chains
        self._drawn = False
        self._last = 0.0

    def update(self, chain: int, done: int, step_size: float, divergences: int) -> None:
        """Record a chain's state; redraw at most ten times a second."""
        self.rows[chain] = (done, step_size, divergences)
        now = time.monotonic()
        self._eta[chain] = self._estimate(chain, done, now)
        if self.enabled and (now - self._last > 0.1 or done == self.total):
            self._last = now
            self._draw()

    def _estimate(self, chain: int, done: int, now: float) -> str:
        """Time left for one chain at its own average pace so far (warmup iterations cost
        about what draws cost, so one pace serves both)."""
        if self._first[chain] is None:
            self._first[chain] = (now, done)
            return ""
        t0, d0 = self._first[chain]
        if done >= self.total:
            return "  done"
        if done <= d0 or now <= t0:
            return ""
        left = (self.total - done) * (now - t0) / (done - d0)
        return f"  about {format_duration(left)} left"

    def _draw(self) -> None:
        out = self.stream
        if self._drawn:
            out.write(f"\x1b[{len(self.rows)}F")  # back to the first line
        for k, (done, eps, div) in enumerate(self.rows):
            filled = int(30 * done / max(self.total, 1))
            bar = "#" * filled + "-" * (30 - filled)
            out.write(f"\x1b[2Kchain {k}: [{bar}] {done}/{self.total}  step {eps:.3g}  "
                      f"divergent {div}{self._eta[k]}\n")
        out.flush()
        self._drawn = True

    def close(self) -> None:
        """Final redraw."""
        if self.enabled:
            self._draw()


def format_duration(seconds: float) -> str:
    """``45s``, ``3m05s`` or ``1h02m``."""
    s = int(round(seconds))
    if s < 60:
        return f"{s}s"
    if s < 3600:
        return f"{s // 60}m{s % 60:02d}s"
    return f"{s // 3600}h{(s % 3600) // 60:02d}m"


class StatusLine:
    """One status line rewritten in place on a terminal (e.g. the designer's scoring); silent
    when the stream is not a terminal or ``enabled`` is false."""

    def __init__(self, stream=None, enabled: bool = True) -> None:
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = enabled and getattr(self.stream, "isatty", lambda: False)()
        self._last = 0.0
        self._text = ""

    def update(self, text: str, force: bool = False) -> None:
        """Show ``text``; redraw at most ten times a second unless ``force``."""
        self._text = text
        now = time.monotonic()
        if self.enabled and (force or now - self._last > 0.1):
            self._last = now
            self.stream.write(f"\r\x1b[2K{text}")
            self.stream.flush()

    def close(self) -> None:
        """Final redraw and end the line."""
        if self.enabled and self._text:
            self.stream.write(f"\r\x1b[2K{self._text}\n")
            self.stream.flush()
