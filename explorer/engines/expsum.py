"""Real roots of sums of exponentials Σ b_i·e^{λ_i t}: the extrema and crossings of a probe
within one phase of a linear RC network.
"""

from __future__ import annotations

import numpy as np

__all__ = ["exp_sum_roots"]


def exp_sum_roots(b: np.ndarray, lam: np.ndarray, T: np.ndarray) -> np.ndarray:
    """Real roots in (0, T) of f(t) = Σ_i b_i·e^{λ_i t} (n terms), shape (..., n − 1), NaN where absent.

    Such a sum has at most n − 1 real roots (Laguerre's extension of Descartes'
    rule of signs; Pólya & Szegő, "Problems and Theorems in Analysis II", part V,
    problem 75). With λ₁ the largest exponent, g = e^{−λ₁t}·f has the roots of f
    and its derivative is an (n − 1)-term sum of the same kind, so the roots of
    g′ (found recursively) split (0, T) into intervals on which g is monotone;
    each holds at most one root, found by bisection to the last bit. Two terms
    have the closed form t = ln(−b₁/b₂)/(λ₂ − λ₁). Exponents λ_i − λ₁ ≤ 0 keep
    every exponential ≤ 1.
    """
    n = b.shape[-1]
    if n == 2:  # the closed form, symmetric in the two terms (no sort needed); `ok` has the broadcast shape
        with np.errstate(divide="ignore", invalid="ignore"):
            t = np.log(-b[..., 0] / b[..., 1]) / (lam[..., 1] - lam[..., 0])
            ok = (lam[..., 0] != lam[..., 1]) & (t > 0) & (t < T)
        return np.where(ok, t, np.nan)[..., None]
    shape = np.broadcast_shapes(b.shape[:-1], lam.shape[:-1], np.shape(T))
    if n <= 1:
        return np.full(shape + (0,), np.nan)
    order = np.argsort(-lam, axis=-1)
    lam = np.take_along_axis(np.broadcast_to(lam, shape + (n,)), np.broadcast_to(order, shape + (n,)), -1)
    b = np.take_along_axis(np.broadcast_to(b, shape + (n,)), np.broadcast_to(order, shape + (n,)), -1)
    b1, c, mu = b[..., 0], b[..., 1:], lam[..., 1:] - lam[..., :1]
    T = np.broadcast_to(T, shape)

    def g(t):
        return b1[..., None] + np.sum(c[..., None, :] * np.exp(mu[..., None, :] * t[..., None]), axis=-1)

    crit = exp_sum_roots(c * mu, mu, T)
    edges = np.sort(np.concatenate([np.zeros(shape + (1,)), np.where(np.isnan(crit), T[..., None], crit),
                                    T[..., None]], axis=-1), axis=-1)
    lo, hi = edges[..., :-1], edges[..., 1:]
    g_lo, g_hi = g(lo), g(hi)
    has = np.sign(g_lo) * np.sign(g_hi) < 0
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        g_mid = g(mid)
        left = np.sign(g_mid) == np.sign(g_lo)
        lo = np.where(left, mid, lo)
        g_lo = np.where(left, g_mid, g_lo)
        hi = np.where(left, hi, mid)
    return np.where(has, 0.5 * (lo + hi), np.nan)
