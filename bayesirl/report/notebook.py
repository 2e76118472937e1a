"""The report and the suggestions in a notebook: HTML fragments for ``_repr_html_``.

A fragment, not a page: one style block scoped to its own class (so it never restyles the
notebook around it), no script, figures as PNG data URIs, every piece of text escaped. It
shows what a reader needs first (verdict, weights table, the key figures, the suggestions);
``report.to_html(path)`` writes the full page with every section.
"""

from __future__ import annotations

from html import escape

from bayesirl.report import maps, plots, suggestions
from bayesirl.report.html_parts import figure, interval, num, table

# Scoped to the fragment's class, so it never restyles the rest of the notebook.
STYLE = (
    "<style>.bayesirl-nb table{border-collapse:collapse;margin:4px 0 8px}"
    ".bayesirl-nb th,.bayesirl-nb td{padding:2px 9px;border-bottom:1px solid #d8dde3;"
    "text-align:right;font-variant-numeric:tabular-nums}"
    ".bayesirl-nb .l{text-align:left}.bayesirl-nb .note{color:#5d6976}"
    ".bayesirl-nb .fail{color:#a33b20;font-weight:600}"
    ".bayesirl-nb .banner{border:2px solid #a33b20;background:#fbe3dc;padding:6px 12px}"
    ".bayesirl-nb figure{margin:6px 0}.bayesirl-nb img{max-width:100%;height:auto}"
    "</style>"
)


def _wrap(*parts: str) -> str:
    return STYLE + '<div class="bayesirl-nb">' + "".join(parts) + "</div>"


def weights_rows(report) -> tuple[list[str], list[list[str]]]:
    """Header and rows of the weights table (the full page adds HDI, prior sd and sign)."""
    lvl = f"{report.level:.0%}"
    head = ["feature", "mean", "sd", "median", f"{lvl} interval", "contraction", "verdict"]
    rows = [[r["feature"], num(r["mean"]), num(r["sd"]), num(r["median"]),
             interval(r["interval"]), num(r["contraction"], ".2f"), r["verdict"]]
            for r in report.weights]
    return head, rows


def _banner(report) -> str:
    diag = report.diagnostics
    if diag.get("trustworthy", False):
        return ""
    items = "".join(f"<li>{escape(w)}</li>" for w in diag.get("warnings", []))
    return ('<div class="banner"><strong>Do not trust these intervals yet:</strong> the '
            f"sampler diagnostics failed.<ul>{items}</ul></div>")


def _figures(report) -> str:
    post = report.posterior
    if post is None:
        return '<p class="note">Posterior draws are not attached: no figures.</p>'
    lvl = f"{report.level:.0%}"
    out = [figure(plots.marginals(post, report.weights, report.level),
                  "histograms of the posterior draws of each weight with the prior density",
                  f"Posterior draws of each free weight, their {lvl} interval (band) and the "
                  "prior density (dashed).", "Every weight is pinned: nothing to draw.")]
    grid = maps.reward_maps(post, report.level)
    if grid is not None:
        out.append(figure(grid, "maps of posterior-mean reward and interval width per cell",
                          f"Posterior-mean reward per cell and the width of its {lvl} "
                          "interval, with the demonstrated paths.", ""))
    else:
        out.append(figure(maps.state_rewards(post, report.level),
                          "posterior-median reward of each state with its interval",
                          f"Posterior median and {lvl} interval of each state's reward.",
                          "No states to draw."))
    return "".join(out)


def report_html(report) -> str:
    """An :class:`~bayesirl.AmbiguityReport` as an HTML fragment for a notebook.

    Parameters
    ----------
    report : AmbiguityReport

    Returns
    -------
    str
        Warning banner (when the diagnostics failed), verdict, weights table, combinations
        the data determine, the weights' histograms and the reward map, the suggestions
        (when the report carries them) and the caution.
    """
    head, rows = weights_rows(report)
    combos = "".join(f"<li>{escape(g['text'])}</li>" for g in getattr(report, "groups", []))
    d = report.diagnostics
    checks = ("Sampler diagnostics pass every threshold." if d.get("trustworthy") else
              "Sampler diagnostics failed (see the banner).")
    grid = (None if report.posterior is None
            else report.posterior.model.likelihood.mdp.grid_shape)
    return _wrap(
        "<p><strong>What the demonstrations determine about the reward</strong></p>",
        _banner(report), f"<p>{escape(report.verdict)}</p>",
        table(head, rows, "l" + "r" * 5 + "l"),
        f"<p>Only in combination:</p><ul>{combos}</ul>" if combos else "",
        f'<p class="note">{escape(checks)} The full page, with every section, is written by '
        "<code>report.to_html(path)</code>.</p>",
        _figures(report),
        _suggestions_body(report.suggestions, grid) if report.suggestions else "",
        # The caution through the public record: importing ambiguity here would make a circle.
        f'<p class="note">{escape(report.as_dict()["caution"])}</p>')


def _suggestions_body(records: list[dict], grid_shape) -> str:
    head, rows = suggestions.table_rows(records, grid_shape)
    sentence = suggestions.ranking_sentence(records)
    return ("<p><strong>Where to demonstrate next</strong> "
            '<span class="note">(expected information gain about the weights in nats, '
            "\u00b1 its Monte-Carlo standard error)</span></p>" + table(head, rows, "ll")
            + (f'<p class="note">{escape(sentence)}</p>' if sentence else ""))


def suggestions_html(items, grid_shape=None) -> str:
    """The output of :func:`bayesirl.suggest` as an HTML fragment (its ranked table).

    Parameters
    ----------
    items : list of Suggestion (or plain records)
    grid_shape : (rows, cols), optional
        Names cells as (row, col) instead of state numbers.

    Returns
    -------
    str
    """
    records = suggestions.as_records(items)
    if not records:
        return _wrap('<p class="note">No suggestions.</p>')
    return _wrap(_suggestions_body(records, grid_shape))
