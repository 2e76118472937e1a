"""Likelihood layer: Boltzmann-rational demonstrator models with exact gradients."""

from bayesirl.likelihood.boltzmann import BoltzmannLikelihood, LikelihoodValue

__all__ = ["BoltzmannLikelihood", "LikelihoodValue"]
