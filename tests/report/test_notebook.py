"""Notebook display (``_repr_html_``) of the posterior, the report and the suggestions.

What is checked: the fragment's tables hold the numbers of the objects (read back through
Python's own HTML parser, so a value counts only inside a table cell), text is escaped, and
nothing outside the fragment is referenced. Negative controls: another object's numbers are
not found, and markup in a warning stays text.
"""

from __future__ import annotations

import copy
import dataclasses
import re
from html.parser import HTMLParser

import numpy as np

from bayesirl.design import Suggestion, Suggestions
from bayesirl.report.html_parts import interval, num
from bayesirl.report.suggestions import as_records

from .conftest import HOSTILE_WARNING, force_diagnostics


class Cells(HTMLParser):
    """Texts of every table cell, and every tag seen (to find unescaped markup)."""

    def __init__(self, text: str) -> None:
        super().__init__()
        self.cells: list[str] = []
        self.tags: list[str] = []
        self._in = 0
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag in ("td", "th"):
            self._in += 1
            self.cells.append("")

    def handle_endtag(self, tag):
        if tag in ("td", "th"):
            self._in -= 1

    def handle_data(self, data):
        if self._in:
            self.cells[-1] += data


def self_contained(text: str) -> bool:
    """No script and no resource from outside the fragment (images are data URIs)."""
    srcs = re.findall(r'(?:src|href)="([^"]*)"', text)
    return "<script" not in text.lower() and all(s.startswith("data:") for s in srcs)


def test_posterior_table_holds_its_numbers(park_report, ring_report):
    post = park_report.posterior
    html = post._repr_html_()
    cells = Cells(html).cells
    d = post.diagnostics
    for i, name in enumerate(post.feature_names):
        x = post.weights[..., i]
        q = np.percentile(x, [5, 95])
        assert name in cells
        assert format(x.mean(), ".3g") in cells and format(q[0], ".3g") in cells
        assert format(d.rhat[i], ".3f") in cells and format(d.ess_bulk[i], ".0f") in cells
    assert "divergent transitions" in cells and str(d.divergences) in cells
    assert self_contained(html)
    # Negative control: the ring posterior's table does not hold the park's means.
    other = Cells(ring_report.posterior._repr_html_()).cells
    assert not {format(post.weights[..., i].mean(), ".3g") for i in range(4)} <= set(other)


def test_posterior_warning_is_escaped(park_report):
    post = copy.copy(park_report.posterior)
    post._diagnostics = post.diagnostics._replace(warnings=(HOSTILE_WARNING,))
    html = post._repr_html_()
    assert "Do not trust these intervals yet" in html
    assert "<b>" not in html and "&lt;b&gt;mud&lt;/b&gt;" in html
    assert "b" not in Cells(html).tags


def test_report_shows_verdict_weights_and_figures(park_report, ring_report):
    report = force_diagnostics(park_report, True)
    html = report._repr_html_()
    cells = Cells(html).cells
    for row in report.weights:
        assert row["feature"] in cells and row["verdict"] in cells
        assert num(row["mean"]) in cells and interval(row["interval"]) in cells
    assert report.verdict.split(":")[0].replace("&", "&amp;") in html
    # The marginals and the reward map, inline.
    assert html.count('<img src="data:image/png;base64,') == 2
    assert self_contained(html)
    # Negative control: the ring report's weights table is another one.
    ring = Cells(ring_report._repr_html_()).cells
    assert not all(num(r["mean"]) in ring for r in report.weights)


def test_report_banner_and_escaping(park_report):
    report = force_diagnostics(park_report, False)
    html = report._repr_html_()
    assert "Do not trust these intervals yet" in html
    assert "<b>mud</b>" not in html and "&lt;b&gt;mud&lt;/b&gt;" in html
    passing = force_diagnostics(park_report, True)._repr_html_()
    assert "Do not trust" not in passing  # the banner is not always there


def _picks():
    return [Suggestion(candidate=9, gain=0.41, stderr=0.03, target_sd=float("nan"),
                       target_reduction=float("nan"), kind="start", state=9, step=1,
                       cumulative_gain=0.41, cumulative_stderr=0.03, p_best=0.55,
                       rank_interval=(1, 3), settled=False),
            Suggestion(candidate=2, gain=0.01, stderr=0.02, target_sd=float("nan"),
                       target_reduction=float("nan"), kind="query", state=2, step=0)]


def test_suggestions_table(park_report):
    grid = park_report.posterior.model.likelihood.mdp.grid_shape
    items = _picks()
    picks = Suggestions(items, grid_shape=grid)
    assert picks == items and isinstance(picks, list) and picks[:1] == items[:1]
    html = picks._repr_html_()
    cells = Cells(html).cells
    row, col = divmod(9, grid[1])
    assert f"a walk from cell (row {row}, col {col})" in cells
    assert "0.41 \u00b1 0.03" in cells
    assert "no measurable gain" in cells  # 0.01 within two standard errors of zero
    assert "Ranking not settled" in html
    assert self_contained(html)
    # Negative control: without the grid the same pick is named by its state number.
    plain = Cells(Suggestions(_picks())._repr_html_()).cells
    assert "a walk from state 9" in plain and f"a walk from cell (row {row}, col {col})" \
        not in plain


def test_report_with_suggestions_shows_them(park_report):
    report = dataclasses.replace(force_diagnostics(park_report, True),
                                 suggestions=as_records(_picks()))
    html = report._repr_html_()
    assert "Where to demonstrate next" in html
    assert "0.41 \u00b1 0.03" in Cells(html).cells
    assert "Where to demonstrate next" not in park_report._repr_html_()


def test_posterior_without_draws_says_so(park_report):
    # An interrupted run still in warm-up has zero draws: the display says so, no table.
    post = copy.copy(park_report.posterior)
    post.weights = post.weights[:, :0]
    html = post._repr_html_()
    assert "No draws yet" in html and Cells(html).cells == []
    assert "No draws yet" not in park_report.posterior._repr_html_()
