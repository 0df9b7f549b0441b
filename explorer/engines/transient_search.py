"""Branch and bound over start-up cycle ranges: extremes, peak and first crossing of a probe.

A range whose bound (:mod:`explorer.engines.transient_bounds`) cannot reach the
quantity sought is skipped whole, the rest is split (eight parts per split, the
open tail growing eightfold), so questions over millions of cycles cost
O(log N) batched evaluations.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from ..roots import brentq
from .expsum import exp_sum_roots
from .periodic import PeriodicSolution
from .transient_bounds import initial_ranges, split_ranges

if TYPE_CHECKING:
    from .transient import StartupTransient

__all__ = ["MAX_STARTUP_CYCLES", "search_extremes", "first_reach"]

#: Cycles beyond which start-up is not followed (2⁵³: the last count a float holds exactly).
MAX_STARTUP_CYCLES = 2 ** 53
#: Most open ranges per round of the search: beyond it :func:`search_extremes` returns its bounds
#: (conservative: never inside the true extremes) and :func:`first_reach` defers the later ranges,
#: so the work per round stays bounded.
_MAX_OPEN = 512
#: Cycles the first pass of :func:`first_reach` scans (their phase-boundary values at once, then the exact
#: in-cycle extrema up to the first candidate); a later crossing goes to the search.
_FIRST_PASS = 64


def search_extremes(tr: StartupTransient, names, rtol: float, peak: bool):
    """Branch and bound over the cycle ranges (class notes) for the extremes or the peak magnitude."""
    a, b = initial_ranges(tr.settling_cycles)
    first = True
    while a.size:
        if first:  # the periodic steady state (the limit k → ∞) in the same batch as the first ranges
            lo, hi, lo_b, hi_b, lo_p, hi_p = tr.bounds(a, b, names, extra=tr.xss[None, :])
            lo_best, hi_best = lo_p[0].min(axis=0), hi_p[0].max(axis=0)
        else:
            lo, hi, lo_b, hi_b = tr.bounds(a, b, names)  # (n, P, m)
        lo_best = np.minimum(lo_best, lo.min(axis=(0, 1)))
        hi_best = np.maximum(hi_best, hi.max(axis=(0, 1)))
        if first:  # the scale: the largest magnitude the start-up can reach
            tol = rtol * np.maximum(np.abs(lo_b).max(axis=(0, 1)), np.abs(hi_b).max(axis=(0, 1))) + 1e-300
            first = False
        if peak:
            top = np.maximum(hi_best, -lo_best)
            open_ = (np.maximum(hi_b, -lo_b) > top + tol).any(axis=(1, 2))
        else:
            open_ = ((hi_b > hi_best + tol) | (lo_b < lo_best - tol)).any(axis=(1, 2))
        keep = open_ & (b - a > 1.0) & (a < MAX_STARTUP_CYCLES)
        n_open = np.count_nonzero(keep)
        if n_open == 0:
            break
        if n_open > _MAX_OPEN:  # bounded work: settle for the (conservative) bounds
            lo_best = np.minimum(lo_best, lo_b[keep].min(axis=(0, 1)))
            hi_best = np.maximum(hi_best, hi_b[keep].max(axis=(0, 1)))
            break
        a, b = split_ranges(a[keep], b[keep])
    return lo_best, hi_best


def first_reach(tr: StartupTransient, name: str, threshold: float, *, below: bool = False):
    """(k, t): the first cycle of ``tr`` and the instant [s from the start of cycle 0] at which probe ``name`` reaches
    ``threshold`` (falls to it if ``below``), or (None, None); see :meth:`StartupTransient.first_reach`.

    A cheap scan of the first cycles (:func:`_first_pass`) answers short start-ups; otherwise branch and
    bound over cycle ranges, split near the predicted crossing (:func:`_guess`), and the exact instant
    within the first cycle found (:func:`_first_in_cycle`).
    """
    sgn = -1.0 if below else 1.0
    thr = sgn * float(threshold)
    k = _first_pass(tr, name, thr, sgn)
    if k is not None:
        k, ext = k
        return k, float(k * tr.period + _first_in_cycle(tr, k, name, float(threshold), sgn, ext))
    best = math.inf
    a, b = initial_ranges(tr.settling_cycles)
    while a.size:
        lo, hi, lo_b, hi_b = tr.bounds(a, b, [name])
        top = hi[..., 0] if sgn > 0 else -lo[..., 0]  # (n, P)
        top_b = hi_b[..., 0] if sgn > 0 else -lo_b[..., 0]
        hit = (top >= thr).any(axis=1)
        if hit.any():
            best = min(best, float(a[hit].min()))
        b = np.minimum(b, best)
        keep = ~hit & (b - a > 1.0) & (a < best) & (a < MAX_STARTUP_CYCLES) & (top_b >= thr).any(axis=1)
        a, b = a[keep], b[keep]
        guess = _guess(tr, a, top[keep], name, thr, sgn)
        if a.size > _MAX_OPEN:  # the earliest ranges first; the later ones wait (the first crossing is sought)
            order = np.argsort(a)
            a, b = a[order], b[order]
            wait_a, wait_b = a[_MAX_OPEN:], b[_MAX_OPEN:]
            a, b, guess = a[:_MAX_OPEN], b[:_MAX_OPEN], guess[order][:_MAX_OPEN]
        else:
            wait_a = wait_b = np.zeros(0)
        a, b = split_ranges(a, b, guess)
        a, b = np.concatenate([a, wait_a]), np.concatenate([b, wait_b])
    if math.isinf(best):
        return None, None
    k = int(best)
    t = k * tr.period + _first_in_cycle(tr, k, name, float(threshold), sgn)
    return k, float(t)


def _first_pass(tr: StartupTransient, name: str, thr: float, sgn: float):
    """(k, (lo, hi, z)): the first cycle whose exact extremes reach sgn·thr, its phase extrema (P, 1) each and
    its phase-start states (P, n_z), from a cheap scan of the first cycles, or None.

    A short start-up (tens of cycles) would pay the search's fixed cost many times
    over. The states at the starts of the first :data:`_FIRST_PASS` cycles come in one
    vectorised step (:meth:`states`) and the probe at every phase boundary with them;
    those values are among the candidates of the exact phase extrema, so the first cycle
    in which one reaches the threshold bounds the answer from above. The exact in-cycle
    extrema of that cycle and every earlier one then give the first cycle that reaches it,
    as the search would. None (the search decides) when no boundary value reaches it in the
    scan, or rounding lets the exact extrema disagree with the boundary values.
    """
    if tr.settling_cycles <= 0.0 and not tr.modal:
        return None
    sol = tr.one_cycle(tr.states(np.arange(_FIRST_PASS, dtype=float)), tr.u)
    z = sol.z0  # (n, P, n_z)
    K = tr.net.probe_rows([name])[:, 0, :]  # (P, n_z)
    y0 = (z * K).sum(axis=-1)  # (n, P)
    y1 = (z * (K[:, None, :] @ tr.E)[:, 0, :]).sum(axis=-1)  # K·E_p·z
    cand = np.flatnonzero((np.maximum(sgn * y0, sgn * y1) >= thr).any(axis=1))
    if cand.size == 0:
        return None
    m = cand[0] + 1
    lo, hi = PeriodicSolution(net=tr.net, durations=sol.durations[:m], z0=z[:m], E=tr.E, S=tr.S).phase_extrema([name])
    top = hi[..., 0] if sgn > 0 else -lo[..., 0]  # (n, P)
    hit = np.flatnonzero((top >= thr).any(axis=1))
    if not hit.size:
        return None
    h = int(hit[0])
    return h, (lo[h], hi[h], z[h])


def _guess(tr: StartupTransient, a: np.ndarray, top: np.ndarray, name: str, thr: float, sgn: float) -> np.ndarray:
    """Cycles near the predicted crossing after each a, shape (len(a), 4), to split the ranges at.

    Only a guide for the search (the bounds decide): with the slowest mode μ alone, the
    phase maximum tends to its steady-state value f_∞ as f_∞ − (f_∞ − f(a))·μ^{k−a}, so it
    reaches the threshold at k̂ = a + ln((f_∞ − thr)/(f_∞ − f(a)))/ln μ.
    """
    out = np.full((a.size, 4), np.nan)
    if not tr.modal or a.size == 0:
        return out
    m = np.abs(tr.mu)
    m = m[m < 1.0]
    mu = float(m.max(initial=0.0))
    if not 0.0 < mu < 1.0:
        return out
    lo, hi = tr.periodic.phase_extrema([name])
    f_inf = (hi if sgn > 0 else -lo)[0, :, 0]  # (P,)
    with np.errstate(divide="ignore", invalid="ignore"):
        k = a[:, None] + np.log((f_inf - thr) / (f_inf - top)) / math.log(mu)
    k = np.where((f_inf > thr) & (top < thr) & np.isfinite(k), k, np.inf).min(axis=1)
    k = np.where(np.isfinite(k), k, np.nan)
    return k[:, None] + np.array([-1.0, 0.0, 1.0, 2.0])[None, :]


def _first_in_cycle(tr: StartupTransient, k: int, name: str, thr: float, sgn: float, ext=None) -> float:
    """Exact first instant within cycle k at which sgn·(probe − thr) ≥ 0 [s from the cycle start].

    In the first phase whose extremes reach the threshold, the probe
    y(t) = Σ_i k_i·(e^{λ_i t}·w_i + φ₁(λ_i t)·t·g_i) + k_u·u is monotone between the
    zeros of y′ (:func:`exp_sum_roots`); the first monotone piece that reaches
    the threshold holds the crossing, solved by Brent's method to rounding. ``ext``:
    the cycle's phase extrema (lo, hi), each (P, 1), and its phase-start states (P, n_z),
    when already at hand.
    """
    net = tr.net
    nx = net.n_x
    lam, V, Vinv, VN = net.modes
    if ext is None:
        sol = tr.one_cycle(tr.states([k]), tr.u)
        lo, hi = sol.phase_extrema([name])
        zk = sol.z0[0]
    else:
        lo, hi, zk = ext[0][None], ext[1][None], ext[2]
    top = (hi if sgn > 0 else -lo)[0, :, 0]
    reach = np.flatnonzero(top >= sgn * thr)
    if reach.size == 0:
        return tr.period  # not reached (rounding at a tangency): the cycle's end
    p = int(reach[0])
    t_start = float(tr.durations[:p].sum())
    dur = float(tr.durations[p])
    z0 = zk[p]
    K = net.probe_rows([name])[p, 0, :]
    w = Vinv[p] @ z0[:nx]
    g = VN[p] @ tr.u
    kk = K[:nx] @ V[p]
    ku = float(K[nx:] @ tr.u)
    terms = [(float(lp), float(a), float(c)) for lp, a, c in zip(lam[p], kk * w, kk * g)]

    def y(t):
        acc = ku - thr
        for lp, a, c in terms:
            x = lp * t
            acc += a * math.exp(x) + c * (math.expm1(x) / lp if x != 0.0 else t)
        return sgn * acc

    if y(0.0) >= 0.0:
        return t_start
    roots = exp_sum_roots(kk * (lam[p] * w + g), lam[p], np.asarray(dur))
    edges = np.concatenate([[0.0], np.sort(roots[~np.isnan(roots)]), [dur]])
    for lo_t, hi_t in zip(edges[:-1], edges[1:]):
        if y(hi_t) >= 0.0:  # monotone between the zeros of y′: one crossing
            if y(lo_t) >= 0.0:
                return t_start + float(lo_t)
            return t_start + brentq(y, float(lo_t), float(hi_t), xtol=1e-300, rtol=4 * np.finfo(float).eps)
    return t_start + dur  # the phase's extremum sits at its end only by rounding
