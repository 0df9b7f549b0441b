"""Exact interval maps of the bootstrap charging loop, and their fast composition.

The bootstrap circuit seen from its capacitor (voltage ``V = V_B − V_S``)::

    V_DD ──R──diode──┬── B          C·dV/dt = i_d(V) − I − G·V
                     C              (steps of −q/C at interval starts)
    SW (v_sw) ───────┴── S

Per interval ``j`` of a schedule the loop source is ``v_src = V_DD − v_sw``,
the load is a constant current ``I`` (driver quiescent current, leakage) plus
a conductance ``G`` (gate pull-down while the high side is on), and a charge
``q`` is removed at the interval start (gate charge at turn-on, recovery and
junction charge at switch-node edges).

Straight-line diode (``v = v_f + r_d·i`` while conducting): with
``R = r + r_d + esr``, ``V_∞ = v_src − v_f`` and ``g = 1/R`` the state obeys a
linear ODE in each conduction regime, so every interval is one of

* **A** (conducting throughout, ``V0 ≤ V_∞``): exponential toward
  ``V_eq = (g·V_∞ − I)/(g + G)`` with rate ``(g + G)/C``;
* **B** (cut off throughout): exponential toward ``−I/G`` with rate ``G/C``
  (a straight line ``−I/C`` when ``G = 0``);
* **C** (cut off, then the falling rail meets ``V_∞`` at ``t*`` and the diode
  conducts): B up to ``t*``, then A from ``V_∞``.

Regimes A and B are affine in ``V0``; C is smooth (its slope is continuous
with A's and B's at both borders). First-order linear ODE solutions:
Boyce & DiPrima, *Elementary Differential Equations*, 10th ed., 2012, §2.1.

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
:class:`_JunctionG`; checked against solve_ivp to 1e-11 in the tests). The
diode charge is then ``C·ΔV + I·Δt + G·∫V dt``, so charge balances exactly.

Composition. One analysis period is the composition of the interval maps. The
periodic solution (and a start-up trajectory) is found by Newton's method on
the whole orbit (multiple shooting): each map is replaced by its tangent at the
current trajectory, the affine maps ``u ↦ a·u + b`` are composed by a chunked
parallel prefix scan (all ``a`` lie in (0, 1], so products never grow and no
division is needed), the periodic fixed point of the composed affine map is
solved in closed form, and the trajectory is updated. With the straight-line
diode and no cut-off crossing the maps are affine and the first pass is
exact: there is no iteration at all. With cut-off crossings or the junction
diode Newton converges quadratically (a handful of passes).

The fast batch function :func:`steady_rail` takes arrays shaped ``(..., n)``
(a batch of schedules with ``n`` intervals each) and parameters that
broadcast, so a margin map over an ``f_sw × duty`` grid is one call;
:func:`explorer.options.bootstrap.evaluate_option` uses the same function.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


from .affine import affine_scan

__all__ = ["wright_omega", "Loop", "OrbitSolution", "affine_scan", "linear_map", "junction_map", "junction_current",
           "interval_map", "steady_rail", "propagate", "interval_integrals", "crossing_time",
           "K_B", "Q_E", "thermal_voltage"]

#: Boltzmann constant [J/K] (SI 2019 exact value, BIPM SI Brochure 9th ed.).
K_B = 1.380649e-23
#: Elementary charge [C] (SI 2019 exact value).
Q_E = 1.602176634e-19

#: Newton passes allowed on an orbit before giving up.
_MAX_PASSES = 60


def _bcast(x, shape):
    """``x`` broadcast to ``shape`` (``x`` itself where it already is an array of that shape)."""
    if isinstance(x, np.ndarray) and x.shape == shape:
        return x
    return np.broadcast_to(x, shape)


def thermal_voltage(t_celsius: float) -> float:
    """Thermal voltage V_T = k·T/q [V] at a temperature in °C."""
    return K_B * (t_celsius + 273.15) / Q_E


@dataclass(frozen=True)
class Loop:
    """The charging loop and load of every interval (arrays broadcast to ``(..., n)``).

    Attributes
    ----------
    dt : ndarray [s]
        Interval durations.
    v_src : ndarray [V]
        Loop source V_DD − v_sw during the interval.
    c : ndarray or float [F]
        Effective bootstrap capacitance.
    r : ndarray or float [Ω]
        Total series resistance of the loop: r + esr + r_d (straight line) or
        r + esr + r_s (junction).
    i_load : ndarray or float [A]
        Constant load current drawn from the capacitor during the interval.
    g_load : ndarray or float [S]
        Load conductance during the interval (gate pull-down while HS on).
    q_step : ndarray or float [C]
        Charge removed from the capacitor at the start of the interval
        (negative: charge added).
    v_f : ndarray or float [V]
        Straight-line diode knee voltage (``diode == "linear"``).
    i_s, n_vt : ndarray or float [A], [V]
        Junction saturation current and n·V_T (``diode == "junction"``).
    diode : {"linear", "junction"}
    """

    dt: np.ndarray
    v_src: np.ndarray
    c: np.ndarray
    r: np.ndarray
    i_load: np.ndarray = 0.0
    g_load: np.ndarray = 0.0
    q_step: np.ndarray = 0.0
    v_f: np.ndarray = 0.0
    i_s: np.ndarray = 1e-14
    n_vt: np.ndarray = 0.025
    diode: str = "linear"

    @property
    def able(self) -> np.ndarray:
        """The diode may conduct in this interval (its source is above the switch node)."""
        if self.diode == "linear":
            return np.asarray(self.v_src - self.v_f) > 0.0
        return np.asarray(self.v_src) > 0.0


# --------------------------------------------------------------------------- scan

# --------------------------------------------------------------------------- straight-line diode

def _expo(v0, veq, rate, t):
    """V(t) of dV/dt = −rate·(V − veq); rate may be 0 (then veq holds the slope, see callers)."""
    return veq + (v0 - veq) * np.exp(-rate * t)


def _off_params(i_load, g_load, c):
    """Rate and equilibrium of the cut-off regime (rate 0: straight line of slope −I/C)."""
    rate = g_load / c
    with np.errstate(divide="ignore", invalid="ignore"):
        veq = np.where(g_load > 0, -i_load / np.where(g_load > 0, g_load, 1.0), 0.0)
    return rate, veq


def _off_value(v0, t, i_load, g_load, c):
    rate, veq = _off_params(i_load, g_load, c)
    return np.where(rate > 0, _expo(v0, veq, rate, t), v0 - i_load / c * t)


def _off_time_to(v0, v_target, i_load, g_load, c):
    """Time for the cut-off regime to fall from v0 to v_target (inf if never)."""
    rate, veq = _off_params(i_load, g_load, c)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_exp = np.log((v0 - veq) / (v_target - veq)) / np.where(rate > 0, rate, 1.0)
        t_exp = np.where((v_target - veq) > 0, t_exp, np.inf)
        t_lin = np.where(i_load > 0, (v0 - v_target) * c / np.where(i_load > 0, i_load, 1.0), np.inf)
    return np.where(rate > 0, t_exp, t_lin)


def linear_map(v0, loop: Loop):
    """Exact end value, slope dV1/dV0 and regime of each interval (straight-line diode).

    Parameters
    ----------
    v0 : ndarray [V]
        Capacitor voltage at the interval start, after the step.
    loop : Loop
        With ``diode == "linear"``.

    Returns
    -------
    v1 : ndarray [V]
        Voltage at the interval end.
    slope : ndarray [-]
        dV1/dV0 (in (0, 1]).
    regime : ndarray of int8
        0 = A (conducting), 1 = B (cut off), 2 = C (cut off, then conducting).
    """
    c, dt, i_load, g_load = loop.c, loop.dt, loop.i_load, loop.g_load
    g = 1.0 / loop.r
    v_inf = loop.v_src - loop.v_f
    able = v_inf > 0
    rate_on = (g + g_load) / c
    veq_on = (g * v_inf - i_load) / (g + g_load)
    e_on = np.exp(-rate_on * dt)
    # A
    v1_a = veq_on + (v0 - veq_on) * e_on
    # B
    rate_off, _ = _off_params(i_load, g_load, c)
    v1_b = _off_value(v0, dt, i_load, g_load, c)
    s_b = np.exp(-rate_off * dt)
    # C
    t_star = _off_time_to(v0, v_inf, i_load, g_load, c)
    with np.errstate(invalid="ignore", over="ignore"):
        v1_c = veq_on + (v_inf - veq_on) * np.exp(-rate_on * (dt - t_star))
        num = g * (v_inf - v1_c) - i_load - g_load * v1_c
        den = -i_load - g_load * v0
        # den = 0 is a rail resting at the cut-off equilibrium −I/G (never refreshed): it never
        # falls to V_∞, so t* = ∞ and the interval is in B, where s_c is not used
        s_c = num / np.where(den != 0, den, 1.0)
    in_a = able & (v0 <= v_inf)
    in_c = able & ~in_a & (t_star < dt)
    v1 = np.where(in_a, v1_a, np.where(in_c, v1_c, v1_b))
    slope = np.where(in_a, e_on, np.where(in_c, s_c, s_b))
    regime = np.where(in_a, 0, np.where(in_c, 2, 1)).astype(np.int8)
    return v1, slope, regime


# --------------------------------------------------------------------------- junction diode

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


def _w_of_v(v, loop: Loop):
    """w = W(z) at rail voltage v (Wright omega of ln z)."""
    return wright_omega(_y_of_v(v, loop))


def _lam_of_v(v, loop: Loop):
    """λ = ln w at rail voltage v, as y − ω(y) (finite where w itself underflows far above the source)."""
    y = _y_of_v(v, loop)
    return y - wright_omega(y)


def _v_of_w(w, loop: Loop):
    """Inverse of :func:`_w_of_v`: V = v_src + i_s·R + θ·ln(i_s·R/θ) − θ·(ln w + w)."""
    R, th, i_s = loop.r, loop.n_vt, loop.i_s
    return loop.v_src + i_s * R + th * np.log(i_s * R / th) - th * (np.log(w) + w)


def junction_current(v, loop: Loop):
    """Diode current of the junction loop at rail voltage ``v`` [A] (exact, Lambert W)."""
    return loop.n_vt / loop.r * _w_of_v(v, loop) - loop.i_s


def _phi(s, sigma, w, w_i):
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
    """
    c, dt, i_load, g_load = loop.c, loop.dt, loop.i_load, loop.g_load
    R, th, i_s = loop.r, loop.n_vt, loop.i_s
    able = np.asarray(loop.v_src) > 0
    shape = np.broadcast(v0, dt, loop.v_src, c, R, i_load, g_load, th, i_s).shape
    v0 = _bcast(v0, shape)
    # cut-off intervals
    rate_off, _ = _off_params(i_load, g_load, c)
    v1_off = _off_value(v0, dt, i_load, g_load, c)
    s_off = _bcast(np.exp(-rate_off * dt), shape)
    v1 = np.array(v1_off, dtype=float)
    slope = np.array(s_off, dtype=float)
    if able.any():
        # one subset copy per kind of interval (conducting-capable, without / with a conductance load)
        ab = _bcast(able, shape)
        loaded = _bcast(np.asarray(g_load) > 0, shape)
        for sel, solve in ((ab & ~loaded, _junction_on), (ab & loaded, _junction_g_on)):
            if not sel.any():
                continue
            sub = Loop(**{k: _bcast(getattr(loop, k), shape)[sel] for k in
                          ("dt", "v_src", "c", "r", "i_load", "g_load", "q_step", "v_f", "i_s", "n_vt")},
                       diode="junction")
            v1[sel], slope[sel] = solve(v0[sel], sub, None if v1_guess is None else _bcast(v1_guess, shape)[sel])
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
    inactive = ~_bcast(active, np.shape(x))
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


# --------------------------------------------------------------------------- junction diode with a conductance load

_GQ_X, _GQ_W = np.polynomial.legendre.leggauss(16)
#: Graded panels of the composite Gauss–Legendre rule along σ (finest at the interval start).
_GQ_PANELS = 8
#: Intervals per block of the quadrature (rows × 128 nodes per temporary array).
_GQ_ROWS = 256
#: Largest move of σ between Newton iterates whose elapsed time is added with one panel.
_GQ_STEP = 0.25


class _JunctionG:
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


def _take_g(jg: _JunctionG, idx) -> _JunctionG:
    out = object.__new__(_JunctionG)
    for k in ("R", "th", "i_s", "I", "G", "C", "K", "lam_e", "w_e", "dh_e"):
        setattr(out, k, getattr(jg, k)[idx])
    return out


def _junction_g_on(v0, loop: Loop, v1_guess=None):
    """:func:`junction_map` for conducting-capable intervals with a conductance load (1-D arrays)."""
    jg = _JunctionG(loop)
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


def _junction_g_integrals(v0, loop: Loop, r_ext) -> dict:
    """Integrals of junction intervals with a conductance load (see :func:`interval_integrals`)."""
    jg = _JunctionG(loop)
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


def interval_map(v0, loop: Loop):
    """End value and slope of each interval for either diode (see :func:`linear_map`, :func:`junction_map`)."""
    if loop.diode == "linear":
        v1, s, _ = linear_map(v0, loop)
        return v1, s
    return junction_map(v0, loop)


# --------------------------------------------------------------------------- orbits

@dataclass(frozen=True)
class OrbitSolution:
    """Rail trajectory at the interval boundaries.

    Attributes
    ----------
    v_pre : ndarray [V]
        Voltage at each interval start before its step (= end of the previous interval).
    v_start : ndarray [V]
        Voltage at each interval start after its step.
    v_end : ndarray [V]
        Voltage at each interval end.
    v_min, v_max : ndarray [V]
        Extremes over the trajectory (the rail is monotone inside each interval,
        so the extremes lie on these boundary values).
    passes : int
        Newton passes used (1 = the affine maps were exact).
    converged : bool
    """

    v_pre: np.ndarray
    v_start: np.ndarray
    v_end: np.ndarray
    v_min: np.ndarray
    v_max: np.ndarray
    passes: int
    converged: bool


def _broadcast_loop(loop: Loop) -> Loop:
    names = ("dt", "v_src", "c", "r", "i_load", "g_load", "q_step", "v_f", "i_s", "n_vt")
    arrs = np.broadcast_arrays(*[np.asarray(getattr(loop, k), dtype=float) for k in names])
    return Loop(**dict(zip(names, arrs)), diode=loop.diode)


def _initial_guess(loop: Loop) -> np.ndarray:
    """A start inside the conducting regime (exact first pass for the straight-line diode)."""
    if loop.diode == "linear":
        return loop.v_src - loop.v_f - 1e-9 * np.abs(loop.v_src)
    # junction: the rail where the diode carries a typical refresh current
    i_typ = np.maximum(np.abs(loop.q_step).max(axis=-1, keepdims=True)
                       / np.maximum(loop.dt.max(axis=-1, keepdims=True), 1e-300), loop.i_load + loop.i_s)
    i_typ = np.maximum(i_typ, 1e3 * loop.i_s)
    return loop.v_src - loop.r * i_typ - loop.n_vt * np.log1p(i_typ / loop.i_s)


def _affine_maps(loop: Loop):
    """Maps of the regimes the straight-line diode takes from below: A where it can conduct, B elsewhere."""
    c, dt, i_load, g_load = loop.c, loop.dt, loop.i_load, loop.g_load
    g = 1.0 / loop.r
    v_inf = loop.v_src - loop.v_f
    able = v_inf > 0
    gg = g + g_load
    e_on = np.exp(-(gg / c) * dt)
    b_on = (g * v_inf - i_load) / gg * (1.0 - e_on)
    e_off = np.exp(-(g_load / c) * dt)
    with np.errstate(divide="ignore", invalid="ignore"):
        b_off = np.where(g_load > 0, -i_load / g_load * (1.0 - e_off), -i_load / c * dt)
    return np.where(able, e_on, e_off), np.where(able, b_on, b_off), able, v_inf


def _fixed_point(s, b, q, v_init):
    """Trajectory of pre-step starts u for maps u_{k+1} = s_k·(u_k − q_k) + b_k."""
    A, B = affine_scan(s, b - s * q)
    if v_init is None:
        S, O = A[..., -1:], B[..., -1:]
        with np.errstate(divide="ignore", invalid="ignore"):
            u0 = np.where(1.0 - S > 0, O / (1.0 - S), np.nan)
    else:
        u0 = np.broadcast_to(np.asarray(v_init, dtype=float)[..., None], A[..., -1:].shape)
    return np.concatenate((u0, A[..., :-1] * u0 + B[..., :-1]), axis=-1)


def _newton_orbit(loop: Loop, v0, v_init, tol):
    """Newton multiple shooting from the start values ``v0`` (rows of a 2-D block).

    Each pass re-linearises only the intervals whose tangent may be off by more
    than a share of the tolerance at the new start value, then composes all
    maps again. Straight-line diode: an interval is re-linearised where its
    start value moved by more than the tolerance (its maps are affine or have
    kinks). Junction diode (smooth maps): the tangent's error at a start value
    ``δ`` away from the linearisation point is ``½·|V1''|·δ²``; the curvature
    is measured per interval from the previous re-linearisation (the tangent's
    observed miss divided by ``δ²``, an overestimate where rounding dominates),
    and an interval is re-linearised while that predicted miss exceeds
    ``tol·(1 + |V|)·(1 − S)/(10·n)`` (``n`` intervals, ``S`` the product of
    the slopes of a periodic row, 0 for a trajectory). The estimate is used
    only where it is local: measured over a step below 1 % of the junction's
    voltage scale ``n·V_T`` and no shorter than the new step (a map that is
    flat where the rail settles and bends where the diode takes over would
    otherwise look straight from a wide step). The miss is the Taylor
    remainder of the tangent (second order in ``δ``); the trajectory's error
    is the misses propagated through slopes no larger than one, so the misses
    together stay below a tenth of the tolerance. Intervals never
    re-linearised yet keep the plain ``δ ≤ tol`` rule.
    """
    q = loop.q_step / loop.c
    linear = loop.diode == "linear"
    converged = False
    passes = 0
    v_lin = v0.copy()
    if linear:
        v1, s, reg = linear_map(v0, loop)
    else:
        v1, s = junction_map(v0, loop)
        curv = np.full(v0.shape, np.inf)  # |V1''|/2 estimates, unknown at first
        span = np.full(v0.shape, np.inf)  # the step over which each estimate was measured
        local = 0.01 * loop.n_vt          # estimates from steps this small are local (the junction's scale)
        n_iv = v0.shape[-1]
    for passes in range(1, _MAX_PASSES + 1):
        u = _fixed_point(s, v1 - s * v_lin, q, v_init)
        v0 = u - q
        step = np.abs(v0 - v_lin)
        tol_v = tol * (1.0 + np.abs(v0))
        moved = ~(step <= tol_v)
        if not linear and moved.any():
            share = 0.1 / n_iv
            if v_init is None:  # periodic rows: a miss is amplified by 1/(1 − S)
                share = share * np.clip(1.0 - np.prod(s, axis=-1, keepdims=True), 0.0, 1.0)
            with np.errstate(invalid="ignore"):  # inf·0 where a never-linearised interval did not move
                moved &= ~((curv * step * step <= share * tol_v) & (span <= local) & (step <= span))
        moved &= np.isfinite(v0)
        if not moved.any():
            converged = True
            break
        sub = _take(loop, moved)
        if linear:
            v1_m, s_m, reg_m = linear_map(v0[moved], sub)
            reg[moved] = reg_m
        else:  # seeded with the tangent prediction of the previous pass
            dv = v0[moved] - v_lin[moved]
            guess = v1[moved] + s[moved] * dv
            v1_m, s_m = junction_map(v0[moved], sub, guess)
            with np.errstate(divide="ignore", invalid="ignore"):
                c_m = np.abs(v1_m - guess) / (dv * dv)
            curv[moved] = np.where(np.isfinite(c_m), c_m, np.inf)
            span[moved] = np.abs(dv)
        v1[moved] = v1_m
        s[moved] = s_m
        v_lin[moved] = v0[moved]
        if linear and passes == 1 and np.all(reg != 2):
            # only affine regimes, re-linearised where they changed: the next composition is exact
            u = _fixed_point(s, v1 - s * v_lin, q, v_init)
            v0 = u - q
            _, _, reg_chk = linear_map(v0, loop)
            if np.all((reg_chk == reg) | ~np.isfinite(v0)):
                converged = True
                passes += 1
                break
    # end values on the tangents (exact for affine maps, within tol² otherwise)
    return u, v0, v1 + s * (v0 - v_lin), passes, converged


def _surrogate(loop: Loop) -> Loop:
    """Straight-line diode tangent to the junction at ten times the load current (a starting orbit)."""
    i_t = 10.0 * (loop.i_load + loop.i_s) + 1e-6
    r_d = loop.n_vt / (i_t + loop.i_s)
    v_f = loop.n_vt * np.log1p(i_t / loop.i_s) - r_d * i_t
    return _broadcast_loop(Loop(dt=loop.dt, v_src=loop.v_src, c=loop.c, r=loop.r + r_d, i_load=loop.i_load,
                                g_load=loop.g_load, q_step=loop.q_step, v_f=v_f, i_s=loop.i_s,
                                n_vt=loop.n_vt, diode="linear"))


def _take(loop: Loop, idx) -> Loop:
    names = ("dt", "v_src", "c", "r", "i_load", "g_load", "q_step", "v_f", "i_s", "n_vt")
    return Loop(**{k: getattr(loop, k)[idx] for k in names}, diode=loop.diode)


def _solve_block(loop: Loop, v_init, tol, v_guess=None):
    """Solve a 2-D block (rows × intervals); ``v_guess`` (junction only) seeds Newton where it is finite."""
    q = loop.q_step / loop.c
    if v_init is not None and loop.dt.shape[-1] == 1:  # one interval from a known start: one exact map
        u = np.asarray(v_init, dtype=float).reshape(-1, 1)
        v0 = u - q
        v1, _ = interval_map(v0, loop)
        return u, v0, v1, 1, True
    if loop.diode == "linear":
        a, b, able, v_inf = _affine_maps(loop)
        u = _fixed_point(a, b, q, v_init)
        v0 = u - q
        bad = (able & (v0 > v_inf)).any(axis=-1)
        passes = 1
        converged = True
        if np.any(bad):
            rows = np.nonzero(bad)[0]
            sub = _take(loop, rows)
            vi = None if v_init is None else np.asarray(v_init)[rows]
            u_s, v0_s, _, p, ok = _newton_orbit(sub, v0[rows], vi, tol)
            u[rows] = u_s
            v0[rows] = v0_s
            passes = 1 + p
            converged = ok
        v1 = np.where(able & (v0 <= v_inf), 0.0, np.nan)  # placeholder, filled below
        a_end = a * v0 + b  # exact where the affine regime holds
        if np.any(bad):
            v1_s, _, _ = linear_map(v0[rows], _take(loop, rows))
            a_end[rows] = v1_s
        v1 = a_end
        return u, v0, v1, passes, converged
    seeded = None if v_guess is None else np.isfinite(v_guess).all(axis=-1)
    if seeded is not None and seeded.all():
        sv0 = np.array(v_guess, dtype=float)
    else:
        sv0 = _solve_block(_surrogate(loop), v_init, tol)[1]
        sv0 = np.where(np.isfinite(sv0), sv0, _initial_guess(loop))
        if seeded is not None:
            sv0[seeded] = v_guess[seeded]
    u, v0, v1, passes, converged = _newton_orbit(loop, sv0, v_init, tol)
    return u, v0, v1, passes, converged


#: Rows solved together (keeps the temporaries in cache).
_BLOCK_ROWS = 8192


def _solve_orbit(loop: Loop, v_init=None, *, tol: float = 1e-13, v_guess=None) -> OrbitSolution:
    """Periodic orbit (``v_init`` None) or trajectory from ``v_init``, for any batch shape.

    ``v_guess`` (optional, shaped like ``loop.dt``): a starting trajectory of the
    post-step start values for the junction diode's Newton iteration (rows
    with a non-finite entry start from the straight-line surrogate instead).
    It changes only the work, not the answer (within the tolerance).
    """
    shape = loop.dt.shape
    n = shape[-1]
    rows = int(np.prod(shape[:-1], dtype=np.int64))
    names = ("dt", "v_src", "c", "r", "i_load", "g_load", "q_step", "v_f", "i_s", "n_vt")
    flat = Loop(**{k: np.reshape(getattr(loop, k), (rows, n)) for k in names}, diode=loop.diode)
    vi = None if v_init is None else np.broadcast_to(np.asarray(v_init, dtype=float), shape[:-1]).reshape(rows)
    u = np.empty((rows, n))
    v0 = np.empty((rows, n))
    v1 = np.empty((rows, n))
    passes = 0
    converged = True
    for r0 in range(0, rows, _BLOCK_ROWS):
        sl = slice(r0, min(rows, r0 + _BLOCK_ROWS))
        blk = _take(flat, sl)
        vg = None if v_guess is None or loop.diode == "linear" else np.reshape(v_guess, (rows, n))[sl]
        u[sl], v0[sl], v1[sl], p, ok = _solve_block(blk, None if vi is None else vi[sl], tol, vg)
        passes = max(passes, p)
        converged &= ok
    v_min = v1[:, -1].copy()
    v_max = v1[:, -1].copy()
    if n <= 32:  # column loop: much faster than a reduction over a short last axis
        for k in range(n):
            for x in (u[:, k], v0[:, k]):
                np.minimum(v_min, x, out=v_min)
                np.maximum(v_max, x, out=v_max)
    else:
        v_min = np.minimum(np.minimum(v0.min(axis=-1), u.min(axis=-1)), v_min)
        v_max = np.maximum(np.maximum(v0.max(axis=-1), u.max(axis=-1)), v_max)
    return OrbitSolution(v_pre=u.reshape(shape), v_start=v0.reshape(shape), v_end=v1.reshape(shape),
                         v_min=v_min.reshape(shape[:-1]), v_max=v_max.reshape(shape[:-1]),
                         passes=passes, converged=bool(converged))


def steady_rail(dt, v_src, *, c, r, v_f=0.0, i_load=0.0, g_load=0.0, q_step=0.0,
                diode: str = "linear", i_s=1e-14, n_vt=0.025, v_guess=None) -> OrbitSolution:
    """Periodic steady state of the bootstrap rail for a batch of schedules.

    All arrays broadcast against ``dt`` shaped ``(..., n)`` (``n`` intervals of
    one analysis period, the last followed by the first). Pure and vectorised:
    the batch is solved at once, so a margin map ``v_min − uvlo_off`` over an
    ``f_sw × duty`` grid is one call.

    Parameters
    ----------
    dt : array_like [s]
        Interval durations, shape ``(..., n)``.
    v_src : array_like [V]
        V_DD − v_sw in each interval.
    c : array_like [F]
        Effective capacitance.
    r : array_like [Ω]
        Loop resistance (r + esr + r_d, or r + esr + r_s for the junction).
    v_f : array_like [V]
        Straight-line diode knee voltage.
    i_load : array_like [A]
        Constant load current per interval (I_Q plus leakage).
    g_load : array_like [S]
        Load conductance per interval (1/R_GS while the high side is on).
    q_step : array_like [C]
        Charge removed at each interval start (Q_G + Q_LS at HS turn-on, Q_rr
        and C_j·Δv_sw at switch-node edges).
    diode : {"linear", "junction"}
    i_s, n_vt : array_like [A], [V]
        Junction saturation current and n·V_T.
    v_guess : array_like [V], optional
        Starting values of the post-step interval starts (junction diode only;
        e.g. the orbit of a nearby design). Speeds up the iteration; the answer
        is the same within the tolerance.

    Returns
    -------
    OrbitSolution
        ``v_min``/``v_max`` shaped ``(...)``; NaN where the period never
        refreshes the rail (no periodic solution: the rail collapses).

    Notes
    -----
    The periodic solution of ``u = F(u)`` with ``F`` the composed interval
    maps: closed form ``u = O/(1 − S)`` of the composed affine map when every
    interval is affine (straight-line diode, no cut-off crossing), otherwise
    Newton's method on the orbit (see the module docstring).

    Examples
    --------
    >>> import numpy as np
    >>> sol = steady_rail(np.array([2e-6, 3e-6]), np.array([-36.0, 12.0]), c=1e-6, r=5.0, v_f=0.5,
    ...                   i_load=1e-4, q_step=np.array([50e-9, 0.0]))
    >>> bool(sol.v_min < sol.v_max < 11.5)
    True
    """
    loop = _broadcast_loop(Loop(dt=dt, v_src=v_src, c=c, r=r, i_load=i_load, g_load=g_load,
                                q_step=q_step, v_f=v_f, i_s=i_s, n_vt=n_vt, diode=diode))
    if v_guess is not None:
        v_guess = np.broadcast_to(np.asarray(v_guess, dtype=float), loop.dt.shape)
    return _solve_orbit(loop, v_guess=v_guess)


def propagate(loop: Loop, v_init, *, tol: float = 1e-13) -> OrbitSolution:
    """Trajectory over the intervals from ``v_init`` (the state before the first step) [V].

    Exact for the straight-line diode in one pass when no interval crosses
    cut-off; otherwise Newton on the trajectory (multiple shooting), which
    converges quadratically, until no start value moves by more than
    ``tol·(1 + |V|)``.
    """
    return _solve_orbit(_broadcast_loop(loop), v_init, tol=tol)


# --------------------------------------------------------------------------- integrals

def _seg(v0, veq, rate, L, slope_lin):
    """∫V, ∫V², ∫(dV/dt)² over one smooth segment (exponential or, for rate 0, straight line)."""
    pos = rate > 0
    rr = np.where(pos, rate, 1.0)
    e1 = np.where(pos, -np.expm1(-rate * L) / rr, L)
    e2 = np.where(pos, -np.expm1(-2 * rate * L) / (2 * rr), L)
    d = v0 - veq
    iv_e = veq * L + d * e1
    iv2_e = veq ** 2 * L + 2 * veq * d * e1 + d ** 2 * e2
    idv2_e = rr ** 2 * d ** 2 * e2
    iv_l = v0 * L - 0.5 * slope_lin * L ** 2
    iv2_l = v0 ** 2 * L - v0 * slope_lin * L ** 2 + slope_lin ** 2 * L ** 3 / 3
    idv2_l = slope_lin ** 2 * L
    return (np.where(pos, iv_e, iv_l), np.where(pos, iv2_e, iv2_l), np.where(pos, idv2_e, idv2_l))


#: Nodes of the short-range Gauss–Legendre rule of :func:`_bose_moments`.
_BX, _BW = np.polynomial.legendre.leggauss(20)
#: ∫₀^∞ uⁿ·u/(eᵘ − 1) du = n!·ζ(n + 2) for n = 0, 1 (π²/6 and 2·ζ(3); Abramowitz & Stegun 23.2.7).
_BOSE_TOTAL = (np.pi ** 2 / 6, 2.0 * 1.2020569031595942)
#: Terms of the tail series (e^(−40) < 1e-17: the terms left out are below rounding for x ≥ 1).
_BOSE_TERMS = 40


def _bose(u, n: int):
    """uⁿ·B(u), B(u) = u/(eᵘ − 1) (the Bernoulli generating function, B(0) = 1)."""
    u = np.asarray(u, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        b = np.where(u == 0.0, 1.0, u / np.expm1(u))
    return b * u ** n


def _bose_gl(a, b, n: int):
    """∫ₐᵇ uⁿ·B(u) du by 20-point Gauss–Legendre (for |b − a| ≤ 4; see :func:`_bose_moments`)."""
    half = 0.5 * (b - a)
    mid = 0.5 * (b + a)
    return np.sum(_BW * _bose(mid[..., None] + half[..., None] * _BX, n), axis=-1) * half


def _bose_tail(x, n: int):
    """S_n(x) = ∫ₓ^∞ uⁿ·B(u) du for x ≥ 0.

    For x ≥ 1 the series of e^(−ku) terms integrated term by term,
    S₀ = Σ e^(−kx)·(x/k + 1/k²), S₁ = Σ e^(−kx)·(x²/k + 2x/k² + 2/k³)
    (the polylogarithm forms −x·ln(1 − e^(−x)) + Li₂(e^(−x)) and its analogue;
    Abramowitz & Stegun 27.7 and 23.2.7); below 1, S_n(1) plus a Gauss–Legendre
    rule over [x, 1].
    """
    x = np.asarray(x, dtype=float)
    xs = np.maximum(x, 1.0)
    q = np.exp(-xs)
    p = np.ones_like(xs)
    tot = np.zeros_like(xs)
    for k in range(1, _BOSE_TERMS + 1):
        p = p * q
        if n == 0:
            tot += p * (xs / k + 1.0 / k ** 2)
        else:
            tot += p * (xs * xs / k + 2.0 * xs / k ** 2 + 2.0 / k ** 3)
    return tot + _bose_gl(np.minimum(x, 1.0), np.ones_like(x), n)


def _bose_moments(a, b, n: int):
    """M_n(a, b) = ∫ₐᵇ uⁿ·B(u) du with B(u) = u/(eᵘ − 1), n ∈ {0, 1} [-].

    B is analytic on the real line (its poles are at ±2πik, k ≠ 0), so a
    Gauss–Legendre rule over a span of at most 4 is exact to rounding
    (error of order ρ^(−40), ρ ≈ 6.4 for that pole distance; Trefethen,
    *Approximation Theory and Approximation Practice*, 2013, Thm 19.3). Longer
    spans use the tails S_n of :func:`_bose_tail` and, for negative u, the
    reflection B(u) = B(−u) − u, so that uⁿ·B(u) = (−1)ⁿ·(−u)ⁿ·B(−u) − u^(n+1).
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    short = np.abs(b - a) <= 4.0
    out = _bose_gl(np.where(short, a, 0.0), np.where(short, b, 0.0), n)
    if np.all(short):
        return out
    a, b = a[~short], b[~short]
    sgn = (-1.0) ** n

    def prim(x):  # an antiderivative without the constant part, and that constant part
        pos = x >= 0
        t = _bose_tail(np.abs(x), n)
        val = np.where(pos, -t, sgn * t - x ** (n + 2) / (n + 2))
        const = np.where(pos, _BOSE_TOTAL[n], -sgn * _BOSE_TOTAL[n])
        return val, const

    pa, ca = prim(a)
    pb, cb = prim(b)
    out = np.array(out, dtype=float)
    out[~short] = (pb - pa) + (cb - ca)
    return out


def _junction_integrals(v0, v1, loop: Loop, r_ext) -> dict:
    """Integrals of conducting-capable junction intervals without a conductance load (1-D arrays).

    Closed forms in x = λ − λ_I = ln(w/w_I), the log of the loop current's
    ratio to its value at the equilibrium (w_I = R·(i_s + I)/θ, where the diode
    carries the load current I). With δ = w − w_I = w_I·(eˣ − 1):

    * C·dV/dt = (θ/R)·δ and V = V_e − θ·(x + δ), V_e = v_src − θ·ln(1 + I/i_s) − R·I;
    * dt = −R·C·(1 + κ/(eˣ − 1))·dx, κ = (1 + w_I)/w_I (the separated ODE of the
      module docstring), so ∫x dt = −R·C·[x²/2 + κ·M₀], ∫x² dt = −R·C·[x³/3 + κ·M₁]
      with M_n of :func:`_bose_moments` (a Bose–Einstein type integral, finite
      through the equilibrium x = 0);
    * ∫δ dt = R·C·ΔV/θ, ∫δ² dt = −R·C·[w_I·(eˣ − 1 − x) + w_I²·(eˣ − 1)²/2],
      ∫x·dV = −θ·[x²/2 + w_I·(x·eˣ − eˣ + 1)].

    Hence ∫V dt, ∫V² dt, ∫i_C² dt and ∫i_d² dt in closed form, and the diode's
    own energy ∫(v_j + r_s·i)·i dt with v_j = θ·ln(1 + I/i_s) + θ·x, all without
    quadrature of the rail itself; the time the rail rests at its equilibrium
    needs no special case. Checked against solve_ivp in the tests.
    """
    c, dt, i_load, R = loop.c, loop.dt, loop.i_load, loop.r
    th, i_s = loop.n_vt, loop.i_s
    w_i = R * (i_s + i_load) / th
    lam_i = np.log(w_i)
    k_v = loop.v_src + i_s * R + th * np.log(i_s * R / th)

    def x_of(v):  # λ = y − ω(y), y = (K − V)/θ (no underflow of w far above the source)
        y = (k_v - v) / th
        return y - wright_omega(y) - lam_i

    x0, x1 = x_of(v0), x_of(v1)
    dv = v1 - v0
    rc = R * c
    kappa = (1.0 + w_i) / w_i
    drop_e = th * np.log1p(i_load / i_s) + R * i_load   # loop drop at the load current
    m0 = _bose_moments(x0, x1, 0)
    m1 = _bose_moments(x0, x1, 1)
    int_x = -rc * (0.5 * (x1 - x0) * (x1 + x0) + kappa * m0)
    int_x2 = -rc * ((x1 ** 3 - x0 ** 3) / 3.0 + kappa * m1)

    def em1_minus_x(x):  # eˣ − 1 − x without cancellation near 0
        small = np.abs(x) < 0.1
        xs = np.where(small, x, 0.0)
        ser = xs * xs * (0.5 + xs * (1 / 6 + xs * (1 / 24 + xs * (1 / 120 + xs * (1 / 720 + xs * (1 / 5040 + xs / 40320))))))
        with np.errstate(over="ignore"):
            return np.where(small, ser, np.expm1(x) - x)

    def d_of(x):  # w_I·(eˣ − 1 − x) + w_I²·(eˣ − 1)²/2 ≥ 0
        with np.errstate(over="ignore"):
            e = np.expm1(x)
        return w_i * em1_minus_x(x) + 0.5 * w_i ** 2 * e * e

    def xdv_of(x):  # x·eˣ − eˣ + 1 = x·(eˣ − 1) − (eˣ − 1 − x)
        with np.errstate(over="ignore"):
            return x * np.expm1(x) - em1_minus_x(x)

    int_delta2 = -rc * (d_of(x1) - d_of(x0))
    int_u = -th * int_x - rc * dv                      # ∫(V − V_e) dt
    v_e = loop.v_src - drop_e
    int_v = v_e * dt + int_u
    int_x_dv = -th * (0.5 * (x1 - x0) * (x1 + x0) + w_i * (xdv_of(x1) - xdv_of(x0)))
    # ∫(V − V_e)² dt = θ²·[∫x² dt + 2·∫x·δ dt + ∫δ² dt], ∫x·δ dt = (R·C/θ)·∫x dV
    int_u2 = th ** 2 * (int_x2 + int_delta2) + 2 * th * rc * int_x_dv
    int_v2 = v_e ** 2 * dt + 2 * v_e * int_u + np.maximum(int_u2, 0.0)
    # the rail is monotone inside an interval, so ∫V dt lies between v0·Δt and v1·Δt: where the rail
    # barely moves the closed form resolves its offset only to the rounding of x (eps·|λ|), which
    # this keeps from stepping outside the interval's own range
    lo, hi = np.minimum(v0, v1), np.maximum(v0, v1)
    int_v = np.clip(int_v, lo * dt, hi * dt)
    sq_lo = np.where(lo >= 0, lo * lo, np.where(hi <= 0, hi * hi, 0.0))
    int_v2 = np.clip(int_v2, sq_lo * dt, np.maximum(lo * lo, hi * hi) * dt)
    q_d = c * dv + i_load * dt
    i2_c = np.maximum((th / R) ** 2 * int_delta2, 0.0)
    i2_d = np.maximum(i_load ** 2 * dt + 2 * i_load * c * dv + i2_c, 0.0)
    # diode energy ∫(v_j + r_s·i)·i dt, v_j = θ·ln(1 + I/i_s) + θ·x, i = I + C·dV/dt
    r_s = np.maximum(R - r_ext, 0.0)
    e_d = r_s * i2_d + th * np.log1p(i_load / i_s) * q_d + th * (i_load * int_x + c * int_x_dv)
    i_d0 = np.maximum(th / R * _w_of_v(v0, loop) - i_s, 0.0)
    return {"q_d": q_d, "i2_d": i2_d, "int_v": int_v, "int_v2": int_v2, "i2_c": i2_c, "e_d": e_d,
            "i_d0": i_d0}


def interval_integrals(v0, loop: Loop, *, r_ext=None) -> dict:
    """Charge and energy integrals of each interval, starting at ``v0`` (after the step).

    Parameters
    ----------
    v0 : ndarray [V]
    loop : Loop
    r_ext : array_like [Ω], optional
        The part of ``loop.r`` outside the diode (r + esr); default all of it.

    Returns
    -------
    dict of ndarray
        ``q_d`` diode charge [C]; ``i2_d`` ∫i_d² dt [A²·s]; ``int_v`` ∫V dt [V·s];
        ``e_load`` energy taken by I and G [J]; ``i2_c`` ∫i_C² dt [A²·s];
        ``e_r`` energy in r_ext [J]; ``e_d`` energy in the diode [J];
        ``i_d0`` diode current at the start [A]; ``v1`` end voltage [V].

    The straight-line diode integrals are closed forms of the exponential
    segments; for the junction diode without a conductance load q_d = C·ΔV + I·Δt
    and ∫V dt, ∫V² dt, ∫i² dt and the diode energy are closed forms in
    x = ln(w/w_I) (see :func:`_junction_integrals`); with the pull-down as well,
    the composite Gauss–Legendre rule of :class:`_JunctionG`.
    """
    loop = _broadcast_loop(loop)
    c, dt, i_load, g_load, R = loop.c, loop.dt, loop.i_load, loop.g_load, loop.r
    v0 = np.broadcast_to(v0, dt.shape)
    r_ext = np.broadcast_to(R if r_ext is None else r_ext, dt.shape)
    rate_off, veq_off = _off_params(i_load, g_load, c)
    k_lin = i_load / c
    if loop.diode == "linear":
        v1, _, reg = linear_map(v0, loop)
        g = 1.0 / R
        v_inf = loop.v_src - loop.v_f
        rate_on = (g + g_load) / c
        veq_on = (g * v_inf - i_load) / (g + g_load)
        t_star = np.where(reg == 2, _off_time_to(v0, v_inf, i_load, g_load, c), 0.0)
        t_off = np.where(reg == 1, dt, t_star)
        t_on = dt - t_off
        v_on0 = np.where(reg == 2, v_inf, v0)
        iv_off, iv2_off, idv2_off = _seg(v0, veq_off, rate_off, t_off, k_lin)
        iv_on, iv2_on, idv2_on = _seg(v_on0, veq_on, rate_on, t_on, 0.0)
        q_d = g * (v_inf * t_on - iv_on)
        i2_d = g ** 2 * (v_inf ** 2 * t_on - 2 * v_inf * iv_on + iv2_on)
        q_d = np.where(t_on > 0, q_d, 0.0)
        i2_d = np.where(t_on > 0, np.maximum(i2_d, 0.0), 0.0)
        int_v = iv_off + iv_on
        int_v2 = iv2_off + iv2_on
        i2_c = c ** 2 * (idv2_off + idv2_on)
        e_d = loop.v_f * q_d + (R - r_ext) * i2_d
        i_d0 = np.where(reg == 0, g * (v_inf - v0), 0.0)
    else:
        v1, _ = junction_map(v0, loop)
        able = loop.v_src > 0
        iv_off, iv2_off, idv2_off = _seg(v0, veq_off, rate_off, dt, k_lin)
        q_d = np.zeros(dt.shape)
        i2_d = np.zeros(dt.shape)
        int_v = iv_off.copy()
        int_v2 = iv2_off.copy()
        i2_c = c ** 2 * idv2_off
        e_d = np.zeros(dt.shape)
        i_d0 = np.zeros(dt.shape)
        if np.any(able):
            sub = Loop(**{k: getattr(loop, k)[able] for k in
                          ("dt", "v_src", "c", "r", "i_load", "g_load", "q_step", "v_f", "i_s", "n_vt")},
                       diode="junction")
            loaded = sub.g_load > 0  # the pull-down loads the rail while the diode conducts
            out = {k: np.zeros(sub.dt.shape) for k in ("q_d", "i2_d", "int_v", "int_v2", "i2_c", "e_d", "i_d0")}
            v1_able = np.array(v1[able], dtype=float)
            if np.any(~loaded):
                out_0 = _junction_integrals(v0[able][~loaded], v1_able[~loaded], _take(sub, ~loaded),
                                            r_ext[able][~loaded])
                for name in out:
                    out[name][~loaded] = out_0[name]
            if np.any(loaded):
                out_g = _junction_g_integrals(v0[able][loaded], _take(sub, loaded), r_ext[able][loaded])
                for name in out:
                    out[name][loaded] = out_g[name]
                v1_able[loaded] = out_g["v1"]
                v1 = np.array(v1, dtype=float)
                v1[able] = v1_able
            for name, arr in (("q_d", q_d), ("i2_d", i2_d), ("int_v", int_v), ("int_v2", int_v2),
                              ("i2_c", i2_c), ("e_d", e_d), ("i_d0", i_d0)):
                arr[able] = out[name]
    e_load = i_load * int_v + g_load * int_v2
    return {"q_d": q_d, "i2_d": i2_d, "int_v": int_v, "e_load": e_load, "i2_c": i2_c,
            "e_r": r_ext * i2_d, "e_d": e_d, "i_d0": i_d0, "v1": v1}


def crossing_time(v0, v_th, loop: Loop):
    """Time after the interval start at which the rail reaches ``v_th`` from below [s].

    Exact inverse of the interval solution; NaN where it does not get there
    within the interval.
    """
    loop = _broadcast_loop(loop)
    v0 = np.broadcast_to(np.asarray(v0, dtype=float), loop.dt.shape)
    v_th = np.broadcast_to(np.asarray(v_th, dtype=float), loop.dt.shape)
    c, i_load, g_load, R = loop.c, loop.i_load, loop.g_load, loop.r
    with np.errstate(divide="ignore", invalid="ignore"):
        if loop.diode == "linear":
            g = 1.0 / R
            v_inf = loop.v_src - loop.v_f
            rate_on = (g + g_load) / c
            veq_on = (g * v_inf - i_load) / (g + g_load)
            t = np.log((v0 - veq_on) / (v_th - veq_on)) / rate_on
            ok = (v0 <= v_inf) & (v_th < veq_on) & (v0 <= v_th)
        else:
            th, i_s = loop.n_vt, loop.i_s
            w_i = R * (i_s + i_load) / th
            w0 = _w_of_v(v0, loop)
            w1 = _w_of_v(v_th, loop)
            sg0 = np.where(w0 >= w_i, 1.0, -1.0)
            sg1 = np.where(w1 >= w_i, 1.0, -1.0)
            s0 = np.log(np.abs(w0 - w_i))
            s1 = np.log(np.abs(w1 - w_i))
            t = R * c * (_phi(s0, sg0, w0, w_i) - _phi(s1, sg1, w1, w_i))
            ok = (sg0 == sg1) & (sg0 > 0) & (v0 <= v_th) & (loop.v_src > 0)
            loaded = (g_load > 0) & (loop.v_src > 0) & (v0 < v_th)
            if np.any(loaded):  # with the pull-down: the elapsed-time integral of _JunctionG
                sub = _take(loop, loaded)
                jg = _JunctionG(sub)
                d0 = jg.lam_of_v(v0[loaded]) - jg.lam_e
                d1 = jg.lam_of_v(v_th[loaded]) - jg.lam_e
                t_g = jg.elapsed(np.log(np.abs(d0)), np.log(np.abs(d1)), np.ones(d0.shape))
                ok_g = (d0 > 0) & (d1 > 0)
                t = np.array(t, dtype=float)
                t[loaded] = t_g
                ok = np.array(ok, dtype=bool)
                ok[loaded] = ok_g
        t = np.where(v0 >= v_th, 0.0, t)
        ok = ok | (v0 >= v_th)
        ok &= (t >= 0) & (t <= loop.dt * (1 + 1e-12))
    return np.where(ok, t, np.nan)
