"""Evidence layer: the log posterior's data part as a sum of terms (see ``term``).

Sits between the likelihood layer (which it wraps) and the sampler layer. A new kind of
evidence (state-only episodes, comparisons between episodes, observed transitions for
estimated dynamics) is one new module with a class satisfying :class:`EvidenceTerm`.
"""

from bayesirl.evidence.boltzmann import BoltzmannTerm
from bayesirl.evidence.groups import (
    demonstrator_evidence,
    pooled_evidence,
    rationality_name,
    weights_name,
)
from bayesirl.evidence.model import Evidence
from bayesirl.evidence.term import EvidenceTerm, TermValue

__all__ = ["BoltzmannTerm", "Evidence", "EvidenceTerm", "TermValue", "demonstrator_evidence",
           "pooled_evidence", "rationality_name", "weights_name"]
