"""Periodic orbits and trajectories of the diode-charged rail (composition of the interval maps).

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

import math
from dataclasses import dataclass

import numpy as np

from .affine import affine_scan
from .rail_junction import junction_map
from .rail_linear import affine_maps, linear_map
from .rail_loop import Loop, broadcast_loop, full_as, loop_fields, take_loop

__all__ = ["interval_map", "OrbitSolution", "solve_orbit", "steady_rail", "propagate"]


#: Newton passes allowed on an orbit before giving up.
_MAX_PASSES = 60


def interval_map(v0, loop: Loop):
    """End value and slope of each interval for either diode (see :func:`linear_map`, :func:`junction_map`)."""
    if loop.diode == "linear":
        v1, s, _ = linear_map(v0, loop)
        return v1, s
    return junction_map(v0, loop)


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
        so the extremes lie on these boundary values and, where the loop has a
        ``q_lead``, on the dips ``v_dip``).
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
    v_dip: np.ndarray | None = None  # v_pre − q_lead/C where the loop has a leading charge (else None)

    @property
    def v_low(self) -> np.ndarray:
        """The lowest rail at each interval start: after its step, or in the dip of its leading charge [V]."""
        return self.v_start if self.v_dip is None else np.minimum(self.v_start, self.v_dip)


def _initial_guess(loop: Loop) -> np.ndarray:
    """A start inside the conducting regime (exact first pass for the straight-line diode)."""
    if loop.diode == "linear":
        return loop.v_src - loop.v_f - 1e-9 * np.abs(loop.v_src)
    # junction: the rail where the diode carries a typical refresh current
    i_typ = np.maximum(np.abs(loop.q_step).max(axis=-1, keepdims=True)
                       / np.maximum(loop.dt.max(axis=-1, keepdims=True), 1e-300), loop.i_load + loop.i_s)
    i_typ = np.maximum(i_typ, 1e3 * loop.i_s)
    return loop.v_src - loop.r * i_typ - loop.n_vt * np.log1p(i_typ / loop.i_s)


def _fixed_point(s, b, q, v_init):
    """Trajectory of pre-step starts u for maps u_{k+1} = s_k·(u_k − q_k) + b_k."""
    A, B = affine_scan(s, b - s * q)
    if v_init is None:
        S, O = A[..., -1:], B[..., -1:]
        with np.errstate(divide="ignore", invalid="ignore"):
            u0 = np.where(1.0 - S > 0, O / (1.0 - S), np.nan)
    else:
        u0 = full_as(np.asarray(v_init, dtype=float)[..., None], A[..., -1:].shape)
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
                smooth = (curv * step * step <= share * tol_v) & (span <= local) & (step <= span)
            if loop.v_clamp is not None:  # the clamp is a kink, not a curvature: those keep the plain rule
                smooth &= ~((s == 0.0) | (v1 + s * (v0 - v_lin) >= loop.v_clamp))
            moved &= ~smooth
        moved &= np.isfinite(v0)
        if not moved.any():
            converged = True
            break
        sub = take_loop(loop, moved)
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
        if linear and passes == 1 and (reg != 2).all():
            # only affine regimes, re-linearised where they changed: the next composition is exact
            u = _fixed_point(s, v1 - s * v_lin, q, v_init)
            v0 = u - q
            _, _, reg_chk = linear_map(v0, loop)
            if ((reg_chk == reg) | ~np.isfinite(v0)).all():
                converged = True
                passes += 1
                break
    # end values on the tangents (exact for affine maps, within tol² otherwise)
    v_end = v1 + s * (v0 - v_lin)
    if loop.v_clamp is not None:
        v_end = np.minimum(v_end, loop.v_clamp)
    return u, v0, v_end, passes, converged


def _surrogate(loop: Loop) -> Loop:
    """Straight-line diode tangent to the junction at ten times the load current (a starting orbit)."""
    i_t = 10.0 * (loop.i_load + loop.i_s) + 1e-6
    r_d = loop.n_vt / (i_t + loop.i_s)
    v_f = loop.n_vt * np.log1p(i_t / loop.i_s) - r_d * i_t
    return broadcast_loop(Loop(dt=loop.dt, v_src=loop.v_src, c=loop.c, r=loop.r + r_d, i_load=loop.i_load,
                                g_load=loop.g_load, q_step=loop.q_step, v_f=v_f, i_s=loop.i_s,
                                n_vt=loop.n_vt, diode="linear", v_clamp=loop.v_clamp, q_lead=loop.q_lead))


def _solve_block(loop: Loop, v_init, tol, v_guess=None):
    """Solve a 2-D block (rows × intervals); ``v_guess`` (junction only) seeds Newton where it is finite."""
    q = loop.q_step / loop.c
    if v_init is not None and loop.dt.shape[-1] == 1:  # one interval from a known start: one exact map
        u = np.asarray(v_init, dtype=float).reshape(-1, 1)
        v0 = u - q
        v1, _ = interval_map(v0, loop)
        return u, v0, v1, 1, True
    if loop.diode == "linear":
        a, b, able, v_inf = affine_maps(loop)
        u = _fixed_point(a, b, q, v_init)
        v0 = u - q
        bad = (able & (v0 > v_inf)).any(axis=-1)
        if loop.v_clamp is not None:  # where the clamp acts the maps are not these affine ones
            bad |= ((v0 > loop.v_clamp) | (a * v0 + b > loop.v_clamp)).any(axis=-1)
        passes = 1
        converged = True
        v1 = a * v0 + b  # exact where the affine regime holds
        if bad.any():
            rows = np.nonzero(bad)[0]
            sub = take_loop(loop, rows)
            vi = None if v_init is None else np.asarray(v_init)[rows]
            u_s, v0_s, _, p, ok = _newton_orbit(sub, v0[rows], vi, tol)
            u[rows] = u_s
            v0[rows] = v0_s
            passes = 1 + p
            converged = ok
            v1[rows] = linear_map(v0_s, sub)[0]
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


def solve_orbit(loop: Loop, v_init=None, *, tol: float = 1e-13, v_guess=None) -> OrbitSolution:
    """Periodic orbit (``v_init`` None) or trajectory from ``v_init``, for any batch shape.

    ``v_guess`` (optional, shaped like ``loop.dt``): a starting trajectory of the
    post-step start values for the junction diode's Newton iteration (rows
    with a non-finite entry start from the straight-line surrogate instead).
    It changes only the work, not the answer (within the tolerance).
    """
    shape = loop.dt.shape
    n = shape[-1]
    rows = math.prod(shape[:-1])
    flat = loop if len(shape) == 2 else Loop(**{k: getattr(loop, k).reshape(rows, n) for k in loop_fields(loop)},
                                              diode=loop.diode)
    vi = None if v_init is None else full_as(v_init, shape[:-1]).reshape(rows)
    u = np.empty((rows, n))
    v0 = np.empty((rows, n))
    v1 = np.empty((rows, n))
    passes = 0
    converged = True
    for r0 in range(0, rows, _BLOCK_ROWS):
        sl = slice(r0, min(rows, r0 + _BLOCK_ROWS))
        blk = flat if rows <= _BLOCK_ROWS else take_loop(flat, sl)
        vg = None if v_guess is None or loop.diode == "linear" else np.reshape(v_guess, (rows, n))[sl]
        u[sl], v0[sl], v1[sl], p, ok = _solve_block(blk, None if vi is None else vi[sl], tol, vg)
        passes = max(passes, p)
        converged &= ok
    if loop.v_clamp is not None:  # a step that would lift the rail above the clamp ends at it
        v0 = np.minimum(v0, flat.v_clamp)
    dip = None if flat.q_lead is None else u - flat.q_lead / flat.c  # the leading part of a step first
    if n <= 32 and rows > 256:  # column loop: much faster than a reduction over a short last axis
        v_min = v1[:, -1].copy()
        v_max = v1[:, -1].copy()
        for k in range(n):
            for x in (u[:, k], v0[:, k]):
                np.minimum(v_min, x, out=v_min)
                np.maximum(v_max, x, out=v_max)
    else:
        v_min = np.minimum(np.minimum(v0.min(axis=-1), u.min(axis=-1)), v1[:, -1])
        v_max = np.maximum(np.maximum(v0.max(axis=-1), u.max(axis=-1)), v1[:, -1])
    if dip is not None:
        v_min = np.minimum(v_min, dip.min(axis=-1))
        dip = dip.reshape(shape)
    return OrbitSolution(v_pre=u.reshape(shape), v_start=v0.reshape(shape), v_end=v1.reshape(shape),
                         v_min=v_min.reshape(shape[:-1]), v_max=v_max.reshape(shape[:-1]),
                         passes=passes, converged=bool(converged), v_dip=dip)


def steady_rail(dt, v_src, *, c, r, v_f=0.0, i_load=0.0, g_load=0.0, q_step=0.0,
                diode: str = "linear", i_s=1e-14, n_vt=0.025, v_guess=None, v_clamp=None,
                q_lead=None) -> OrbitSolution:
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
    v_clamp : array_like [V], optional
        Clamp across the capacitor (:class:`~explorer.engines.rail_loop.Loop`).
    q_lead : array_like [C], optional
        The part of each step drawn first (:class:`~explorer.engines.rail_loop.Loop`).

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
    loop = broadcast_loop(Loop(dt=dt, v_src=v_src, c=c, r=r, i_load=i_load, g_load=g_load,
                                q_step=q_step, v_f=v_f, i_s=i_s, n_vt=n_vt, diode=diode, v_clamp=v_clamp,
                                q_lead=q_lead))
    if v_guess is not None:
        v_guess = np.broadcast_to(np.asarray(v_guess, dtype=float), loop.dt.shape)
    return solve_orbit(loop, v_guess=v_guess)


def propagate(loop: Loop, v_init, *, tol: float = 1e-13) -> OrbitSolution:
    """Trajectory over the intervals from ``v_init`` (the state before the first step) [V].

    Exact for the straight-line diode in one pass when no interval crosses
    cut-off; otherwise Newton on the trajectory (multiple shooting), which
    converges quadratically, until no start value moves by more than
    ``tol·(1 + |V|)``.
    """
    return solve_orbit(broadcast_loop(loop), v_init, tol=tol)
