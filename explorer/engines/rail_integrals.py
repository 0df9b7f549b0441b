"""Charge and energy integrals of each interval of the diode-charged rail, and threshold crossing times.

Closed forms per regime for the straight-line diode; for the junction the
integrals in the separated variable (Bose–Einstein type moments, Gauss–Legendre
on the short range and a series for the tail), with the pull-down case by the
quadrature of :class:`explorer.engines.rail_junction.LoadedJunction`.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from .rail_junction import (LoadedJunction, junction_current, junction_map, loaded_junction_integrals, separated_phi,
                            w_of_v, wright_omega)
from .rail_linear import linear_map, linear_parts, off_params
from .rail_loop import LOOP_ARRAYS, Loop, broadcast_loop, full_as, take_loop, unclamped

__all__ = ["bose_moments", "junction_integrals", "interval_integrals", "crossing_time"]


def _seg(v0, veq, rate, L, slope_lin):
    """∫V, ∫V², ∫(dV/dt)² over one smooth segment (exponential or, for rate 0, straight line)."""
    pos = rate > 0
    some, every = pos.any(), pos.all()  # the form that no interval takes is not evaluated
    if some:
        rr = rate if every else np.where(pos, rate, 1.0)
        e1 = -np.expm1(-rate * L) / rr  # (only where rate > 0 is this form taken)
        e2 = -np.expm1(-2 * rate * L) / (2 * rr)
        d = v0 - veq
        exp_form = (veq * L + d * e1, veq ** 2 * L + 2 * veq * d * e1 + d ** 2 * e2, rr ** 2 * d ** 2 * e2)
        if every:
            return exp_form
    lin_form = (v0 * L - 0.5 * slope_lin * L ** 2,
                v0 ** 2 * L - v0 * slope_lin * L ** 2 + slope_lin ** 2 * L ** 3 / 3,
                slope_lin ** 2 * L)
    if not some:
        return tuple(full_as(x, pos.shape) for x in lin_form)
    return tuple(np.where(pos, x, y) for x, y in zip(exp_form, lin_form))


#: Nodes of the short-range Gauss–Legendre rule of :func:`bose_moments`.
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
    """∫ₐᵇ uⁿ·B(u) du by 20-point Gauss–Legendre (for |b − a| ≤ 4; see :func:`bose_moments`)."""
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


def bose_moments(a, b, n: int):
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


def junction_integrals(v0, v1, loop: Loop, r_ext) -> dict:
    """Integrals of conducting-capable junction intervals without a conductance load (1-D arrays).

    Closed forms in x = λ − λ_I = ln(w/w_I), the log of the loop current's
    ratio to its value at the equilibrium (w_I = R·(i_s + I)/θ, where the diode
    carries the load current I). With δ = w − w_I = w_I·(eˣ − 1):

    * C·dV/dt = (θ/R)·δ and V = V_e − θ·(x + δ), V_e = v_src − θ·ln(1 + I/i_s) − R·I;
    * dt = −R·C·(1 + κ/(eˣ − 1))·dx, κ = (1 + w_I)/w_I (the separated ODE of the
      module docstring), so ∫x dt = −R·C·[x²/2 + κ·M₀], ∫x² dt = −R·C·[x³/3 + κ·M₁]
      with M_n of :func:`bose_moments` (a Bose–Einstein type integral, finite
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
    m0 = bose_moments(x0, x1, 0)
    m1 = bose_moments(x0, x1, 1)
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
    i_d0 = np.maximum(th / R * w_of_v(v0, loop) - i_s, 0.0)
    return {"q_d": q_d, "i2_d": i2_d, "int_v": int_v, "int_v2": int_v2, "i2_c": i2_c, "e_d": e_d,
            "i_d0": i_d0}


def interval_integrals(v0, loop: Loop, *, r_ext=None) -> dict:
    """Charge and energy integrals of each interval, starting at ``v0`` (after the step).

    With a clamp (:class:`~explorer.engines.rail_loop.Loop`) an interval whose rail reaches it is
    integrated up to the crossing (:func:`crossing_time`) and then at the clamp, where the capacitor
    carries no current and the clamp takes the diode current the loads do not; ``q_clamp`` [C] and
    ``e_clamp`` [J] are the clamp's charge and energy (a step that would end above the clamp hands it
    the excess, ½·C·(v0² − v_clamp²)).

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
    x = ln(w/w_I) (see :func:`junction_integrals`); with the pull-down as well,
    the composite Gauss–Legendre rule of :class:`LoadedJunction`.
    """
    loop = broadcast_loop(loop)
    if loop.v_clamp is not None:
        return _clamped_integrals(v0, loop, r_ext)
    c, dt, i_load, g_load, R = loop.c, loop.dt, loop.i_load, loop.g_load, loop.r
    v0 = full_as(v0, dt.shape)
    r_ext = full_as(R if r_ext is None else r_ext, dt.shape)
    k_lin = i_load / c
    if loop.diode == "linear":
        m = linear_parts(v0, loop)  # the map's own intermediates
        v1, reg, g, v_inf, rate_on, veq_on = m["v1"], m["regime"], m["g"], m["v_inf"], m["rate_on"], m["veq_on"]
        rate_off, veq_off = m["off"]
        t_star = np.where(reg == 2, m["t_star"], 0.0)
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
        rate_off, veq_off = off_params(i_load, g_load, c)
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
        if able.any():
            sub = Loop(**{k: getattr(loop, k)[able] for k in LOOP_ARRAYS}, diode="junction")
            loaded = sub.g_load > 0  # the pull-down loads the rail while the diode conducts
            out = {k: np.zeros(sub.dt.shape) for k in ("q_d", "i2_d", "int_v", "int_v2", "i2_c", "e_d", "i_d0")}
            v1_able = np.array(v1[able], dtype=float)
            if (~loaded).any():
                out_0 = junction_integrals(v0[able][~loaded], v1_able[~loaded], take_loop(sub, ~loaded),
                                            r_ext[able][~loaded])
                for name in out:
                    out[name][~loaded] = out_0[name]
            if loaded.any():
                out_g = loaded_junction_integrals(v0[able][loaded], take_loop(sub, loaded), r_ext[able][loaded])
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


def _clamped_integrals(v0, loop: Loop, r_ext) -> dict:
    """:func:`interval_integrals` of a clamped loop (its notes): the free loop up to the clamp, then held."""
    free = unclamped(loop)
    vc, dt = loop.v_clamp, loop.dt
    v0 = full_as(v0, dt.shape)
    v_in = np.minimum(v0, vc)
    v1_free = (linear_map(v_in, free)[0] if loop.diode == "linear" else junction_map(v_in, free)[0])
    hit = v1_free > vc
    t_c = dt
    if hit.any():  # the crossing, solved where the rail reaches the clamp only
        t_x = np.array(dt, dtype=float)
        t_x[hit] = crossing_time(v_in[hit], vc[hit], take_loop(free, hit))
        t_c = np.where(hit & np.isfinite(t_x), np.minimum(t_x, dt), dt)
        hit &= t_c < dt
    out = interval_integrals(v_in, dataclasses.replace(free, dt=t_c), r_ext=r_ext)
    R = loop.r
    r_ext = full_as(R if r_ext is None else r_ext, dt.shape)
    held = np.where(hit, dt - t_c, 0.0)
    i_d = np.zeros(dt.shape)  # the diode current while the clamp holds the rail
    if hit.any():
        if loop.diode == "linear":
            i_d[hit] = np.maximum((loop.v_src[hit] - loop.v_f[hit] - vc[hit]) / R[hit], 0.0)
        else:
            i_d[hit] = junction_current(vc[hit], take_loop(free, hit))
    i_z = i_d - loop.i_load - loop.g_load * vc  # the clamp's share while it holds the rail
    e_step = np.where(v0 > vc, 0.5 * loop.c * (v0 * v0 - vc * vc), 0.0)
    q_step = np.where(v0 > vc, loop.c * (v0 - vc), 0.0)
    out["q_d"] = out["q_d"] + i_d * held
    out["i2_d"] = out["i2_d"] + i_d * i_d * held
    out["int_v"] = out["int_v"] + vc * held
    out["e_load"] = out["e_load"] + (loop.i_load + loop.g_load * vc) * vc * held
    out["e_r"] = r_ext * out["i2_d"]
    out["e_d"] = out["e_d"] + (loop.v_src - vc - r_ext * i_d) * i_d * held
    out["q_clamp"] = i_z * held + q_step
    out["e_clamp"] = i_z * vc * held + e_step
    out["v1"] = np.where(hit, vc, np.minimum(out["v1"], vc))
    return out


def crossing_time(v0, v_th, loop: Loop):
    """Time after the interval start at which the rail reaches ``v_th`` from below [s].

    Exact inverse of the interval solution; NaN where it does not get there
    within the interval.
    """
    loop = broadcast_loop(loop)
    v0 = full_as(v0, loop.dt.shape)
    v_th = full_as(v_th, loop.dt.shape)
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
            w0 = w_of_v(v0, loop)
            w1 = w_of_v(v_th, loop)
            sg0 = np.where(w0 >= w_i, 1.0, -1.0)
            sg1 = np.where(w1 >= w_i, 1.0, -1.0)
            s0 = np.log(np.abs(w0 - w_i))
            s1 = np.log(np.abs(w1 - w_i))
            t = R * c * (separated_phi(s0, sg0, w0, w_i) - separated_phi(s1, sg1, w1, w_i))
            ok = (sg0 == sg1) & (sg0 > 0) & (v0 <= v_th) & (loop.v_src > 0)
            loaded = (g_load > 0) & (loop.v_src > 0) & (v0 < v_th)
            if loaded.any():  # with the pull-down: the elapsed-time integral of LoadedJunction
                sub = take_loop(loop, loaded)
                jg = LoadedJunction(sub)
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
