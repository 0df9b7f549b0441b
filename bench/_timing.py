"""Timing helper shared by the bench scripts (run as scripts, so this folder is on sys.path)."""

from __future__ import annotations

import time

import numpy as np


def run_times(fn, repeat: int, *, inner: int = 1, warmup: bool = True) -> np.ndarray:
    """Wall times of ``repeat`` runs of ``fn`` [s]; each run calls it ``inner`` times and is divided by that."""
    if warmup:
        fn()
    out = np.empty(repeat)
    for i in range(repeat):
        t = time.perf_counter()
        for _ in range(inner):
            fn()
        out[i] = (time.perf_counter() - t) / inner
    return out


def median_s(fn, repeat: int = 21, *, inner: int = 1) -> float:
    """Median wall time of ``fn`` [s] after one warm-up call."""
    return float(np.median(run_times(fn, repeat, inner=inner)))
