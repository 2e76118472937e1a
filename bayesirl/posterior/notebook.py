"""The posterior in a notebook: its summary table and diagnostics as an HTML fragment.

``Posterior._repr_html_`` calls :func:`posterior_html`. The fragment is self-contained (one
scoped style block, no script, no external resource) and every piece of text in it is escaped.
It lives in the posterior layer, below the report, so it builds its own small table rather
than borrowing the report's.
"""

from __future__ import annotations

from html import escape

import numpy as np

from bayesirl.posterior.diagnostics import EBFMI_MIN, ESS_MIN, RHAT_MAX
from bayesirl.posterior.group_draws import group_columns, group_heading

# Scoped to the fragment's class, so it never restyles the rest of the notebook.
STYLE = (
    "<style>.bayesirl-nb table{border-collapse:collapse;margin:4px 0 8px}"
    ".bayesirl-nb th,.bayesirl-nb td{padding:2px 9px;border-bottom:1px solid #d8dde3;"
    "text-align:right;font-variant-numeric:tabular-nums}"
    ".bayesirl-nb .l{text-align:left}.bayesirl-nb .fail{color:#a33b20;font-weight:600}"
    ".bayesirl-nb .ok{color:#2e6b3a;font-weight:600}.bayesirl-nb .note{color:#5d6976}"
    "</style>"
)


def cell(x, fmt: str = ".3g") -> str:
    """A number for a table cell: a dash for None or NaN (a pinned weight has no R-hat)."""
    if x is None or not np.isfinite(float(x)):
        return "\u2013"
    return format(float(x), fmt)


def html_table(head: list[str], rows: list[list[str]], left: int = 1) -> str:
    """A table of already formatted cells; every cell is escaped, the first ``left`` columns
    are aligned left."""

    def td(tag: str, k: int, x) -> str:
        cls = ' class="l"' if k < left else ""
        return f"<{tag}{cls}>{escape(str(x))}</{tag}>"

    out = ["<table><thead><tr>", *(td("th", k, h) for k, h in enumerate(head)),
           "</tr></thead><tbody>"]
    out += ["<tr>" + "".join(td("td", k, x) for k, x in enumerate(r)) + "</tr>" for r in rows]
    return "".join(out) + "</tbody></table>"


def summary_rows(posterior, level: float) -> tuple[list[str], list[list[str]]]:
    """Header and rows of the summary table: one row per sampled quantity."""
    d = posterior.diagnostics
    lo, hi = 50 * (1 - level), 50 * (1 + level)
    cols = [posterior.weights[..., i] for i in range(posterior.weights.shape[-1])]
    if posterior.rationality is not None:
        cols.append(posterior.rationality)
    cols += group_columns(posterior.groups) + list(getattr(posterior, "extra_draws", {}).values())
    head = ["quantity", "mean", "sd", f"{lo:g}%", f"{hi:g}%", "R-hat", "ESS bulk", "ESS tail"]
    rows = []
    for k, (name, x) in enumerate(zip(d.names, cols, strict=True)):
        q = np.percentile(x, [lo, hi])
        rows.append([name, cell(x.mean()), cell(x.std(ddof=1)), cell(q[0]), cell(q[1]),
                     cell(d.rhat[k], ".3f"), cell(d.ess_bulk[k], ".0f"),
                     cell(d.ess_tail[k], ".0f")])
    return head, rows


def diagnostics_html(posterior) -> str:
    """The run's checks against their thresholds, and any warning, in words."""
    d = posterior.diagnostics
    ebfmi = [x for x in np.asarray(d.ebfmi, dtype=float) if np.isfinite(x)]
    rows = [["divergent transitions", str(d.divergences), "0"]]
    rows.append(["lowest E-BFMI of a chain", cell(min(ebfmi), ".2f") if ebfmi else "n/a",
                 f"\u2265 {EBFMI_MIN}"])
    rows.append(["largest R-hat", cell(np.nanmax(d.rhat) if np.isfinite(d.rhat).any()
                                       else None, ".3f"), f"< {RHAT_MAX}"])
    rows.append(["smallest ESS (bulk, tail)", cell(np.nanmin(np.r_[d.ess_bulk, d.ess_tail])
                                                   if np.isfinite(d.ess_bulk).any() else None,
                                                   ".0f"), f"\u2265 {ESS_MIN}"])
    verdict = ('<p class="ok">Every diagnostic passes its threshold.</p>' if d.ok else
               '<p class="fail">Do not trust these intervals yet:</p><ul>'
               + "".join(f"<li>{escape(w)}</li>" for w in d.warnings) + "</ul>")
    return verdict + html_table(["check", "value", "threshold"], rows)


def posterior_html(posterior, level: float = 0.9) -> str:
    """The posterior as an HTML fragment: run line, summary table, diagnostics.

    Parameters
    ----------
    posterior : Posterior
    level : float
        Credible level of the interval columns.

    Returns
    -------
    str
    """
    method = posterior.settings.get("method", "unknown sampler")
    run = (f"{posterior.n_chains} chains \u00d7 {posterior.n_draws} draws ({method}), "
           f"{posterior.wall_time:.1f} s" + ("" if posterior.complete
                                              else ", INTERRUPTED: the draws so far"))
    parts = [STYLE, '<div class="bayesirl-nb">',
             f"<p><strong>Posterior over the reward weights</strong> "
             f'<span class="note">{escape(run)}</span></p>']
    if posterior.n_draws == 0:
        parts.append('<p class="note">No draws yet: every chain was still in warm-up.</p>')
    else:
        head, rows = summary_rows(posterior, level)
        parts += [f'<p class="note">{escape(h)}</p>' for h in group_heading(posterior.groups)]
        parts.append(html_table(head, rows))
        parts.append(diagnostics_html(posterior))
    return "".join(parts) + "</div>"
