"""``ambiguity(posterior)``: what the demonstrations determine about the reward, and what not."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from bayesirl.files import write_json, write_text
from bayesirl.posterior.diagnostics import EBFMI_MIN, ESS_MIN, RHAT_MAX
from bayesirl.report import derived, structural, verdicts
from bayesirl.report.suggestions import as_records
from bayesirl.report.verdicts import CAUTION
from bayesirl.report.weights import directions, groups, mark_groups, weights_table

if TYPE_CHECKING:
    from bayesirl.posterior import Posterior
    from bayesirl.priors import Prior


@dataclass
class AmbiguityReport:
    """Every number of the ambiguity report; render with :meth:`to_html`, :meth:`to_json`."""

    level: float
    weights: list[dict]
    directions: list[dict]
    structural: list[dict]
    derived: dict
    policy_risk: dict
    diagnostics: dict
    assumptions: dict
    verdict: str = ""
    groups: list = field(default_factory=list)  # weights determined only in combination
    tolerance: float | None = None
    suggestions: list = field(default_factory=list)  # plain records from bayesirl.suggest
    posterior: object = field(default=None, repr=False)
    # several demonstrators: the record of posterior.group_summary.demonstrator_summary
    demonstrators: dict | None = field(default=None, repr=False)
    # several kinds of evidence: the record of report.evidence_split (summary.json too)
    evidence: dict | None = None

    def as_dict(self) -> dict:
        """JSON-ready dictionary (the posterior itself is left out)."""
        return {"level": self.level, "tolerance": self.tolerance, "verdict": self.verdict,
                "verdict_words": dict(verdicts.WORDS), "weights": self.weights,
                "groups": self.groups, "directions": self.directions, "structural": self.structural,
                "derived": self.derived, "policy_risk": self.policy_risk,
                "diagnostics": self.diagnostics, "assumptions": self.assumptions,
                "suggestions": self.suggestions, "caution": CAUTION,
                **({"evidence_split": self.evidence} if self.evidence is not None else {})}

    def to_json(self, path) -> Path:
        """Write every number of the report as JSON (atomically)."""
        return write_json(Path(path), self.as_dict())

    def to_html(self, path) -> Path:
        """Write one self-contained HTML page with the tables and plots (atomically)."""
        from bayesirl.report.html import render_html

        return write_text(Path(path), render_html(self))

    def table(self) -> str:
        """A compact terminal table of the weights and the headline findings."""
        from bayesirl.report.text import render_text

        return render_text(self)

    def __str__(self) -> str:
        return self.table()

    def _repr_html_(self) -> str:
        """Notebook display: verdict, weights table, key figures, suggestions (escaped)."""
        from bayesirl.report.notebook import report_html

        return report_html(self)


def _diagnostics(posterior) -> dict:
    d = posterior.diagnostics
    return {"rhat": dict(zip(d.names, map(float, d.rhat), strict=True)),
            "ess_bulk": dict(zip(d.names, map(float, d.ess_bulk), strict=True)),
            "ess_tail": dict(zip(d.names, map(float, d.ess_tail), strict=True)),
            "divergences": d.divergences, "ebfmi": [float(x) for x in d.ebfmi],
            "warnings": list(d.warnings), "trustworthy": d.ok,
            "thresholds": {"rhat_max": RHAT_MAX, "ess_min": ESS_MIN, "ebfmi_min": EBFMI_MIN,
                           "divergences_max": 0}}


def _assumptions(posterior) -> dict:
    lik = posterior.model.likelihood
    mdp = lik.mdp
    beta = ("sampled" if posterior.rationality is not None
            else f"fixed at {posterior.model.fixed_rationality:g}")
    kind = "maximum causal entropy" if lik.q_function == "soft" else "optimal-Q"
    return {"q_function": f"Boltzmann-rational, q_function={lik.q_function!r} ({kind})",
            "rationality": beta, "pinned": posterior.model.pin,
            "horizon": mdp.horizon, "discount": mdp.discount,
            "states": mdp.n_states, "actions": mdp.n_actions,
            "features": list(mdp.feature_names), "episodes": lik.demos.n_episodes,
            "steps": lik.demos.n_steps, "prior": repr(posterior.model.prior),
            **_judge(posterior)}


def _judge(posterior) -> dict:
    """The comparisons' choice model, when the run has comparisons (else nothing)."""
    terms = [t for t in getattr(posterior.model, "extra", ()) if hasattr(t, "davidson")]
    if not terms:
        return {}
    t, priors = terms[0], getattr(posterior.model, "extra_priors", {})

    def said(name, fixed):
        return f"fixed at {fixed:g}" if fixed is not None else f"sampled, {priors.get(name)!r}"

    model = ("Davidson ties (tie parameter " + said(t.tie_name, t.tie_fixed) + ")"
             if t.davidson else "Bradley-Terry (no 'no preference' answer)")
    return {"comparisons": f"{len(t)} answers, {model}; judge rationality "
                           f"{said(t.rationality_name, t.fixed)}"}


def ambiguity(posterior: Posterior, *, level: float = 0.9, prior: Prior | None = None,
              truth: Sequence[float] | np.ndarray | None = None, states: Sequence[int] = (),
              risk_level: float | None = None, suggestions: Sequence | None = None,
              tolerance: float | None = None,
              action_names: Sequence[str] | None = None,
              demonstrators: dict | None = None) -> AmbiguityReport:
    """Build the ambiguity report of a posterior.

    Parameters
    ----------
    posterior : Posterior
    level : float
        Credible level of every interval, of the verdicts read from them and (unless
        ``risk_level`` is given) of the policy-risk bound.
    prior : prior object, optional
        The prior to measure contraction against (default: the one used for sampling).
    truth : array (F,), optional
        True weights, for simulations: adds posterior z-scores.
    states : sequence of int
        States at which to report action probabilities.
    risk_level : float, optional
        Credible level of the one-sided policy-risk bound, in (0, 1): the bound is exceeded
        with posterior probability ``1 - risk_level`` (default: ``level``). Called
        ``alpha`` before 0.2.
    suggestions : list, optional
        The output of :func:`bayesirl.suggest`, stored as plain records (in the JSON and as a
        section of the HTML page, drawn on the map for grid problems).
    tolerance : float, optional
        The precision that matters, in reward units: a weight is then *determined* when its
        interval excludes zero and its half-width is at most ``tolerance``, and *negligible*
        when its interval lies within ``[-tolerance, tolerance]``. Without it the scale is
        the weight's own magnitude (see :mod:`bayesirl.report.verdicts`).
    action_names : sequence of str, optional
        Names of the actions (a problem file's ``actions``, a map's moves), for the action
        probability table.
    demonstrators : dict, optional
        Several demonstrators: the record of
        :func:`bayesirl.posterior.group_summary.demonstrator_summary` (computed here at
        ``level`` when omitted and the posterior has groups). The page then says that its
        weights are the population mean and has a section on the demonstrators.
    """
    tolerance = verdicts.check_tolerance(tolerance)
    risk_level = level if risk_level is None else risk_level
    lik = posterior.model.likelihood
    names = _action_names(action_names, lik.mdp.n_actions)
    table = weights_table(posterior, level, prior, truth, tolerance)
    found = structural.findings(lik.mdp, lik.demos)
    mean_w = np.array([r["mean"] for r in table])
    found += structural.fisher_findings(lik, mean_w)
    found_dicts = [f._asdict() for f in found]
    dirs = directions(posterior, level, prior, tolerance)
    entangled = groups(posterior, dirs, found_dicts, level, prior, tolerance)
    mark_groups(table, entangled)
    report = AmbiguityReport(
        level=level, weights=table, directions=dirs, structural=found_dicts,
        derived={"ratios": derived.ratios(posterior, table, level),
                 "action_probabilities": derived.action_probabilities(posterior, states, level),
                 "action_names": names},
        policy_risk=derived.policy_risk(posterior, risk_level),
        diagnostics=_diagnostics(posterior), assumptions=_assumptions(posterior),
        groups=entangled, tolerance=tolerance,
        suggestions=as_records(suggestions), posterior=posterior,
    )
    if demonstrators is None and getattr(posterior, "groups", None) is not None:
        from bayesirl.posterior.group_summary import demonstrator_summary

        demonstrators = demonstrator_summary(posterior, level)
    report.demonstrators = demonstrators
    from bayesirl.report import evidence_split

    report.evidence = evidence_split.record(posterior)
    report.verdict = headline(report)
    if demonstrators is not None:
        from bayesirl.report.groups_html import preamble

        report.verdict = " ".join(x for x in (preamble(demonstrators), report.verdict) if x)
    return report


def _action_names(names, n_actions: int) -> list[str] | None:
    if names is None:
        return None
    names = [str(n) for n in names]
    if len(names) != n_actions:
        from bayesirl.errors import InputError

        raise InputError(f"action_names: {len(names)} names for {n_actions} actions")
    return names


def _interval_text(row: dict) -> str:
    lo, hi = row["interval"]
    fmt = verdicts.fmt
    return f"{row['feature']} {fmt(row['median'])} [{fmt(lo)}, {fmt(hi)}]"


def _names(rows: list[dict]) -> str:
    items = [_interval_text(r) for r in rows]
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]


def headline(report: AmbiguityReport) -> str:
    """The one-paragraph verdict at the top of the page, in the report's verdict words."""
    parts = []
    if not report.diagnostics["trustworthy"]:
        parts.append("Do not trust these intervals yet: the sampler diagnostics failed "
                     f"({'; '.join(report.diagnostics['warnings'])}).")
    by_word: dict[str, list[dict]] = {}
    for row in report.weights:
        by_word.setdefault(row["verdict"], []).append(row)
    tol = getattr(report, "tolerance", None)
    scale = "a factor of 2" if tol is None else f"+/- {tol:g}"
    said = []
    if verdicts.DETERMINED in by_word:
        said.append(f"determine {_names(by_word[verdicts.DETERMINED])} (to within {scale})")
    if verdicts.SIGN_KNOWN in by_word:
        said.append(f"settle only the sign of {_names(by_word[verdicts.SIGN_KNOWN])}")
    if verdicts.NEGLIGIBLE in by_word:
        said.append(f"show {_names(by_word[verdicts.NEGLIGIBLE])} to be negligible")
    if verdicts.SIGN_OPEN in by_word:
        rows = by_word[verdicts.SIGN_OPEN]
        said.append(f"leave the sign of {_names(rows)} open (the "
                    f"interval{'s contain' if len(rows) > 1 else ' contains'} zero)")
    if said:
        parts.append(f"At the {report.level:.0%} level the demonstrations "
                     + "; they ".join(said) + ".")
    for g in getattr(report, "groups", []):
        parts.append(f"Only in combination: {g['text']}.")
    if verdicts.DETERMINED not in by_word:
        parts.append("No weight is determined by these data on its own.")
    causes = sorted({f["cause"] for f in report.structural})
    if causes:
        parts.append(f"Structural findings ({', '.join(causes)}) are listed below with their "
                     "causes.")
    risk = report.policy_risk
    parts.append(f"Acting on the posterior-mean reward loses at most {risk['bound']:.3g} in "
                 f"expected value ({risk['fraction_bound']:.1%} of the value range) with "
                 f"{risk['alpha']:.0%} posterior probability.")
    return " ".join(parts)
