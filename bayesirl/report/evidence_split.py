"""The report's "Which evidence narrowed the posterior?" section and its record in
summary.json: the Fisher-information split of :mod:`bayesirl.evidence.contributions`.

Only for runs with more than one kind of evidence (fully recorded episodes, episodes with
unrecorded parts, comparisons). At the posterior mean of the weights (and of the
rationalities), each kind's observed information gives the Laplace sd of every free weight
with the prior only, with that kind alone, without it, and with everything. It is a local
Gaussian reading: the sampled intervals in the weights table are the answer.
"""

from __future__ import annotations

from html import escape

import numpy as np

from bayesirl.report.html_parts import num, table

SECTION_ID = "evidence"
TITLE = "Which evidence narrowed the posterior?"
KIND_NAMES = {"demos": "fully recorded episodes", "partial": "episodes with unrecorded parts",
              "comparisons": "comparisons"}
METHOD = ("Laplace split: each kind's observed information at the posterior mean (central "
          "differences of its exact gradient) added to the prior's precision; sd of each free "
          "weight with the prior only, the kind alone, all but the kind, and all evidence. A "
          "local Gaussian reading; the sampled intervals are the answer.")


def record(posterior) -> dict | None:
    """The split as a JSON-ready dict, or None (one kind of evidence, or no draws)."""
    from bayesirl.evidence.contributions import split

    model = posterior.model
    if (not getattr(model, "extra", ()) or posterior.n_draws == 0
            or getattr(posterior, "groups", None) is not None):
        return None
    w = posterior.weights.reshape(-1, posterior.weights.shape[-1]).mean(axis=0)
    beta = (model.fixed_rationality if model.fixed_rationality is not None
            else float(np.mean(posterior.rationality)))
    quantities = {"weights": w, "rationality": beta,
                  **{n: float(np.mean(x)) for n, x in posterior.extra_draws.items()}}
    names = [model.feature_names[i] for i in model.free]
    var = np.asarray(model.prior.variance(len(model.feature_names)), float)[model.free]
    found = split(model.evidence.terms, quantities, model.free, var)

    def listed(x):
        return [None if not np.isfinite(v) else float(v) for v in x]

    return {"method": METHOD, "features": names, "sd_prior": listed(found.sd_prior),
            "sd_all": listed(found.sd_all),
            "kinds": [{"key": k.key, "name": KIND_NAMES.get(k.key, k.key),
                       "sd_alone": listed(k.sd_alone), "sd_without": listed(k.sd_without)}
                      for k in found.kinds]}


def lines(rec: dict | None) -> list[str]:
    """The split as terminal lines (empty without a record)."""
    if rec is None:
        return []
    names = rec["features"]

    def row(xs):
        return ", ".join(f"{n} {num(x)}" for n, x in zip(names, xs, strict=True))

    out = ["what each kind of evidence did to the weights' sd (Laplace reading at the "
           "posterior mean; the sampled intervals are the answer):",
           "  " + ", ".join(f"{n} {num(a)} -> {num(b)}" for n, a, b in
                            zip(names, rec["sd_prior"], rec["sd_all"], strict=True))
           + " (prior only -> all evidence)"]
    out += [f"  {k['name']}: alone {row(k['sd_alone'])}; all but these {row(k['sd_without'])}"
            for k in rec["kinds"]]
    return out


def render(report) -> str:
    """The HTML section (empty without a record)."""
    rec = getattr(report, "evidence", None)
    if rec is None:
        return ""
    head = ["weight", "prior only"] + [f"{k['name']} alone" for k in rec["kinds"]] + [
        f"all but {k['name']}" for k in rec["kinds"]] + ["all evidence"]
    rows = []
    for j, name in enumerate(rec["features"]):
        rows.append([name, num(rec["sd_prior"][j])]
                    + [num(k["sd_alone"][j]) for k in rec["kinds"]]
                    + [num(k["sd_without"][j]) for k in rec["kinds"]]
                    + [num(rec["sd_all"][j])])
    return (f'<section id="{SECTION_ID}"><h2>{escape(TITLE)}</h2>'
            "<p>Standard deviation of each weight: how much each kind of evidence narrows it "
            "by itself, and what is left when it is taken away. A kind whose removal leaves "
            "the sd where it is added little beside the others.</p>"
            + table(head, rows) + f"<p class=\"note\">{escape(METHOD)} n/a: that combination's "
            "information is not positive definite (the weight is not determined by it).</p>"
            "</section>")
