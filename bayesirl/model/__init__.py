"""The model layer: MDP, demonstrations, and simulation from the soft-optimal policy."""

from bayesirl.model.demos import Demonstrations, Steps
from bayesirl.model.mdp import TabularMDP
from bayesirl.model.simulate import simulate

__all__ = ["Demonstrations", "Steps", "TabularMDP", "simulate"]
