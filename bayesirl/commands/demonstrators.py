"""``bayesirl check``'s lines about named demonstrators: steps each, and who is too thin alone.

"Too thin alone" means the structural findings of :mod:`bayesirl.report.structural` for that
demonstrator's episodes by themselves include something the findings for all episodes
together do not: a weight no number of such episodes could determine (from the states they
start in), a feature that never varies where they went, or fewer steps per feature than our
rule of thumb. Under partial pooling such a demonstrator's weights lean on the population;
under separate rewards they stay wide.
"""

from __future__ import annotations


def demonstrator_lines(problem, demos) -> list[str]:
    """Plain-text lines for ``bayesirl check`` (empty when no episode names a demonstrator)."""
    from bayesirl.report import structural

    if demos.demonstrators is None:
        if problem.pooling.kind != "pooled":
            return [f"pooling: {problem.pooling.kind!r} needs episodes that name their "
                    "demonstrator, and none do (the fit will refuse)"]
        return []
    groups = demos.groups()
    mdp = problem.mdp
    together = {(f.cause, tuple(f.features)) for f in structural.findings(mdp, demos)}
    lines = [f"demonstrators: {len(groups)} (pooling {problem.pooling.kind!r})"]
    width = max(len(name) for name in groups)
    thin = []
    for name, episodes in groups.items():
        own = demos.subset(episodes)
        lines.append(f"  {name:<{width}}  {own.n_episodes:>5} episodes {own.n_steps:>7} steps")
        alone = [f for f in structural.findings(mdp, own)
                 if (f.cause, tuple(f.features)) not in together]
        if alone:
            causes = ", ".join(sorted({f"{f.cause} ({', '.join(f.features)})" for f in alone}))
            thin.append(f"  {name}: alone, too thin to determine every weight - {causes}")
    if thin:
        lines.append(f"{len(thin)} of {len(groups)} demonstrators are too thin alone:")
        lines += thin
    else:
        lines.append("every demonstrator alone has enough variety and steps for every weight "
                     "that all episodes together can determine")
    if problem.pooling.kind == "pooled" and len(groups) > 1:
        lines.append("note: [pooling] kind is 'pooled', so the named demonstrators share one "
                     "reward; intervals are too narrow if they differ (try 'partial')")
    return lines
