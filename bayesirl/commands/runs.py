"""Writing a sampled posterior into a run folder: posterior, summary and report."""

from __future__ import annotations

import json
import sys
from pathlib import Path

import bayesirl
from bayesirl.files import write_json
from bayesirl.io import RunFolder
from bayesirl.io.runfolder import RUN_FORMAT, file_digest

DEFAULT_LEVEL = 0.9


def inputs_record(problem_path, demos_path) -> dict:
    """Absolute input paths and their digests (a resume re-reads and compares them)."""
    paths = {"problem": Path(problem_path).resolve(),
             "demonstrations": Path(demos_path).resolve()}
    return {"problem": str(paths["problem"]), "demonstrations": str(paths["demonstrations"]),
            "inputs_sha256": {k: file_digest(p) for k, p in paths.items()}}


def write_results(run: RunFolder, posterior, record: dict, complete: bool,
                  level: float = DEFAULT_LEVEL, quiet: bool = False) -> dict:
    """``posterior.nc``, ``summary.json`` and, for a finished run, ``report.html``.

    Parameters
    ----------
    run : RunFolder
    posterior : Posterior or None
        None when nothing was drawn yet (interrupted during warm-up).
    record : dict
        Inputs, requested settings and the command line (see :func:`inputs_record`).
    complete : bool
        Whether every requested draw was made.
    level : float
        Credible level of the report's intervals.
    quiet : bool
        Do not print the report table.

    Returns
    -------
    dict
        The summary written.
    """
    drawn = posterior is not None and posterior.n_draws > 0
    summary = {"format": RUN_FORMAT, "complete": bool(complete),
               "bayesirl_version": bayesirl.__version__, **record,
               "draws_done": int(posterior.n_draws) if drawn else _earlier_draws(run)}
    if drawn:
        posterior.save(run.posterior)
    if complete and _separate(posterior):
        # No population model: the report's verdicts would judge the plain mean of G
        # independent weights against one weight's prior (contraction overstated G-fold).
        summary.update(level=level, note="separate rewards per demonstrator: no report.html "
                       "(see demonstrators in this file and demonstrators.png)")
        _demonstrators(run, posterior, level, summary, quiet)
    elif complete:
        from bayesirl.report import ambiguity

        report = ambiguity(posterior, level=level)
        report.to_html(run.report)
        summary.update(level=level, report=report.as_dict())
        if not quiet:
            print(report.table())
        _demonstrators(run, posterior, level, summary, quiet)
    else:
        summary["note"] = ("interrupted: the draws so far are in posterior.nc and the sampler "
                           "state in checkpoint; continue with bayesirl fit --resume "
                           "<this folder>; report.html is written when the run completes")
    write_json(run.summary, summary)
    return summary


def _separate(posterior) -> bool:
    groups = getattr(posterior, "groups", None)
    return groups is not None and groups["pooling"] == "separate"


def _demonstrators(run: RunFolder, posterior, level: float, summary: dict,
                   quiet: bool) -> None:
    """Several demonstrators: population, spread and each one's weights (summary.json,
    printed) and their forest plot (demonstrators.png)."""
    from bayesirl.posterior.group_summary import demonstrator_summary, render

    record = demonstrator_summary(posterior, level)
    if record is None:
        return
    summary["demonstrators"] = record
    from bayesirl.report.forest import forest_figure

    forest_figure(record).savefig(run.root / "demonstrators.png")
    if not quiet:
        what = ("the population mean" if record["pooling"] == "partial"
                else "the plain mean of the demonstrators' weights")
        print(f"\n(the table above and report.html describe {what}; each demonstrator:)")
        print(render(record))


def _earlier_draws(run: RunFolder) -> int:
    """Draws kept from before (a resumed run stopped again before drawing any more)."""
    try:
        return int(json.loads(run.summary.read_text(encoding="utf-8"))["draws_done"])
    except (OSError, ValueError, KeyError, TypeError):
        return 0


def say(args, text: str) -> None:
    """A status line on stderr (hidden with --quiet)."""
    if not getattr(args, "quiet", False):
        print(text, file=sys.stderr)
