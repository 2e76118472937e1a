"""``check`` (and later ``fit``) for the further kinds of evidence: episodes with unrecorded
actions or states, and comparison files. Kept apart from the demonstration path so that files
without blanks read exactly as before."""

from __future__ import annotations

import numpy as np

from bayesirl.errors import InputError
from bayesirl.io import read_demonstrations


def read_any_episodes(path, problem):
    """``(Demonstrations or None, EpisodeFile or None)``: a demonstration file as before, or,
    if it has unrecorded actions or states, the episode file it is.

    When both readers refuse a file, the error shown is the episode reader's if the
    demonstration reader stopped at a blank (so the real problem further on is named), else
    the demonstration reader's (e.g. a demonstrator column, which only it reads).
    """
    from bayesirl.io.episodefiles import read_episodes

    try:
        return read_demonstrations(path, problem), None
    except InputError as first:
        msg = str(first)  # stopped at a blank CSV field or a JSON null?
        at_blank = "''" in msg or "empty action" in msg or " None " in msg
        try:
            found = read_episodes(path, problem)
        except InputError as second:
            raise (second if at_blank else first) from None
        if found.partial is None:
            raise first from None
        return found.demonstrations, found


def episode_lines(path, found) -> list[str]:
    """What ``check`` prints about an episode file with unrecorded parts."""
    part = found.partial
    n_a = sum(int(np.sum(a < 0)) for _, a in part.episodes)
    n_s = sum(int(np.sum(s[:-1] < 0)) for s, _ in part.episodes)
    return [f"{path}: ok - {len(found.names)} episodes: {len(found.complete)} fully recorded, "
            f"{len(found.incomplete)} with unrecorded parts ({n_a} actions and {n_s} states "
            "not recorded; their likelihood sums over what is missing)"]


def comparison_lines(path, problem) -> list[str]:
    """Read a comparison file and say what it holds."""
    from bayesirl.io.comparisonfiles import read_comparisons

    found = read_comparisons(path, problem)
    n_tie = sum(found.ties)
    model = ("Davidson's tie model on discounted returns" if problem.judge["tie"] is not None
             else "Bradley-Terry choice on discounted returns")
    return [f"{path}: ok - {len(found.pairs)} answers ({n_tie} 'no preference') comparing "
            f"{len(found.episodes)} episodes ({model}; judge rationality "
            f"{_setting(problem.judge['rationality'])}"
            + ("" if problem.judge["tie"] is None
               else f", tie parameter {_setting(problem.judge['tie'])}") + ")"]


def _setting(value) -> str:
    if isinstance(value, float | int):
        return f"{value:g} (fixed)"
    return f"sampled, log-normal prior (log_mean {value.mu:g}, log_sd {value.sigma:g})"


def further_evidence(problem, found, comparisons_path) -> tuple:
    """The evidence terms beside the demonstrations: partial episodes, comparisons."""
    from bayesirl.evidence.partial import PartialTerm
    from bayesirl.io.comparisonfiles import read_comparisons

    terms = []
    if found is not None and found.partial is not None:
        if problem.q_function != "soft":
            raise InputError(f"{problem.source}: [model] q_function = "
                             f"{problem.q_function!r}; episodes with unrecorded actions or "
                             "states are modelled for the soft demonstrator only")
        terms.append(PartialTerm(problem.mdp, found.partial, **problem.solver))
    if comparisons_path is not None:
        found = read_comparisons(comparisons_path, problem)
        terms.append(found.term(problem.mdp, problem.judge["rationality"],
                                problem.judge["tie"]))
    return tuple(terms)


def contribution_lines(posterior) -> list[str]:
    """What each kind of evidence did to each free weight's sd (the Laplace split of
    :mod:`bayesirl.evidence.contributions` at the posterior mean), or nothing for a model
    with one kind of evidence (see :mod:`bayesirl.report.evidence_split`)."""
    from bayesirl.report import evidence_split

    return evidence_split.lines(evidence_split.record(posterior))
