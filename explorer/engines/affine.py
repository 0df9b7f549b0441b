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
    """Inclusive Hillis–Steele scan of affine maps along the FIRST axis, in place.

    Overwrites and returns ``a`` and ``b`` (C-contiguous, so every shifted
    slice ``a[s:]`` is one contiguous block and each step is three flat
    ufunc calls). The in-place ufuncs read their overlapping input as it was
    before the step (numpy copies it when the operands overlap), so this is
    the textbook scan, bit for bit.
    """
    n = a.shape[0]
    s = 1
    while s < n:
        # element k becomes (map k) ∘ (prefix ending at k − s)
        as_ = a[s:]
        b[s:] += as_ * b[:-s]
        as_ *= a[:-s]
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
        A, B = _hs_scan(a.T.copy(), b.T.copy())  # all axes reversed: n first
        return A.T, B.T
    m = -(-n // _CHUNK)
    lead = a.shape[:-1]
    # padded rows: identity maps (a = 1, b = 0) after the last one
    pa_ = np.ones(lead + (m * _CHUNK,))
    pb_ = np.zeros(lead + (m * _CHUNK,))
    pa_[..., :n] = a
    pb_[..., :n] = b
    # chunks laid out with all axes reversed, (position in chunk, chunk, ...):
    # the scan runs along axis 0
    ca = pa_.reshape(lead + (m, _CHUNK)).T.copy()
    cb = pb_.reshape(lead + (m, _CHUNK)).T.copy()
    _hs_scan(ca, cb)
    ta, tb = affine_scan(ca[-1].T, cb[-1].T)  # prefix of chunk totals, shape (..., m)
    # exclusive prefix for chunk j is the inclusive prefix of chunk j − 1
    pa = np.ones(lead + (m,))
    pb = np.zeros(lead + (m,))
    pa[..., 1:] = ta[..., :-1]
    pb[..., 1:] = tb[..., :-1]
    cb += ca * pb.T
    ca *= pa.T
    A = ca.T.reshape(lead + (-1,))[..., :n]
    B = cb.T.reshape(lead + (-1,))[..., :n]
    return A, B
