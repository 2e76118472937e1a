"""The ``bayesirl`` command: parser, exit codes and error reporting.

Exit codes: 0 success, 2 bad input (a message naming the file, field and value), 1 internal
error, 130 an interrupted ``fit`` (the draws so far are kept). Tracebacks only with --debug.
"""

from __future__ import annotations

import argparse
import sys
import traceback
from pathlib import Path

from bayesirl.commands.signals import acknowledge, stop_on_signals
from bayesirl.errors import InputError, SolverError

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT = 0, 1, 2


def _bench(args: argparse.Namespace) -> int:
    from bayesirl.bench import SUITES, run_all, run_large

    if args.large:
        if args.only or args.quick:
            print("bayesirl bench: --large runs its own suite; drop --only/--quick",
                  file=sys.stderr)
            return 2
        md, js = run_large(Path(args.out), sizes=args.large_sizes, draws=args.large_draws,
                           warmup=args.large_warmup)
        print(f"wrote {md} and {js}")
        return 0
    if (args.large_sizes, args.large_draws, args.large_warmup) != (None, None, None):
        print("bayesirl bench: --large-sizes/--large-draws/--large-warmup need --large",
              file=sys.stderr)
        return 2
    only = tuple(x.strip() for x in args.only.split(",")) if args.only else None
    bad = [x for x in (only or ()) if x not in SUITES]
    if bad:
        print(f"bayesirl bench: unknown suite(s) {bad}; choose from {list(SUITES)}",
              file=sys.stderr)
        return 2
    md, js = run_all(Path(args.out), quick=args.quick, only=only or SUITES)
    print(f"wrote {md} and {js}")
    return 0


def _sizes(text: str) -> list[int]:
    out = []
    for part in text.split(","):
        try:
            v = float(part)
        except ValueError:
            v = float("nan")
        if not (10 <= v < 1e9 and v == int(v)):
            raise argparse.ArgumentTypeError(
                f"{part!r} is not a state count >= 10; give e.g. 1000,10000 or 1e5")
        out.append(int(v))
    return out


def _fit(args):
    from bayesirl.commands.fit import fit_command

    return fit_command(args)


def _sketch(args):
    from bayesirl.commands.sketch import sketch_command

    return sketch_command(args)


def _report(args):
    from bayesirl.commands.views import report_command

    return report_command(args)


def _suggest(args):
    from bayesirl.commands.views import suggest_command

    return suggest_command(args)


def _check(args):
    from bayesirl.commands.views import check_command

    return check_command(args)


def _compare(args):
    from bayesirl.commands.compare import compare_command

    return compare_command(args)


def _example(args):
    from bayesirl.commands.example import example_command

    return example_command(args, main)


def _validate(args):
    from bayesirl.validation.report import validate_command

    return validate_command(args)


TOLERANCE_HELP = ("precision that matters, in reward units: a weight is determined when its "
                  "interval excludes zero and its half-width is <= T (default: [report] "
                  "tolerance in the problem file, else within a factor of 2 of its own size)")


def _level(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        v = float("nan")
    if not 0.0 < v < 1.0:
        raise argparse.ArgumentTypeError(f"{text!r} is not a level in (0, 1), e.g. 0.9")
    return v


def _positive(text: str) -> int:
    if not text.isdigit() or int(text) < 1:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number >= 1")
    return int(text)


def _count(text: str) -> int:
    if not text.isdigit():
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number >= 0")
    return int(text)


def _common() -> argparse.ArgumentParser:
    # Accepted before or after the sub-command; SUPPRESS keeps a sub-command's default from
    # overwriting a value given before it.
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                        help="show the full traceback of any error")
    common.add_argument("--quiet", action="store_true", default=argparse.SUPPRESS,
                        help="no progress bars, tables or status lines")
    return common


def _add(sub, name: str, help_: str, example: str, func):
    p = sub.add_parser(name, help=help_, parents=[_common()],
                       description=f"{help_[0].upper()}{help_[1:]}.",
                       epilog=f"example:\n  {example}",
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.set_defaults(func=func)
    return p


def _fit_parser(sub) -> None:
    fit = _add(sub, "fit", "sample the posterior over reward weights into a run folder "
               "(posterior.nc, summary.json, report.html)",
               "bayesirl fit park.toml walks.csv --out park-run --draws 500", _fit)
    fit.add_argument("problem", nargs="?", help="problem file (TOML; its format is in the README)")
    fit.add_argument("demonstrations", nargs="?",
                     help="demonstrations: .csv (one row per step) or .jsonl (one episode per "
                          "line)")
    fit.add_argument("--out", default="run", help="run folder to create (default: run); it is "
                     "built beside it and renamed, never left half-written")
    fit.add_argument("--force", action="store_true", help="replace an existing run folder")
    fit.add_argument("--comparisons", metavar="FILE",
                     help="answers comparing episodes (.jsonl; see the README), used as "
                          "further evidence with the judge's rationality fixed at 1")
    fit.add_argument("--resume", metavar="RUNDIR", help="continue an interrupted run folder to "
                     "its requested draws, e.g. bayesirl fit --resume park-run")
    fit.add_argument("--level", type=_level,
                     help="credible level of the report's intervals (default: [report] level "
                          "in the problem file, else 0.9)")
    fit.add_argument("--tolerance", type=float, metavar="T", help=TOLERANCE_HELP)
    fit.add_argument("--chains", type=_positive, help="override [sampler] chains, e.g. 4")
    fit.add_argument("--draws", type=_positive, help="override [sampler] draws per chain")
    fit.add_argument("--warmup", type=_count, help="override [sampler] warm-up iterations")
    fit.add_argument("--seed", type=_count, help="override [sampler] seed")
    fit.add_argument("--start", choices=("uniform", "pathfinder"),
                     help="override [sampler] start: where chains begin; pathfinder runs one "
                          "Pathfinder path per chain for its start and initial mass matrix, "
                          "so a shorter --warmup can do (default uniform)")
    fit.add_argument("--scheduler", metavar="ADDRESS",
                     help="run each chain as a task on a Dask cluster, e.g. tcp://host:8786, "
                          "or 'local' for a cluster on this machine (needs bayesirl[cluster]; "
                          "no checkpoint, so an interrupted run keeps nothing)")


_WHO = ("a run with several demonstrators: rank more demonstrations from this demonstrator; "
        "repeat it to rank several people in one list (this or --new-demonstrator is "
        "required there)")
_NEW_WHO = ("a run with partial pooling: also rank a demonstration from a person not in the "
            "data yet, drawn from the population, in the same list (one pick: --budget 1)")


def _sketch_parser(sub) -> None:
    sk = _add(sub, "sketch", "a fast approximate posterior (multi-path Pathfinder) with a Pareto "
              "k-hat check that says whether it can be read as the posterior; writes nothing",
              "bayesirl sketch park.toml walks.csv --paths 4", _sketch)
    sk.add_argument("problem", help="problem file (TOML)")
    sk.add_argument("demonstrations", help="demonstrations (.csv or .jsonl)")
    sk.add_argument("--comparisons", metavar="FILE", help="answers comparing episodes (.jsonl)")
    sk.add_argument("--paths", type=_positive, default=4, help="L-BFGS paths (default 4)")
    sk.add_argument("--draws", type=_positive, default=1000,
                    help="draws per path for the importance check (default 1000)")
    sk.add_argument("--seed", type=_count, help="seed (default: [sampler] seed)")
    sk.add_argument("--level", type=_level, default=0.9,
                    help="level of the central intervals shown (default 0.9)")


def _other_parsers(sub) -> None:
    rep = _add(sub, "report", "re-render a run folder's report.html and summary.json, e.g. at "
               "another interval level", "bayesirl report park-run --level 0.5", _report)
    rep.add_argument("run", help="run folder made by bayesirl fit")
    rep.add_argument("--level", type=_level,
                     help="credible level of the intervals, verdicts and policy-risk bound "
                          "(default: [report] level in the problem file, else 0.9)")
    rep.add_argument("--tolerance", type=float, metavar="T", help=TOLERANCE_HELP)
    rep.add_argument("--states", metavar="S,S,...",
                     help="states whose action probabilities to report, e.g. 0,8,24")
    rep.add_argument("--suggestions", action="store_true",
                     help="add the run's suggestions.json (from bayesirl suggest) to the page")
    _suggest_parser(sub)
    _compare_parser(sub)
    chk = _add(sub, "check", "validate a problem file (and demonstrations) and print the "
               "structural identifiability findings, without sampling",
               "bayesirl check park.toml walks.csv", _check)
    chk.add_argument("problem", help="problem file (TOML)")
    chk.add_argument("demonstrations", nargs="?", help="demonstration file (.csv or .jsonl)")
    chk.add_argument("--comparisons", metavar="FILE",
                     help="comparison answers between episodes (.jsonl) to check too")
    ex = _add(sub, "example", "write a bundled example's files into a folder and run it end to "
              "end into FOLDER/run", "bayesirl example park park-demo   (or: bayesirl example "
              "--list)", _example)
    ex.add_argument("name", nargs="?", help="example name (see --list)")
    ex.add_argument("folder", nargs="?", help="folder for the example's files and run")
    ex.add_argument("--list", action="store_true", help="name the bundled examples")
    ex.add_argument("--force", action="store_true", help="replace an existing FOLDER/run")
    val = _add(sub, "validate", "check the posterior's calibration by simulation (SBC); writes "
               "reports/validation.md", "bayesirl validate --replications 50 --out /tmp/val",
               _validate)
    val.add_argument("--replications", type=_positive, default=200,
                     help="simulated data sets per check (default 200)")
    val.add_argument("--out", default="reports", help="folder for the report (default reports)")
    val.add_argument("--processes", type=_positive, help="worker processes (default: all cores)")


def _suggest_parser(sub) -> None:
    """``bayesirl suggest``."""
    sug = _add(sub, "suggest", "rank extra demonstrations by how much they would narrow the "
               "posterior", "bayesirl suggest park-run --candidates start-states --budget 3",
               _suggest)
    sug.add_argument("run", help="run folder made by bayesirl fit")
    sug.add_argument("--candidates", default="start-states",
                     help="start-states (new episodes from each state), query-states (one "
                          "labelled action at a state) or states as 0,5,12 "
                          "(default start-states)")
    sug.add_argument("--budget", type=_positive, default=1,
                     help="number of demonstrations to choose together (default 1)")
    sug.add_argument("--target", help="also report the expected sd after each pick of a "
                     "feature's weight (water), a ratio (water/mud) or policy-risk")
    sug.add_argument("--seed", type=_count, default=0, help="seed of the scoring (default 0)")
    sug.add_argument("--outer", type=_positive, default=512, metavar="N",
                     help="outer Monte-Carlo samples per candidate (default 512); more give a "
                          "more settled ranking, in proportional time")
    sug.add_argument("--demonstrator", metavar="NAME", action="append", help=_WHO)
    sug.add_argument("--new-demonstrator", action="store_true", help=_NEW_WHO)
    sug.add_argument("--comparisons", metavar="draws|FILE",
                     help="rank comparison questions for a judge instead: 'draws' (pairs of "
                          "episodes simulated from posterior draws' policies) or a .jsonl "
                          "file of episodes and {\"ask\": [id, id]} lines (every pair "
                          "without any); writes comparison-suggestions.json")
    sug.add_argument("--pairs", type=_positive, default=20,
                     help="with --comparisons draws: pairs to generate (default 20)")
    sug.add_argument("--length", type=_positive, default=None,
                     help="with --comparisons draws: steps per generated episode (default: "
                          "the median demonstrated episode length)")
    sug.add_argument("--report", action="store_true",
                     help="also add the suggestions (table and map markers) to the run's "
                          "report.html")
    sug.add_argument("--scheduler", metavar="ADDRESS",
                     help="split the policy solves and the candidate scoring across a Dask "
                          "cluster, e.g. tcp://host:8786, or 'local' for a cluster on this "
                          "machine (needs bayesirl[cluster]; same suggestions as without)")


def _compare_parser(sub) -> None:
    cmp = _add(sub, "compare", "rank runs on the same demonstrations by how well they "
               "predict left-out episodes (PSIS-LOO)", "bayesirl compare park-run "
               "park-no-water", _compare)
    cmp.add_argument("runs", nargs="+", metavar="RUN", help="run folders made by bayesirl fit "
                     "on the same demonstrations (two or more)")
    cmp.add_argument("--refit", action="store_true", help="sample again without each episode "
                     "whose Pareto k exceeds 0.7 (exact, one run per episode)")
    cmp.add_argument("--over", choices=("episodes", "comparisons"), default="episodes",
                     help="leave out one episode at a time (default; fully recorded and "
                     "partly recorded episodes) or, for runs with a comparison file, one "
                     "comparison answer at a time; never both in one sum")


def _large_options(bench) -> None:
    # Defaults are bench/large.py's (SIZES, DRAWS, WARMUP); None keeps that import, and
    # numpy's, out of every other command's start-up.
    bench.add_argument("--large", action="store_true",
                       help="instead, fit 10^3..10^5-state problems and record time, ESS, "
                            "memory and scaling in benchmark-large.md + .json (hours at 10^5)")
    bench.add_argument("--large-sizes", type=_sizes, metavar="S,S,...",
                       help="state counts for --large, e.g. 1e5; their rows replace those of "
                            "an existing benchmark-large.json, others are kept "
                            "(default 1000,10000,100000)")
    bench.add_argument("--large-draws", type=_positive, metavar="N",
                       help="draws per chain for --large (default 1000)")
    bench.add_argument("--large-warmup", type=_count, metavar="N",
                       help="warmup iterations per chain for --large (default 300)")


def build_parser() -> argparse.ArgumentParser:
    """Argument parser with one sub-command per task."""
    parser = argparse.ArgumentParser(
        prog="bayesirl", parents=[_common()],
        description="Posterior over reward weights from demonstrations, and what they leave "
                    "open. Exit codes: 0 success, 2 bad input, 1 internal error, 130 "
                    "interrupted fit.",
        epilog="example:\n  bayesirl example park park-demo",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.set_defaults(debug=False, quiet=False)
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    _fit_parser(sub)
    _sketch_parser(sub)
    _other_parsers(sub)
    bench = _add(sub, "bench", "measure the engine against a plain baseline; writes "
                 "reports/benchmark.md + .json", "bayesirl bench --quick --out /tmp/bench",
                 _bench)
    bench.add_argument("--out", default="reports", help="folder for the report (default: reports)")
    bench.add_argument("--quick", action="store_true",
                       help="small sizes only (a smoke run; the committed report is a full run)")
    bench.add_argument("--only", default="",
                       help="comma-separated suites to run: engine, sampler, design, groups, "
                            "evidence (default: all)")
    _large_options(bench)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Entry point; returns the exit code (0 success, 2 bad input, 1 internal error)."""
    argv = list(sys.argv[1:] if argv is None else argv)
    try:
        args = build_parser().parse_args(argv)
    except SystemExit as stop:  # argparse: --help (0) or a usage error (2)
        return stop.code if isinstance(stop.code, int) else EXIT_BAD_INPUT
    args.argv = argv
    try:
        with stop_on_signals():  # SIGTERM stops a command as Ctrl-C does
            return int(args.func(args) or 0)
    except InputError as err:
        if args.debug:
            traceback.print_exc()
        print(f"bayesirl {args.command}: error: {err}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except SolverError as err:  # numerics, not the input: exit 1, with what to change
        if args.debug:
            traceback.print_exc()
        print(f"bayesirl {args.command}: solver error: {err}", file=sys.stderr)
        return EXIT_INTERNAL
    except KeyboardInterrupt:
        acknowledge()
        done = ("nothing was written" if args.command in ("fit", "check") else
                "each file is either written completely or left as it was")
        print(f"bayesirl {args.command}: interrupted; {done}", file=sys.stderr)
        return 130
    except MemoryError:
        print(f"bayesirl {args.command}: error: not enough memory for this input; reduce "
              "draws, chains or the problem's size", file=sys.stderr)
        return EXIT_BAD_INPUT
    except Exception as err:  # anything else is our bug: say so, briefly
        if args.debug:
            traceback.print_exc()
        print(f"bayesirl {args.command}: internal error: {type(err).__name__}: {err}\n"
              "(run again with --debug for the traceback, and please report it)",
              file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":
    sys.exit(main())
