"""The panels' error boundary: no traceback reaches a panel, and a switch for tests.

Every widget callback of the panels runs through :func:`guarded`. Bad input
(:class:`~explorer.errors.DesignError`) is expected and shown inline by the callback itself; any
other exception is caught here and shown as one line in the panel's status area, because a
traceback in a widget callback would otherwise vanish into the browser console or the log.

Tests must not have exceptions swallowed: set ``explorer.panels.RAISE_ERRORS = True`` or use the
context manager :func:`raise_errors`, and every callback error (also one from the background
evaluation, re-raised by ``wait()``) propagates.
"""

from __future__ import annotations

import contextlib
import functools
import sys

__all__ = ["raising", "raise_errors", "guarded", "one_line"]


def raising() -> bool:
    """Whether callback errors propagate (``explorer.panels.RAISE_ERRORS``)."""
    return bool(getattr(sys.modules.get("explorer.panels"), "RAISE_ERRORS", False))


@contextlib.contextmanager
def raise_errors(on: bool = True):
    """Within the block, callback errors of every panel propagate instead of showing in its status."""
    mod = sys.modules["explorer.panels"]
    before = mod.RAISE_ERRORS
    mod.RAISE_ERRORS = on
    try:
        yield
    finally:
        mod.RAISE_ERRORS = before


def one_line(exc: BaseException) -> str:
    """An exception as one line for a status area (type and message, no traceback)."""
    text = " ".join(str(exc).split()) or "(no message)"
    return f"internal error, please report it: {type(exc).__name__}: {text}"


def guarded(show):
    """Decorator of a panel method: an unexpected exception goes to ``show(self, text)``.

    ``show`` is a function ``(panel, text)`` that puts the line in the panel's status area. With
    :func:`raising` on, the exception propagates instead.
    """
    def wrap(fn):
        @functools.wraps(fn)
        def inner(self, *args, **kw):
            try:
                return fn(self, *args, **kw)
            except Exception as exc:  # the panel boundary: nothing past here may raise into the widget
                if raising():
                    raise
                show(self, one_line(exc))
                return None
        return inner
    return wrap
