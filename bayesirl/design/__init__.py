"""The demonstration designer: which extra demonstrations would narrow the posterior most.

Layer 7 (beside the report): builds on the posterior, the model and the solver.
"""

from bayesirl.design.groups import NEW
from bayesirl.design.listing import Suggestions
from bayesirl.design.suggest import Suggestion, suggest

__all__ = ["NEW", "Suggestion", "Suggestions", "suggest"]
