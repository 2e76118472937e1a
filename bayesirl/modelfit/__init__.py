"""Does the model fit? Leave-one-episode-out predictive accuracy, model comparison and
posterior predictive checks (built on the posterior layer; below the report and CLI)."""

from bayesirl.modelfit.compare import Comparison, compare
from bayesirl.modelfit.loo import EpisodeLoo, episode_loo, refit_episodes

__all__ = ["Comparison", "EpisodeLoo", "compare", "episode_loo", "refit_episodes"]
