"""Evidence layer: the log posterior's data part as a sum of terms (see ``term``).

Sits between the likelihood layer (which it wraps) and the sampler layer. A new kind of
evidence (state-only episodes, comparisons between episodes, observed transitions for
estimated dynamics) is one new module with a class satisfying :class:`EvidenceTerm`.
"""

from bayesirl.lazy import exports

# Imported on first use (bayesirl.lazy): reading a problem file needs only the names of
# quantities (``weights_name``), and `bayesirl check` loads no numba.
_EXPORTS = {
    "BoltzmannTerm": "bayesirl.evidence.boltzmann",
    "ComparisonTerm": "bayesirl.evidence.comparisons",
    "discounted_features": "bayesirl.evidence.comparisons",
    "demonstrator_evidence": "bayesirl.evidence.groups",
    "pooled_evidence": "bayesirl.evidence.groups",
    "rationality_name": "bayesirl.evidence.groups",
    "weights_name": "bayesirl.evidence.groups",
    "Evidence": "bayesirl.evidence.model",
    "PointwiseSplit": "bayesirl.evidence.model",
    "PartialEpisodes": "bayesirl.evidence.episodes",
    "PartialTerm": "bayesirl.evidence.partial",
    "state_only": "bayesirl.evidence.episodes",
    "EvidenceTerm": "bayesirl.evidence.term",
    "Pointwise": "bayesirl.evidence.term",
    "PointwiseTerm": "bayesirl.evidence.term",
    "TermValue": "bayesirl.evidence.term",
}
__all__ = sorted(_EXPORTS)
__getattr__, __dir__ = exports(__name__, _EXPORTS, globals())
