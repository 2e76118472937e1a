"""The ambiguity report of the park-walk scenario (invented data), as committed in reports/.

A walker crosses a small park (bayesirl.scenarios.park) from the top-left corner to the water
fountain. Every episode starts in the same corner, so the walker's routes leave parts of the
park unvisited and some trade-offs only loosely determined: the report says which, and
ranks the start states from which three more walks would narrow the posterior most.

    python examples/park_report.py            # writes reports/park-report.html and .json
    python examples/park_report.py OUT_DIR    # somewhere else
"""

from __future__ import annotations

import sys
from pathlib import Path

import bayesirl
from bayesirl.report import ambiguity
from bayesirl.scenarios import PARK_WEIGHTS, park_mdp


def main(out: Path) -> None:
    mdp = park_mdp()
    demos = bayesirl.simulate(mdp, PARK_WEIGHTS, episodes=6, length=12, seed=1, start=0)
    lik = bayesirl.BoltzmannLikelihood(mdp, demos)
    posterior = bayesirl.sample(lik, chains=4, draws=500, warmup=500, seed=0)
    # Where would three more walks narrow the posterior most (and the shade weight's sd)?
    walks = bayesirl.suggest(posterior, "start-states", budget=3, target="shade", seed=0)
    # truth is known only because the data are simulated: it adds z-scores to the table.
    report = ambiguity(posterior, level=0.9, truth=PARK_WEIGHTS, states=(0, 8, 24),
                       suggestions=walks)
    html = report.to_html(out / "park-report.html")
    js = report.to_json(out / "park-report.json")
    print(report.table())
    print(f"wrote {html} and {js}")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path("reports"))
