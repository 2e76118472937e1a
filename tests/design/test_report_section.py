"""The report's suggestions: plain records in the JSON, a table and a map in the HTML."""

from __future__ import annotations

import json
from types import SimpleNamespace

import numpy as np
import pytest

from bayesirl import InputError, suggest
from bayesirl.report.ambiguity import AmbiguityReport
from bayesirl.report.suggestions import as_records, render, suggestion_map
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp

from .conftest import posterior_from_draws, some_demos


@pytest.fixture(scope="module")
def park():
    mdp = park_mdp()
    rng = np.random.default_rng(0)
    draws = PARK_WEIGHTS + 0.3 * rng.normal(size=(40, 4))  # invented, around the demo weights
    post = posterior_from_draws(mdp, some_demos(mdp, PARK_WEIGHTS, length=10), draws)
    return post, suggest(post, "query-states", budget=2, target="mud", n_outer=16)


def test_records_are_plain_and_json_ready(park):
    _, ranked = park
    recs = as_records(ranked)
    assert recs[0]["candidate"] == ranked[0].candidate and recs[0]["step"] == 1
    report = AmbiguityReport(0.9, [], [], [], {}, {}, {}, {}, suggestions=recs)
    text = json.dumps(report.as_dict(), allow_nan=False)
    assert json.loads(text)["suggestions"][1]["gain"] == pytest.approx(ranked[1].gain)


def test_bad_records_are_refused():
    with pytest.raises(InputError, match=r"suggestions\[0\]"):
        as_records([{"gain": 1.0}])


def test_html_section_has_table_and_map(park):
    post, ranked = park
    recs = as_records(ranked)
    fig = suggestion_map(post, recs, 0.9)
    distinct = len({(r["state"], r["kind"]) for r in recs[:5]})
    assert fig is not None and len(fig.axes[0].collections) == distinct  # one per top cell
    texts = sorted(x.get_text() for x in fig.axes[0].texts)
    assert sum(len(x.split(",")) for x in texts) == 5  # every top rank is drawn once
    page = render(SimpleNamespace(suggestions=as_records(ranked), posterior=post, level=0.9))
    assert 'id="suggestions"' in page and "data:image/png" in page
    assert page.count("<tr>") == 1 + 15  # header and the first 15 suggestions
    empty = render(SimpleNamespace(suggestions=[], posterior=post, level=0.9))
    assert empty == ""


def test_no_record_holds_a_negative_gain(park):
    # A mutual information is never negative: records clip the estimate to the bound and keep
    # the raw Monte-Carlo estimate beside it.
    _, ranked = park
    for r in ranked:
        assert r.gain >= 0.0 and r.gain == max(r.gain_estimate, 0.0)
        assert r.measurable == (r.gain_estimate - 2.0 * r.stderr > 0.0)
    recs = as_records(ranked)
    assert all(rec["gain"] >= 0.0 for rec in recs)
    assert [rec["gain_estimate"] for rec in recs] == pytest.approx(
        [r.gain_estimate for r in ranked])


def test_a_negative_estimate_is_clipped_and_not_measurable():
    rec = {"candidate": 3, "gain": -0.04, "stderr": 0.03, "state": 3, "kind": "query",
           "step": 1}
    out = as_records([rec])[0]
    assert out["gain"] == 0.0 and out["gain_estimate"] == -0.04 and out["measurable"] is False
    # negative control: a clear gain stays as it is and is measurable
    out = as_records([{**rec, "gain": 0.5}])[0]
    assert out["gain"] == 0.5 and out["gain_estimate"] == 0.5 and out["measurable"] is True


def test_rows_say_whose_demonstration_with_several_demonstrators():
    from bayesirl.report.suggestions import render_text

    rec = {"candidate": 3, "gain": 0.5, "stderr": 0.03, "state": 3, "kind": "start", "step": 1}
    recs = as_records([{**rec, "demonstrator": "ana"},
                       {**rec, "step": 0, "demonstrator": "(new demonstrator)"}])
    text = render_text(recs)
    assert "a walk from state 3, by ana" in text
    assert "a walk from state 3, by (new demonstrator)" in text
    # negative control: a one-reward record names nobody
    assert ", by" not in render_text(as_records([rec]))
