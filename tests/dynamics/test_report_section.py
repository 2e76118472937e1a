"""The report's dynamics section: every weight's sentence says no more than its numbers."""

from __future__ import annotations

import pytest

from bayesirl.report.dynamics import render_html, render_text, sentence


def _row(share: float, floor: float = 0.01) -> dict:
    return {"feature": "slope", "interval": [-1.0, 1.0], "plug_in": [-0.5, 0.5],
            "share": share, "floor": floor}


@pytest.mark.parametrize("share, floor, words", [
    (0.015, 0.01, "no measurable part"),   # within twice the Monte-Carlo floor
    (0.3, 0.01, "more demonstrations address the larger part"),
    (0.6, 0.01, "logging more transitions is the larger lever"),
])
def test_sentence_follows_the_share(share, floor, words):
    assert words in sentence(_row(share, floor))


def test_a_share_that_is_only_noise_never_reads_as_dynamics():
    # Negative control: a 40% share is called noise when the Monte-Carlo floor is 30%.
    assert "no measurable part" in sentence(_row(0.4, 0.3))
    assert "no measurable part" not in sentence(_row(0.4, 0.01))


def test_text_and_html_show_both_intervals_and_the_split():
    record = {"level": 0.9, "dynamics_draws": 8, "logged": 120, "rhat": 1.02,
              "weights": [{**_row(0.6), "feature": "<wear>"}]}
    text = render_text(record)
    assert "[-1.000, 1.000]" in text and "[-0.500, 0.500]" in text and "60%" in text
    assert "2.00" in text  # width ratio: the pooled interval is twice the plug-in one
    assert "R-hat up to 1.020" in text and "cut posterior" in text
    html = render_html(record)
    assert "&lt;wear&gt;" in html and "<wear>" not in html
