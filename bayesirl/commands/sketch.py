"""``bayesirl sketch``: a fast approximate posterior, and whether it can be read as one.

Multi-path Pathfinder through :func:`bayesirl.execution.approximate.approximate`; prints
each weight's mean, sd and central interval, then the Pareto k-hat verdict. Writes no
files. See docs/pathfinder.md.
"""

from __future__ import annotations

from bayesirl.commands.fit import _load
from bayesirl.commands.runs import say
from bayesirl.errors import InputError


def sketch_command(args) -> int:
    """Run ``bayesirl sketch`` (see ``bayesirl sketch --help``)."""
    from bayesirl.execution.approximate import approximate

    problem, lik, extra = _load(args.problem, args.demonstrations,
                                getattr(args, "comparisons", None))
    if problem.pooling.kind != "pooled":
        raise InputError(f"{args.problem}: [pooling] kind = {problem.pooling.kind!r}: sketch "
                         "approximates the pooled model only for now; use bayesirl fit")
    seed = args.seed if args.seed is not None else problem.sampler.get("seed", 0)
    say(args, f"{problem.mdp}; {lik.demos}; Pathfinder: {args.paths} paths x {args.draws} "
              "draws")
    result = approximate(lik, problem.prior, paths=args.paths, draws=args.draws, seed=seed,
                         rationality=problem.rationality, pin=problem.pin or None,
                         evidence=extra)
    print("\n".join(result.table(args.level)))
    print(result.verdict())
    print(f"({result.n_evals} log-posterior evaluations"
          + (f"; the soft Bellman solve failed at {result.solver_failures} points"
             if result.solver_failures else "") + ")")
    return 0
