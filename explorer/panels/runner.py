"""Evaluation off the widget callback: one worker thread, the latest change wins.

A panel hands every valid design to :meth:`Evaluator.submit`. When the worker is idle, the design
is evaluated at once (no delay for a single change). Changes that arrive while an evaluation runs
are coalesced: only the newest waits, older ones are dropped unseen, and a result that is no
longer the newest when it finishes is dropped too. So a burst of changes (arrow keys on a slider,
a long three-phase evaluation) costs at most the running evaluation plus one more, and the panel
never shows a result older than one already shown.

Results are delivered to ``deliver(generation, comparison, error, warnings)``: on the event loop of
the thread that submitted (the kernel's, in a notebook) when there is one running, otherwise on
the worker thread. ``background=False`` evaluates in the caller (scripts, doctests).
"""

from __future__ import annotations

import asyncio
import threading
import time
import warnings

from ..compare import evaluate

__all__ = ["Evaluator"]


class Evaluator:
    """See the module notes.

    Parameters
    ----------
    deliver : callable(gen, comparison or None, error or None, warnings: list[str], seconds: float)
    background : bool
        Evaluate on a worker thread (True) or in the caller.
    rank : str
        Ranking rule passed to :func:`explorer.evaluate`.
    """

    def __init__(self, deliver, *, background: bool = True, rank: str = "overhead"):
        self._deliver = deliver
        self.background = background
        self.rank = rank
        self._cv = threading.Condition()
        self._gen = 0            # newest submitted
        self._pending = None     # (gen, design) waiting for the worker
        self._running = None     # gen being evaluated
        self._done = 0           # newest generation delivered or dropped
        self._outbox = None      # finished (gen, args) waiting for the loop
        self._thread = None
        self._loop = None
        self._error = None       # an exception the delivery raised on the worker thread
        self.last_seconds: float | None = None

    @property
    def busy(self) -> bool:
        with self._cv:
            return self._pending is not None or self._running is not None or self._outbox is not None

    @property
    def generation(self) -> int:
        return self._gen

    def submit(self, design) -> int:
        """Queue ``design`` (a valid Design) as the newest; returns its generation number."""
        with self._cv:
            self._gen += 1
            gen = self._gen
            if not self.background:
                self._pending = None
        if not self.background:
            self._finish(gen, *self._evaluate(design))
            return gen
        try:
            self._loop = asyncio.get_running_loop()
        except RuntimeError:
            self._loop = None
        with self._cv:
            self._pending = (gen, design)
            if self._thread is None or not self._thread.is_alive():
                self._thread = threading.Thread(target=self._work, name="explorer-panel-evaluate", daemon=True)
                self._thread.start()
            self._cv.notify_all()
        return gen

    def _evaluate(self, design):
        t0 = time.perf_counter()
        try:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                result = evaluate(design, rank=self.rank)
            error = None
        except Exception as exc:  # handed to the panel boundary, which shows or re-raises it
            result, error, caught = None, exc, []
        seconds = time.perf_counter() - t0
        self.last_seconds = seconds
        return result, error, [str(w.message) for w in caught], seconds

    def _work(self) -> None:
        while True:
            with self._cv:
                while self._pending is None:
                    if not self._cv.wait(timeout=30.0) and self._pending is None:
                        self._thread = None  # idle for long: let the thread end, a new one starts on demand
                        return
                gen, design = self._pending
                self._pending = None
                self._running = gen
            args = self._evaluate(design)
            with self._cv:
                self._running = None
                stale = gen != self._gen
                if stale:
                    self._done = max(self._done, gen)
                    self._cv.notify_all()
                    continue
                self._outbox = (gen, args)
                loop = self._loop
            if loop is not None and loop.is_running():
                loop.call_soon_threadsafe(self.drain)
                continue
            try:
                self.drain()
            except Exception as exc:  # only with RAISE_ERRORS on (the panel shows errors otherwise): for wait()
                with self._cv:
                    self._error = exc
                    self._cv.notify_all()

    def drain(self) -> None:
        """Deliver a finished result now, if one waits (idempotent; called on the event loop)."""
        with self._cv:
            item, self._outbox = self._outbox, None
        if item is not None:
            gen, args = item
            try:
                if gen == self._gen:
                    self._finish(gen, *args)
            finally:
                with self._cv:
                    self._done = max(self._done, gen)
                    self._cv.notify_all()

    def _finish(self, gen, result, error, caught, seconds) -> None:
        self._deliver(gen, result, error, caught, seconds)
        with self._cv:
            self._done = max(self._done, gen)
            self._cv.notify_all()

    def wait(self, timeout: float = 60.0) -> None:
        """Block until every submitted design is evaluated and the newest delivered (tests, scripts).

        Re-raises an exception that delivering a result raised on the worker thread (only possible
        with ``explorer.panels.RAISE_ERRORS`` on).
        """
        end = time.monotonic() + timeout
        while True:
            self.drain()
            with self._cv:
                if self._error is not None:
                    err, self._error = self._error, None
                    raise err
                if self._done >= self._gen and self._pending is None and self._running is None \
                        and self._outbox is None:
                    return
                left = end - time.monotonic()
                if left <= 0:
                    raise TimeoutError(f"the panel's evaluation did not finish within {timeout:g} s")
                self._cv.wait(timeout=min(left, 0.05))

