"""Invented scenarios bundled for demos, examples and tests."""

from bayesirl.scenarios.machine import MACHINE_WEIGHTS, machine_mdp
from bayesirl.scenarios.park import PARK_WEIGHTS, park_mdp

__all__ = ["MACHINE_WEIGHTS", "PARK_WEIGHTS", "machine_mdp", "park_mdp"]
