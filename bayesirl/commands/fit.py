"""``bayesirl fit``: problem + demonstrations -> a run folder; ``--resume`` continues one."""

from __future__ import annotations

import shlex
import shutil
import signal
import sys
from contextlib import contextmanager
from pathlib import Path

import bayesirl
from bayesirl import arviz_compat
from bayesirl.commands.runs import inputs_record, say, write_results
from bayesirl.errors import InputError
from bayesirl.io import RunFolder, read_demonstrations, read_problem, staged_folder
from bayesirl.io.runfolder import check_target, file_digest
from bayesirl.likelihood import BoltzmannLikelihood

# The shell's convention for a process stopped by SIGINT (128 + 2).
EXIT_INTERRUPTED = 130
OVERRIDES = ("chains", "draws", "warmup", "seed")


@contextmanager
def sigterm_as_interrupt():
    """SIGTERM stops the command like Ctrl-C outside sampling too (while it samples,
    ``bayesirl.sample`` installs its own handler, which also stops its worker processes)."""
    def handler(signum, frame):
        raise KeyboardInterrupt

    try:
        previous = signal.signal(signal.SIGTERM, handler)
    except ValueError:  # not the main thread: leave signals alone
        yield
        return
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def _load(problem_path, demos_path):
    problem = read_problem(problem_path)
    demos = read_demonstrations(demos_path, problem)
    beta = problem.rationality if isinstance(problem.rationality, float) else 1.0
    lik = BoltzmannLikelihood(problem.mdp, demos, rationality=beta, q=problem.demonstrator,
                              **problem.solver)
    # Before sampling starts (and before its status line), so a stop saves the draws at once.
    arviz_compat.preload()
    return problem, lik


def _sample_kwargs(problem, settings: dict, quiet: bool) -> dict:
    return {"prior": problem.prior, "rationality": problem.rationality,
            "pin": problem.pin or None, "progress": not quiet, **settings}


def fit_command(args) -> int:
    """Run ``bayesirl fit`` (see ``bayesirl fit --help``)."""
    if args.resume:
        if args.problem or args.demonstrations:
            raise InputError("fit --resume RUNDIR takes no problem or demonstration files; "
                             "the run folder records them")
        given = [f"--{k}" for k in (*OVERRIDES, "scheduler")
                 if getattr(args, k, None) is not None]
        if given or args.force:
            raise InputError(f"fit --resume continues with the run's own settings; drop "
                             f"{', '.join(given + (['--force'] if args.force else []))}")
        return resume_command(args)
    if not (args.problem and args.demonstrations):
        raise InputError("fit: give a problem file and a demonstration file, e.g. "
                         "bayesirl fit park.toml walks.csv --out run")
    check_target(args.out, args.force)  # before the slower reading and checking
    problem, lik = _load(args.problem, args.demonstrations)
    settings = dict(problem.sampler)
    for key in OVERRIDES:
        if getattr(args, key, None) is not None:
            settings[key] = getattr(args, key)
    record = {**inputs_record(args.problem, args.demonstrations), "requested": settings,
              "command": shlex.join(["bayesirl", *getattr(args, "argv", sys.argv[1:])])}
    say(args, f"{problem.mdp}; {lik.demos}; sampling {settings['chains']} chains x "
              f"{settings['draws']} draws")
    with staged_folder(args.out, replace=args.force) as tmp:
        code = _run(args, problem, lik, settings, record, RunFolder(tmp), resume=False)
    _finish(args, Path(args.out), code)
    return code


def _run(args, problem, lik, settings, record, run: RunFolder, resume: bool) -> int:
    kwargs = _sample_kwargs(problem, settings, args.quiet)
    if getattr(args, "scheduler", None) is not None:
        kwargs["cluster"] = args.scheduler  # chains as Dask tasks; no checkpoint there
    else:
        kwargs["checkpoint"] = run.checkpoint
        kwargs["resume"] = resume
    with sigterm_as_interrupt():
        try:
            posterior = bayesirl.sample(lik, **kwargs)
        except bayesirl.Interrupted as err:  # a KeyboardInterrupt subclass
            write_results(run, err.posterior, record, complete=False, quiet=True)
            return EXIT_INTERRUPTED
    _remove(run.checkpoint)  # a finished run needs no sampler state
    write_results(run, posterior, record, complete=True, level=args.level, quiet=args.quiet)
    return 0


def _remove(path: Path) -> None:
    if path.is_dir():
        shutil.rmtree(path)
    elif path.exists():
        path.unlink()


def _finish(args, out: Path, code: int) -> None:
    if code == EXIT_INTERRUPTED:
        print(f"interrupted: the draws so far are kept in {out} (marked incomplete); "
              f"continue with: bayesirl fit --resume {shlex.quote(str(out))}", file=sys.stderr)
    else:
        say(args, f"wrote {out}/posterior.nc, summary.json and report.html")


def resume_command(args) -> int:
    """Continue an interrupted run folder to its requested number of draws."""
    run = RunFolder(Path(args.resume))
    summary = run.read_summary()
    if summary.get("complete"):
        raise InputError(f"{run.root}: the run is already complete; nothing to resume")
    if not run.checkpoint.exists():
        raise InputError(f"{run.checkpoint}: missing; the run cannot be resumed")
    for key in ("problem", "demonstrations"):
        path = Path(summary[key])
        if not path.is_file():
            raise InputError(f"{path}: the run's {key} file is gone; cannot resume")
        if file_digest(path) != summary["inputs_sha256"][key]:
            raise InputError(f"{path}: changed since the run started; resuming would mix "
                             "two problems (start a new fit instead)")
    problem, lik = _load(summary["problem"], summary["demonstrations"])
    record = {k: summary[k] for k in ("problem", "demonstrations", "inputs_sha256",
                                      "requested", "command")}
    say(args, f"resuming {run.root}: {summary.get('draws_done', 0)} of "
              f"{record['requested']['draws']} draws per chain done")
    with staged_folder(run.root, replace=True, seed_from=run.root) as tmp:
        code = _run(args, problem, lik, record["requested"], record, RunFolder(tmp),
                    resume=True)
    _finish(args, run.root, code)
    return code
