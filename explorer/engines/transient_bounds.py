"""Bounds on a probe over a range of start-up cycles (the bounding step of the search).

For a cycle range a ≤ k < b the slowest real modes are bounded by the exact
phase extrema of corner states (2^n corners, or a tangent triangle for two
modes), the other modes by the deviation bound Σ_i A_i·D_i(a, b); see
:class:`explorer.engines.transient.StartupTransient` for the derivation.
"""

from __future__ import annotations

import functools
import math
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from .transient import StartupTransient

__all__ = ["RangeBounds", "split_ranges", "initial_ranges"]

#: Subintervals per split of the cycle-range search (:func:`split_ranges`).
_SPLIT = 8


def _tangent_triangle(mu: np.ndarray, j: np.ndarray, mj: np.ndarray, box: np.ndarray) -> np.ndarray:
    """Corners, as fractions of S_i = 1 − μ_i^j, of a triangle holding the curve s_i(l) = 1 − μ_i^l, 0 ≤ l ≤ j.

    Two real modes μ₁, μ₂ ∈ (0, 1): the curve is a convex arc from 0 to S, so it
    lies in the triangle of its chord and its two end tangents (directions
    (−ln μ_i) at l = 0 and (−μ_i^j·ln μ_i) at l = j), whose corners are 0, S and
    the tangents' intersection P. Returns (n, 3, 2) rows [S, P, P] scaled by S,
    or the box's other corners ``box`` where the triangle is degenerate (equal
    rates, an open tail, μ at 0 or 1). Rates equal to 1e-9 give the chord alone.
    """
    with np.errstate(divide="ignore"):
        l_ = -np.log(mu)
    l0, l1 = l_.tolist()
    if not (math.isfinite(l0) and math.isfinite(l1)):
        return box
    fin = np.isfinite(j)
    if abs(l0 - l1) <= 1e-9 * max(l0, l1, 1e-300):  # equal rates: the curve is the chord, s₂/S₂ = s₁/S₁
        return np.where(fin[:, None, None], 1.0, box)
    S = 1.0 - mj  # (n, 2)
    m0 = mj[:, 0]
    dm = m0 - mj[:, 1]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # P = t0·l = S − tj·(μ^j·l), i.e. t0 = q_i − tj·μ_i^j with q_i = S_i/l_i for both i
        q = S / l_
        q0 = q[:, 0]
        tj = (q0 - q[:, 1]) / dm
        t0 = q0 - tj * m0
        frac = t0[:, None] / q  # P_i/S_i
        ok = (fin & (S > 0).all(axis=1) & (np.abs(dm) > 1e-12 * mj[:, 1]) & (t0 >= 0) & (tj >= 0)
              & np.isfinite(frac).all(axis=1))  # a finite range, both S_i > 0, the tangents not parallel
    tri = np.ones(box.shape)
    tri[:, 1] = tri[:, 2] = frac
    return np.where(ok[:, None, None], tri, box)


@functools.lru_cache(maxsize=None)
def _corners(r: int) -> np.ndarray:
    """The 2^r corners of the unit box in r dimensions, shape (2^r, r): row c holds the bits of c."""
    out = ((np.arange(2 ** r)[:, None] >> np.arange(r)[None, :]) & 1).astype(float)
    out.flags.writeable = False
    return out


class RangeBounds:
    """A probe's extremes over ranges of start-up cycles, and bounds on them (one start-up).

    The bounding step of the branch and bound of :mod:`explorer.engines.transient_search`;
    keeps the modal amplitudes of each list of probes it has been asked for.
    """

    def __init__(self, tr: StartupTransient):
        self.tr = tr
        self._amp: dict = {}

    def amplitudes(self, names) -> np.ndarray:
        """A_i = max_t |α_i(t)| per mode, phase and probe (shape (n_modes, P, m)), or B per phase and probe
        (shape (P, m)) for the energy bound. Per phase, so that a probe that is zero in a phase (an open
        switch's current) has no deviation there."""
        tr = self.tr
        key = tuple(names)
        if key in self._amp:
            return self._amp[key]
        net, nx = tr.net, tr.net.n_x
        if tr.modal:
            v = tr.c[:, None] * tr.W.T  # row i: c_i·w_i
            lo, hi = tr.one_cycle(np.concatenate([v.real, v.imag]), np.zeros(net.n_u)).phase_extrema(names)
            a = np.maximum(np.abs(lo), np.abs(hi))
            amp = a[:nx] + a[nx:]
        else:
            cvals = np.array([float(c.c) for c in net.caps])
            K = net.stacked(net.probe_index(names))[1][..., :nx]  # (P, m, nx)
            amp = np.sqrt(((K / np.sqrt(cvals)) ** 2).sum(axis=-1))
        self._amp[key] = amp
        return amp

    def deviation(self, a: np.ndarray, b: np.ndarray, names) -> np.ndarray:
        """Bound on |y(k, t) − y(a, t)| over a ≤ k < b (b may be ∞, b > a) and t in each phase, (len(a), P, m)."""
        tr = self.tr
        amp = self.amplitudes(names)
        j = b - 1.0 - a  # steps beyond a (∞ for the open tail)
        if not tr.modal:
            cvals = np.array([float(c.c) for c in tr.net.caps])
            sq = np.sqrt(cvals)
            phi_s = sq[:, None] * tr.Phi / sq[None, :]
            g = np.linalg.norm(phi_s - np.eye(tr.net.n_x), 2)
            n_a = np.linalg.norm((tr.states(a) - tr.xss) * sq, axis=-1)
            with np.errstate(invalid="ignore"):
                f = np.minimum(2.0, np.where(np.isinf(j), 2.0, j * g))
            return (n_a * f)[:, None, None] * amp[None]
        r = np.minimum(np.abs(tr.mu), 1.0)
        with np.errstate(over="ignore", invalid="ignore"):
            ra = np.power(r[None, :], a[:, None])
            rj = np.power(r[None, :], np.where(np.isinf(j), 0.0, j)[:, None])
            rj = np.where(np.isinf(j)[:, None], np.where(r[None, :] < 1.0, 0.0, 1.0), rj)
            real_d = ra * (1.0 - rj)  # μ^a − μ^{b−1} for real μ in [0, 1]
            step = np.where(np.isinf(j)[:, None], np.inf, j[:, None] * np.abs(tr.mu - 1.0)[None, :])
            gen_d = ra * np.minimum(np.nan_to_num(step, nan=np.inf), 1.0 + rj)
        dmode = np.where(tr.real_modes[None, :], real_d, gen_d) * tr.other_modes[None, :]
        return np.einsum("ni,ipm->npm", dmode, amp)

    def __call__(self, a: np.ndarray, b: np.ndarray, names, extra=None):
        """Each probe's extremes in each phase of cycle a, and bounds on them over a ≤ k < b.

        ``extra``: more cycle-start states (q, n_x) whose phase extrema are wanted too, solved in
        the same batch; then their (lo, hi), each (q, P, m), follow the four results.

        Returns (lo_a, hi_a, lo_bound, hi_bound), each of shape (len(a), P, m). A real mode
        μ_i ∈ [0, 1] moves the cycle-start state by −s_i·μ_i^a·c_i·w_i with s_i = 1 − μ_i^{k−a} in
        [0, 1 − μ_i^{b−1−a}], and a probe is linear in the state at every instant, so over the box
        of the s_i its extremes at each instant sit at the box's corners: the exact phase extrema
        from the 2^n corner states bound the range (for one mode, the corners are cycles a and
        b − 1). Other modes add :meth:`deviation`.
        """
        tr = self.tr
        xa = tr.states(a)
        n, nx = xa.shape
        if tr.modal and tr.corner_modes.size:
            ci = tr.corner_modes
            mu = tr.mu.real[ci]
            j = b - 1.0 - a
            tail = np.isinf(j)
            mj = np.power(mu, np.where(tail, 0.0, j)[:, None])
            mj[tail] = mu >= 1.0  # μ^∞: 0 below 1
            shift = ((1.0 - mj) * np.power(mu[None, :], a[:, None]))[:, :, None] \
                * (tr.c[ci, None] * tr.W.T[ci]).real[None]  # (n, r, nx)
            sig = np.repeat(_corners(ci.size)[None], n, axis=0)  # (n, corners, r): s_i / S_i
            if ci.size == 2:
                sig[:, 1:] = _tangent_triangle(mu, j, mj, sig[:, 1:])
            nk = n * sig.shape[1]
            x = (xa[:, None, :] - sig @ shift).reshape(nk, nx)  # corner 0 of each range is x_a
            if extra is not None:
                x = np.concatenate([x, extra])
            # each state once where it equals the one before it: a one-cycle range has no shift (μ^0 = 1),
            # so all its corners are x_a; a tangent triangle lists its apex twice; ranges where the modes
            # have died out to rounding, and the steady state after them, are x_ss itself
            new = np.empty(len(x), bool)
            new[:1] = True
            np.any(x[1:] != x[:-1], axis=1, out=new[1:])
            lo, hi = tr.one_cycle(x[new], tr.u).phase_extrema(names)
            row = np.cumsum(new) - 1  # each state's row among the distinct ones
            if extra is not None:
                lo_e, hi_e = lo[row[nk:]], hi[row[nk:]]
            row = row[:nk].reshape(n, -1).T  # (corners, n): the corners first, so they reduce as whole blocks
            lo, hi = lo[row], hi[row]  # (corners, n, P, m)
            lo_a, hi_a, lo_b, hi_b = lo[0], hi[0], lo.min(axis=0), hi.max(axis=0)
        else:
            xs = xa if extra is None else np.concatenate([xa, extra])
            lo_a, hi_a = tr.one_cycle(xs, tr.u).phase_extrema(names)
            if extra is not None:
                lo_a, hi_a, lo_e, hi_e = lo_a[:n], hi_a[:n], lo_a[n:], hi_a[n:]
            lo_b, hi_b = lo_a, hi_a
        if not tr.modal or tr.other_modes.any():
            dev = self.deviation(a, b, names)
            lo_b, hi_b = lo_b - dev, hi_b + dev
        if extra is not None:
            return lo_a, hi_a, lo_b, hi_b, lo_e, hi_e
        return lo_a, hi_a, lo_b, hi_b


def split_ranges(a: np.ndarray, b: np.ndarray, extra=None) -> tuple[np.ndarray, np.ndarray]:
    """Split each range [a, b) into up to _SPLIT parts (and at the cycles ``extra`` (n, q) inside
    it); an open tail [a, ∞) into [a, a + 1), [a + 1, 8·(a + 1)) and [8·(a + 1), ∞)."""
    tail = np.isinf(b)
    at, af, bf = a[tail], a[~tail], b[~tail]
    e = np.round(af[:, None] + (bf - af)[:, None] * np.linspace(0.0, 1.0, _SPLIT + 1)[None, :])
    if extra is not None:
        x = np.clip(np.nan_to_num(np.floor(extra[~tail]), nan=0.0), af[:, None], bf[:, None])
        e = np.sort(np.concatenate([e, x], axis=1), axis=1)
    lo, hi = e[:, :-1].ravel(), e[:, 1:].ravel()
    ok = hi > lo
    lo = np.concatenate([lo[ok], at, at + 1.0, _SPLIT * (at + 1.0)])
    hi = np.concatenate([hi[ok], at + 1.0, _SPLIT * (at + 1.0), np.full(at.size, math.inf)])
    return lo, hi


def initial_ranges(settling_cycles: float) -> tuple[np.ndarray, np.ndarray]:
    """Ranges [0, 1), [1, 2), [2, 4), …, [2^m, ∞) with 2^m beyond 64 e-folds of the slowest mode."""
    return _doubling_ranges(int(min(53, max(1, math.ceil(math.log2(64.0 * settling_cycles + 1.0))))))


@functools.lru_cache(maxsize=None)
def _doubling_ranges(m: int) -> tuple[np.ndarray, np.ndarray]:
    """Starts and ends of the ranges [0, 1), [1, 2), [2, 4), …, [2^m, ∞) (read-only: shared)."""
    e = np.concatenate([[0.0], 2.0 ** np.arange(m + 1), [math.inf]])
    e.flags.writeable = False
    return e[:-1], e[1:]
