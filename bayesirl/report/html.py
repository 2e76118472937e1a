"""One self-contained HTML page for an ambiguity report.

The page needs nothing outside itself: styles are inline, figures are PNG data URIs, there is
no script, and a Content-Security-Policy forbids loading anything else, so a page that tried
to fetch a resource would fail visibly in a browser instead of quietly leaking a request.
Every piece of text that comes from the report is escaped.
"""

from __future__ import annotations

from html import escape

import numpy as np

from bayesirl.report import (
    evidence_split,
    groups_html,
    maps,
    plots,
    predictive,
    suggestions,
    verdicts,
)
from bayesirl.report.html_parts import CSS, Raw, figure, interval, mark, num, table

# Stable anchors: other documents and the tests link to these, so renaming one is a break.
SECTION_IDS = ("verdict", "weights", "correlations", "directions", "structural", "derived",
               "policy-risk", "maps", "diagnostics", "assumptions", "caution")
CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'"
TITLES = {"verdict": "Verdict", "weights": "Reward weights", "correlations": "Trade-offs",
          "directions": "Directions in weight space", "structural": "Structural findings",
          "derived": "Derived quantities", "policy-risk": "Policy risk",
          "maps": "Reward maps", "diagnostics": "Sampler diagnostics",
          "assumptions": "Model assumptions", "caution": "Caution"}
VERDICT_CLASS = {verdicts.DETERMINED: "v-strong", verdicts.SIGN_KNOWN: "v-mid",
                 verdicts.NEGLIGIBLE: "v-mid", verdicts.SIGN_OPEN: "v-weak",
                 verdicts.COMBINATION_ONLY: "v-weak", verdicts.NOT_IDENTIFIED: "v-weak",
                 verdicts.PINNED: "v-fixed"}

def section(sid: str, body: str) -> str:
    """A page section with its stable id and heading."""
    return f'<section id="{sid}"><h2>{escape(TITLES[sid])}</h2>{body}</section>'


def _needs_draws(report) -> str | None:
    if report.posterior is None:
        return "Posterior draws are not attached to this report, so this figure is omitted."
    return None


def render_html(report) -> str:
    """Render an :class:`~bayesirl.report.AmbiguityReport` as one self-contained HTML page.

    Parameters
    ----------
    report : AmbiguityReport

    Returns
    -------
    str
        The page: verdict first (with a warning banner when the sampler diagnostics failed),
        then one section per id in :data:`SECTION_IDS`, plots embedded as PNG data URIs.
    """
    body = [_header(report), _banner(report),
            f'<section id="verdict"><p class="verdict">{escape(report.verdict)}</p></section>',
            _nav(), groups_html.section(report)]
    body += [_weights(report), evidence_split.render(report), _correlations(report),
             _directions(report), _structural(report), _derived(report), _policy_risk(report),
             _maps(report), predictive.render(report), suggestions.render(report),
             _diagnostics(report), _assumptions(report),
             section("caution", f'<p class="caution">{escape(verdicts.CAUTION)}</p>')]
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f'<meta http-equiv="Content-Security-Policy" content="{CSP}">'
            '<meta name="viewport" content="width=device-width, initial-scale=1">'
            "<title>bayesirl: what the demonstrations determine</title>"
            f"<style>{CSS}</style></head><body><main>\n" + "\n".join(body)
            + "\n</main></body></html>\n")


def _header(report) -> str:
    a = report.assumptions
    run = [f"{len(a.get('features', []))} reward features", f"{a.get('episodes')} episodes",
           f"{a.get('steps')} demonstrated steps"]
    post = report.posterior
    if post is not None:
        run.append(f"{post.n_chains} chains \u00d7 {post.n_draws} draws "
                   f"({post.settings.get('method', 'unknown sampler')})")
    sep = " \u00b7 "
    return ("<header><h1>What the demonstrations determine about the reward</h1>"
            f'<p class="run">{escape(sep.join(run))}</p></header>')


def _banner(report) -> str:
    diag = report.diagnostics
    if diag.get("trustworthy", False):
        return ""
    items = "".join(f"<li>{escape(w)}</li>" for w in diag.get("warnings", []))
    return ('<div id="trust-banner" class="banner" role="alert"><strong>Do not trust these '
            "intervals.</strong>The sampler diagnostics failed, so every interval, verdict and "
            "plot below may be wrong. Run longer or fix the sampler first; details are under "
            f'<a href="#diagnostics">Sampler diagnostics</a>.<ul>{items}</ul></div>')


def _nav() -> str:
    links = " ".join(f'<a href="#{sid}">{escape(TITLES[sid])}</a>' for sid in SECTION_IDS[1:])
    return f"<nav>{links}</nav>"


def _weights(report) -> str:
    lvl = f"{report.level:.0%}"
    truth = any("truth" in r for r in report.weights)
    head = ["feature", "mean", "sd", "median", f"{lvl} interval", f"{lvl} HDI", "prior sd",
            "contraction", "verdict", "sign"] + (["true value", "z-score"] if truth else [])
    rows = []
    for r in report.weights:
        word = Raw(f'<span class="{VERDICT_CLASS.get(r["verdict"], "")}">'
                   f'{escape(r["verdict"])}</span>')
        row = [r["feature"], num(r["mean"]), num(r["sd"]), num(r["median"]),
               interval(r["interval"]), interval(r["hdi"]), num(r["prior_sd"]),
               num(r["contraction"], ".2f"), word, r["sign"]]
        if truth:
            row += [num(r.get("truth")), num(r.get("z_score"), ".2f")]
        rows.append(row)
    note = (groups_html.weights_note(report) + _word_list(report)
            + "<p class=\"note\">Contraction is 1 \u2212 posterior "
            "variance / prior variance: near 1 the posterior moved far from the prior, near 0 "
            "the prior still speaks. It is not the verdict: against a broad prior a weight can "
            "contract a lot and still have an interval that straddles zero. HDI is the "
            "highest-density interval.</p>")
    fig = None if report.posterior is None else plots.marginals(report.posterior,
                                                                report.weights, report.level)
    return section("weights", table(head, rows, "l" + "r" * 7 + "lll") + note + figure(
        fig, "histograms of the posterior draws of each weight with the prior density",
        f"Posterior draws of each free weight (bars), their {lvl} interval (band) and the "
        "prior density (dashed). Pinned weights are not drawn.",
        _needs_draws(report) or "Every weight is pinned: there is nothing to draw."))


def _word_list(report) -> str:
    tol = getattr(report, "tolerance", None)
    scale = ("no tolerance was stated, so precision is judged against each weight's own size"
             if tol is None else f"the stated tolerance is {tol:g} reward units")
    items = "".join(f"<li><strong>{escape(w)}</strong>: {escape(d)}</li>"
                    for w, d in verdicts.WORDS.items())
    return (f"<p class=\"note\">Verdict words, read from the {report.level:.0%} interval "
            f"({escape(scale)}; set one with <code>--tolerance</code>):</p>"
            f'<ul class="plain note">{items}</ul>')


def _correlations(report) -> str:
    fig = None if report.posterior is None else plots.pairs(report.posterior, report.weights)
    return section("correlations", figure(
        fig, "scatter plots of the most correlated pairs of weights",
        "The three most correlated pairs of free weights. A tilted cloud means the data "
        "determine a trade-off between the two better than either weight alone.",
        _needs_draws(report) or "Fewer than two free weights: no pairs to show."))


def _direction_list(items, share: bool) -> str:
    if not items:
        return '<p class="note">None.</p>'
    out = []
    for d in items:
        extra = (f' <span class="note">(prior variance left: {d["variance_ratio"]:.1%})</span>'
                 if share else "")  # undetermined texts already state the share
        out.append(f"<li>{escape(d['text'])}{extra}</li>")
    return '<ul class="plain">' + "".join(out) + "</ul>"


def _directions(report) -> str:
    und = [d for d in report.directions if d["verdict"] == "undetermined"]
    det = [d for d in report.directions if d["verdict"] != "undetermined"]
    intro = ("<p class=\"note\">Each line is a combination of weights, found by comparing the "
             "posterior spread with the prior's along every direction and rounded to a few "
             "named features; the share of prior variance left tells how little the "
             "demonstrations moved it.</p>")
    groups = getattr(report, "groups", [])
    plain = ("<h3>Determined only in combination</h3>" + '<ul class="plain">'
             + "".join(f"<li>{escape(g['text'])}</li>" for g in groups) + "</ul>"
             if groups else "")
    return section("directions", plain + intro + "<h3>Undetermined by the demonstrations</h3>"
                   + _direction_list(und, False) + "<h3>Other directions (median and "
                   f"{report.level:.0%} interval of each combination as printed)</h3>"
                   + _direction_list(det, True))


def _structural(report) -> str:
    if not report.structural:
        return section("structural", '<p class="note">No structural problem found: no '
                       "combination of the features is invisible to these demonstrations by "
                       "construction.</p>")
    rows = [[Raw(f"<code>{escape(f['cause'])}</code>"), ", ".join(f["features"]), f["message"]]
            for f in report.structural]
    intro = ("<p class=\"note\">Found from the model and the demonstrations alone, before any "
             "sampling: more demonstrations of the same kind cannot fix these.</p>")
    return section("structural", intro + table(["cause", "features", "finding"], rows, "lll"))


def _state_label(s: int, grid) -> str:
    if grid is not None and s < grid[0] * grid[1]:
        return "state {} = cell (row {}, col {})".format(s, *divmod(s, grid[1]))
    return f"state {s}"


def _action_table(probs: list[dict], level: float, names=None, grid=None) -> str:
    actions = sorted({p["action"] for p in probs})
    by_state: dict[int, dict[int, dict]] = {}
    for p in probs:
        by_state.setdefault(p["state"], {})[p["action"]] = p
    rows = [[_state_label(s, grid)]
            + [f"{num(acts[a]['mean'], '.3f')} {interval(acts[a]['interval'])}"
               if a in acts else "\u2013" for a in actions]
            for s, acts in by_state.items()]
    head = [names[a] if names else f"action {a}" for a in actions]
    return (f"<h3>Action probabilities (mean and {level:.0%} interval)</h3>"
            + table(["state"] + head, rows, "l"))


def _derived(report) -> str:
    lvl = f"{report.level:.0%}"
    ratios = report.derived.get("ratios", [])
    probs = report.derived.get("action_probabilities", [])
    out = [f"<h3>Trade-off ratios (median and {lvl} interval)</h3>"]
    if ratios:
        out.append(table(["ratio", "median", f"{lvl} interval"],
                         [[f"{r['numerator']} / {r['denominator']}", num(r["median"]),
                           interval(r["interval"])] for r in ratios], "l"))
    else:
        out.append('<p class="note">No weight identified on its own has a settled sign, so '
                   "every ratio would be unbounded.</p>")
    out.append('<p class="note">Only denominators whose sign is settled at the '
               f"{lvl} level are used, and no weight the data determine only in combination "
               "(its share of a combination is the prior's). Ratios are heavy-tailed, so no "
               "mean is shown.</p>")
    grid = (None if report.posterior is None
            else report.posterior.model.likelihood.mdp.grid_shape)
    names = report.derived.get("action_names")
    out.append(_action_table(probs, report.level, names, grid) if probs else
               '<p class="note">No states were asked for: add <code>--states</code> with a '
               "list such as 0,5,12 to <code>bayesirl report</code> (in Python, "
               "<code>ambiguity(posterior, states=[0, 5, 12])</code>) to see action "
               "probabilities.</p>")
    return section("derived", "".join(out))


def _policy_risk(report) -> str:
    r = report.policy_risk
    words = (f"Acting on the policy that is optimal for the posterior-mean weights loses, with "
             f"{r['alpha']:.0%} posterior probability, at most {num(r['bound'])} in expected "
             f"value from the start states ({r['fraction_bound']:.1%} of the optimal-value "
             f"range); on average it loses {num(r['mean'])} ({r['fraction_mean']:.1%}).")
    rows = [[f"bound ({r['alpha']:.0%} quantile)", num(r["bound"]),
             f"{r['fraction_bound']:.1%}"],
            ["mean", num(r["mean"]), f"{r['fraction_mean']:.1%}"],
            ["median", num(r["median"]), "\u2013"]]
    fig = plots.risk(r)
    return section("policy-risk", f"<p>{escape(words)}</p>"
                   + table(["loss", "reward units", "of value range"], rows, "l")
                   + f'<p class="note">From {r.get("draws_used", len(r["values"]))} evenly '
                   "spaced posterior draws.</p>"
                   + figure(fig, "histogram of the loss per posterior draw",
                            "Loss of acting on the estimate, one value per posterior draw, "
                            "with the bound and the mean marked.", "No draws were evaluated."))


def _maps(report) -> str:
    if report.posterior is None:
        return section("maps", f'<p class="note">{escape(_needs_draws(report))}</p>')
    fig = maps.reward_maps(report.posterior, report.level)
    if fig is None:
        return section("maps", figure(
            maps.state_rewards(report.posterior, report.level),
            "posterior-median reward of each state with its interval",
            f"This problem has no grid, so the reward is shown per state: the posterior median "
            f"(dot) and {report.level:.0%} interval (bar) of each state's reward (for "
            f"state-action features, the mean over actions). States the demonstrations never "
            f"visited are orange; up to {maps.MAX_STATE_BARS} states are drawn (the most "
            "uncertain ones when there are more).", "No states to draw."))
    return section("maps", figure(
        fig, "grid maps of posterior-mean reward and interval width with demonstrated paths",
        f"Left: posterior-mean reward of each cell (for state-action features, the mean over "
        f"actions). Right: width of its {report.level:.0%} interval. Lines are the "
        "demonstrated episodes through the cell centres, slightly offset so they do not "
        "hide each other; the white dot marks the start.",
        "No map to draw."))


def _diagnostics(report) -> str:
    d, t = report.diagnostics, report.diagnostics["thresholds"]
    pinned = report.assumptions.get("pinned") or {}
    rows = []
    for name, rhat in d["rhat"].items():
        bulk, tail = d["ess_bulk"][name], d["ess_tail"][name]
        if name in pinned:  # a constant has no R-hat or ESS; it was never sampled
            rows.append([name] + ["\u2013", Raw('<span class="v-fixed">pinned</span>')] * 3)
            continue
        # Four decimals keep a value just under the threshold from printing as equal to it.
        rows.append([name, num(rhat, ".4f"), mark(rhat < t["rhat_max"]), num(bulk, ".0f"),
                     mark(bulk >= t["ess_min"]), num(tail, ".0f"), mark(tail >= t["ess_min"])])
    params = table(["quantity", "R-hat", f"< {t['rhat_max']}", "ESS bulk", f"\u2265 {t['ess_min']}",
                    "ESS tail", f"\u2265 {t['ess_min']}"], rows, "l")
    ebfmi = [x for x in d["ebfmi"] if not np.isnan(x)]
    run = [["divergent transitions", str(d["divergences"]), f"\u2264 {t['divergences_max']}",
            mark(d["divergences"] <= t["divergences_max"])]]
    run += [[f"E-BFMI chain {k}", num(x, ".2f"), f"\u2265 {t['ebfmi_min']}",
             mark(x >= t["ebfmi_min"])] for k, x in enumerate(d["ebfmi"]) if not np.isnan(x)]
    if not ebfmi:
        run.append(["E-BFMI", "n/a", "\u2013", "no energy (random-walk sampler)"])
    verdict = ('<p class="ok">Every diagnostic passes its threshold.</p>' if d["trustworthy"]
               else '<p class="fail">Failed: ' + escape("; ".join(d["warnings"])) + "</p>")
    fig = None if report.posterior is None else plots.ranks(report.posterior)
    return section("diagnostics", verdict + params + table(
        ["run", "value", "threshold", "check"], run, "l") + figure(
        fig, "rank histograms per chain for each sampled quantity",
        "Ranks of each chain's draws among all draws, one line per chain. Chains that agree "
        "give flat lines inside the grey band (where 95% of bins fall for exchangeable draws).",
        _needs_draws(report) or "Nothing was sampled."))


def _assumptions(report) -> str:
    a = report.assumptions
    pinned = ", ".join(f"{k} = {v:g}" for k, v in (a.get("pinned") or {}).items()) or "none"
    horizon = "none (infinite horizon, discounted)" if a.get("horizon") is None \
        else str(a["horizon"])
    rows = [["q_function", a.get("q_function")], ["rationality", a.get("rationality")],
            ["pinned weights", pinned], ["prior on the weights", a.get("prior")],
            ["discount", a.get("discount")], ["horizon", horizon],
            ["states \u00d7 actions", f"{a.get('states')} \u00d7 {a.get('actions')}"],
            ["features", ", ".join(a.get("features", []))],
            ["demonstrations", f"{a.get('episodes')} episodes, {a.get('steps')} steps"]]
    known = {"q_function", "rationality", "pinned", "prior", "discount", "horizon", "states",
             "actions", "features", "episodes", "steps"}
    rows += [[k, v] for k, v in a.items() if k not in known]
    return section("assumptions", '<p class="note">Every number above holds only under '
                   "these assumptions.</p>" + table(["assumption", "value"], rows, "ll"))
