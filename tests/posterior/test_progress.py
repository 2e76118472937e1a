"""Progress bars: one line per chain on a terminal, nothing at all elsewhere.

The terminal test double is an ``io.StringIO`` whose ``isatty()`` is True, the check that
``sys.stderr.isatty()`` makes for a real terminal (Python docs, io.IOBase.isatty). The
in-place redraw uses the ECMA-48 control sequences CPL (``ESC [ n F``, cursor to the start
of the line n lines up) and EL (``ESC [ 2 K``, erase the line).
"""

from __future__ import annotations

import io
import re
import sys
from types import SimpleNamespace

import pytest

import bayesirl as bi
from bayesirl.execution import progress
from bayesirl.execution.backend import Processes
from bayesirl.execution.progress import ChainProgress

from .problems import PRIOR, two_feature_likelihood

LINE = re.compile(r"\x1b\[2Kchain (\d+): \[([#-]{30})\] (\d+)/(\d+)  step (\S+)  divergent (\d+)"
                  r"(?:  about (\S+) left|  done)?$")


class FakeTTY(io.StringIO):
    def isatty(self) -> bool:
        return True


class NoIsatty:
    """A stream with write/flush only (some wrapped streams lack isatty)."""

    def __init__(self) -> None:
        self.text = ""

    def write(self, s: str) -> None:
        self.text += s

    def flush(self) -> None:
        pass


def _frames(text: str, chains: int) -> list[list[str]]:
    """Split the output into redraws, each a list of its lines."""
    parts = text.split(f"\x1b[{chains}F")
    return [p.splitlines() for p in parts]


def _feed(bar: ChainProgress, chains: int, total: int) -> None:
    for done in range(1, total + 1):
        for k in range(chains):
            bar.update(k, done, 0.25 * (k + 1), k)
    bar.close()


@pytest.mark.parametrize("stream", [io.StringIO(), NoIsatty()], ids=["not-a-tty", "no-isatty"])
def test_silent_when_the_stream_is_not_a_terminal(stream):
    bar = ChainProgress(3, 20, stream=stream, enabled=True)
    assert not bar.enabled
    _feed(bar, 3, 20)
    text = stream.getvalue() if isinstance(stream, io.StringIO) else stream.text
    assert text == ""


def test_silent_on_a_terminal_when_disabled():
    stream = FakeTTY()
    _feed(ChainProgress(3, 20, stream=stream, enabled=False), 3, 20)
    assert stream.getvalue() == ""


def test_one_line_per_chain_on_a_terminal():
    stream = FakeTTY()
    _feed(ChainProgress(3, 20, stream=stream), 3, 20)
    frames = _frames(stream.getvalue(), 3)
    assert len(frames) >= 2  # at least the first draw and the final one
    for frame in frames:
        assert len(frame) == 3  # exactly one line per chain, every redraw
        assert [int(LINE.match(line).group(1)) for line in frame] == [0, 1, 2]
    for k, line in enumerate(frames[-1]):
        m = LINE.match(line)
        assert m.group(2) == "#" * 30 and (m.group(3), m.group(4)) == ("20", "20")
        assert float(m.group(5)) == 0.25 * (k + 1) and int(m.group(6)) == k


def test_time_left_follows_the_pace(monkeypatch):
    # A fake clock: 0.5 s per iteration, so after 10 of 100 iterations (9 timed since the
    # first update) about 90 * 0.5 = 45 s are left; a finished chain says done.
    clock = SimpleNamespace(t=0.0)
    monkeypatch.setattr(progress, "time", SimpleNamespace(monotonic=lambda: clock.t))
    stream = FakeTTY()
    bar = ChainProgress(1, 100, stream=stream)
    for done in range(1, 11):
        clock.t += 0.5
        bar.update(0, done, 0.1, 0)
    assert bar._eta[0] == "  about 45s left"
    bar.update(0, 100, 0.1, 0)
    assert bar._eta[0] == "  done"
    assert progress.format_duration(125) == "2m05s"
    assert progress.format_duration(3725) == "1h02m"


def test_redraws_at_most_ten_times_a_second(monkeypatch):
    # A fake clock for this module only: 1000 updates 1 ms apart span one second, so at
    # most 10 timed redraws, plus the one forced when a chain finishes and the close.
    clock = SimpleNamespace(t=0.0)

    def monotonic():
        clock.t += 0.001
        return clock.t

    monkeypatch.setattr(progress, "time", SimpleNamespace(monotonic=monotonic))
    stream = FakeTTY()
    bar = ChainProgress(1, 1000, stream=stream)
    for done in range(1, 1001):
        bar.update(0, done, 0.1, 0)
    bar.close()
    redraws = len(_frames(stream.getvalue(), 1))
    assert 2 <= redraws <= 10 + 2


@pytest.mark.parametrize("processes", [1, 2])
def test_sample_draws_one_line_per_chain_on_a_terminal(monkeypatch, processes):
    tty = FakeTTY()
    monkeypatch.setattr(sys, "stderr", tty)
    bi.sample(two_feature_likelihood(), PRIOR, chains=2, draws=20, warmup=20, seed=1,
              backend=Processes(processes))
    bars = [line for line in tty.getvalue().splitlines() if "\x1b[2Kchain " in line]
    frames = _frames("\n".join(bars), 2)
    final = [LINE.match(line) for line in frames[-1]]
    assert [int(m.group(1)) for m in final] == [0, 1]
    assert all((m.group(3), m.group(4)) == ("40", "40") for m in final)


def test_sample_writes_no_bar_when_stderr_is_not_a_terminal(capsys):
    bi.sample(two_feature_likelihood(), PRIOR, chains=2, draws=20, warmup=20, seed=1,
              backend=Processes(1))
    err = capsys.readouterr().err  # pytest's capture is not a terminal
    assert "chain 0" not in err and "\x1b[" not in err
