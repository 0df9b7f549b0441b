"""Exact interval maps of the diode-charged rail with a straight-line diode.

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
"""

from __future__ import annotations

import numpy as np

from .rail_loop import Loop, unclamped

__all__ = ["off_params", "off_value", "off_time_to", "linear_map", "linear_parts", "affine_maps",
           "clamped_map"]


def off_params(i_load, g_load, c):
    """Rate and equilibrium of the cut-off regime (rate 0: straight line of slope −I/C)."""
    rate = g_load / c
    pos = g_load > 0
    with np.errstate(divide="ignore", invalid="ignore"):
        veq = np.where(pos, -i_load / np.where(pos, g_load, 1.0), 0.0)
    return rate, veq


def off_value(v0, t, i_load, g_load, c, *, params=None, decay=None):
    """V(t) of the cut-off regime: exponential toward ``veq`` (dV/dt = −rate·(V − veq)), or the straight
    line of slope −I/C where rate = 0. ``params`` (:func:`off_params` of the same loads) and ``decay``
    (exp(−rate·t)) when already at hand."""
    rate, veq = off_params(i_load, g_load, c) if params is None else params
    e = np.exp(-rate * t) if decay is None else decay
    return np.where(rate > 0, veq + (v0 - veq) * e, v0 - i_load / c * t)


def off_time_to(v0, v_target, i_load, g_load, c, *, params=None):
    """Time for the cut-off regime to fall from v0 to v_target (inf if never); ``params`` as in
    :func:`off_value`."""
    rate, veq = off_params(i_load, g_load, c) if params is None else params
    pos = rate > 0
    gap = v_target - veq
    with np.errstate(divide="ignore", invalid="ignore"):
        t_exp = np.log((v0 - veq) / gap) / np.where(pos, rate, 1.0)
        t_exp = np.where(gap > 0, t_exp, np.inf)
        loaded = i_load > 0
        t_lin = np.where(loaded, (v0 - v_target) * c / np.where(loaded, i_load, 1.0), np.inf)
    return np.where(pos, t_exp, t_lin)


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
        0 = A (conducting), 1 = B (cut off), 2 = C (cut off, then conducting); with a clamp
        (:class:`~explorer.engines.rail_loop.Loop`), 3 = the rail ends at the clamp, 4 = it starts
        above it (a step) and is held there at the start (both slope 0).
    """
    if loop.v_clamp is not None:
        return clamped_map(v0, loop, lambda v, lp: linear_map(v, lp))
    m = linear_parts(v0, loop)
    return m["v1"], m["slope"], m["regime"]


def linear_parts(v0, loop: Loop) -> dict:
    """:func:`linear_map` of a loop without a clamp, with the intermediates the interval integrals reuse:
    ``v1``, ``slope``, ``regime``, ``g`` = 1/R, ``v_inf``, ``rate_on``, ``veq_on``, ``off`` (:func:`off_params`)
    and ``t_star`` (:func:`off_time_to` V_∞, the cut-off time of regime C)."""
    c, dt, i_load, g_load = loop.c, loop.dt, loop.i_load, loop.g_load
    g = 1.0 / loop.r
    v_inf = loop.v_src - loop.v_f
    able = v_inf > 0
    gg = g + g_load
    rate_on = gg / c
    veq_on = (g * v_inf - i_load) / gg
    e_on = np.exp(-rate_on * dt)
    # A
    v1_a = veq_on + (v0 - veq_on) * e_on
    # B
    off = off_params(i_load, g_load, c)
    s_b = np.exp(-off[0] * dt)
    v1_b = off_value(v0, dt, i_load, g_load, c, params=off, decay=s_b)
    # C
    t_star = off_time_to(v0, v_inf, i_load, g_load, c, params=off)
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
    return {"v1": v1, "slope": slope, "regime": regime, "g": g, "v_inf": v_inf, "rate_on": rate_on,
            "veq_on": veq_on, "off": off, "t_star": t_star}


def affine_maps(loop: Loop):
    """Maps of the regimes the straight-line diode takes from below: A where it can conduct, B elsewhere."""
    c, dt, i_load, g_load = loop.c, loop.dt, loop.i_load, loop.g_load
    g = 1.0 / loop.r
    v_inf = loop.v_src - loop.v_f
    able = v_inf > 0
    gg = g + g_load
    # each interval takes one regime, so one exponential each: rate (g + G)/C in A, G/C in B
    a = np.exp(-(np.where(able, gg, g_load) / c) * dt)
    one_a = 1.0 - a
    b_on = (g * v_inf - i_load) / gg * one_a
    with np.errstate(divide="ignore", invalid="ignore"):
        b_off = np.where(g_load > 0, -i_load / g_load * one_a, -i_load / c * dt)
    return a, np.where(able, b_on, b_off), able, v_inf


def clamped_map(v0, loop: Loop, free_map):
    """An interval map with the loop's clamp: ``free_map(v, loop)`` of the unclamped loop from
    min(v0, v_clamp), its end value capped at v_clamp (the rail is monotone in an interval, so one that
    ends above the clamp reached it and was held there). Returns the free map's outputs with the value
    capped and the slope 0 where the clamp acts; a third output (the regime) gets 3 where the end is
    clamped and 4 where only the start is.
    """
    vc = loop.v_clamp
    entry = v0 > vc
    out = free_map(np.minimum(v0, vc), unclamped(loop))
    v1, slope = out[0], out[1]
    end = v1 > vc
    held = entry | end
    res = (np.minimum(v1, vc), np.where(held, 0.0, slope))
    if len(out) > 2:
        res += (np.where(end, 3, np.where(entry, 4, out[2])).astype(np.int8),)
    return res
