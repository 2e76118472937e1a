"""How a report reads for a run with several demonstrators (report.html and the verdict).

The page must say that its weights table is the population mean, give the spread and a
new demonstrator's interval with a plain-words verdict per feature, and list each
demonstrator partially pooled and alone, all at the numbers of the plain record (which
tests/groups/test_posterior.py checks against the draws). Negative control: a pooled run's
page says none of this.
"""

from __future__ import annotations

import re
from html import unescape

import pytest
from posterior.problems import PRIOR

import bayesirl as bi
from bayesirl.report.groups_html import PLAIN
from bayesirl.report.html import render_html

from .problems import fresh, three_demonstrators
from .test_posterior import RUN, posterior


def _section(page: str, sid: str) -> str:
    start = page.index(f'<section id="{sid}">')
    return page[start:page.index("</section>", start)]


def _text(html: str) -> str:
    return unescape(re.sub(r"<[^>]+>", " ", html))


@pytest.fixture(scope="module")
def report():
    return bi.ambiguity(posterior("partial"), level=0.9)


def test_verdict_says_population_and_heterogeneity(report):
    rec = report.demonstrators
    assert report.verdict.startswith("These demonstrations come from 3 demonstrators, "
                                     "modelled with partial pooling: the weights below are the "
                                     "population mean")
    sentence = rec["heterogeneity"]["sentence"]
    assert sentence[1:] in report.verdict
    # each verdict word of the record appears in plain words
    assert set(rec["heterogeneity"]["verdicts"]) == {"x", "y"}


def test_page_sections_read_population_spread_individuals(report):
    page = render_html(report)
    rec = report.demonstrators
    section = _text(_section(page, "demonstrators"))
    for name in ("x", "y"):
        pop, spread, new = (rec[k][name] for k in ("population", "spread", "new_demonstrator"))
        for r in (pop, spread, new):
            assert f"[{r['lower']:.3g}, {r['upper']:.3g}]" in section
    for who, r in rec["demonstrators"].items():
        assert who in section
        alone = r["alone"]["x"]
        assert f"[{alone['lower']:.3g}, {alone['upper']:.3g}]" in section
    assert "a new demonstrator" in section and "alone" in section
    neg = rec["heterogeneity"]["negligible"]
    for name, word in rec["heterogeneity"]["verdicts"].items():
        row = re.search(rf"<tr><td class=\"l\">{name}</td>.*?</tr>",
                        _section(page, "demonstrators")).group(0)
        assert PLAIN[word].format(neg=neg) in _text(row)
    weights = _text(_section(page, "weights"))
    assert "Population mean." in weights and "next one you meet" in weights
    assert '<img src="data:image/png' in _section(page, "demonstrators")


def test_pooled_run_has_none_of_it():
    pooled = bi.sample(fresh(three_demonstrators()), PRIOR, **RUN)
    report = bi.ambiguity(pooled, level=0.9)
    page = render_html(report)
    assert report.demonstrators is None
    assert 'id="demonstrators"' not in page and "Population mean." not in page
    assert not report.verdict.startswith("These demonstrations come from")


def _with_rationalities(rec: dict) -> dict:
    """The record as a run with per-demonstrator rationality makes it (invented numbers)."""
    out = dict(rec, demonstrators={k: dict(v) for k, v in rec["demonstrators"].items()})
    for k, r in enumerate(out["demonstrators"].values()):
        r["rationality"] = {"mean": 1.1 + k, "sd": 0.2, "lower": 0.71 + k, "upper": 1.53 + k}
    out["population_rationality"] = {"mean": 1.9, "sd": 0.3, "lower": 1.37, "upper": 2.46}
    return out


def test_page_lists_each_demonstrators_rationality_with_its_interval(report):
    from bayesirl.report.groups_html import render

    rec = _with_rationalities(report.demonstrators)
    section = _text(render(rec))
    assert "Rationality of each demonstrator" in section
    for r in [rec["population_rationality"]] + [d["rationality"] for d in
                                                rec["demonstrators"].values()]:
        assert f"[{r['lower']:.3g}, {r['upper']:.3g}]" in section
    # negative control: demonstrators sharing one rationality get no such table
    assert "Rationality of each" not in _text(render(report.demonstrators))
