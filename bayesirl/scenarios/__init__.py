"""Invented scenarios bundled for demos, examples and tests."""

from bayesirl.scenarios.park import PARK_WEIGHTS, park_mdp

__all__ = ["PARK_WEIGHTS", "park_mdp"]
