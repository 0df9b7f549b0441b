"""Exact interval maps of the diode-charged rail with an exponential junction diode.

Exponential junction (``i = i_s·(exp(v_j/(n·V_T)) − 1)``, ``v = v_j + r_s·i``):
with ``R = r + r_s + esr`` and ``θ = n·V_T`` the loop current at rail ``V`` is
the Lambert-W solution ``i = (θ/R)·W(z) − i_s``,
``ln z = ln(i_s·R/θ) + (v_src − V + i_s·R)/θ`` (Banwell & Jayakumar,
*Electronics Letters* 36(4), 2000, doi:10.1049/el:20000301; Corless et al.,
*Adv. Comput. Math.* 5, 1996, doi:10.1007/BF02124750). ``W(e^y)`` is the
Wright omega function ``ω(y)``, evaluated by :func:`scipy.special.wrightomega`.
Substituting ``w = W(z)`` in ``C·dV/dt = i − I`` separates the ODE exactly
(derived here, checked against :func:`scipy.integrate.solve_ivp` and ngspice
in the tests)::

    t1 − t0 = −R·C·[Φ(w1) − Φ(w0)],
    Φ(w) = ln|w − w_I|·(1 + 1/w_I) − ln(w)/w_I,   w_I = R·(i_s + I)/θ,

and the state at the end of an interval is found by inverting ``Φ`` with a
safeguarded Newton iteration to machine precision (for ``I = 0`` the inverse
is itself a Wright omega function, used as the starting value).

With a conductance load as well (the gate pull-down while the high side is
on, where the diode can conduct because V_bus is below V_DD) the separated
integral has no closed form: the elapsed time is integrated in
``σ = ln|ln w − ln w_e|`` (``w_e`` the equilibrium), where the integrand is
smooth on both sides of the equilibrium, by a composite Gauss–Legendre rule,
and the end state found by a bracketed Newton iteration on it (see
:class:`LoadedJunction`; checked against solve_ivp to 1e-11 in the tests). The
diode charge is then ``C·ΔV + I·Δt + G·∫V dt``, so charge balances exactly.
"""

from __future__ import annotations

import numpy as np

from .rail_linear import clamped_map, off_params, off_value
from .rail_loop import LOOP_ARRAYS, Loop, broadcast_as

__all__ = ["wright_omega", "w_of_v", "junction_current", "separated_phi", "junction_map", "LoadedJunction",
           "loaded_junction_integrals"]


#: Array size from which :func:`wright_omega` uses its own vectorised iteration instead of scipy's ufunc.
_OMEGA_OWN = 2048


def wright_omega(y):
    """Wright omega function ω(y), the solution w of w + ln w = y, for real y.

    Regional starting values (series at y = 1 and the asymptotic expansions
    for y → ±∞, Lawrence, Corless & Jeffrey, *ACM TOMS* 38(3), 2012,
    doi:10.1145/2168773.2168779) and two steps of the fourth-order iteration
    of Fritsch, Shafer & Crowley (*Commun. ACM* 16(2), 1973,
    doi:10.1145/361952.361970); agrees with :func:`scipy.special.wrightomega`
    to a few ulp (tested) and is faster on large arrays, which matters inside
    the start-up iteration; below :data:`_OMEGA_OWN` values scipy's ufunc is
    faster (no per-call overhead) and is used instead.
    """
    y = np.asarray(y, dtype=float)
    if y.size < _OMEGA_OWN:
        from scipy.special import wrightomega  # imported here: scipy.special takes ~0.3 s to load
        return wrightomega(y)
    with np.errstate(over="ignore", under="ignore", divide="ignore", invalid="ignore"):
        low = y <= -2.0
        high = ~(y <= 3.0)
        has_low = bool(low.any())
        # starting values; a region's expression is formed only when some y lies in it
        x = y - 1.0
        w = 1.0 + x * (0.5 + x * (1.0 / 16 + x * (-1.0 / 192 + x * (-1.0 / 3072 + x * 13.0 / 61440))))
        if high.any():
            ly = np.log(np.maximum(y, 3.0))
            w = np.where(high, y - ly + ly / y, w)
        if has_low:
            e = np.exp(np.minimum(y, -2.0))
            w = np.where(low, e * (1.0 - e * (1.0 - 1.5 * e)), w)
        for _ in range(2):
            z = y - np.log(w) - w
            wp = 1.0 + w
            q = 2.0 * wp * (wp + 2.0 * z / 3.0)
            w = w * (1.0 + z / wp * (q - z) / (q - 2.0 * z))
        if has_low:
            w = np.where(y < -40.0, e, w)  # e = exp(y) there (y < −2)
    return w


def _y_of_v(v, loop: Loop):
    """y = ln z at rail voltage v (the argument of the Wright omega function, w = ω(y))."""
    R, th, i_s = loop.r, loop.n_vt, loop.i_s
    return np.log(i_s * R / th) + (loop.v_src - v + i_s * R) / th


def w_of_v(v, loop: Loop):
    """w = W(z) at rail voltage v (Wright omega of ln z)."""
    return wright_omega(_y_of_v(v, loop))


def _lam_of_v(v, loop: Loop):
    """λ = ln w at rail voltage v, as y − ω(y) (finite where w itself underflows far above the source)."""
    y = _y_of_v(v, loop)
    return y - wright_omega(y)


def _v_of_w(w, loop: Loop):
    """Inverse of :func:`w_of_v`: V = v_src + i_s·R + θ·ln(i_s·R/θ) − θ·(ln w + w)."""
    R, th, i_s = loop.r, loop.n_vt, loop.i_s
    return loop.v_src + i_s * R + th * np.log(i_s * R / th) - th * (np.log(w) + w)


def junction_current(v, loop: Loop):
    """Diode current of the junction loop at rail voltage ``v`` [A] (exact, Lambert W)."""
    return loop.n_vt / loop.r * w_of_v(v, loop) - loop.i_s


def separated_phi(s, sigma, w, w_i):
    """Φ in terms of s = ln|w − w_I| (see module docstring), stable for small w_I."""
    with np.errstate(invalid="ignore", divide="ignore"):
        up = np.log1p(-w_i / w)          # ln(1 − w_I/w) for w > w_I
        dn = s - np.log(w)               # ln((w_I − w)/w) for w < w_I
    return np.where(sigma > 0, up, dn) / w_i + s


def junction_map(v0, loop: Loop, v1_guess=None):
    """Exact end value and slope of each interval (junction diode, separated ODE).

    ``v1_guess`` (optional, same shape as ``v0``) only seeds the inner solver.

    The diode is taken as cut off (no current) where its source is at or
    below the switch node (``v_src ≤ 0``); there the interval follows the
    cut-off regime of :func:`linear_map`.

    Returns
    -------
    v1 : ndarray [V]
    slope : ndarray [-]
        dV1/dV0 = (i1 − I)/(i0 − I).

    With a clamp (:class:`~explorer.engines.rail_loop.Loop`) the rail starts at min(v0, v_clamp) and
    ends at most at v_clamp (:func:`~explorer.engines.rail_linear.clamped_map`).
    """
    if loop.v_clamp is not None:
        return clamped_map(v0, loop, lambda v, lp: junction_map(v, lp, v1_guess))
    c, dt, i_load, g_load = loop.c, loop.dt, loop.i_load, loop.g_load
    R, th, i_s = loop.r, loop.n_vt, loop.i_s
    able = np.asarray(loop.v_src) > 0
    shape = np.broadcast(v0, dt, loop.v_src, c, R, i_load, g_load, th, i_s).shape
    v0 = broadcast_as(v0, shape)
    # cut-off intervals
    off = off_params(i_load, g_load, c)
    e_off = np.exp(-off[0] * dt)
    v1_off = off_value(v0, dt, i_load, g_load, c, params=off, decay=e_off)
    s_off = broadcast_as(e_off, shape)
    v1 = np.array(v1_off, dtype=float)
    slope = np.array(s_off, dtype=float)
    if able.any():
        # one subset copy per kind of interval (conducting-capable, without / with a conductance load)
        ab = broadcast_as(able, shape)
        loaded = broadcast_as(np.asarray(g_load) > 0, shape)
        for sel, solve in ((ab & ~loaded, _junction_on), (ab & loaded, _junction_g_on)):
            if not sel.any():
                continue
            sub = Loop(**{k: broadcast_as(getattr(loop, k), shape)[sel] for k in LOOP_ARRAYS}, diode="junction")
            v1[sel], slope[sel] = solve(v0[sel], sub, None if v1_guess is None else broadcast_as(v1_guess, shape)[sel])
    return v1, slope


def _junction_on(v0, loop: Loop, v1_guess=None):
    """:func:`junction_map` on 1-D arrays of conducting-capable intervals.

    Above the equilibrium current (w > w_I) Φ is solved in s = ln(w − w_I);
    below it (w < w_I, diode current under the load current) in λ = ln w, so
    that w is never formed by cancellation. Newton steps are kept inside a
    bracket that shrinks with every evaluation (bisection as the fallback).
    λ itself comes from the rail voltage (λ = y − ω(y)), not from ln w: far
    above the source w underflows to 0 while λ stays finite.
    """
    c, dt, i_load = loop.c, loop.dt, loop.i_load
    R, th, i_s = loop.r, loop.n_vt, loop.i_s
    w_i = R * (i_s + i_load) / th
    y0 = _y_of_v(v0, loop)
    w0 = wright_omega(y0)
    lam0 = y0 - w0  # λ = y − ω(y), as in _lam_of_v (one ω evaluation for both)
    lam1 = np.log(np.where(w0 > 0, w0, 1.0))
    tau = dt / (R * c)
    up = w0 > w_i
    dn = w0 < w_i
    w1 = w0.copy()
    slope = np.exp(-tau * w_i / (1.0 + w_i))  # at equilibrium: the linearised decay
    if v1_guess is None:
        yg = wg = None
    else:
        yg = _y_of_v(v1_guess, loop)
        wg = wright_omega(yg)
    if up.any():
        wi, ww, tt = w_i[up], w0[up], tau[up]
        s0 = np.log(ww - wi)
        target = np.log1p(-wi / ww) / wi + s0 - tt
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            if wg is None:  # start: the I = 0 closed form 1/w1 = ω(−K), K = ln w0 − 1/w0 − Δt/(RC)
                q1 = wright_omega(-(np.log(ww) - 1.0 / ww - tt))
                s_g = np.log(np.abs(1.0 / q1 - wi))
            else:
                s_g = np.log(wg[up] - wi)
        # 1 ≤ Φ'(s) = (w + 1)/w ≤ (1 + w_I)/w_I for w > w_I, so s0 − Δτ ≤ s1 ≤ s0 − Δτ·w_I/(1 + w_I)
        s_lin = s0 - tt * wi / (1.0 + wi)
        lo, hi = s0 - tt, s_lin
        s = np.where(np.isfinite(s_g) & (s_g > lo) & (s_g < hi), s_g, s_lin)
        s = np.clip(s, lo, hi)

        ln_wi = np.log(wi)

        def f_up(x):
            # ln(1 − w_I/w) = −ln(1 + w_I·e^(−x)) as logaddexp: accurate for small w_I/w and finite
            # where w − w_I is below the rounding of w (a settled interval), so Newton keeps its steps
            w = wi + np.exp(x)
            return -np.logaddexp(0.0, ln_wi - x) / wi + x - target, (w + 1.0) / w

        s = _bracketed_newton(f_up, s, lo, hi, tt > 0)
        w1[up] = wi + np.exp(s)
        lam1[up] = np.log(w1[up])
        slope_up = np.exp(s - s0)
        slope = np.where(up, 0.0, slope)
        slope[up] = slope_up
    if dn.any():
        wi, ww, tt = w_i[dn], w0[dn], tau[dn]
        l0 = lam0[dn]
        d0 = wi - ww
        u0 = np.log(d0)
        target = (u0 - l0) / wi + u0 - tt
        lam_half = np.log(0.5 * wi)
        lam_g = None
        if wg is not None:
            lam_g = (np.broadcast_to(yg, w0.shape) - np.broadcast_to(wg, w0.shape))[dn]  # _lam_of_v of the guess

        def f_dn(x, wi=wi, target=target):
            w = np.exp(x)
            d = wi - w
            with np.errstate(divide="ignore", invalid="ignore"):
                val = (np.log(d) - x) / wi + np.log(d) - target
            # Φ decreases with λ: return −Φ so the bracketed solver sees an increasing function
            return -val, (w + 1.0) / d

        # Where the end lies below w_I/2 solve in λ (d = w_I − w is then at least w_I/2, no cancellation);
        # above it in u = ln(w_I − w), with λ = ln w_I + ln(1 − e^u/w_I): near the equilibrium λ no longer
        # resolves d, but u does, down to a settled interval (d far below the rounding of w_I)
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            near = (l0 >= lam_half) | (f_dn(lam_half)[0] <= 0)
        lam = np.empty(ww.shape)
        sl = np.empty(ww.shape)
        far = ~near
        if far.any():
            lo = l0[far]
            hi = np.minimum(lam_half[far], l0[far] + tt[far] * wi[far])  # |Φ'(λ)| = (w + 1)/(w_I − w) ≥ 1/w_I
            x = l0[far] + tt[far] * wi[far] / (1.0 + wi[far])
            if lam_g is not None:
                g = lam_g[far]
                x = np.where(np.isfinite(g) & (g >= lo) & (g <= hi), g, x)
            x = _bracketed_newton(lambda z: f_dn(z, wi[far], target[far]), np.clip(x, lo, hi), lo, hi, tt[far] > 0)
            lam[far] = x
            sl[far] = (wi[far] - np.exp(x)) / d0[far]
        if near.any():
            wn, un, tn, wwn = wi[near], u0[near], tt[near], ww[near]
            # (1 + w_I)/w_I ≤ dΦ/du = (1 + w)/w ≤ (1 + w0)/w0 while w rises from w0 to w_I
            lo = un - tn * wn / (1.0 + wn)
            hi = np.minimum(un - tn * np.minimum(wwn, wn) / (1.0 + np.minimum(wwn, wn)), np.log(0.5 * wn))
            lo = np.minimum(lo, hi)
            x = un - tn * wn / (1.0 + wn)
            if lam_g is not None:
                with np.errstate(invalid="ignore", divide="ignore"):
                    g = np.log(wn - np.exp(lam_g[near]))
                x = np.where(np.isfinite(g) & (g >= lo) & (g <= hi), g, x)
            tg = target[near]
            ln_wn = np.log(wn)

            def f_u(z):
                e = np.exp(z)
                lam_z = ln_wn + np.log1p(-e / wn)
                return (z - lam_z) / wn + z - tg, (wn - e + 1.0) / (wn - e)

            x = _bracketed_newton(f_u, np.clip(x, lo, hi), lo, hi, tn > 0)
            lam[near] = ln_wn + np.log1p(-np.exp(x) / wn)
            sl[near] = np.exp(x - un)
        lam = np.where(tt > 0, lam, l0)
        w1[dn] = np.exp(lam)
        lam1[dn] = lam
        slope = np.array(np.broadcast_to(slope, w0.shape), dtype=float)
        slope[dn] = np.where(tt > 0, sl, 1.0)
    k_v = loop.v_src + i_s * R + th * np.log(i_s * R / th)
    v1 = np.where(tau > 0, k_v - th * (lam1 + w1), v0)   # _v_of_w in terms of λ
    v1 = np.where(w0 == w_i, v0, v1)
    return v1, np.broadcast_to(slope, w0.shape)


def _bracketed_newton(fun, x, lo, hi, active, iters: int = 60, bracket_tol: float = 1e-15):
    """Newton's method for an increasing ``fun`` (returning value and derivative), kept in [lo, hi].

    Stops where the step falls below 1e-14 relative and no longer grows, or where the bracket has
    shrunk below ``bracket_tol`` relative (a few ulp; wider for a ``fun`` with quadrature noise,
    whose iterates would otherwise wander inside the noise band until ``iters``). A tiny step
    alone is not enough: next to a logarithmic singularity at a bracket end (Φ at the equilibrium
    current) the derivative is huge and the first steps are tiny although the root is far away;
    there the steps grow geometrically while the iterate creeps off the singularity. A Newton step that leaves the bracket goes to the bracket end it crossed if
    that end (an a-priori bound) has not been evaluated yet, else to the midpoint: a root at the
    bound itself, within rounding, is then found at once instead of by halving.
    """
    lo = np.array(lo, dtype=float)  # own copies, updated in place
    hi = np.array(hi, dtype=float)
    inactive = ~broadcast_as(active, np.shape(x))
    all_active = not inactive.any()
    prev = np.zeros(np.shape(x))
    lo_seen = hi_seen = None  # bracket ends evaluated (or tried), made on the first step out
    for _ in range(iters):
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            f, df = fun(x)
        bad = ~(np.isfinite(f) & np.isfinite(df))
        any_bad = bool(bad.any())
        if any_bad:
            f = np.where(bad, 1.0, f)
            df = np.where(bad, 1.0, df)
        np.copyto(hi, x, where=f > 0)
        np.copyto(lo, x, where=f < 0)
        x_new = x - f / df
        out = ~((x_new >= lo) & (x_new <= hi))
        if any_bad:
            out |= bad
        if out.any():
            if hi_seen is None:
                hi_seen = np.zeros(np.shape(x), dtype=bool)
                lo_seen = np.zeros(np.shape(x), dtype=bool)
            hi_seen |= f > 0
            lo_seen |= f < 0
            to_hi = out & ~bad & (x_new > hi) & ~hi_seen
            to_lo = out & ~bad & (x_new < lo) & ~lo_seen
            x_new = np.where(to_hi, hi, np.where(to_lo, lo, np.where(out, 0.5 * (lo + hi), x_new)))
            hi_seen |= to_hi
            lo_seen |= to_lo
        step = np.abs(x_new - x)
        x = x_new if all_active else np.where(inactive, x, x_new)
        scale = np.maximum(1.0, np.abs(x))
        done = (step <= 1e-14 * scale) & (step <= prev)
        done |= (f == 0) | (hi - lo <= bracket_tol * scale)  # root bracketed to rounding
        if not all_active:
            done |= inactive
        if done.all():
            break
        prev = step
    return x


_GQ_X, _GQ_W = np.polynomial.legendre.leggauss(16)


#: Graded panels of the composite Gauss–Legendre rule along σ (finest at the interval start).
_GQ_PANELS = 8


#: Intervals per block of the quadrature (rows × 128 nodes per temporary array).
_GQ_ROWS = 256


#: Largest move of σ between Newton iterates whose elapsed time is added with one panel.
_GQ_STEP = 0.25


class LoadedJunction:
    """Junction loop with a conductance load G > 0 (1-D arrays of intervals), in λ = ln w.

    ``C·dV/dt = h(λ)``, ``h = (θ/R)·w − i_s − I − G·V``, ``V = K − θ·(λ + w)``,
    ``K = v_src + i_s·R + θ·ln(i_s·R/θ)`` (the Lambert-W loop current of the
    module docstring). ``h`` increases with λ and has one root λ_e (the
    equilibrium). With ``σ = ln|λ − λ_e|`` the time spent per unit σ,
    ``q(σ) = C·θ·(1 + w)·|λ − λ_e|/|h|``, is smooth and positive on both sides
    of the equilibrium (it tends to ``C·θ·(1 + w_e)/h'(λ_e)`` there and to a
    linear function of λ far away), so the elapsed time ``∫ q dσ`` is computed
    with a composite Gauss–Legendre rule (Abramowitz & Stegun 25.4.29) and the
    end of an interval found by a bracketed Newton iteration on it.
    """

    def __init__(self, loop: Loop):
        self.R, self.th, self.i_s = loop.r, loop.n_vt, loop.i_s
        self.I, self.G, self.C = loop.i_load, loop.g_load, loop.c
        self.K = loop.v_src + self.i_s * self.R + self.th * np.log(self.i_s * self.R / self.th)
        self.lam_e = self._equilibrium()
        w_e = np.exp(self.lam_e)
        _, dh_e = self.h(self.lam_e)
        self.w_e = w_e
        self.dh_e = dh_e

    def v(self, lam):
        return self.K - self.th * (lam + np.exp(lam))

    def h(self, lam, sl=slice(None)):
        """h(λ) [A] and dh/dλ [A]."""
        w = np.exp(lam)
        v = self.K[sl] - self.th[sl] * (lam + w)
        h = self.th[sl] / self.R[sl] * w - self.i_s[sl] - self.I[sl] - self.G[sl] * v
        dh = self.th[sl] / self.R[sl] * w + self.G[sl] * self.th[sl] * (1.0 + w)
        return h, dh

    def _equilibrium(self):
        w_i = self.R * (self.i_s + self.I) / self.th
        x = np.log(w_i)
        lo = x - 1.0
        hi = np.maximum(x, 0.0) + 1.0
        step = np.ones_like(x)
        with np.errstate(over="ignore", invalid="ignore"):
            for _ in range(80):  # widen until h(lo) < 0 < h(hi)
                h_lo, _ = self.h(lo)
                h_hi, _ = self.h(hi)
                if np.all((h_lo < 0) & (h_hi > 0)):
                    break
                lo = np.where(h_lo < 0, lo, lo - step)
                hi = np.where(h_hi > 0, hi, hi + step)
                step *= 2.0
        x = np.clip(x, lo, hi)
        return _bracketed_newton(lambda z: self.h(z), x, lo, hi, np.ones(x.shape, dtype=bool), iters=100)

    def lam_of_v(self, v):
        """λ = ln w at rail voltage v (ln ω(y) = y − ω(y), so no underflow far above the source)."""
        y = (self.K - v) / self.th  # w + ln w = y
        return y - wright_omega(y)

    def _nodes(self, sig0, sig1, sign, panels: int = _GQ_PANELS):
        """Composite rule nodes along σ from σ0 down to σ1: λ at the nodes and weights ·q (time per node)."""
        P = panels
        L = (sig0 - sig1)[:, None]
        k = np.arange(P + 1)
        br = sig0[:, None] - L * (2.0 ** k - 1.0) / (2.0 ** P - 1.0)  # panels finest at the start
        a, b = br[:, :-1, None], br[:, 1:, None]
        half = 0.5 * (a - b)
        mid = 0.5 * (a + b)
        sig = (mid + half * _GQ_X).reshape(len(sig0), -1)
        wts = (np.broadcast_to(half, half.shape[:-1] + (_GQ_X.size,)) * _GQ_W).reshape(len(sig0), -1)
        d = sign[:, None] * np.exp(sig)
        lam = self.lam_e[:, None] + d
        w = np.exp(lam)
        v = self.K[:, None] - self.th[:, None] * (lam + w)
        h = self.h_d(d, (slice(None), None))
        with np.errstate(divide="ignore", invalid="ignore"):
            q = self.C[:, None] * self.th[:, None] * (1.0 + w) * np.abs(d) / np.abs(h)
        q = np.where(np.isfinite(q), q, 0.0)
        return lam, v, w, wts * q

    def h_d(self, d, sl=slice(None)):
        """h at λ = λ_e + d without cancellation: (θ/R + G·θ)·w_e·(e^d − 1) + G·θ·d (h(λ_e) = 0) [A]."""
        th = self.th[sl]
        return (th / self.R[sl] + self.G[sl] * th) * self.w_e[sl] * np.expm1(d) + self.G[sl] * th * d

    def elapsed(self, sig0, sig1, sign, panels: int = _GQ_PANELS):
        n = len(sig0)
        if n <= _GQ_ROWS:
            return np.sum(self._nodes(sig0, sig1, sign, panels)[3], axis=-1)
        out = np.empty(n)  # in blocks: the node arrays stay in cache instead of being mapped afresh
        for a in range(0, n, _GQ_ROWS):
            j = slice(a, a + _GQ_ROWS)
            out[j] = np.sum(_take_g(self, j)._nodes(sig0[j], sig1[j], sign[j], panels)[3], axis=-1)
        return out

    def q_at(self, sig, sign):
        d = sign * np.exp(sig)
        h = self.h_d(d)
        return self.C * self.th * (1.0 + np.exp(self.lam_e + d)) * np.abs(d) / np.abs(h)

    def solve(self, v0, dt, v1_guess=None):
        """End state of each interval: σ1, sign, whether it reached the equilibrium within rounding.

        ``v1_guess`` (optional) seeds the Newton iteration where it lies on the
        start's side of the equilibrium and inside the bracket.
        """
        lam0 = self.lam_of_v(v0)
        diff = lam0 - self.lam_e
        sign = np.where(diff >= 0, 1.0, -1.0)
        with np.errstate(divide="ignore"):
            sig0 = np.log(np.abs(diff))
        # below this σ the rail is within rounding of its equilibrium
        floor = np.log(4e-16 * np.maximum(1.0, np.abs(self.lam_e)))
        at_eq = ~(sig0 > floor)
        sig0 = np.where(at_eq, floor, sig0)
        t_floor = self.elapsed(sig0, floor, sign)
        settles = (t_floor <= dt) | at_eq
        x = np.where(settles, floor, sig0)
        active = ~settles & (dt > 0)
        if np.any(active):
            ia = np.flatnonzero(active)
            sub = _take_g(self, ia)
            s0, sg, tt = sig0[ia], sign[ia], dt[ia]
            lo = np.full(ia.shape, floor[ia])
            hi = s0.copy()
            guess = s0 - tt / np.maximum(sub.q_at(s0, sg), 1e-300)
            if v1_guess is not None:
                d_g = sub.lam_of_v(np.asarray(v1_guess)[ia]) - sub.lam_e
                with np.errstate(divide="ignore", invalid="ignore"):
                    s_g = np.log(np.abs(d_g))
                use = (d_g * sg > 0) & (s_g > lo) & (s_g < hi)
                guess = np.where(use, s_g, guess)
            guess = np.clip(guess, lo, hi)

            # the elapsed time at each iterate: the whole graded rule from σ0, or, once the iterate is
            # within _GQ_STEP of the last one, that one's time plus one 16-point panel between the two
            # (the integrand is analytic there: the panel is exact to rounding)
            z_ref = s0.copy()
            e_ref = np.zeros(ia.shape)

            def fun(z):
                near = np.abs(z - z_ref) <= _GQ_STEP
                if near.all():
                    e = e_ref + sub.elapsed(z_ref, z, sg, panels=1)
                else:
                    e = sub.elapsed(s0, z, sg)
                    if near.any():
                        j = np.flatnonzero(near)
                        e[j] = e_ref[j] + _take_g(sub, j).elapsed(z_ref[j], z[j], sg[j], panels=1)
                z_ref[:] = z
                e_ref[:] = e
                return tt - e, sub.q_at(z, sg)

            # elapsed(z) falls as z rises: tt − elapsed is increasing in z
            # the quadrature's rounding noise is ~1e-14 of σ: a bracket that narrow is the root
            x[ia] = _bracketed_newton(fun, guess, lo, hi, np.ones(ia.shape, dtype=bool), iters=60,
                                      bracket_tol=1e-13)
        x = np.where(dt > 0, x, sig0)
        return sig0, x, sign, settles & (dt > 0)


def _take_g(jg: LoadedJunction, idx) -> LoadedJunction:
    out = object.__new__(LoadedJunction)
    for k in ("R", "th", "i_s", "I", "G", "C", "K", "lam_e", "w_e", "dh_e"):
        setattr(out, k, getattr(jg, k)[idx])
    return out


def _junction_g_on(v0, loop: Loop, v1_guess=None):
    """:func:`junction_map` for conducting-capable intervals with a conductance load (1-D arrays)."""
    jg = LoadedJunction(loop)
    sig0, sig1, sign, _ = jg.solve(v0, loop.dt, v1_guess)
    lam1 = jg.lam_e + sign * np.exp(sig1)
    v1 = np.where(loop.dt > 0, jg.v(lam1), v0)
    h0 = jg.h_d(sign * np.exp(sig0))
    h1 = jg.h_d(sign * np.exp(sig1))
    rate_e = jg.dh_e / (jg.C * jg.th * (1.0 + jg.w_e))  # linearised decay rate at the equilibrium
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(np.abs(h0) > 0, h1 / h0, np.exp(-rate_e * loop.dt))
    slope = np.where(np.isfinite(slope), np.clip(slope, 0.0, 1.0), np.exp(-rate_e * loop.dt))
    return v1, slope


def loaded_junction_integrals(v0, loop: Loop, r_ext) -> dict:
    """Integrals of junction intervals with a conductance load (see :func:`interval_integrals`)."""
    jg = LoadedJunction(loop)
    c, dt, i_load, g_load, R = loop.c, loop.dt, loop.i_load, loop.g_load, loop.r
    sig0, sig1, sign, _ = jg.solve(v0, dt)
    lam, v, w, tw = jg._nodes(sig0, sig1, sign)
    t_q = np.sum(tw, axis=-1)
    lam1 = jg.lam_e + sign * np.exp(sig1)
    v1 = jg.v(lam1)
    rest = np.clip(dt - t_q, 0.0, None)  # time at the equilibrium within rounding
    int_v = np.sum(tw * v, axis=-1) + rest * v1
    int_v2 = np.sum(tw * v * v, axis=-1) + rest * v1 ** 2
    i_d = jg.th[:, None] / R[:, None] * w - jg.i_s[:, None]
    i_d1 = jg.th / R * np.exp(lam1) - jg.i_s
    i2_d = np.sum(tw * i_d * i_d, axis=-1) + rest * i_d1 ** 2
    moving = dt > 0
    int_v = np.where(moving, int_v, 0.0)
    int_v2 = np.where(moving, int_v2, 0.0)
    i2_d = np.where(moving, i2_d, 0.0)
    # the ODE itself: i_d = C·dV/dt + I + G·V, so the diode charge balances the loads exactly
    q_d = c * (v1 - v0) + i_load * dt + g_load * int_v
    q_d = np.where(moving, q_d, 0.0)
    i2_c = np.maximum(i2_d - 2 * i_load * q_d - 2 * g_load * np.sum(tw * i_d * v, axis=-1)
                      - 2 * g_load * rest * i_d1 * v1 + (i_load ** 2) * dt + 2 * i_load * g_load * int_v
                      + g_load ** 2 * int_v2, 0.0)
    int_vi = c * (v1 ** 2 - v0 ** 2) / 2 + i_load * int_v + g_load * int_v2
    e_d = loop.v_src * q_d - int_vi - r_ext * i2_d
    i_d0 = np.maximum(jg.th / R * np.exp(jg.lam_e + sign * np.exp(sig0)) - jg.i_s, 0.0)
    return {"q_d": q_d, "i2_d": i2_d, "int_v": int_v, "int_v2": int_v2, "i2_c": i2_c, "e_d": e_d,
            "i_d0": i_d0, "v1": np.where(moving, v1, v0)}
