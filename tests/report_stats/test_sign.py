"""The sign column: does the credible interval settle whether a feature is liked or avoided?"""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from bayesirl.report.ambiguity import headline
from bayesirl.report.verdicts import value_verdict
from bayesirl.report.weights import sign_word


@pytest.mark.parametrize(("lo", "hi", "word"), [
    (0.1, 2.0, "positive"), (-3.0, -1e-9, "negative"), (-0.2, 0.4, "not settled"),
    (0.0, 1.0, "not settled"),  # an interval touching zero does not exclude it
    (0.0, 0.0, "zero"),  # a weight pinned at zero
])
def test_sign_word(lo, hi, word):
    assert sign_word(lo, hi) == word


def _report(signs):
    # The verdict follows the interval: a settled sign here is "sign known", an open one
    # "sign open" (bayesirl.report.verdicts.value_verdict).
    intervals = {"positive": [0.5, 3.0], "negative": [-3.0, -0.5], "not settled": [-1.0, 1.0]}
    rows = [{"feature": f"f{k}", "sign": s, "median": sum(intervals[s]) / 2,
             "interval": intervals[s], "verdict": value_verdict(*intervals[s])}
            for k, s in enumerate(signs)]
    return SimpleNamespace(
        weights=rows, level=0.9, directions=[], structural=[],
        diagnostics={"trustworthy": True, "warnings": []},
        policy_risk={"bound": 0.1, "fraction_bound": 0.01, "alpha": 0.95},
    )


def test_headline_names_weights_whose_sign_is_open():
    assert "open" not in headline(_report(["positive", "negative"]))
    text = headline(_report(["positive", "not settled", "not settled"]))
    assert ("leave the sign of f1 0 [-1, 1] and f2 0 [-1, 1] open (the intervals contain "
            "zero)") in text
    assert "settle only the sign of f0 1.75 [0.5, 3]" in text
    assert "sign of f0 0 [-1, 1] open (the interval contains zero)" in headline(
        _report(["not settled"]))
