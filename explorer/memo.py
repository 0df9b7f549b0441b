"""Memory of pure sub-results between evaluations (a sweep or a panel re-evaluates designs that
differ in a few fields, and most of an option's figures depend on only some of them).

:func:`memoised` wraps a pure function of plain values (floats, ints, strings, booleans, None and
tuples of them). A call with the same arguments returns the stored result, the same object, so a
result is bit-identical with or without the memory. A call with any other argument (a numpy array
of Monte Carlo samples, a network) is passed straight through and not stored. Stored results must
be immutable: numpy arrays in them are made read-only here (:func:`freeze`), so no caller can
change what another will be given.

The memory is bounded (least recently used out first) and :func:`clear` empties every one of them;
benchmarks clear it to measure an evaluation from nothing (docs/performance.md).
"""

from __future__ import annotations

import functools
import threading
from collections import OrderedDict
from typing import Callable

import numpy as np

__all__ = ["Memory", "memoised", "clear", "freeze", "stats"]

_ALL: list = []
_PLAIN = (float, int, str, bool, type(None))


def _plain(v) -> bool:
    if type(v) in _PLAIN:
        return True
    return type(v) is tuple and all(_plain(x) for x in v)


def _key(v):
    """The value with its type (1, 1.0 and True are equal in Python but not the same argument)."""
    if type(v) is tuple:
        return (tuple, tuple(_key(x) for x in v))
    return (type(v), v)


def freeze(obj):
    """Make every numpy array reachable through dicts, lists, tuples and dataclass fields read-only;
    returns ``obj``."""
    t = type(obj)
    if t in _PLAIN:
        return obj
    if isinstance(obj, np.ndarray):
        obj.flags.writeable = False
    elif isinstance(obj, dict):
        for v in obj.values():
            freeze(v)
    elif isinstance(obj, (list, tuple)):
        for v in obj:
            if type(v) not in _PLAIN:
                freeze(v)
    elif hasattr(obj, "__dataclass_fields__"):
        for name in obj.__dataclass_fields__:
            freeze(getattr(obj, name))
    return obj


class Memory:
    """A bounded store of results by key (least recently used out first), safe across threads.

    ``name`` is what :func:`stats` lists it under. :meth:`get` returns the stored result for a key
    or computes, freezes (:func:`freeze`) and stores it; a computation that raises stores nothing.
    """

    def __init__(self, name: str, maxsize: int):
        self.name, self.maxsize = name, maxsize
        self.store: OrderedDict = OrderedDict()
        self.lock = threading.Lock()
        self.hits = self.misses = 0
        _ALL.append(self)

    def get(self, key, compute: Callable):
        with self.lock:
            hit = self.store.get(key, self)
            if hit is not self:
                self.store.move_to_end(key)
                self.hits += 1
                return hit
        out = freeze(compute())
        with self.lock:
            self.misses += 1
            self.store[key] = out
            while len(self.store) > self.maxsize:
                self.store.popitem(last=False)
        return out

    def clear(self):
        with self.lock:
            self.store.clear()
            self.hits = self.misses = 0


def memoised(maxsize: int = 128) -> Callable:
    """Decorator: remember the results of a pure function of plain values (module notes)."""
    def wrap(fn):
        mem = Memory(fn.__qualname__, maxsize)

        @functools.wraps(fn)
        def call(*args, **kwargs):
            if not (all(_plain(a) for a in args) and all(_plain(v) for v in kwargs.values())):
                return fn(*args, **kwargs)
            key = (_key(args), tuple((k, _key(v)) for k, v in sorted(kwargs.items())))
            return mem.get(key, lambda: fn(*args, **kwargs))

        call.memory = mem
        return call
    return wrap


def clear() -> None:
    """Empty every memory (the next evaluation computes everything afresh)."""
    for mem in _ALL:
        mem.clear()


def stats() -> dict:
    """Hits and misses of each memory since it was last cleared, by function name."""
    return {m.name: {"hits": m.hits, "misses": m.misses, "stored": len(m.store)} for m in _ALL}
