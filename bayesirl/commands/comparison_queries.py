"""``bayesirl suggest RUN --comparisons draws|FILE``: which comparison to ask a judge next.

Candidate pairs come from a file (episodes and ``{"ask": [id, id]}`` lines, see
:func:`bayesirl.io.comparisonfiles.read_candidates`) or are generated from the posterior:
one episode simulated from the soft policy of each of ``2 * --pairs`` randomly chosen draws,
paired two by two (:func:`bayesirl.design.comparisons.pairs_from_draws`). Each pair is ranked
by the expected information gain of its answer (exact over the two answers, or three with
"no preference"; :func:`bayesirl.design.comparisons.comparison_gains`). Each pair is scored
on its own: the ranking is of single questions, not a batch chosen together.

The judge: the run's own draws of ``judge_rationality`` / ``judge_tie`` when it sampled them;
else the fixed values of the run's comparison term; else the problem file's ``[judge]``
(a prior there is drawn from, seeded: the rationality is then unknown, not learned).
"""

from __future__ import annotations

import numpy as np

from bayesirl.errors import InputError
from bayesirl.files import write_json

OUT_NAME = "comparison-suggestions.json"


def thinned(x: np.ndarray, n: int) -> np.ndarray:
    """At most ``n`` of the pooled draws ``(C, D, ...)``, evenly spaced."""
    flat = x.reshape(-1, *x.shape[2:])
    idx = np.unique(np.linspace(0, flat.shape[0] - 1, min(n, flat.shape[0])).astype(int))
    return flat[idx], idx


def judge(posterior, problem, idx: np.ndarray, seed: int) -> tuple[object, object, str]:
    """``(rationality, tie, where from)``: numbers or one value per used draw."""
    extra = getattr(posterior, "extra_draws", {})
    terms = [t for t in getattr(posterior.model, "extra", ()) if hasattr(t, "davidson")]
    rng = np.random.default_rng(seed)

    def pick(name, fixed_attr, setting):
        if name in extra:
            return extra[name].reshape(-1)[idx], "the run's draws"
        if terms and getattr(terms[0], fixed_attr) is not None:
            return getattr(terms[0], fixed_attr), "the run's fixed value"
        if terms and name == "judge_tie":  # the run's judge had no tie option
            return None, "the run's model (no 'no preference' answer)"
        if problem is None:
            return (1.0 if setting == "rationality" else None,
                    "the default (the run's problem file does not read)")
        value = problem.judge[setting]
        if value is None or isinstance(value, float | int):
            return value, "the problem file's [judge]"
        return value.draw(rng, idx.size), "draws from the [judge] prior"

    beta, b_from = pick("judge_rationality", "fixed", "rationality")
    tie, t_from = pick("judge_tie", "tie_fixed", "tie")
    return beta, tie, f"judge rationality from {b_from}" + (
        "" if tie is None else f", tie parameter from {t_from}")


def rank_comparisons(args, run, posterior, summary: dict, read_problem) -> int:
    """Rank the candidate questions, print them and write ``comparison-suggestions.json``."""
    from bayesirl.design.comparisons import comparison_gains, pairs_from_draws
    from bayesirl.evidence.comparisons import discounted_features

    mdp = posterior.model.likelihood.mdp
    problem = None
    if summary.get("problem"):
        try:
            problem = read_problem(summary["problem"])
        except (InputError, OSError):
            problem = None
    draws, idx = thinned(posterior.weights, args.outer)
    if args.comparisons == "draws":
        lengths = [a.size for _, a in posterior.model.likelihood.demos.episodes]
        length = args.length or int(np.median(lengths))
        episodes, diffs = pairs_from_draws(mdp, draws, args.pairs, length, seed=args.seed)
        names = [f"draw-{k + 1}" for k in range(len(episodes))]
        pairs = list(zip(names[0::2], names[1::2], strict=True))
        shown = dict(zip(names, episodes, strict=True))
    else:
        if problem is None:
            raise InputError(f"{args.comparisons}: reading candidate episodes needs the run's "
                             f"problem file ({summary.get('problem')!r}), which does not read")
        from bayesirl.io.comparisonfiles import read_candidates

        shown, pairs = read_candidates(args.comparisons, problem)
        phi = {n: discounted_features(mdp, *ep) for n, ep in shown.items()}
        diffs = np.array([phi[a] - phi[b] for a, b in pairs])
    beta, tie, source = judge(posterior, problem, idx, args.seed)
    gains = comparison_gains(draws, diffs, rationality=beta, tie=tie)
    order = gains.order()
    records = [{"first": pairs[k][0], "second": pairs[k][1], "gain": float(gains.gain[k]),
                "stderr": float(gains.stderr[k]), "p_first": float(gains.p_first[k])}
               for k in order]
    out = run.root / OUT_NAME
    write_json(out, {"settings": {"comparisons": str(args.comparisons), "seed": args.seed,
                                  "draws_used": int(idx.size), "judge": source,
                                  "answers": 2 if tie is None else 3},
                     "diagnostics_ok": bool(posterior.diagnostics.ok),
                     "episodes": {n: {"states": s.tolist(), "actions": a.tolist()}
                                  for n, (s, a) in shown.items()},
                     "questions": records})
    if not args.quiet:
        print(f"comparison questions ranked by expected information gain (nats, over "
              f"{2 if tie is None else 3} answers; {idx.size} draws; {source}):")
        for r, rec in enumerate(records[:max(10, args.budget)], start=1):
            print(f"{r:3d}. {rec['first']} or {rec['second']}: gain {rec['gain']:.3f} "
                  f"(se {rec['stderr']:.3f}), P(first preferred) {rec['p_first']:.2f}")
    if not args.quiet:
        print(f"wrote {out}")
    return 0
