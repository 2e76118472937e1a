"""Report layer: the ambiguity report (tables, verdicts, derived quantities, HTML and JSON)."""

from typing import TYPE_CHECKING

from bayesirl.lazy import exports

# Imported on first use (bayesirl.lazy): `bayesirl check` needs report.structural only.
_EXPORTS = {"AmbiguityReport": "bayesirl.report.ambiguity",
            "ambiguity": "bayesirl.report.ambiguity",
            "CAUTION": "bayesirl.report.verdicts"}
__getattr__, __dir__ = exports(__name__, _EXPORTS, globals())

__all__ = ["CAUTION", "AmbiguityReport", "ambiguity"]

if TYPE_CHECKING:  # the same names, eagerly, for type checkers
    from bayesirl.report.ambiguity import AmbiguityReport, ambiguity
    from bayesirl.report.verdicts import CAUTION
