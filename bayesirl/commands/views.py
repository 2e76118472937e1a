"""``bayesirl report``, ``suggest`` and ``check``: reading run folders and problem files."""

from __future__ import annotations

import inspect
import json
import sys
from pathlib import Path

from bayesirl.commands.demonstrators import demonstrator_lines
from bayesirl.commands.runs import report_choice, say, write_report
from bayesirl.errors import InputError
from bayesirl.files import write_json
from bayesirl.io import RunFolder, read_problem
from bayesirl.resources import MAX_BUDGET


def load_posterior(run: RunFolder, summary: dict | None = None):
    """The run's posterior, or an :class:`InputError` naming the file."""
    from bayesirl.posterior import Posterior

    if not run.posterior.is_file():
        raise InputError(f"{run.posterior}: missing; the run has no draws yet")
    try:
        return Posterior.load(run.posterior)
    except InputError:
        raise
    except (OSError, ValueError, KeyError, TypeError, IndexError, AttributeError) as err:
        raise InputError(f"{run.posterior}: not a readable posterior file "
                         f"({type(err).__name__}: {err})") from None


def parse_states(text: str | None, n_states: int) -> list[int]:
    """``--states``: a comma-separated list of state indices (empty without the option)."""
    if text is None:
        return []
    out = []
    for part in text.split(","):
        part = part.strip()
        if not part.isdigit() or int(part) >= n_states:
            raise InputError(f"--states: {part!r} is not a state 0..{n_states - 1}; expected "
                             "a list like 0,8,24")
        out.append(int(part))
    return out


def render_report(run: RunFolder, summary: dict, posterior, settings: dict,
                  suggestions=None, quiet: bool = False) -> dict:
    """Write the run's report.html and the report in summary.json with ``settings``
    (``level``, ``tolerance``, ``states``); returns the summary written."""
    summary = {**summary, "report_settings": settings}
    return write_report(run, posterior, summary, settings["level"], quiet,
                        tolerance=settings.get("tolerance"),
                        states=settings.get("states") or (), suggestions=suggestions,
                        action_names=_action_names(summary, posterior))


def _action_names(summary: dict, posterior):
    """The problem file's action names (a map's moves), if the file still reads as the same
    problem; None otherwise (the table then numbers the actions)."""
    problem = _problem_of(summary)
    if problem is None:
        return None
    names = problem.action_names
    n = posterior.model.likelihood.mdp.n_actions
    return list(names) if names and len(names) == n else None


def _problem_of(summary: dict):
    """The run's problem file, if it still reads as a problem; None otherwise."""
    try:
        return read_problem(summary["problem"])
    except (InputError, OSError, KeyError, TypeError):
        return None


def problem_defaults(summary: dict) -> dict | None:
    """The run's problem file's ``[report]`` table (level, tolerance), if it still reads."""
    problem = _problem_of(summary)
    return None if problem is None else problem.report


def _stored_suggestions(run: RunFolder):
    if not run.suggestions.is_file():
        raise InputError(f"{run.suggestions}: missing; run bayesirl suggest {run.root} first")
    try:
        return json.loads(run.suggestions.read_text(encoding="utf-8"))["suggestions"]
    except (OSError, ValueError, KeyError, TypeError) as err:
        raise InputError(f"{run.suggestions}: not a suggestions file ({err})") from None


def report_command(args) -> int:
    """Re-render a run folder's report (and summary) at another level, tolerance or states."""
    run = RunFolder(Path(args.run))
    summary = run.read_summary()
    posterior = load_posterior(run, summary)
    if not summary.get("complete"):
        print(f"warning: {run.root} is an interrupted run; the report covers only the draws "
              "made so far", file=sys.stderr)
    groups = getattr(posterior, "groups", None)
    if groups is not None and groups["pooling"] == "separate":
        raise InputError(f"{run.root}: separate rewards per demonstrator have no population "
                         "to report on; see summary.json (demonstrators) and "
                         "demonstrators.png")
    n_states = posterior.model.likelihood.mdp.n_states
    settings = {**report_choice(args, problem_defaults(summary)),
                "states": parse_states(getattr(args, "states", None), n_states)}
    extra = _stored_suggestions(run) if getattr(args, "suggestions", False) else None
    render_report(run, summary, posterior, settings, extra, args.quiet)
    say(args, f"wrote {run.report} and {run.summary} at the {settings['level']:.0%} level")
    return 0


def parse_candidates(text: str, n_states: int):
    """``start-states``, ``query-states`` or a comma-separated list of state indices."""
    if text in ("start-states", "query-states"):
        return text
    out = []
    for part in text.split(","):
        part = part.strip()
        if not part.isdigit() or int(part) >= n_states:
            raise InputError(f"--candidates: {part!r} is not a state 0..{n_states - 1}; "
                             "expected start-states, query-states or a list like 0,5,12")
        out.append(int(part))
    return out


def _whose(args, run, posterior, new):
    """``suggest``'s ``demonstrator=``: None, one name, or a list (``new``: a new person)."""
    who = list(getattr(args, "demonstrator", None) or [])
    if getattr(args, "new_demonstrator", False):
        who.append(new)
    if getattr(posterior, "groups", None) is not None and not who:
        raise InputError(f"{run.root}: this run has several demonstrators; name whose "
                         "demonstrations to rank with --demonstrator NAME (one or more of "
                         f"{list(posterior.groups['demonstrators'])}) and/or "
                         "--new-demonstrator")
    return None if not who else who[0] if len(who) == 1 else who


def suggest_command(args) -> int:
    """Rank extra demonstrations for a run (the designer in ``bayesirl.design``)."""
    try:
        from bayesirl import design
    except ImportError:
        raise RuntimeError("this installation has no demonstration designer "
                           "(bayesirl.design)") from None
    from bayesirl.report.suggestions import as_records, render_text

    scheduler = getattr(args, "scheduler", None)
    if scheduler is not None:  # a malformed address is refused before the run is read
        from bayesirl.execution.backend import Cluster

        where = {"backend": Cluster(scheduler)}  # not a setting of the result
    else:
        where = {}
    if args.budget > MAX_BUDGET:  # each pick re-scores every candidate
        raise InputError(f"--budget: {args.budget} is more than the limit of {MAX_BUDGET} "
                         "demonstrations chosen together")
    run = RunFolder(Path(args.run))
    summary = run.read_summary()
    posterior = load_posterior(run, summary)
    if not posterior.diagnostics.ok:
        print("warning: the run's sampler diagnostics failed "
              f"({'; '.join(posterior.diagnostics.warnings)}); suggestions from these draws "
              "may be wrong: run the fit longer first", file=sys.stderr)
    if getattr(args, "comparisons", None):
        if getattr(posterior, "groups", None) is not None:
            raise InputError(f"{run.root}: comparison questions are ranked for one pooled "
                             "reward; this run has several demonstrators")
        from bayesirl.commands.comparison_queries import rank_comparisons

        return rank_comparisons(args, run, posterior, summary, read_problem)
    who = _whose(args, run, posterior, design.NEW)
    n_states = posterior.model.likelihood.mdp.n_states
    kwargs = {"candidates": parse_candidates(args.candidates, n_states),
              "budget": args.budget, "target": args.target, "seed": args.seed,
              "n_outer": args.outer}
    if who is not None:
        kwargs["demonstrator"] = who
    if "progress" in inspect.signature(design.suggest).parameters:
        kwargs["progress"] = not args.quiet
    records = as_records(design.suggest(posterior, **kwargs, **where))
    write_json(run.suggestions, {"settings": {k: v for k, v in kwargs.items()
                                              if k != "progress"},
                                 "diagnostics_ok": bool(posterior.diagnostics.ok),
                                 "suggestions": records})
    if not args.quiet:
        print(render_text(records, posterior.model.likelihood.mdp.grid_shape))
    say(args, f"wrote {run.suggestions}")
    if getattr(args, "report", False):
        settings = summary.get("report_settings") or {"level": summary.get("level", 0.9)}
        render_report(run, summary, posterior, settings, records, quiet=True)
        say(args, f"added the suggestions to {run.report}")
    return 0


def check_command(args) -> int:
    """Validate files and print the structural findings, without sampling."""
    from bayesirl.report import structural

    problem = read_problem(args.problem)
    mdp = problem.mdp
    h = "infinite horizon" if mdp.horizon is None else f"horizon {mdp.horizon}"
    print(f"{args.problem}: ok - {mdp.n_states} states, {mdp.n_actions} actions, features "
          f"{', '.join(mdp.feature_names)}; discount {mdp.discount:g}, {h}")
    from bayesirl.commands import evidence_files

    for line in (evidence_files.comparison_lines(args.comparisons, problem)
                 if getattr(args, "comparisons", None) else []):
        print(line)
    if args.demonstrations is None:
        print(*_dynamics_lines(problem, None), sep="\n")
        print("no demonstration file given: structural findings need the demonstrations")
        return 0
    demos, partial = evidence_files.read_any_episodes(args.demonstrations, problem)
    print(*_dynamics_lines(problem, demos), sep="\n")
    if partial is not None:
        print(*evidence_files.episode_lines(args.demonstrations, partial), sep="\n")
        if demos is None:
            return 0
    print(f"{args.demonstrations}: ok - {demos.n_episodes} episodes, {demos.n_steps} steps"
          + (" fully recorded" if partial is not None else ""))
    for line in demonstrator_lines(problem, demos):
        print(line)
    found = structural.findings(mdp, demos)
    if not found:
        print("structural findings: none (every weight can in principle be learned from "
              "demonstrations like these)")
    for f in found:
        print(f"[{f.cause}] {f.message}")
    if any(f.cause in ("constant", "collinear", "shaping") for f in found):
        print("bayesirl fit will sample these with a dense mass matrix: the posterior is a "
              "ridge along each combination above")
    return 0


def _dynamics_lines(problem, demos) -> list[str]:
    """What the ``[dynamics]`` table's transition evidence amounts to (checked in full)."""
    if problem.dynamics is None:
        return []
    import numpy as np

    from bayesirl.io.transitionfiles import dynamics_posterior

    post = dynamics_posterior(problem, demos)
    where = problem.dynamics.transitions or "the demonstrations"
    if not hasattr(post, "alpha"):  # a map's one slip probability
        return [f"{where}: ok - {post.n_logged} transitions counted; posterior mean slip "
                f"probability {post.slip_mean:.4f} (Beta{problem.dynamics.slip} prior)"]
    rows = post.n_states * post.n_actions
    alpha = post.alpha
    sums = np.add.reduceat(alpha.data, alpha.indptr[:-1])
    prior = post.concentration * np.diff(alpha.indptr)
    logged = int(np.count_nonzero(sums > prior + 0.5))
    return [f"{where}: ok - {post.n_logged} transitions counted; {logged} of {rows} "
            f"(state, action) rows have some, the others keep their Dirichlet("
            f"{post.concentration:g}) prior on a support of {problem.dynamics.support!r}"]
