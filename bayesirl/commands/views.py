"""``bayesirl report``, ``suggest`` and ``check``: reading run folders and problem files."""

from __future__ import annotations

import inspect
import sys
from pathlib import Path

from bayesirl.commands.demonstrators import demonstrator_lines
from bayesirl.commands.runs import say
from bayesirl.errors import InputError
from bayesirl.files import write_json
from bayesirl.io import RunFolder, read_demonstrations, read_problem


def _load_posterior(run: RunFolder, summary: dict):
    from bayesirl.posterior import Posterior

    if not run.posterior.is_file():
        raise InputError(f"{run.posterior}: missing; the run has no draws yet")
    try:
        return Posterior.load(run.posterior)
    except InputError:
        raise
    except (OSError, ValueError, KeyError) as err:
        raise InputError(f"{run.posterior}: not a readable posterior file "
                         f"({type(err).__name__}: {err})") from None


def report_command(args) -> int:
    """Re-render a run folder's report (and summary) at another interval level."""
    from bayesirl.report import ambiguity

    run = RunFolder(Path(args.run))
    summary = run.read_summary()
    if not summary.get("complete"):
        print(f"warning: {run.root} is an interrupted run; the report covers only the draws "
              "made so far", file=sys.stderr)
    posterior = _load_posterior(run, summary)
    groups = getattr(posterior, "groups", None)
    if groups is not None and groups["pooling"] == "separate":
        raise InputError(f"{run.root}: separate rewards per demonstrator have no population "
                         "to report on; see summary.json (demonstrators) and "
                         "demonstrators.png")
    report = ambiguity(posterior, level=args.level)
    report.to_html(run.report)
    summary.update(level=args.level, report=report.as_dict())
    write_json(run.summary, summary)
    if not args.quiet:
        print(report.table())
    say(args, f"wrote {run.report} and {run.summary} at the {args.level:.0%} level")
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


def _field(record, name):
    value = record[name] if isinstance(record, dict) else getattr(record, name)
    if name == "candidate" and not isinstance(value, int | str | list | tuple | dict):
        value = value.tolist() if hasattr(value, "tolist") else str(value)  # JSON-ready
    return value


def suggest_command(args) -> int:
    """Rank extra demonstrations for a run (the designer in ``bayesirl.design``)."""
    try:
        from bayesirl import design
    except ImportError:
        raise RuntimeError("this installation has no demonstration designer "
                           "(bayesirl.design)") from None
    scheduler = getattr(args, "scheduler", None)
    if scheduler is not None:  # a malformed address is refused before the run is read
        from bayesirl.posterior.cluster import check_arguments

        check_arguments(scheduler, None, False, None)
    run = RunFolder(Path(args.run))
    summary = run.read_summary()
    posterior = _load_posterior(run, summary)
    if getattr(posterior, "groups", None) is not None:
        raise InputError(f"{run.root}: suggestions for a run with several demonstrators "
                         "(pooling separate or partial) are not available yet; the designer "
                         "would treat every episode as one demonstrator's")
    names = posterior.feature_names
    if args.target is not None and args.target not in names:
        raise InputError(f"--target: unknown feature {args.target!r}; features are "
                         f"{', '.join(names)}")
    n_states = posterior.model.likelihood.mdp.n_states
    kwargs = {"candidates": parse_candidates(args.candidates, n_states),
              "budget": args.budget, "target": args.target, "seed": args.seed}
    if "progress" in inspect.signature(design.suggest).parameters:
        kwargs["progress"] = not args.quiet
    where = {} if scheduler is None else {"cluster": scheduler}  # not a setting of the result
    records = design.suggest(posterior, **kwargs, **where)
    rows = [{k: _field(r, k) for k in ("candidate", "gain", "stderr", "target_sd")}
            for r in records]
    write_json(run.suggestions, {"settings": {k: v for k, v in kwargs.items()
                                              if k != "progress"}, "suggestions": rows})
    print(f"{'rank':>4}  {'candidate':<24}{'gain':>10}{'stderr':>10}{'target sd':>11}")
    for k, r in enumerate(rows, start=1):
        print(f"{k:>4}  {str(r['candidate']):<24}{float(r['gain']):10.4g}"
              f"{float(r['stderr']):10.2g}{float(r['target_sd']):11.4g}")
    say(args, f"wrote {run.suggestions}")
    return 0


def check_command(args) -> int:
    """Validate files and print the structural findings, without sampling."""
    from bayesirl.report import structural

    problem = read_problem(args.problem)
    mdp = problem.mdp
    h = "infinite horizon" if mdp.horizon is None else f"horizon {mdp.horizon}"
    print(f"{args.problem}: ok - {mdp.n_states} states, {mdp.n_actions} actions, features "
          f"{', '.join(mdp.feature_names)}; discount {mdp.discount:g}, {h}")
    if args.demonstrations is None:
        print("no demonstration file given: structural findings need the demonstrations")
        return 0
    demos = read_demonstrations(args.demonstrations, problem)
    print(f"{args.demonstrations}: ok - {demos.n_episodes} episodes, {demos.n_steps} steps")
    for line in demonstrator_lines(problem, demos):
        print(line)
    found = structural.findings(mdp, demos)
    if not found:
        print("structural findings: none (every weight can in principle be learned from "
              "demonstrations like these)")
    for f in found:
        print(f"[{f.cause}] {f.message}")
    return 0
