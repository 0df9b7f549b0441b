"""Notebook panels (ipywidgets, with Bokeh plots through jupyter_bokeh). The core never imports this package.

``explore(design)`` is the composed explorer: the design panel (topology chooser and that
topology's fields, generated from the design Specs), the option editor (one card per option: add,
duplicate, relabel, remove), the side-by-side comparison with its plots, cautions, and tools to
load and save the design file and to write a static summary into the notebook. Each panel is
usable alone (:class:`DesignPanel`, :class:`OptionEditor`, :class:`ComparisonPanel`); the field
layer they share (:mod:`explorer.panels.form`) is pure Python.

:class:`ProgressBar` is a progress callback for :func:`explorer.tolerance.monte_carlo` and
:func:`explorer.sweep.sweep`.

Errors: bad input shows inline and the last valid result stays; any other callback error is shown
as one line in the status area, never as a traceback. Tests set :data:`RAISE_ERRORS` (or use
:func:`raise_errors`) so such errors propagate instead.
"""

#: When True, every panel callback error propagates (for tests) instead of showing in the status line.
RAISE_ERRORS = False

from .form import DesignForm  # noqa: E402
from .guard import raise_errors  # noqa: E402
from .progress import ProgressBar  # noqa: E402
from .widgets import ELV_DC_LIMIT, ComparisonPanel, DesignPanel, Explorer, OptionEditor, explore, summary_html  # noqa: E402

__all__ = ["RAISE_ERRORS", "raise_errors", "ProgressBar", "DesignForm", "DesignPanel", "OptionEditor",
           "ComparisonPanel", "Explorer", "explore", "summary_html", "ELV_DC_LIMIT"]
