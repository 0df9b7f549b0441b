"""Notebook-side helpers (ipywidgets). The core never imports this package.

Only what the core's long computations need so far: :class:`ProgressBar`, a
progress callback for :func:`explorer.tolerance.monte_carlo` and
:func:`explorer.sweep.sweep` that shows a bar in a notebook.
"""

from .progress import ProgressBar

__all__ = ["ProgressBar"]
