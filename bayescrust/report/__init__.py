"""Tables and figures of results. Reads results; never recomputes physics or inference.

Figure functions take results, accept ``fig=``/``ax=``, and return a matplotlib Figure; they never
show or save it. matplotlib and corner are imported only when a figure is drawn.
"""

from .caution import CAUTION, caution_text
from .tables import TABLE_FORMATS, format_value, to_csv, to_latex, to_markdown

__all__ = [
    "CAUTION",
    "TABLE_FORMATS",
    "caution_text",
    "format_value",
    "to_csv",
    "to_latex",
    "to_markdown",
    "corner_figure",
    "trace_figure",
    "predictive_figure",
    "marginals_figure",
    "probability_chart",
    "comparison_figure",
    "forward_figure",
    "free_parameters",
]

_FIGURES = {"corner_figure", "trace_figure", "predictive_figure", "marginals_figure",
            "probability_chart", "comparison_figure", "forward_figure", "free_parameters"}


def __getattr__(name):  # figures module imported on first use (it is light, but keep it lazy)
    if name in _FIGURES:
        from . import figures

        return getattr(figures, name)
    raise AttributeError(f"module 'bayescrust.report' has no attribute {name!r}")
