"""The ``bayesirl`` command."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path


def _bench(args: argparse.Namespace) -> int:
    from bayesirl.bench import run_all

    only = tuple(x.strip() for x in args.only.split(",")) if args.only else None
    from bayesirl.bench import SUITES

    bad = [x for x in (only or ()) if x not in SUITES]
    if bad:
        print(f"bayesirl bench: unknown suite(s) {bad}; choose from {list(SUITES)}",
              file=sys.stderr)
        return 2
    md, js = run_all(Path(args.out), quick=args.quick, only=only or SUITES)
    print(f"wrote {md} and {js}")
    return 0


def build_parser() -> argparse.ArgumentParser:
    """Argument parser with one sub-command per task."""
    parser = argparse.ArgumentParser(
        prog="bayesirl",
        description="Posterior over reward weights from demonstrations, and what they leave open.",
    )
    sub = parser.add_subparsers(dest="command", required=True)
    bench = sub.add_parser(
        "bench",
        help="measure the engine against a plain baseline; writes reports/benchmark.md + .json",
        description="Benchmarks, every competitor measured side by side in one run. "
        "Example: bayesirl bench --quick --out /tmp/bench",
    )
    bench.add_argument("--out", default="reports", help="folder for the report (default: reports)")
    bench.add_argument("--quick", action="store_true",
                       help="small sizes only (a smoke run; the committed report is a full run)")
    bench.add_argument("--only", default="",
                       help="comma-separated suites to run: engine, sampler (default: all)")
    bench.set_defaults(func=_bench)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Entry point; returns the exit code (0 success, 2 bad input, 1 internal error)."""
    args = build_parser().parse_args(argv)
    return args.func(args)


if __name__ == "__main__":
    sys.exit(main())
