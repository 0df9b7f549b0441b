"""A progress bar for long runs in a notebook (Monte Carlo, sweeps, sizing)."""

from __future__ import annotations

import ipywidgets as widgets

__all__ = ["ProgressBar"]


class ProgressBar(widgets.HBox):
    """An ``ipywidgets`` bar that is also a ``progress(done, total)`` callback.

    Examples
    --------
    >>> from explorer.panels import ProgressBar                  # doctest: +SKIP
    >>> bar = ProgressBar("Monte Carlo")                           # doctest: +SKIP
    >>> display(bar)                                               # doctest: +SKIP
    >>> monte_carlo(design, "bootstrap 220n", 10_000, progress=bar)  # doctest: +SKIP

    In CI pass no callback at all (quiet).
    """

    def __init__(self, description: str = "progress"):
        self.bar = widgets.IntProgress(value=0, min=0, max=1, description=description)
        self.label = widgets.Label(value="")
        super().__init__([self.bar, self.label])

    def __call__(self, done: int, total: int) -> None:
        total = max(int(total), 1)
        self.bar.max = total
        self.bar.value = min(int(done), total)
        self.label.value = f"{done}/{total}"
        self.bar.bar_style = "success" if done >= total else ""
