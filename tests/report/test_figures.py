"""Every figure of the report says what it shows: a title, and labels on both axes.

The figures are inspected as matplotlib ``Figure`` objects, before they are encoded for the
page, on both report fixtures (the park grid and the ring without a grid).
"""

from __future__ import annotations

import pytest
from matplotlib.figure import Figure

from bayesirl.report import maps, plots, suggestions
from bayesirl.report.forest import forest_figure


def problems(fig: Figure) -> list[str]:
    """What a reader would miss: a title, an axis label, a colour bar's label."""
    out = []
    data_axes = [ax for ax in fig.axes if getattr(ax, "_colorbar", None) is None]
    suptitle = fig._suptitle.get_text() if fig._suptitle is not None else ""
    if not suptitle.strip() and not all(ax.get_title().strip() for ax in data_axes):
        out.append("no title")
    for k, ax in enumerate(fig.axes):
        if getattr(ax, "_colorbar", None) is not None:
            if not (ax.get_xlabel().strip() or ax.get_ylabel().strip()):
                out.append(f"axes {k}: colour bar without a label")
            continue
        if not ax.get_xlabel().strip():
            out.append(f"axes {k} ({ax.get_title()!r}): no x label")
        if not ax.get_ylabel().strip():
            out.append(f"axes {k} ({ax.get_title()!r}): no y label")
    return out


def _forest_record() -> dict:
    ci = {"lower": -1.0, "mean": 0.0, "upper": 1.0}
    return {"features": ["mud", "slope"], "level": 0.9, "pooling": "partial",
            "demonstrators": {"ann": {"weights": {"mud": ci, "slope": ci}},
                              "bo": {"weights": {"mud": ci, "slope": ci}}},
            "population": {"mud": ci, "slope": ci},
            "new_demonstrator": {"mud": ci, "slope": ci},
            "heterogeneity": {"verdicts": {"mud": "agree", "slope": "unclear"}}}


def report_figures(park_report, ring_report) -> dict[str, Figure | None]:
    park, ring = park_report.posterior, ring_report.posterior
    picks = suggestions.as_records([{"candidate": 3, "gain": 0.4, "stderr": 0.05,
                                     "kind": "start", "state": 3, "step": 1}])
    figs = {"forest": forest_figure(_forest_record()),
            "park maps": maps.reward_maps(park, park_report.level),
            "ring per-state reward": maps.state_rewards(ring, ring_report.level),
            "suggestion map": suggestions.suggestion_map(park, picks, park_report.level)}
    for name, rep in (("park", park_report), ("ring", ring_report)):
        figs[f"{name} marginals"] = plots.marginals(rep.posterior, rep.weights, rep.level)
        figs[f"{name} pairs"] = plots.pairs(rep.posterior, rep.weights)
        figs[f"{name} ranks"] = plots.ranks(rep.posterior)
        figs[f"{name} risk"] = plots.risk(rep.policy_risk)
    return figs


@pytest.fixture(scope="module")
def figures(park_report, ring_report):
    return report_figures(park_report, ring_report)


def test_every_report_figure_is_drawn(figures):
    # All of them exist for these fixtures, so the check below really inspects each one.
    assert {k for k, f in figures.items() if f is None} == set()


@pytest.mark.parametrize("name", ["forest", "park maps", "ring per-state reward",
                                  "suggestion map", "park marginals", "park pairs",
                                  "park ranks", "park risk", "ring marginals", "ring pairs",
                                  "ring ranks", "ring risk"])
def test_figure_has_title_and_axis_labels(figures, name):
    assert problems(figures[name]) == []


def test_checker_finds_a_missing_label_and_title():
    # Negative control: an untitled figure whose y axis is unlabelled, and an unlabelled
    # colour bar, are reported.
    fig = Figure()
    ax = fig.add_subplot(1, 1, 1)
    fig.colorbar(ax.imshow([[0.0, 1.0]]), ax=ax)
    ax.set_xlabel("column")
    found = problems(fig)
    assert "no title" in found
    assert any("no y label" in p for p in found)
    assert any("colour bar" in p for p in found)
    assert not any("no x label" in p for p in found)
