"""Views: text and HTML renderings of results (compute, then result, then view).

The data objects (:class:`~explorer.compare.Comparison`, the envelope results of
:mod:`explorer.tolerance`) hold numbers only; this package turns them into words,
tables and plots. This ``__init__`` imports no plotting library: the plot
module that needs Bokeh is imported by its own name (``explorer.views.plots``), so
``import explorer`` stays light.
"""

from .envelope import envelope_text
from .rules import rules_html, rules_text
from .table import CAUTION, comparison_html, comparison_rows, comparison_text, topology_text

__all__ = ["CAUTION", "comparison_html", "comparison_rows", "comparison_text", "envelope_text",
           "rules_html", "rules_text", "topology_text"]
