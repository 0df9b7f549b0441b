"""Isolated supply: a small isolated DC-DC module per floating rail (DOMAIN.md, "Option 3").

The module is described by its data-sheet-style figures: no-load output
``v_out``, output resistance ``r_out``, rated power ``p_rated``, no-load input
power ``p_no_load`` and efficiency ``eta_full`` at rated power, start-up delay
``t_start`` and ramp ``t_ramp``, isolation capacitance ``c_iso`` and working
voltage ``v_iso``. The model is:

* **Losses** ``P_loss = P_0 + k·P²`` (a fixed no-load loss plus a conduction-
  like term), fitted exactly through the two figures given: ``P_in(0) = P_0``
  and ``P/P_in(P_rated) = eta_full``. The module's own output resistance is
  inside the measured efficiency, so ``r_out``'s I²R is part of ``k·P²`` and
  is not added again.
* **Output rail** an ideal source behind ``r_out`` feeding ``c_out``: ``v_out``
  for a regulated module, ``v_out·V_in/v_in_rated`` for one without output
  regulation (:func:`module_output`),
  (effective capacitance at the corner and at its DC bias). At every HS turn-on
  the gate takes the charge ``Q_G + Q_LS`` from ``c_out`` as a step (the gate
  charges in nanoseconds, far faster than ``tau = r_out·C_out``); the driver's
  quiescent current flows always and ``V/R_GS`` while the HS is on. Between
  events the rail recovers exponentially: ``dV/dt = (V_inf − V)/tau`` with
  constant coefficients in each interval, solved exactly per interval; the
  periodic steady state is the fixed point of the composed affine map (no
  time-stepping). For ``tau ≫ T`` the ripple is ``Q/C_out`` (Q = C·V); for
  ``r_out = 0`` the module is an ideal source and recovers at once, so the
  dip ``Q/C_out`` lasts an instant (kept as the conservative minimum).
* **Load** the average gate-drive power P = Q_G·V·f plus quiescent and
  pull-down power over the analysis period (:mod:`explorer.loads`) at the
  mean rail voltage.
* **Common mode** (:mod:`explorer.common_mode`): dv/dt = V_bus/t_edge, peak
  current C_iso·dv/dt, charge C_iso·V_bus per edge, and the power lost charging
  it by edge type (½·C_iso·ΔV² per hard-switched edge, none per edge the load
  current moves, :func:`~explorer.common_mode.capacitive_edge_power`), counted in
  ``p_drawn_bus``; the gross C_iso·V²·f (every edge hard) is ``p_cm_gross``. The driver's CMTI must exceed ``cmti_margin``·dv/dt.
* **Start-up** is independent of the PWM: after ``t_start`` the module's
  source ramps linearly to its output over ``t_ramp``; ``c_out`` follows it
  through ``r_out`` (first-order lag tau). Until the rail reaches the UVLO
  rising threshold the driver withholds HS pulses, so the load meanwhile is
  the driver's quiescent current only; the ramp's end level is
  ``v_out − r_out·I_Q``.
* **Duty** any HS duty 0–100 % works (no refresh needed); the limit is the
  module's power rating, checked as a failed check (overload).

The isolation figures are a screening check only; the statement that
insulation must be designed and verified to the applicable safety standards
is always part of the result's warnings.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from dataclasses import dataclass

import numpy as np
from ..roots import brentq

from .. import common_mode as cm
from ..capacitors import capacitance, parse_dielectric
from ..design import Design, IsolatedOption
from ..engines.affine import affine_scan
from ..errors import DesignError, ModelValidityWarning
from ..loads import charge_per_turn_off, charge_per_turn_on, load_charge, load_power, required_rail
from ..results import (CapacitorStress, Check, DutyLimits, OptionResult, RailStats, Startup, cap_voltage_check,
                       rail_max_v_bs_check, rail_max_v_gs_check, rail_min_check, startup_uvlo_check, verdict_from)
from ..schedule import Schedule, map_periods, period_schedule, previous
from ..topology import analysis_frequency, frequency_limit_key
from .details import IsolatedDetails
from .base import SupplyModel

__all__ = ["ISO_HEADROOM", "INSULATION_STATEMENT", "loss_coefficient", "module_input_power",
           "module_efficiency", "optimum_load", "RailSolution", "output_rail", "startup_voltage",
           "time_to_level", "ramp_inrush", "evaluate_option", "rail_min_batch", "rail_min_map"]

#: Isolation working voltage wanted above the peak voltage across the barrier
#: before no warning is given [-] (common practice, no source: it leaves room for
#: edge overshoot and ringing, which the model does not compute).
ISO_HEADROOM = 1.25

#: Plain-words statement shown with every isolated option.
INSULATION_STATEMENT = (
    "insulation: the isolation figures here are a screening check only; the barrier, creepage and "
    "clearance must be designed and verified to the applicable safety standards (e.g. IEC 62368-1, "
    "IEC 61800-5-1, IEC 60664-1) and local codes")


# --------------------------------------------------------------------------- loss model

def loss_coefficient(p_rated, p_no_load, eta_full):
    """Coefficient k of the loss model P_loss = P_0 + k·P² [1/W].

    Fitted through the two given points: P_loss(0) = P_0 and
    P_loss(P_rated) = P_rated·(1/eta_full − 1), hence

        k = (P_rated·(1/eta_full − 1) − P_0) / P_rated²

    Parameters
    ----------
    p_rated : float or array [W], > 0
        Rated output power.
    p_no_load : float or array [W], ≥ 0
        Input power at no load (P_0).
    eta_full : float or array [-], in (0, 1)
        Efficiency at rated power.

    Examples
    --------
    >>> round(float(loss_coefficient(1.0, 0.05, 0.8)), 12)
    0.2
    """
    p_rated = np.asarray(p_rated, dtype=float)
    return (p_rated * (1.0 / np.asarray(eta_full, dtype=float) - 1.0)
            - np.asarray(p_no_load, dtype=float)) / (p_rated * p_rated)


def module_input_power(p_out, p_no_load, k):
    """Input power of the module, P_in = P + P_0 + k·P² [W].

    Parameters
    ----------
    p_out : float or array [W], ≥ 0
        Output power at the module's terminals.
    p_no_load : float or array [W]
        No-load input power P_0.
    k : float or array [1/W]
        From :func:`loss_coefficient`.
    """
    p = np.asarray(p_out, dtype=float)
    return p + np.asarray(p_no_load, dtype=float) + np.asarray(k, dtype=float) * p * p


def module_efficiency(p_out, p_no_load, k):
    """Module efficiency η = P/(P + P_0 + k·P²) [-].

    It rises with load up to :func:`optimum_load` and falls beyond (for
    P_0 > 0); it is 0 at no load and stays in (0, 1) for P > 0 and k > 0.

    Parameters
    ----------
    p_out : float or array [W], ≥ 0
    p_no_load : float or array [W], ≥ 0
    k : float or array [1/W], > 0
    """
    p = np.asarray(p_out, dtype=float)
    p_in = module_input_power(p, p_no_load, k)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(p_in > 0, p / np.where(p_in > 0, p_in, 1.0), 0.0)


def optimum_load(p_no_load, k):
    """Output power of highest efficiency, P* = sqrt(P_0/k) [W].

    From dη/dP = 0: (P_in − P·dP_in/dP)/P_in² = (P_0 − k·P²)/P_in² = 0.
    """
    return np.sqrt(np.asarray(p_no_load, dtype=float) / np.asarray(k, dtype=float))


# --------------------------------------------------------------------------- output rail

@dataclass(frozen=True)
class RailSolution:
    """Periodic steady state of the module's output rail over one analysis period.

    Attributes
    ----------
    v_start : ndarray [V]
        Rail at the start of each interval, before any turn-on step.
    v_after : ndarray [V]
        Rail just after the turn-on step (equal to ``v_start`` without one).
    v_end : ndarray [V]
        Rail at the end of each interval.
    v_inf, tau : ndarray [V], [s]
        Level each interval relaxes toward and its time constant (0: at once).
    min, max, mean : float [V]
        Extremes (reached at interval boundaries: each interval's exponential
        is monotonic) and the time average.
    i_rms_recharge : float [A]
        RMS over the period of the capacitor's recharge current (the turn-on
        pulses excluded); 0 when r_out = 0.
    i_peak_recharge : float [A]
        Largest recharge current into the capacitor.
    """

    v_start: np.ndarray
    v_after: np.ndarray
    v_end: np.ndarray
    v_inf: np.ndarray
    tau: np.ndarray
    min: float
    max: float
    mean: float
    i_rms_recharge: float
    i_peak_recharge: float

    def waveform(self, dt: np.ndarray, points: int = 8) -> tuple[np.ndarray, np.ndarray]:
        """Time [s] and rail [V] samples: each step drawn vertically, ``points`` per interval."""
        t0 = np.concatenate(([0.0], np.cumsum(dt)[:-1]))
        u = np.linspace(0.0, 1.0, points)
        s = dt[:, None] * u[None, :]
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            decay = np.where(self.tau[:, None] > 0, np.exp(-s / np.where(self.tau > 0, self.tau, 1.0)[:, None]),
                             (s == 0).astype(float))
        seg = self.v_inf[:, None] + (self.v_after - self.v_inf)[:, None] * decay
        t = np.concatenate((t0[:, None], t0[:, None] + s), axis=1).ravel()
        v = np.concatenate((self.v_start[:, None], seg), axis=1).ravel()
        return t, v


def _rail_boundaries(dt, hs_on, hs_turn_on, *, v_src, r_out: float, c_out, q_pulse, i_q=0.0,
                     r_gs: float | None = None, q_off: float = 0.0):
    """Boundary values of :func:`output_rail`'s periodic orbit, for a batch of element values.

    ``v_src``, ``c_out``, ``q_pulse`` and ``i_q`` may be arrays of shape ``(m,)``
    (one set per sample, over the same schedule); the results then have shape
    ``(m, n)``, otherwise ``(n,)``. Returns ``v_start, v_after, v_end, v_inf,
    tau, alpha`` (see :func:`output_rail` for the equations).
    """
    dt = np.asarray(dt, dtype=float)
    hs_on = np.asarray(hs_on, dtype=bool)
    batch = any(np.ndim(x) > 0 for x in (v_src, c_out, q_pulse, i_q))
    v_src, c_out, q_pulse, i_q = ((np.asarray(x, dtype=float)[..., None] if batch else float(x))
                                  for x in (v_src, c_out, q_pulse, i_q))
    jump = np.where(np.asarray(hs_turn_on, dtype=bool), q_pulse / c_out, 0.0)
    if q_off:  # the level shifter's reset pulse at each HS turn-off (the schedule is periodic)
        on = np.asarray(hs_on, dtype=bool)
        jump = jump + np.where(previous(on) & ~on, q_off / c_out, 0.0)
    g = hs_on / r_gs if r_gs is not None else np.zeros(dt.shape)
    # written without 1/r_out so that a vanishing r_out tends smoothly to the ideal source
    tau = c_out * r_out / (1.0 + g * r_out)
    shape = np.broadcast(jump, tau, v_src).shape
    if r_out > 0.0 and np.all(tau > 0.0):
        v_inf = np.broadcast_to((v_src - i_q * r_out) / (1.0 + g * r_out), shape)
        with np.errstate(over="ignore"):
            x = dt / tau                              # may be inf: the interval forgets its start
        alpha = np.broadcast_to(np.exp(-x), shape)
        one_minus_a = -np.expm1(-np.sum(np.broadcast_to(x, shape), axis=-1, keepdims=True))
    else:  # ideal source: recovers at once to v_src
        tau = np.zeros(shape)
        v_inf = np.broadcast_to(v_src, shape).astype(float)
        alpha = np.zeros(shape)
        one_minus_a = 1.0
    tau = np.broadcast_to(tau, shape)
    jump = np.broadcast_to(jump, shape)
    # interval map: V_end = alpha·(V_start − jump) + (1 − alpha)·V_inf
    a_cum, b_cum = affine_scan(alpha, (1.0 - alpha) * v_inf - alpha * jump)
    v0 = b_cum[..., -1:] / one_minus_a
    v_end = a_cum * v0 + b_cum
    v_start = np.concatenate((v0, v_end[..., :-1]), axis=-1)
    v_after = v_start - jump
    return v_start, v_after, v_end, v_inf, tau, alpha


def output_rail_min(dt, hs_on, hs_turn_on, *, v_src, r_out: float, c_out, q_pulse, i_q=0.0,
                    r_gs: float | None = None, q_off: float = 0.0) -> np.ndarray:
    """:func:`output_rail`'s ``min`` for a batch of element values (arrays of shape ``(m,)``) [V]."""
    _, v_after, v_end, _, _, _ = _rail_boundaries(dt, hs_on, hs_turn_on, v_src=v_src, r_out=r_out, c_out=c_out,
                                                   q_pulse=q_pulse, i_q=i_q, r_gs=r_gs, q_off=q_off)
    return np.minimum(v_after.min(axis=-1), v_end.min(axis=-1))


def output_rail(dt, hs_on, hs_turn_on, *, v_src: float, r_out: float, c_out: float,
                q_pulse: float, i_q: float = 0.0, r_gs: float | None = None, q_off: float = 0.0) -> RailSolution:
    """Periodic steady state of a source behind a resistance charging a capacitor that feeds a gate driver.

    Per interval (constant coefficients), with G = 1/r_out and g = 1/R_GS while
    the HS is on (else 0), Kirchhoff's current law at the rail gives

        C·dV/dt = (v_src − V)·G − I_Q − g·V
        ⇒ V(t) = V_inf + (V_0 − V_inf)·exp(−t/tau),
          tau = C/(G + g),  V_inf = (v_src·G − I_Q)/(G + g)

    and at an HS turn-on the gate charge steps the rail down by Q/C (Q = C·V).
    One period is a composition of affine maps; the steady state is its fixed
    point V_0 = B/(1 − A) with 1 − A = −expm1(−Σ dt/tau) (first-order linear
    circuit response, e.g. Alexander & Sadiku, *Fundamentals of Electric
    Circuits*, 6th ed., 2017, ch. 7, first-order circuits).

    Parameters
    ----------
    dt : array [s], > 0
        Interval durations of the periodic schedule.
    hs_on, hs_turn_on : array of bool
        HS gate on during the interval; HS turns on at its start.
    v_src : float [V]
        Module no-load output (the source).
    r_out : float [Ω], ≥ 0
        Module output resistance (0: ideal source, instant recovery).
    c_out : float [F], > 0
        Effective output capacitance.
    q_pulse : float [C], ≥ 0
        Charge taken at each HS turn-on (Q_G + Q_LS).
    i_q : float [A], ≥ 0
        Constant quiescent current.
    r_gs : float or None [Ω]
        Gate pull-down drawing V/R_GS while the HS is on.

    Returns
    -------
    RailSolution
    """
    dt = np.asarray(dt, dtype=float)
    v_start, v_after, v_end, v_inf, tau, alpha = _rail_boundaries(
        dt, hs_on, hs_turn_on, v_src=v_src, r_out=r_out, c_out=c_out, q_pulse=q_pulse, i_q=i_q, r_gs=r_gs,
        q_off=q_off)
    period = float(dt.sum())
    # time average: ∫V = V_inf·dt + (V_after − V_inf)·tau·(1 − alpha)
    area = v_inf * dt + (v_after - v_inf) * tau * (1.0 - alpha)
    mean = float(area.sum() / period)
    if r_out > 0.0 and np.all(tau > 0.0):
        dq = c_out * (v_inf - v_after)                # charge the interval would move [C]
        with np.errstate(over="ignore"):              # r_out → 0 sends the current toward infinity
            e2 = dq * dq * (1.0 - alpha * alpha) / (2.0 * tau)  # ∫ i² dt, i = (dq/tau)·exp(−t/tau)
            i_rms = math.sqrt(float(e2.sum()) / period)
            i_pk = float(np.abs(dq / tau).max())
    else:
        i_rms, i_pk = 0.0, 0.0
    return RailSolution(v_start=v_start, v_after=v_after, v_end=v_end, v_inf=v_inf, tau=tau,
                        min=float(min(v_after.min(), v_end.min())), max=float(v_start.max()),
                        mean=mean, i_rms_recharge=i_rms, i_peak_recharge=i_pk)


# --------------------------------------------------------------------------- start-up

def startup_voltage(t, *, v_final: float, t_start: float, t_ramp: float, tau: float):
    """Output-capacitor voltage while the module starts [V].

    The module's source is 0 until ``t_start``, then rises linearly to
    ``v_final`` over ``t_ramp``; the capacitor follows through a first-order
    lag tau = r_out·C_out. With s = t − t_start and slope m = v_final/t_ramp
    (response of an RC low-pass to a ramp, Alexander & Sadiku 2017, ch. 7, first-order circuits):

        0 ≤ s ≤ t_ramp:  V = m·(s − tau·(1 − exp(−s/tau)))
        s > t_ramp:      V = v_final − (v_final − V(t_ramp))·exp(−(s − t_ramp)/tau)

    tau = 0 gives the linear ramp itself; t_ramp = 0 a step through the lag.

    Parameters
    ----------
    t : float or array [s]
        Time from power-up of the module's input.
    v_final : float [V]
        Level the source ramps to.
    t_start, t_ramp, tau : float [s], ≥ 0
        Delay, ramp time and output time constant.
    """
    s = np.asarray(t, dtype=float) - t_start
    sr = np.clip(s, 0.0, t_ramp)
    if tau > 0.0:
        return _startup_lagged(s, sr, v_final, t_ramp, tau)
    v = v_final * (sr / t_ramp if t_ramp > 0.0 else np.ones(s.shape))
    out = np.where(s > 0.0, v, 0.0)
    return float(out) if out.ndim == 0 else out


def _startup_lagged(s, sr, v_final, t_ramp, tau):
    with np.errstate(over="ignore"):  # s/tau → inf for a vanishing lag: exp(−inf) = 0
        if t_ramp > 0.0:
            v_ramp = v_final / t_ramp * (sr + tau * np.expm1(-sr / tau))
        else:
            v_ramp = np.zeros(s.shape)
        after = np.maximum(s - t_ramp, 0.0)
        v = v_final - (v_final - v_ramp) * np.exp(-after / tau)
    out = np.where(s > 0.0, v, 0.0)
    return float(out) if out.ndim == 0 else out


def time_to_level(level: float, *, v_final: float, t_start: float, t_ramp: float,
                  tau: float) -> float | None:
    """First time :func:`startup_voltage` reaches ``level`` [s], or None if it never does.

    The voltage rises monotonically toward ``v_final``; with tau > 0 it only
    approaches it, so a level at or above ``v_final`` is never reached. The
    ramp phase is solved with Brent's method, the tail in closed form
    (t = t_ramp + tau·ln((v_final − V(t_ramp))/(v_final − level))).
    """
    if level <= 0.0:
        return t_start
    if tau <= 0.0:
        if level > v_final:
            return None
        return t_start + t_ramp * level / v_final
    if level >= v_final:
        return None
    v_r = float(startup_voltage(t_start + t_ramp, v_final=v_final, t_start=t_start, t_ramp=t_ramp, tau=tau)) \
        if t_ramp > 0.0 else 0.0
    if t_ramp > 0.0 and v_r >= level:
        f = lambda s: v_final / t_ramp * (s + tau * math.expm1(-s / tau)) - level  # noqa: E731
        s = brentq(f, 0.0, t_ramp, xtol=1e-15 * max(t_ramp, 1e-30), rtol=1e-13)
        return t_start + s
    return t_start + t_ramp + tau * math.log((v_final - v_r) / (v_final - level))


def ramp_inrush(*, c_out: float, v_final: float, t_ramp: float, r_out: float) -> float | None:
    """Peak charging current into the output capacitor during start-up [A].

    i = C·dV/dt with :func:`startup_voltage`: the slope is largest at the end
    of the ramp, i = C·(v_final/t_ramp)·(1 − exp(−t_ramp/tau)), which is
    C·V/t_ramp for tau ≪ t_ramp; with t_ramp = 0 the step is limited by r_out
    alone, i = v_final/r_out. With t_ramp = 0 and r_out = 0 only the
    module's own current limit bounds it, which the data do not give: None.
    """
    tau = r_out * c_out
    if t_ramp > 0.0:
        if tau > 0.0:
            return c_out * v_final / t_ramp * -math.expm1(-t_ramp / tau)
        return c_out * v_final / t_ramp
    if r_out > 0.0:
        return v_final / r_out
    return None


# --------------------------------------------------------------------------- evaluation

def _rail_load(design: Design, sched: Schedule) -> tuple[float, float]:
    """Load charge per analysis period as q0 + q1·V (load_charge is affine in V) [C], [C/V]."""
    q0 = float(load_charge(design, sched, 0.0))
    q1 = float(load_charge(design, sched, 1.0)) - q0
    return q0, q1


def module_output(design: Design, option: IsolatedOption) -> float:
    """Open-circuit output of the module at its input rail [V].

    A regulated module holds ``v_out``. One without output regulation runs at a
    fixed duty, so its conversion ratio ``M = V_out/V_in`` is fixed (``M = n·D``
    for a transformer-coupled converter: Erickson & Maksimović, *Fundamentals of
    Power Electronics*, 3rd ed., Springer 2020, ch. 6) and its output follows
    its input in proportion: ``v_out·V_in/v_in_rated``, with ``V_in`` the
    option's ``v_in`` or else the aux rail.
    """
    if option.v_in_rated is None:
        return option.v_out
    v_in = option.v_in if option.v_in is not None else design.aux.v_dd
    return option.v_out * v_in / option.v_in_rated


def _rating_limits(design: Design, sched: Schedule, option: IsolatedOption) -> dict:
    """Highest leg frequency and Q_G whose gate load stays within p_rated (any duty works) [Hz], [C].

    Keyed in the leg's terms (:func:`explorer.topology.frequency_limit_key`: ``f_sw_max``, or
    ``f_line_max`` on a line-frequency leg); None where any value fits, 0 where none does.

    The load P = V·(r_on·(Q_G + Q_LS) + I_Q + V·D_on/R_GS) with r_on the HS turn-ons
    per second, which scales with f_sw, and D_on the HS on-time share (gate-drive
    power P = Q·V·f, as in :mod:`explorer.loads`). V is the mean rail at the
    rated load, V = v_out − r_out·I with V·I = p_rated (the mean rail of the
    source-behind-r_out model is exactly v_out − r_out·mean(I) by charge balance).
    """
    v_src = module_output(design, option)
    disc = v_src ** 2 - 4.0 * option.r_out * option.p_rated
    v = 0.5 * (v_src + math.sqrt(disc)) if disc > 0 else 0.5 * v_src
    budget = option.p_rated / v - design.driver.i_q
    if design.gate.r_gs is not None:
        budget -= v * float(sched.dt[sched.hs_on].sum()) / sched.period / design.gate.r_gs
    rate = np.count_nonzero(sched.hs_turn_on) / sched.period
    key = frequency_limit_key(design.bridge)
    if budget <= 0:  # the static load alone (quiescent, pull-down) exceeds the rating: nothing fits
        return {key: 0.0, "q_g_max": 0.0}
    if rate == 0:
        # no HS turn-on: any f_sw/Q_G fits, which the result contract writes as None (no infinities,
        # explorer.results: None where unbounded)
        return {key: None, "q_g_max": None}
    q = charge_per_turn_on(design)
    q_ls_off = charge_per_turn_off(design) * np.count_nonzero(sched.hs_turn_off) / sched.period  # per second
    return {key: float(analysis_frequency(design.bridge) * budget / (rate * q + q_ls_off)),
            "q_g_max": float(max(0.0, (budget - q_ls_off) / rate - design.driver.q_ls))}


@dataclass(frozen=True)
class _OutputRail:
    """The output capacitor and the steady rail it holds: ``rail`` (RailSolution, a collapse shown at 0 V),
    the plotted waveform, ``v_pre`` the rail before the PWM starts [V] and ``v_max`` the highest rail [V]."""

    cap: object
    c_eff: float
    v_src: float
    q_on: float
    rail: RailSolution
    t_wave: np.ndarray
    v_wave: np.ndarray
    collapsed: bool
    v_pre: float
    v_max: float


def _option_path(design: Design, option: IsolatedOption) -> str:
    """The design-file path of the option (``options[i]``), for error messages."""
    idx = next((i for i, o in enumerate(design.options) if o is option or o == option), None)
    return f"options[{idx}]" if idx is not None else "option"


def _c_out_eff(option: IsolatedOption, v_src: float, corner: str, path: str) -> float:
    """Effective C_out at the module's output voltage and the capacitance corner [F]."""
    cap = option.c_out
    diel = parse_dielectric(cap.dielectric, f"{path}.c_out.dielectric")
    return float(capacitance(cap.c, c_tol=cap.c_tol, dielectric=diel, v_applied=v_src,
                             v_rating=cap.v_rating, dc_bias=cap.dc_bias, corner=corner))


def _steady_rail(design: Design, option: IsolatedOption, sched: Schedule, path: str, corner: str,
                 warn: list) -> _OutputRail:
    """Steady state: effective C_out and the rail over the analysis period (a collapse is warned)."""
    drv = design.driver
    cap = option.c_out
    v_src = module_output(design, option)
    c_eff = _c_out_eff(option, v_src, corner, path)
    q_on = charge_per_turn_on(design)
    rail = output_rail(sched.dt, sched.hs_on, sched.hs_turn_on, v_src=v_src, r_out=option.r_out,
                       c_out=c_eff, q_pulse=q_on, i_q=drv.i_q, r_gs=design.gate.r_gs,
                       q_off=charge_per_turn_off(design))
    t_wave, v_wave = rail.waveform(sched.dt, points=8 if len(sched) <= 2000 else 2)
    collapsed = rail.min < 0.0
    if collapsed:
        # below 0 V the constant-charge load model no longer holds (the driver stops): shown as 0 V,
        # as the other models do, and no efficiency is reported
        warn.append(f"the rail collapses: each turn-on takes Q/C_out = {q_on / c_eff:.3g} V from c_out, more "
                    "than the module refills; the minimum is shown as 0 V")
        rail = dataclasses.replace(rail, min=0.0, max=max(rail.max, 0.0), mean=max(rail.mean, 0.0))
        v_wave = np.maximum(v_wave, 0.0)
    v_pre = v_src - option.r_out * drv.i_q              # rail before the PWM starts (load I_Q only)
    return _OutputRail(cap=cap, c_eff=c_eff, v_src=v_src, q_on=q_on, rail=rail, t_wave=t_wave, v_wave=v_wave,
                       collapsed=collapsed, v_pre=v_pre, v_max=max(rail.max, v_pre))


@dataclass(frozen=True)
class _IsolatedPower:
    """Load, module losses and the common-mode figures [W, V/s, A, C]; ``k`` the loss coefficient [1/W]."""

    p_load: float
    k: float
    p_in: float
    eta_mod: float
    dv_dt: float
    i_cm: float
    q_cm: float
    p_cm: float
    p_drawn: float
    efficiency: float | None
    losses: dict
    edges: cm.EdgePower | None = None


def _power(design: Design, option: IsolatedOption, sched: Schedule, out: _OutputRail, path: str) -> _IsolatedPower:
    """Load, losses and power split; a load above p_rated is warned (the loss model is extrapolated)."""
    b = design.bridge
    p_load = float(load_power(design, sched, out.rail.mean))     # Q_G·V·f + I_Q·V + pull-down
    k = float(loss_coefficient(option.p_rated, option.p_no_load, option.eta_full))
    p_in = float(module_input_power(p_load, option.p_no_load, k))
    eta_mod = float(module_efficiency(p_load, option.p_no_load, k))
    dv_dt = cm.switch_node_dv_dt(b)  # peak slope (edge shape)
    i_cm = float(cm.cm_current(option.c_iso, dv_dt))
    q_cm = float(cm.edge_charge(option.c_iso, b.v_bus))
    edges = cm.capacitive_edge_power(option.c_iso, sched)     # ½·C·ΔV² per hard edge, ~0 per ZVS edge
    p_cm = edges.dissipated
    p_drawn = p_in + p_cm
    efficiency = p_load / p_drawn if (p_drawn > 0 and not out.collapsed) else None
    losses = {"module_no_load": option.p_no_load, "module_load": k * p_load * p_load, "common_mode": p_cm}
    if p_load > option.p_rated:
        warnings.warn(f"{path}: the load {p_load:.4g} W exceeds p_rated = {option.p_rated:.4g} W; "
                      "the loss model P_0 + k\u00b7P\u00b2 is extrapolated beyond its fitting range",
                      ModelValidityWarning, stacklevel=3)
    return _IsolatedPower(p_load=p_load, k=k, p_in=p_in, eta_mod=eta_mod, dv_dt=dv_dt, i_cm=i_cm, q_cm=q_cm,
                          p_cm=p_cm, p_drawn=p_drawn, efficiency=efficiency, losses=losses, edges=edges)


def _startup(design: Design, option: IsolatedOption, out: _OutputRail, warn: list) -> tuple[Startup, float]:
    """Start-up of the module's output (independent of the PWM): (Startup, τ = r_out·C_out [s])."""
    b, drv, v_pre = design.bridge, design.driver, out.v_pre
    tau = option.r_out * out.c_eff
    t_uvlo = time_to_level(drv.uvlo_on, v_final=v_pre, t_start=option.t_start, t_ramp=option.t_ramp, tau=tau)
    cycles = None if t_uvlo is None else int(math.ceil(t_uvlo * analysis_frequency(b) - 1e-9))  # leg periods
    i_inrush = ramp_inrush(c_out=out.c_eff, v_final=v_pre, t_ramp=option.t_ramp, r_out=option.r_out)
    if i_inrush is None:
        warn.append("start-up inrush into c_out is bounded only by the module's own current limit "
                    "(t_ramp = 0 and r_out = 0), which the option does not give")
    t_end = 1.2 * max(t_uvlo or 0.0, option.t_start + option.t_ramp + 5.0 * tau)
    t_su = np.linspace(0.0, t_end if t_end > 0 else 1e-6, 400)
    v_su = startup_voltage(t_su, v_final=v_pre, t_start=option.t_start, t_ramp=option.t_ramp, tau=tau)
    return Startup(t_uvlo=t_uvlo, cycles_uvlo=cycles, i_peak=i_inrush, v_dd_dip=None, t=t_su, v=v_su), tau


def _stress(design: Design, option: IsolatedOption, sched: Schedule, out: _OutputRail, i_inrush,
            warn: list) -> tuple[CapacitorStress, float]:
    """Stress of c_out: (CapacitorStress, the gate-charge pulse current [A]).

    The gate charge is assumed to leave c_out within one switch-node edge time (t_edge): a
    rectangular pulse of height Q/t_edge (assumption, stated in the details).
    """
    rail, q_on = out.rail, out.q_on
    n_on = int(np.count_nonzero(sched.hs_turn_on))
    i_pulse = q_on / design.bridge.t_edge if n_on else 0.0
    i_rms = math.sqrt(rail.i_rms_recharge ** 2 + n_on * q_on * i_pulse / sched.period)
    i_peak = max(i_pulse, rail.i_peak_recharge, i_inrush or 0.0)
    stress = CapacitorStress(name="c_out", c_eff=out.c_eff, v_max=out.v_max, v_rating=out.cap.v_rating,
                             ripple=rail.max - rail.min, i_rms=i_rms, i_peak=i_peak)
    if option.r_out == 0.0:
        warn.append("r_out = 0: the module is taken as an ideal source that refills c_out at once; the dip "
                    "Q/C_out at each turn-on is kept, the recharge current is not modelled")
    return stress, i_pulse


def _barrier(option: IsolatedOption, sched: Schedule, v_max: float, warn: list) -> float:
    """Peak voltage across the isolation barrier [V]: the secondary's top rail against primary ground."""
    v_barrier = float(np.max(sched.v_sw)) + v_max
    if option.v_iso < ISO_HEADROOM * v_barrier:
        warn.append(f"isolation working voltage {option.v_iso:.4g} V is below {ISO_HEADROOM:g} \u00d7 the "
                    f"peak {v_barrier:.4g} V across the barrier (bus plus rail); edge overshoot is not modelled")
    return v_barrier


def _checks(design: Design, option: IsolatedOption, out: _OutputRail, power: _IsolatedPower, v_barrier: float,
            warn: list) -> list:
    """The shared checks (rail, start-up, capacitor) and the module's own (rating, CMTI, isolation)."""
    drv, chk, v_max, dv_dt = design.driver, design.checks, out.v_max, power.dv_dt
    checks = [
        rail_min_check(design, out.rail.min),
        startup_uvlo_check(design, out.v_pre, f"the module's output before the PWM starts reaches the UVLO "
                                              f"rising threshold {drv.uvlo_on:.4g} V (else the driver never "
                                              f"releases its pulses)"),
        rail_max_v_gs_check(design, v_max),
        rail_max_v_bs_check(design, v_max),
        Check("load_rating", power.p_load, option.p_rated, "max", "W",
              f"gate load stays within the module's rating p_rated = {option.p_rated:.4g} W (overload otherwise)"),
        Check("cmti", option.cmti, float(cm.cmti_required(dv_dt, chk.cmti_margin)), "min", "V/s",
              f"driver CMTI is at least {chk.cmti_margin:g} \u00d7 the switch-node dv/dt {dv_dt:.4g} V/s"),
        Check("v_iso", option.v_iso, v_barrier, "min", "V",
              f"isolation working voltage covers the peak {v_barrier:.4g} V across the barrier"),
    ]
    cap_check = cap_voltage_check(design, "c_out", v_max, out.cap.v_rating)
    if cap_check is not None:
        checks.append(cap_check)
    else:
        warn.append("c_out has no voltage rating; its voltage stress is not checked")
    return checks


def _details(design: Design, option: IsolatedOption, power: _IsolatedPower, out: _OutputRail, v_barrier: float,
             tau: float, i_pulse: float, corner: str) -> IsolatedDetails:
    """The module's own figures (:class:`~explorer.options.details.IsolatedDetails`)."""
    k, p_load, p_in, dv_dt = power.k, power.p_load, power.p_in, power.dv_dt
    v_in = option.v_in if option.v_in is not None else design.aux.v_dd
    return IsolatedDetails(
        loss_k=k, p_optimum=float(optimum_load(option.p_no_load, k)), eta_module=power.eta_mod,
        load_fraction=p_load / option.p_rated, p_in_module=p_in, v_in=v_in, i_in=p_in / v_in,
        dv_dt=dv_dt, i_cm_peak=power.i_cm, q_cm_edge=power.q_cm, p_cm=power.p_cm, p_cm_gross=power.edges.gross, v_barrier=v_barrier,
        cmti_ratio=float(cm.cmti_ratio(option.cmti, dv_dt)), tau_out=tau, v_pre_pwm=out.v_pre,
        i_gate_pulse=i_pulse, gate_pulse_width=design.bridge.t_edge, corner=corner,
        insulation=INSULATION_STATEMENT)


def evaluate_option(design: Design, option: IsolatedOption, *, corner: str = "nominal") -> OptionResult:
    """Evaluate an isolated-supply option of a design.

    Parameters
    ----------
    design : Design
        The whole design (bridge, gate, driver, aux, checks).
    option : IsolatedOption
        The option to evaluate (``kind == "isolated"``).
    corner : {"nominal", "min", "max"}
        Capacitance corner of ``c_out`` (:func:`explorer.capacitors.capacitance`).

    Returns
    -------
    OptionResult
        Rail statistics, efficiency and power split, start-up, duty limits,
        capacitor stress, checks and warnings; ``details`` holds the loss-model
        coefficient, the optimum load, the module efficiency and the
        common-mode figures (``dv_dt`` [V/s], ``i_cm_peak`` [A],
        ``q_cm_edge`` [C], ``p_cm`` [W], ``v_barrier`` [V]).

    Raises
    ------
    DesignError
        For an option that is not isolated or an unknown corner.

    Warns
    -----
    ModelValidityWarning
        When the load exceeds ``p_rated`` (the loss model is extrapolated).

    Notes
    -----
    One step per part of the result: the steady rail (:func:`_steady_rail`), power (:func:`_power`),
    start-up (:func:`_startup`), stress (:func:`_stress`), the barrier (:func:`_barrier`), duty limits
    (:func:`_rating_limits`), checks and details.

    Examples
    --------
    >>> from explorer import demo_design
    >>> d = demo_design()
    >>> r = evaluate_option(d, d.option("isolated 1 W"))
    >>> r.feasible, round(r.v_rail.mean, 2)
    (True, 11.99)
    """
    if not isinstance(option, IsolatedOption):
        raise DesignError("option", "the isolated model needs an option of kind 'isolated'",
                          getattr(option, "kind", option))
    path = _option_path(design, option)
    warn: list[str] = []
    sched = period_schedule(design)
    out = _steady_rail(design, option, sched, path, corner, warn)
    power = _power(design, option, sched, out, path)
    startup, tau = _startup(design, option, out, warn)
    stress, i_pulse = _stress(design, option, sched, out, startup.i_peak, warn)
    v_barrier = _barrier(option, sched, out.v_max, warn)
    checks = _checks(design, option, out, power, v_barrier, warn)
    feasible, verdict = verdict_from(checks, warn)
    rail = out.rail
    return OptionResult(
        label=option.label, kind=option.kind, feasible=feasible, verdict=verdict, warnings=tuple(warn),
        v_rail=RailStats(min=rail.min, max=rail.max, mean=rail.mean), efficiency=power.efficiency,
        p_delivered=power.p_load, p_drawn=power.p_drawn, startup=startup,
        # any HS duty while the module's rail meets the requirement (it needs no refresh); none when not
        duty=DutyLimits(min=0.0 if rail.min >= required_rail(design) else None,
                        max=1.0 if rail.min >= required_rail(design) else None, hold_up=None, t_ls_min=None,
                        topology=_rating_limits(design, sched, option)),
        r_out=option.r_out, capacitors=(stress,), p_drawn_aux=power.p_in, p_drawn_bus=power.p_cm,
        losses=power.losses, checks=tuple(checks),
        details=_details(design, option, power, out, v_barrier, tau, i_pulse, corner),
        cautions=(INSULATION_STATEMENT,), assumptions=(cm.edge_words("isolation capacitance c_iso", power.edges),),
        t=out.t_wave, v=out.v_wave)


#: Samples per block in :func:`rail_min_batch`.
_BATCH = 512


def rail_min_batch(design: Design, option: IsolatedOption, factors) -> np.ndarray:
    """Steady-state rail minimum for many spread samples at once [V].

    ``factors`` is a :class:`explorer.tolerance.Factors` of equal-length arrays.
    Each sample is exactly what :func:`evaluate_option` computes for the design
    perturbed by :func:`explorer.tolerance.apply_factors` (capacitance ×
    ``k_c`` with the DC-bias factor, gate charge × ``q_g``, quiescent × ``i_q``,
    and, for a module without output regulation, its output × ``v_dd`` with its
    input rail); a regulated module's output does not follow its input. A collapsing rail reads 0 V,
    as in :func:`evaluate_option`.
    """
    cap = option.c_out
    sched = period_schedule(design)
    k_c = np.atleast_1d(np.asarray(factors.k_c, dtype=float))
    n = k_c.size
    q_g = np.broadcast_to(np.asarray(factors.q_g, dtype=float), (n,))
    i_q = np.broadcast_to(np.asarray(factors.i_q, dtype=float), (n,))
    k_in = (np.broadcast_to(np.asarray(factors.v_dd, dtype=float), (n,)) if option.v_in_rated is not None
            else np.ones(n))
    v_src = module_output(design, option) * k_in
    c_eff = capacitance(cap.c * k_c, v_applied=v_src, v_rating=cap.v_rating, dc_bias=cap.dc_bias)
    q_on = design.gate.q_g * q_g + design.driver.q_ls
    out = np.empty(n)
    for a in range(0, n, _BATCH):  # blocks keep the (samples × intervals) arrays in cache
        j = slice(a, a + _BATCH)
        out[j] = output_rail_min(sched.dt, sched.hs_on, sched.hs_turn_on, v_src=v_src[j], r_out=option.r_out,
                                 c_out=np.asarray(c_eff, dtype=float)[j], q_pulse=q_on[j],
                                 i_q=design.driver.i_q * i_q[j], r_gs=design.gate.r_gs,
                                 q_off=charge_per_turn_off(design))
    return np.maximum(out, 0.0)  # a collapsing rail reads 0 V, as in evaluate_option


#: Design points per block in :func:`rail_min_map`.
_MAP_BLOCK = 8192


def rail_min_map(design: Design, option: IsolatedOption, f_sw, duty, *, corner: str = "nominal") -> np.ndarray:
    """Steady-state rail minimum over a grid of switching frequency × HS duty [V].

    Each point is one switching period with the HS on for ``duty``·T, laid out by the schedule's slot
    rules (:func:`explorer.schedule.slot_layout`, as the other models' maps), held for ever (the
    standstill case of a three-phase leg): the periodic orbit of :func:`output_rail` for every point
    at once (:func:`output_rail_min` over intervals of one period per point). A collapsing rail reads
    0 V, as in :func:`evaluate_option`.

    Parameters
    ----------
    f_sw : array_like [Hz]
    duty : array_like [-]
        HS on-time share of the period, 0…1; broadcasts with ``f_sw``.

    Examples
    --------
    >>> from explorer import demo_design
    >>> d = demo_design()
    >>> rail_min_map(d, d.options[4], [100e3, 200e3], [[0.5], [0.9]]).shape
    (2, 2)
    """
    if not isinstance(option, IsolatedOption):
        raise DesignError("option", "the isolated model needs an option of kind 'isolated'",
                          getattr(option, "kind", option))
    b, drv = design.bridge, design.driver
    v_src = module_output(design, option)
    c_eff = _c_out_eff(option, v_src, corner, _option_path(design, option))
    shape = np.broadcast(f_sw, duty).shape
    f_flat = np.broadcast_to(np.asarray(f_sw, dtype=float), shape).ravel()
    h_flat = np.broadcast_to(np.asarray(duty, dtype=float), shape).ravel()
    out = np.empty(f_flat.size)
    for a in range(0, f_flat.size, _MAP_BLOCK):
        dt, on, turn_on, _ = map_periods(b, drv, f_flat[a:a + _MAP_BLOCK], h_flat[a:a + _MAP_BLOCK])
        out[a:a + _MAP_BLOCK] = output_rail_min(dt, on, turn_on, v_src=v_src, r_out=option.r_out, c_out=c_eff,
                                                q_pulse=charge_per_turn_on(design), i_q=drv.i_q,
                                                r_gs=design.gate.r_gs, q_off=charge_per_turn_off(design))
    return np.maximum(out, 0.0).reshape(shape)


# --------------------------------------------------------------------------- the family's model

class IsolatedModel(SupplyModel):
    """The isolated-module family for the registry (:mod:`explorer.options.base`)."""

    kind = "isolated"
    option_class = IsolatedOption
    capacitor_fields = ("c_out",)
    netlist_probes = {"cap": "v(vb)-v(co)", "i_cm": "i(vcm)"}

    evaluate = staticmethod(evaluate_option)
    rail_min_batch = staticmethod(rail_min_batch)
    rail_min_map = staticmethod(rail_min_map)

    def apply_factors(self, design, option, factors):
        """C_out × ``k_c`` (class applied); the module's own input rail × ``v_dd``."""
        option = super().apply_factors(design, option, factors)
        return dataclasses.replace(option, v_in=None if option.v_in is None else option.v_in * factors.v_dd)

    def spread_ranges(self, design, option) -> dict:
        """A regulated module does not follow its input rail (one without regulation does)."""
        out = super().spread_ranges(design, option)
        if option.v_in_rated is None:
            out["v_dd"] = (1.0, 1.0)
        return out

    def netlist_settle_time(self, design, option, result, corner):
        from ..netlist import SETTLE_TAU
        return SETTLE_TAU * result.details.tau_out

    def netlist_lines(self, design, option, plan, corner):
        from ..netlist import isolated_lines
        return isolated_lines(design, option, plan)


MODEL = IsolatedModel()
