"""Matrix exponential and the φ-functions of the exact phase maps.

:func:`expm` is a batched scaling-and-squaring Padé(13) exponential in numpy
(no threaded BLAS call per small matrix); :func:`phi1` and :func:`phi12` are
(e^x − 1)/x and (e^x − 1 − x)/x², accurate near x = 0.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

__all__ = ["expm", "phi12", "phi1", "identity"]


@lru_cache(maxsize=32)
def identity(n: int) -> np.ndarray:
    """The n×n identity, read-only (kept per size: tiny matrices are built often; broadcasts over batches)."""
    out = np.eye(n)
    out.flags.writeable = False
    return out


#: Padé(13) coefficients b_0..b_13 of the scaling-and-squaring matrix exponential (Higham 2005, eq. 2.4).
_PADE13 = (64764752532480000.0, 32382376266240000.0, 7771770303897600.0, 1187353796428800.0,
           129060195264000.0, 10559470521600.0, 670442572800.0, 33522128640.0, 1323241920.0,
           40840800.0, 960960.0, 16380.0, 182.0, 1.0)


#: Largest 1-norm for which Padé(13) needs no scaling (Higham 2005, table 2.3).
_THETA13 = 5.371920351148152


def expm(a: np.ndarray) -> np.ndarray:
    """Matrix exponential over leading batch dimensions (scaling and squaring with a Padé(13) approximant).

    N. J. Higham, "The scaling and squaring method for the matrix exponential
    revisited", SIAM J. Matrix Anal. Appl. 26(4), 2005, doi:10.1137/04061101X,
    algorithm 2.3 with the degree-13 approximant throughout. Written with numpy
    so that a batch of small matrices costs a few batched products: scipy's
    ``expm`` calls a threaded BLAS per small matrix, which on a loaded machine
    took milliseconds per 10×10 matrix.
    """
    a = np.asarray(a, dtype=float)
    n = a.shape[-1]
    if a.size == 0:
        return a.copy()
    norm = np.abs(a).sum(axis=-2).max(axis=-1)  # 1-norm per matrix
    s = np.maximum(0, np.ceil(np.log2(np.maximum(norm, 1e-300) / _THETA13))).astype(int)
    s_max, s_min = int(s.max()), int(s.min())
    x = a / (2.0 ** s)[..., None, None] if s_max else a  # (a / 1 is a)
    b = _PADE13
    eye = identity(n)  # broadcasts over the batch in the sums below
    x2 = x @ x
    x4 = x2 @ x2
    x6 = x4 @ x2
    u = x @ (x6 @ (b[13] * x6 + b[11] * x4 + b[9] * x2) + b[7] * x6 + b[5] * x4 + b[3] * x2 + b[1] * eye)
    v = x6 @ (b[12] * x6 + b[10] * x4 + b[8] * x2) + b[6] * x6 + b[4] * x4 + b[2] * x2 + b[0] * eye
    r = np.linalg.solve(v - u, v + u)
    if s_min == s_max:  # one number of squarings for every matrix (none, usually)
        for _ in range(s_max):
            r = r @ r
        return r
    flat, sf = r.reshape((-1, n, n)), s.reshape(-1)
    for k in range(s_max):
        idx = sf > k  # square only the matrices still scaled down
        flat[idx] = flat[idx] @ flat[idx]
    return flat.reshape(r.shape)


def phi12(x: np.ndarray, second: bool = True) -> tuple[np.ndarray, np.ndarray | None]:
    """(e^x − 1)/x and (e^x − 1 − x)/x², the second by its Taylor series for |x| < 0.1 (error < 1e-16).

    The first is :func:`phi1` (expm1 keeps it accurate for small x); the second cancels for
    small x, so the series is summed there, and only there; ``second=False`` skips it (None).
    """
    x = np.asarray(x, dtype=float)
    em1 = np.expm1(x)
    f1 = np.asarray(_phi1(x, em1))
    if not second:
        return f1, None
    small = np.abs(x) < 0.1
    if not small.any():
        return f1, np.asarray((em1 - x) / (x * x))
    xs = np.where(small, 1.0, x)
    f2 = np.asarray((em1 - xs) / (xs * xs))  # where small, replaced by the series below
    # series Σ x^k/(k+2)!, k = 0..9, as a table of powers (running products) times the coefficients:
    # a few numpy calls instead of twenty for Horner's rule on tiny arrays; |x| < 0.1, so the terms
    # fall by 10× each and the sum is good to a few units in the last place
    xv = x[small]
    pw = np.empty((xv.size, _SERIES_C2.size))
    pw[:, 0] = 1.0
    pw[:, 1:] = xv[:, None]
    np.cumprod(pw, axis=1, out=pw)
    f2[small] = pw @ _SERIES_C2
    return f1, f2


_SERIES_C2 = np.array([1.0 / math.factorial(k + 2) for k in range(10)])


def phi1(x: np.ndarray) -> np.ndarray:
    """(e^x − 1)/x, 1 at x = 0 (expm1 keeps full relative accuracy for small x, so only x = 0 is special)."""
    x = np.asarray(x, dtype=float)
    return _phi1(x, np.expm1(x))


def _phi1(x: np.ndarray, em1: np.ndarray) -> np.ndarray:
    """:func:`phi1` from x and expm1(x) (:func:`phi12` needs expm1(x) for both)."""
    if x.all():  # no zero (the usual case): one reduction instead of a comparison and one
        return em1 / x
    zero = x == 0.0
    return np.where(zero, 1.0, em1 / np.where(zero, 1.0, x))
