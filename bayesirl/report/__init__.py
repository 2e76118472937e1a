"""Report layer: the ambiguity report (tables, verdicts, derived quantities, HTML and JSON)."""

from bayesirl.report.ambiguity import CAUTION, AmbiguityReport, ambiguity

__all__ = ["CAUTION", "AmbiguityReport", "ambiguity"]
