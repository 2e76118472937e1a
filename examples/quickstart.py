"""Quick start on an invented scenario: a walker crossing a small park.

The park is a grid; each cell may be muddy, sloped or shaded, and the walker wants to reach the
water fountain (an absorbing cell). We simulate demonstrations from known weights with a
Boltzmann-rational walker, then recover the weights by maximum likelihood with the exact
gradient. All data here are invented for the demo.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.optimize import minimize

import bayesirl

PARK = [
    "..mm..t",
    ".smm.tt",
    ".s...t.",
    "..ss...",
    "t..mm..",
    "tt..m.W",
]
FEATURES = ("mud", "slope", "shade", "water")
SYMBOLS = {".": (0, 0, 0, 0), "m": (1, 0, 0, 0), "s": (0, 1, 0, 0), "t": (0, 0, 1, 0),
           "W": (0, 0, 0, 1)}
MOVES = [(-1, 0), (0, 1), (1, 0), (0, -1)]  # up, right, down, left
SLIP = 0.1  # probability that a step goes to another random neighbour instead


def park_mdp(discount: float = 0.9) -> bayesirl.TabularMDP:
    """4-neighbour slippery grid; the fountain cell absorbs."""
    rows, cols = len(PARK), len(PARK[0])
    n = rows * cols
    phi = np.array([SYMBOLS[ch] for line in PARK for ch in line], dtype=float)
    p = sp.lil_matrix((n * 4, n))
    for s in range(n):
        r, c = divmod(s, cols)
        for a in range(4):
            if PARK[r][c] == "W":
                p[s * 4 + a, s] = 1.0
                continue
            for b, (dr, dc) in enumerate(MOVES):
                rr, cc = min(max(r + dr, 0), rows - 1), min(max(c + dc, 0), cols - 1)
                p[s * 4 + a, rr * cols + cc] += (1 - SLIP) if a == b else SLIP / 3
    return bayesirl.TabularMDP(p.tocsr(), phi, discount=discount, feature_names=FEATURES)


def main() -> None:
    mdp = park_mdp()
    truth = np.array([-1.0, -0.5, 0.3, 2.0])
    demos = bayesirl.simulate(mdp, truth, episodes=40, length=15, seed=1, start=0)
    lik = bayesirl.BoltzmannLikelihood(mdp, demos)

    def objective(w):
        value, grad = lik.value_and_grad(w)
        return -value, -grad

    fit = minimize(objective, np.zeros(mdp.n_features), jac=True, method="BFGS")
    print(f"{mdp}; {demos}")
    print(f"{'feature':<8} {'true':>6} {'max-likelihood':>15}")
    for name, t, w in zip(mdp.feature_names, truth, fit.x, strict=True):
        print(f"{name:<8} {t:6.2f} {w:15.2f}")
    print(f"log-likelihood at the estimate: {-fit.fun:.2f}")


if __name__ == "__main__":
    main()
