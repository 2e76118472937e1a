"""Child process of test_stages.py: ``bayesirl ARGS`` with one stage made slow.

Usage: ``python stage_child.py STAGE SECONDS ARGS...``. ``STAGE`` is ``report`` (writing the
report of a finished run), ``save`` (saving the finished draws and moving the folder into
place, a section that holds signals) or ``startup`` (the first import of numpy, inside the
command). The stage prints
``STAGE: STAGE`` on stderr when it begins and then sleeps ``SECONDS``, so a signal sent after
that line lands inside it; the work itself is unchanged.
"""

from __future__ import annotations

import sys
import time


def _announce(stage: str, seconds: float) -> None:
    print(f"STAGE: {stage}", file=sys.stderr, flush=True)
    time.sleep(seconds)


def _slowed(real, stage: str, seconds: float):
    def slow(*args, **kwargs):
        _announce(stage, seconds)
        return real(*args, **kwargs)
    return slow


class _SlowFirstNumpy:
    """A meta-path finder that sleeps when numpy is first imported, then lets it load."""

    def __init__(self, seconds: float) -> None:
        self.seconds, self.done = seconds, False

    def find_spec(self, name, path=None, target=None):
        if name == "numpy" and not self.done:
            self.done = True
            _announce("startup", self.seconds)
        return None


def main() -> int:
    stage, seconds, argv = sys.argv[1], float(sys.argv[2]), sys.argv[3:]
    from bayesirl.cli import main as cli_main  # light: numpy and friends load inside main

    if stage == "startup":
        assert "numpy" not in sys.modules
        sys.meta_path.insert(0, _SlowFirstNumpy(seconds))
        return cli_main(argv)
    import bayesirl.commands.fit as fit

    if stage == "report":
        fit.write_report = _slowed(fit.write_report, stage, seconds)
    elif stage == "save":
        fit.save_draws = _slowed(fit.save_draws, stage, seconds)
    else:
        raise SystemExit(f"unknown stage {stage!r}")
    return cli_main(argv)


if __name__ == "__main__":
    sys.exit(main())
