"""The sign column: does the credible interval settle whether a feature is liked or avoided?"""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from bayesirl.report.ambiguity import headline
from bayesirl.report.weights import sign_word


@pytest.mark.parametrize(("lo", "hi", "word"), [
    (0.1, 2.0, "positive"), (-3.0, -1e-9, "negative"), (-0.2, 0.4, "not settled"),
    (0.0, 1.0, "not settled"),  # an interval touching zero does not exclude it
    (0.0, 0.0, "zero"),  # a weight pinned at zero
])
def test_sign_word(lo, hi, word):
    assert sign_word(lo, hi) == word


def _report(signs):
    rows = [{"feature": f"f{k}", "verdict": "narrowed", "sign": s} for k, s in enumerate(signs)]
    return SimpleNamespace(
        weights=rows, level=0.9, directions=[], structural=[],
        diagnostics={"trustworthy": True, "warnings": []},
        policy_risk={"bound": 0.1, "fraction_bound": 0.01, "alpha": 0.95},
    )


def test_headline_names_weights_whose_sign_is_open():
    assert "not settled" not in headline(_report(["positive", "negative"]))
    text = headline(_report(["positive", "not settled", "not settled"]))
    assert "The sign of f1, f2 is not settled: each interval contains zero." in text
    assert "The sign of f0 is not settled: its interval" in headline(_report(["not settled"]))
