"""``ambiguity(posterior)``: what the demonstrations determine about the reward, and what not."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from bayesirl.files import write_json, write_text
from bayesirl.posterior.diagnostics import EBFMI_MIN, ESS_MIN, RHAT_MAX
from bayesirl.report import derived, structural
from bayesirl.report.suggestions import as_records
from bayesirl.report.weights import directions, weights_table

CAUTION = (
    "These intervals are conditional on the features, the dynamics and the Boltzmann-rational "
    "demonstrator model given to the tool. Where they inform a behaviour that can hurt someone "
    "(a robot, a vehicle), they are not a safety certification: defer to the applicable "
    "standards and to qualified review."
)


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
    suggestions: list = field(default_factory=list)  # plain records from bayesirl.suggest
    posterior: object = field(default=None, repr=False)

    def as_dict(self) -> dict:
        """JSON-ready dictionary (the posterior itself is left out)."""
        return {"level": self.level, "verdict": self.verdict, "weights": self.weights,
                "directions": self.directions, "structural": self.structural,
                "derived": self.derived, "policy_risk": self.policy_risk,
                "diagnostics": self.diagnostics, "assumptions": self.assumptions,
                "suggestions": self.suggestions, "caution": CAUTION}

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
    return {"demonstrator": f"Boltzmann-rational, q={lik.q!r} "
                            f"({'maximum causal entropy' if lik.q == 'soft' else 'optimal-Q'})",
            "rationality": beta, "pinned": posterior.model.pin,
            "horizon": mdp.horizon, "discount": mdp.discount,
            "states": mdp.n_states, "actions": mdp.n_actions,
            "features": list(mdp.feature_names), "episodes": lik.demos.n_episodes,
            "steps": lik.demos.n_steps, "prior": repr(posterior.model.prior)}


def ambiguity(posterior, level: float = 0.9, prior=None, truth=None, states=(),
              alpha: float = 0.95, suggestions=None) -> AmbiguityReport:
    """Build the ambiguity report of a posterior.

    Parameters
    ----------
    posterior : Posterior
    level : float
        Credible level of the intervals.
    prior : prior object, optional
        The prior to measure contraction against (default: the one used for sampling).
    truth : array (F,), optional
        True weights, for simulations: adds posterior z-scores.
    states : sequence of int
        States at which to report action probabilities.
    alpha : float
        Quantile of the policy-risk bound.
    suggestions : list, optional
        The output of :func:`bayesirl.suggest`, stored as plain records (in the JSON and as a
        section of the HTML page, drawn on the map for grid problems).
    """
    lik = posterior.model.likelihood
    table = weights_table(posterior, level, prior, truth)
    found = structural.findings(lik.mdp, lik.demos)
    mean_w = np.array([r["mean"] for r in table])
    found += structural.fisher_findings(lik, mean_w)
    report = AmbiguityReport(
        level=level, weights=table, directions=directions(posterior, level, prior),
        structural=[f._asdict() for f in found],
        derived={"ratios": derived.ratios(posterior, table, level),
                 "action_probabilities": derived.action_probabilities(posterior, states, level)},
        policy_risk=derived.policy_risk(posterior, alpha),
        diagnostics=_diagnostics(posterior), assumptions=_assumptions(posterior),
        suggestions=as_records(suggestions), posterior=posterior,
    )
    report.verdict = headline(report)
    return report


def headline(report: AmbiguityReport) -> str:
    """The one-paragraph verdict at the top of the page."""
    parts = []
    if not report.diagnostics["trustworthy"]:
        parts.append("Do not trust these intervals yet: the sampler diagnostics failed "
                     f"({'; '.join(report.diagnostics['warnings'])}).")
    words = {}
    for row in report.weights:
        words.setdefault(row["verdict"], []).append(row["feature"])
    parts.append("Of the reward weights, " + "; ".join(
        f"{', '.join(names)} {'is' if len(names) == 1 else 'are'} {word}"
        for word, names in words.items()) + f" (at the {report.level:.0%} level).")
    open_sign = [r["feature"] for r in report.weights if r["sign"] == "not settled"]
    if open_sign:
        parts.append(f"The sign of {', '.join(open_sign)} is not settled: "
                     f"{'its' if len(open_sign) == 1 else 'each'} interval contains zero.")
    undetermined = [d["text"] for d in report.directions if d["verdict"] == "undetermined"]
    if undetermined:
        parts.append("Undetermined directions: " + "; ".join(undetermined) + ".")
    causes = sorted({f["cause"] for f in report.structural})
    if causes:
        parts.append(f"Structural findings ({', '.join(causes)}) are listed below with their "
                     "causes.")
    risk = report.policy_risk
    parts.append(f"Acting on the posterior-mean reward loses at most {risk['bound']:.3g} in "
                 f"expected value ({risk['fraction_bound']:.1%} of the value range) with "
                 f"{risk['alpha']:.0%} posterior probability.")
    return " ".join(parts)
