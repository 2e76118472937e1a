"""Writing a sampled posterior into a run folder: posterior, summary and report."""

from __future__ import annotations

import html
import json
import os
import sys
from pathlib import Path

import bayesirl
from bayesirl.files import write_json, write_text
from bayesirl.io import RunFolder
from bayesirl.io.runfolder import RUN_FORMAT, file_digest

DEFAULT_LEVEL = 0.9


def inputs_record(problem_path, demos_path, comparisons=None) -> dict:
    """Absolute input paths and their digests (a resume re-reads and compares them)."""
    paths = {"problem": Path(problem_path).resolve(),
             "demonstrations": Path(demos_path).resolve()}
    if comparisons is not None:
        paths["comparisons"] = Path(comparisons).resolve()
    return {**{k: str(p) for k, p in paths.items()},
            "inputs_sha256": {k: file_digest(p) for k, p in paths.items()}}


def write_results(run: RunFolder, posterior, record: dict, complete: bool,
                  level: float = DEFAULT_LEVEL, quiet: bool = False,
                  action_names=None) -> dict:
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
    action_names : sequence of str, optional
        The problem's action names, for the report's action probability table.

    Returns
    -------
    dict
        The summary written.
    """
    summary = save_draws(run, posterior, record, complete)
    if complete:
        summary = write_report(run, posterior, summary, level, quiet,
                               action_names=action_names)
    return summary


def save_draws(run: RunFolder, posterior, record: dict, complete: bool) -> dict:
    """``posterior.nc`` and a ``summary.json`` without the report (written next, if complete).

    A complete run whose summary has no ``report`` yet can be rendered by ``bayesirl report``
    or ``bayesirl fit --resume``: the draws are all there.
    """
    drawn = posterior is not None and posterior.n_draws > 0
    summary = {"format": RUN_FORMAT, "complete": bool(complete),
               "bayesirl_version": bayesirl.__version__, **record,
               "draws_done": int(posterior.n_draws) if drawn else _earlier_draws(run)}
    if drawn and complete and _small_enough(posterior):
        posterior.compute_log_likelihood()  # for bayesirl compare and the predictive check
    if drawn:
        posterior.save(run.posterior)
    if complete:
        summary["note"] = ("sampling finished; report.html is written next (if it is missing, "
                           "write it with bayesirl report <this folder>)")
    else:
        summary["note"] = ("interrupted: the draws so far are in posterior.nc and the sampler "
                           "state in checkpoint; continue with bayesirl fit --resume "
                           "<this folder>; report.html is written when the run completes")
    write_json(run.summary, summary)
    return summary


PREDICTIVE_MAX_STATES = 20_000


def _attach_predictive_check(report, posterior, summary: dict) -> None:
    """The posterior predictive checks for the report's model-fit section (complete runs)."""
    if not summary.get("complete") or posterior.n_draws == 0:
        return
    if posterior.model.likelihood.mdp.n_states > PREDICTIVE_MAX_STATES:
        # 200 policy solves and rollouts: minutes at this size; Python can still run it.
        summary["model_fit"] = {"skipped": "more than 20000 states; run "
                                "bayesirl.modelfit.predictive.predictive_check(posterior)"}
        return
    from bayesirl.modelfit.predictive import predictive_check
    from bayesirl.report.predictive import as_dict

    report.predictive = predictive_check(posterior, seed=int(posterior.seed))
    summary["model_fit"] = as_dict(report.predictive)


def _small_enough(posterior) -> bool:
    """Whether the per-episode log-likelihood (one solve per draw) is cheap enough to
    compute before saving; otherwise ``bayesirl compare`` computes it when first asked."""
    mdp = posterior.model.likelihood.mdp
    return mdp.n_states * posterior.n_chains * posterior.n_draws <= 4 * 10**7


def started_summary(record: dict) -> dict:
    """The summary of a run that has just started (a resume after a kill needs the record)."""
    return {"format": RUN_FORMAT, "complete": False, "bayesirl_version": bayesirl.__version__,
            **record, "draws_done": 0, "pid": os.getpid(),
            "note": "sampling: if this run was killed, continue it with bayesirl fit --resume"}


def report_choice(args, defaults: dict | None) -> dict:
    """The report's ``level`` and ``tolerance``: the command line's when given, else the
    problem file's ``[report]`` table (``defaults``), else 0.9 and none."""
    from bayesirl.report.verdicts import check_tolerance

    defaults = defaults or {}
    level = getattr(args, "level", None)
    tolerance = check_tolerance(getattr(args, "tolerance", None))
    return {"level": defaults.get("level", DEFAULT_LEVEL) if level is None else level,
            "tolerance": defaults.get("tolerance") if tolerance is None else tolerance}


def write_report(run: RunFolder, posterior, summary: dict, level: float = DEFAULT_LEVEL,
                 quiet: bool = False, **options) -> dict:
    """``report.html`` and the report's numbers in ``summary.json`` (draws already saved).

    ``options`` go to :func:`bayesirl.report.ambiguity` (``tolerance``, ``states``,
    ``suggestions``, ``action_names``)."""
    # the function from its module: once anything has imported the submodule
    # bayesirl.report.ambiguity directly, the package attribute of that name is the module
    from bayesirl.report.ambiguity import ambiguity

    drop = ("note", "pid") if summary.get("complete") else ("pid",)
    summary = {k: v for k, v in summary.items() if k not in drop}
    if _separate(posterior):
        # No population model: the report's verdicts would judge the plain mean of G
        # independent weights against one weight's prior (contraction overstated G-fold).
        summary.update(level=level, note="separate rewards per demonstrator: no report.html "
                       "(see demonstrators in this file and demonstrators.png)")
        _demonstrators(run, posterior, level, summary, quiet)
        write_json(run.summary, summary)
        return summary
    record = _group_record(posterior, level)
    report = ambiguity(posterior, level=level, demonstrators=record, **options)
    _attach_predictive_check(report, posterior, summary)
    report.to_html(run.report)
    if not summary.get("complete"):
        _mark_incomplete(run.report, summary)
    summary.update(level=level, report=report.as_dict())
    if not quiet:
        if not summary.get("complete"):
            print(INCOMPLETE.format(done=summary.get("draws_done")))
        print(report.table())
        if "verdict" in summary.get("model_fit", {}):
            print("model fit: " + " ".join(summary["model_fit"]["verdict"]))
    _demonstrators(run, posterior, level, summary, quiet, record)
    write_json(run.summary, summary)
    return summary


def _group_record(posterior, level: float) -> dict | None:
    from bayesirl.posterior.group_summary import demonstrator_summary

    return demonstrator_summary(posterior, level)


INCOMPLETE = ("INTERRUPTED RUN: only {done} draws per chain of those requested; intervals and "
              "diagnostics from an unfinished run can be too narrow or too optimistic")


def _mark_incomplete(path: Path, summary: dict) -> None:
    """A banner at the top of an interrupted run's report.html (the report does not know)."""
    text = path.read_text(encoding="utf-8")
    at = text.find(">", text.find("<body")) + 1 if "<body" in text else 0
    banner = (f'<p style="border:2px solid #b00;padding:.5em;color:#b00">'
              f"{html.escape(INCOMPLETE.format(done=summary.get('draws_done')))}</p>")
    write_text(path, text[:at] + banner + text[at:])


def _separate(posterior) -> bool:
    groups = getattr(posterior, "groups", None)
    return groups is not None and groups["pooling"] == "separate"


def _demonstrators(run: RunFolder, posterior, level: float, summary: dict,
                   quiet: bool, record: dict | None = None) -> None:
    """Several demonstrators: population, spread and each one's weights (summary.json,
    printed) and their forest plot (demonstrators.png)."""
    from bayesirl.posterior.group_summary import render

    record = _group_record(posterior, level) if record is None else record
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
