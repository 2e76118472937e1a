"""Where should the next demonstrations go? The designer on the invented park scenario.

A few short walks from the park's corner leave most of the map unexplained. ``suggest``
ranks every start state by the expected information gain of one more walk from there (and,
as a second view, every cell by the information in a single asked-for action), and the
ambiguity report shows the ranking on the map. All data here are invented for the demo.

Run: ``python examples/design.py [output folder]`` (default: the current folder).
"""

from __future__ import annotations

import sys
from pathlib import Path

import bayesirl
from bayesirl.report import ambiguity
from bayesirl.report.suggestions import as_records, render_text
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp


def main(folder: Path) -> None:
    mdp = park_mdp()
    demos = bayesirl.simulate(mdp, PARK_WEIGHTS, episodes=4, length=12, seed=1, start=0)
    lik = bayesirl.BoltzmannLikelihood(mdp, demos)
    posterior = bayesirl.sample(lik, chains=2, draws=400, warmup=400, seed=0, progress=False)
    walks = bayesirl.suggest(posterior, "start-states", budget=3, target="mud", seed=0)
    # The same table as `bayesirl suggest`: cells as (row, col), the batch with its gain so
    # far, no gain printed that is within noise of zero, and how settled the ranking is.
    print(render_text(as_records(walks), mdp.grid_shape, top=8))
    questions = as_records(bayesirl.suggest(posterior, "query-states", seed=0))
    print(render_text(questions, mdp.grid_shape, top=5))
    report = ambiguity(posterior, suggestions=walks)
    print("wrote", report.to_html(folder / "design_report.html"),
          report.to_json(folder / "design_report.json"))


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path("."))
