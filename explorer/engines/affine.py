"""Prefix composition of affine maps: the shared core of every piecewise-affine recurrence.

A rail whose every interval maps its start voltage affinely to its end voltage
(u ↦ a·u + b) — the bootstrap with a straight-line diode, the isolated
module's output capacitor — is solved over thousands to millions of intervals
by composing those maps in a parallel prefix instead of a Python loop.
"""

from __future__ import annotations

import numpy as np

__all__ = ["affine_scan"]


#: Chunk length of the prefix scan (a power of two).
_CHUNK = 64


def _hs_scan(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Inclusive Hillis–Steele scan of affine maps along the last axis (a copy)."""
    a = a.copy()
    b = b.copy()
    n = a.shape[-1]
    s = 1
    while s < n:
        # element k becomes (map k) ∘ (prefix ending at k − s)
        b[..., s:] = a[..., s:] * b[..., :-s] + b[..., s:]
        a[..., s:] = a[..., s:] * a[..., :-s]
        s *= 2
    return a, b


def affine_scan(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Prefix compositions of the affine maps ``u ↦ a[k]·u + b[k]`` along the last axis.

    Returns ``(A, B)`` with ``A[..., k]·u + B[..., k]`` equal to applying maps
    ``0 … k`` in order. Chunked parallel prefix (Blelloch, *Prefix sums and
    their applications*, CMU-CS-90-190, 1990): a scan inside chunks of 64, a
    recursive scan of the chunk totals, then one combining pass. With all
    ``a`` in [0, 1] it only multiplies numbers no larger than one and adds, so
    it is as accurate as the sequential recurrence.

    Parameters
    ----------
    a, b : ndarray, same shape ``(..., n)``
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    n = a.shape[-1]
    if n <= _CHUNK:
        return _hs_scan(a, b)
    m = -(-n // _CHUNK)
    pad = m * _CHUNK - n
    if pad:
        widths = [(0, 0)] * (a.ndim - 1) + [(0, pad)]
        a = np.pad(a, widths, constant_values=1.0)
        b = np.pad(b, widths, constant_values=0.0)
    shp = a.shape[:-1] + (m, _CHUNK)
    ca, cb = _hs_scan(a.reshape(shp), b.reshape(shp))
    ta, tb = affine_scan(ca[..., -1], cb[..., -1])  # prefix of chunk totals
    # exclusive prefix for chunk j is the inclusive prefix of chunk j − 1
    pa = np.concatenate((np.ones(ta.shape[:-1] + (1,)), ta[..., :-1]), axis=-1)[..., None]
    pb = np.concatenate((np.zeros(tb.shape[:-1] + (1,)), tb[..., :-1]), axis=-1)[..., None]
    A = ca * pa
    B = ca * pb + cb
    A = A.reshape(a.shape)[..., :n]
    B = B.reshape(b.shape)[..., :n]
    return A, B
