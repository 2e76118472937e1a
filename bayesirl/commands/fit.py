"""``bayesirl fit``: problem + demonstrations -> a run folder; ``--resume`` continues one."""

from __future__ import annotations

import shlex
import sys
from pathlib import Path

import bayesirl
from bayesirl import arviz_compat
from bayesirl.commands import evidence_files, mass
from bayesirl.commands.runs import (
    inputs_record,
    report_choice,
    save_draws,
    say,
    started_summary,
    write_report,
)
from bayesirl.commands.signals import acknowledge, held
from bayesirl.errors import InputError
from bayesirl.files import write_json
from bayesirl.io import RunFolder, read_problem
from bayesirl.io.runfolder import Staging, check_target
from bayesirl.likelihood import BoltzmannLikelihood
from bayesirl.resources import check_sampling

# The shell's convention for a process stopped by SIGINT (128 + 2).
EXIT_INTERRUPTED = 130
OVERRIDES = ("chains", "draws", "warmup", "seed", "start")


def _load(problem_path, demos_path, comparisons_path=None):
    """``(problem, likelihood, further evidence terms)`` from the input files."""
    problem = read_problem(problem_path)
    if problem.dynamics is not None:  # never fall back silently to known dynamics
        raise InputError(f"{problem_path}: [dynamics]: bayesirl fit does not learn the "
                         "dynamics yet; use bayesirl.execution.cut.sample_cut from Python "
                         "(examples/machine_wear.py), or remove [dynamics] to take the "
                         "transitions as known")
    demos, partial = evidence_files.read_any_episodes(demos_path, problem)
    if demos is None:
        raise InputError(f"{demos_path}: every episode has an unrecorded action or state; fit "
                         "needs at least one fully recorded episode for now")
    beta = problem.rationality if isinstance(problem.rationality, float) else 1.0
    lik = BoltzmannLikelihood(problem.mdp, demos, rationality=beta,
                              q_function=problem.q_function, **problem.solver)
    extra = evidence_files.further_evidence(problem, partial, comparisons_path)
    # Before sampling starts (and before its status line), so a stop saves the draws at once.
    arviz_compat.preload()
    return problem, lik, extra


def _sample_kwargs(problem, settings: dict, quiet: bool, extra=()) -> dict:
    return {"prior": problem.prior, "rationality": problem.rationality,
            "pin": problem.pin or None, "progress": not quiet, "pooling": problem.pooling,
            **({"evidence": extra} if extra else {}), **settings}


def fit_command(args) -> int:
    """Run ``bayesirl fit`` (see ``bayesirl fit --help``)."""
    if args.resume:
        if args.problem or args.demonstrations or getattr(args, "comparisons", None):
            raise InputError("fit --resume RUNDIR takes no problem, demonstration or "
                             "comparison files; the run folder records them")
        given = [f"--{k}" for k in (*OVERRIDES, "scheduler")
                 if getattr(args, k, None) is not None]
        if given or args.force:
            raise InputError(f"fit --resume continues with the run's own settings; drop "
                             f"{', '.join(given + (['--force'] if args.force else []))}")
        from bayesirl.commands.resume import resume_command

        return resume_command(args)
    if not (args.problem and args.demonstrations):
        raise InputError("fit: give a problem file and a demonstration file, e.g. "
                         "bayesirl fit park.toml walks.csv --out run")
    inputs = (args.problem, args.demonstrations)
    comparisons = getattr(args, "comparisons", None)
    check_target(args.out, args.force, inputs + ((comparisons,) if comparisons else ()))
    problem, lik, extra = _load(*inputs, comparisons)
    settings = dict(problem.sampler)
    for key in OVERRIDES:
        if getattr(args, key, None) is not None:
            settings[key] = getattr(args, key)
    check_sampling(settings["chains"], settings["draws"], settings["warmup"],
                   problem.mdp.n_features + 1)
    settings, why = mass.choose(problem, lik, settings)  # a ridge: dense mass matrix
    if why:
        say(args, f"dense mass matrix: on, because {why}")
    record = {**inputs_record(*inputs, comparisons=comparisons), "requested": settings,
              "command": shlex.join(["bayesirl", *getattr(args, "argv", sys.argv[1:])])}
    say(args, f"{problem.mdp}; {lik.demos}"
              + "".join(f"; {t!r}" for t in extra)
              + f"; sampling {settings['chains']} chains x {settings['draws']} draws")
    stage = Staging(args.out, replace=args.force,
                    inputs=inputs + ((comparisons,) if comparisons else ()))
    return sample_into(args, stage, problem, lik, settings, record, resume=False, extra=extra)


def _sample(args, problem, lik, settings, run: RunFolder, resume: bool, extra=()):
    kwargs = _sample_kwargs(problem, settings, args.quiet, extra)
    if getattr(args, "scheduler", None) is not None:
        kwargs["backend"] = bayesirl.Cluster(args.scheduler)  # Dask tasks; no checkpoint
    else:
        kwargs["checkpoint"] = run.checkpoint
        kwargs["resume"] = resume
    return bayesirl.sample(lik, **kwargs)


def sample_into(args, stage: Staging, problem, lik, settings, record, resume: bool,
                extra=()) -> int:
    """Sample into the staging folder, move it into place, then write the report.

    Whatever stops the run, what was sampled is kept: an interrupted run (or one killed
    before it could save) keeps its checkpoint for ``fit --resume``; a finished run's draws
    are saved and in place before the report is begun.
    """
    run, done = RunFolder(stage.path), {}
    try:
        if not resume:  # the record a resume needs, even after SIGKILL
            write_json(run.summary, started_summary(record))
        done["posterior"] = _sample(args, problem, lik, settings, run, resume, extra)
    except bayesirl.Interrupted as err:  # a KeyboardInterrupt subclass
        acknowledge()
        with held():
            save_draws(run, err.posterior, record, complete=False)
            stage.commit()
        return _interrupted(stage.target)
    except KeyboardInterrupt:  # a second Ctrl-C, or a signal just before/after sampling
        done["signal"] = True
        acknowledge()
        if "posterior" not in done:
            if not run.checkpoint.is_file():
                stage.discard()
                raise
            with held():  # the last periodic checkpoint: resumable
                save_draws(run, None, record, complete=False)
                stage.commit()
            return _interrupted(stage.target)
    except BaseException:
        stage.discard()
        raise
    try:
        with held() as late:
            summary = save_draws(run, done["posterior"], record, complete=True)
            stage.commit()
    except Exception:  # the finished checkpoint stays: a resume saves the draws at once
        print(f"the finished sampler state is kept in {stage.path}; save it again with: "
              f"bayesirl fit --resume {shlex.quote(str(stage.target))}", file=sys.stderr)
        raise
    if done.get("signal") or late:  # stopped as sampling ended: keep the draws, no report
        _remove(RunFolder(stage.target).checkpoint)
        return _report_skipped(RunFolder(stage.target))
    return render(args, RunFolder(stage.target), done["posterior"], summary,
                  problem.action_names, problem.report)


def render(args, out: RunFolder, posterior, summary: dict, action_names=None,
           defaults: dict | None = None) -> int:
    """Write the report of a finished run already in place; a signal leaves the draws.

    ``defaults`` is the problem file's ``[report]`` table (level, tolerance); the command
    line's ``--level`` / ``--tolerance`` override it."""
    try:
        _remove(out.checkpoint)  # a finished run needs no sampler state
        settings = report_choice(args, defaults)
        write_report(out, posterior, {**summary, "report_settings": settings},
                     settings["level"], args.quiet, tolerance=settings["tolerance"],
                     action_names=action_names)
    except KeyboardInterrupt:
        acknowledge()
        return _report_skipped(out)
    for line in evidence_files.contribution_lines(posterior):
        say(args, line)
    made = "report.html" if out.report.exists() else "demonstrators.png"  # separate rewards
    say(args, f"wrote {out.root}/posterior.nc, summary.json and {made}")
    return 0


def _report_skipped(out: RunFolder) -> int:
    where = shlex.quote(str(out.root))
    print(f"interrupted while writing the report: sampling had finished and all the draws are "
          f"saved in {out.posterior}; write the report with: bayesirl report {where}",
          file=sys.stderr)
    return EXIT_INTERRUPTED


def _remove(path: Path) -> None:
    if path.exists():
        path.unlink()


def _interrupted(out: Path) -> int:
    print(f"interrupted: the draws so far are kept in {out} (marked incomplete); "
          f"continue with: bayesirl fit --resume {shlex.quote(str(out))}", file=sys.stderr)
    return EXIT_INTERRUPTED
