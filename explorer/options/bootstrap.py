"""Bootstrap floating supply: V_DD → R → diode → C_boot between V_B and V_S.

While the switch node (SW) is low the capacitor charges through the resistor
and the diode toward ``V_DD − V_F − v_sw``; the diode cuts off when the
capacitor reaches that level (handled exactly, also after a negative SW
undershoot has lifted the rail above it). While SW is high the capacitor
feeds the high-side driver: Q_G + Q_LS at each HS turn-on and Q_LS at each turn-off, the driver's
quiescent current continuously, V/R_GS while the HS is on, and the
junction-capacitance charge C_j·Δv_sw at every SW level change (it returns at
the falling edge, so it costs energy but no net charge). The diode's reverse
leakage flows while it is reverse-biased and its recovery charge is taken where
it becomes so: where SW + the required rail reaches V_DD (for every rail the design
accepts the diode is then reverse-biased; with a bus below V_DD too, while SW is high:
:func:`reverse_biased`).

The exact per-interval maps and their composition live in
:mod:`explorer.engines` (rail_*); this module turns a design and an option
into intervals and derives every figure of :class:`~explorer.results.OptionResult`.

Public functions
----------------
evaluate_option(design, option, corner="nominal")
    The whole result (steady state, start-up, duty limits, stress, power, checks).
bootstrap_circuit(design, option, corner="nominal")
    The option's loop parameters at a corner (effective C, resistances, diode).
schedule_loop(circuit, dt, v_sw, hs_on, ...)
    The :class:`~explorer.engines.rail_loop.Loop` of any interval arrays.
steady_state(design, option, corner="nominal")
    Periodic orbit over :func:`~explorer.schedule.period_schedule`.
startup(design, option, corner="nominal")
    Start-up from 0 V with HS pulses withheld until UVLO-on.
rail_min_map(design, option, f_sw, duty, corner="nominal")
    Vectorised steady-state rail minimum over a grid of f_sw × HS duty
    (one call of :func:`explorer.engines.rail_orbit.steady_rail`; more than 10⁶
    points per second). Its values equal ``evaluate_option``'s rail minimum to
    1e-12 relative at the operating point.

Assumptions (each stated where it is used): UVLO is sampled at interval
boundaries; a withheld HS pulse leaves SW where the topology holds it
(:func:`explorer.topology.hold_level`: a buck's starting output, a boost's input,
a line leg's bus, else the dead-time level; reported as ``startup_sw_hold``); the gate charge is
drawn over the switch-node edge time ``t_edge`` for the RMS and peak current
(common practice, no source); the diode's recovery charge is taken at every
rise of SW to V_DD or above, whether or not the diode conducted before
(conservative); the DC-bias factor of the capacitor is taken at the charge
target ``V_DD − V_F − v_sw_low``.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from dataclasses import dataclass

import numpy as np

from ..capacitors import capacitance, parse_dielectric
from ..common_mode import capacitive_edge_power, cmti_check, edge_words
from ..design import BootstrapOption, Design, JunctionDiode, LinearDiode
from ..engines.rail_integrals import crossing_time, interval_integrals
from ..engines.rail_junction import junction_current
from ..engines.rail_linear import off_time_to
from ..engines.rail_loop import Loop, broadcast_as, full_as, loop_fields, map_loop, take_loop, thermal_voltage
from ..engines.rail_orbit import OrbitSolution, propagate, solve_orbit, steady_rail
from ..errors import DesignError, ModelValidityWarning
from ..loads import charge_per_turn_off, charge_per_turn_on, required_rail
from ..results import (CapacitorStress, Check, DutyLimits, OptionResult, RailStats, Startup, cap_voltage_check,
                       rail_max_v_bs_check, rail_max_v_gs_check, rail_min_check, startup_uvlo_check, verdict_from)
from ..schedule import (QUASI_STATIC_PERIODS, Schedule, longest_run, ls_dropped, hs_duty_per_period, is_standstill,
                        nominal_duty, period_schedule, periods_per_fundamental, previous, slot_layout,
                        startup_schedule)
from ..topology import analysis_frequency, light_load, peak_span, topology_of
from .details import BootstrapDetails
from .base import SupplyModel

__all__ = ["BootstrapCircuit", "bootstrap_circuit", "LoopMasks", "loop_masks", "schedule_loop", "steady_state",
           "startup", "StartupSolution", "rail_min_map", "duty_slots", "evaluate_option",
           "DUTY_GRID"]

#: Points of the first duty sweep of the duty-limit search (then refined by bisection rounds).
DUTY_GRID = 64
#: Newton tolerance of the start-up trajectory (relative; the steady state uses 1e-13).
STARTUP_TOL = 1e-9
#: Common practice, no source: aux decoupling at least ten times the bootstrap capacitor.
C_DD_RATIO = 10.0


# --------------------------------------------------------------------------- circuit

@dataclass(frozen=True)
class BootstrapCircuit:
    """Loop parameters of one bootstrap option at one corner (SI units).

    Attributes
    ----------
    c : float [F]        effective capacitance (nominal × tolerance × class × DC bias)
    r_ext : float [Ω]    resistance outside the diode: r + esr
    r_tot : float [Ω]    whole loop resistance: r_ext + r_d (or r_s)
    diode : str          "linear" or "junction"
    v_f : float [V]      straight-line knee (0 for the junction)
    i_s, n_vt : float    junction saturation current [A] and n·V_T [V]
    v_dd : float [V]     aux rail
    i_q : float [A]      driver quiescent current
    i_leak : float [A]   diode reverse leakage while it is reverse-biased (:func:`reverse_biased`)
    g_gs : float [S]     1/R_GS while the HS is on (0 without a pull-down)
    q_on : float [C]     Q_G + Q_LS at each HS turn-on
    q_off : float [C]    Q_LS at each HS turn-off (the level shifter's reset pulse)
    v_clamp : float or None [V]  clamp (Zener) across C_boot: the rail is held at it once it gets there
                                 (:class:`~explorer.engines.rail_loop.Loop`)
    q_rr : float [C]     recovery charge where the diode becomes reverse-biased
    c_j : float [F]      diode junction capacitance
    v_bus : float [V]
    v_sw_low : float [V] SW level while the LS conducts (and during a withheld HS pulse)
    v_bias : float [V]   DC voltage used for the DC-bias factor
    v_hold : float [V]   the lowest rail the design accepts (:func:`~explorer.loads.required_rail`), the
                         rail :func:`reverse_biased` presumes
    """

    c: float
    r_ext: float
    r_tot: float
    diode: str
    v_f: float
    i_s: float
    n_vt: float
    v_dd: float
    i_q: float
    i_leak: float
    g_gs: float
    q_on: float
    q_rr: float
    c_j: float
    v_bus: float
    v_sw_low: float
    v_bias: float
    q_off: float = 0.0
    v_clamp: float | None = None
    v_hold: float = 0.0

    def drop(self, i):
        """Diode forward voltage at current ``i`` [V] (straight line or junction)."""
        i = np.asarray(i, dtype=float)
        if self.diode == "linear":
            return self.v_f + (self.r_tot - self.r_ext) * i
        return self.n_vt * np.log1p(i / self.i_s) + (self.r_tot - self.r_ext) * i


def bootstrap_circuit(design: Design, option: BootstrapOption, corner: str = "nominal") -> BootstrapCircuit:
    """The option's loop at a capacitance corner.

    Parameters
    ----------
    design : Design
    option : BootstrapOption
    corner : {"nominal", "min", "max"}
        Capacitance corner of :func:`explorer.capacitors.capacitance` (EIA-198
        class envelope and tolerance).

    The DC-bias factor is taken at the charge target V_DD − V_F − v_sw_low,
    with V_F the diode drop at the driver's quiescent current.
    """
    d = option.diode
    b = design.bridge
    v_dd = design.aux.v_dd
    r_ext = option.r + option.esr
    if isinstance(d, JunctionDiode):
        n_vt = d.n * thermal_voltage(design.checks.t_amb)
        kind, v_f, i_s, r_d = "junction", 0.0, d.i_s, d.r_s
        drop = n_vt * math.log1p(design.driver.i_q / d.i_s) + d.r_s * design.driver.i_q
    else:
        n_vt, kind, v_f, i_s, r_d = 0.025, "linear", d.v_f, 1e-14, d.r_d
        drop = d.v_f
    r_tot = r_ext + r_d
    if r_tot <= 0.0:
        raise DesignError(f"options[{design.options.index(option)}].r",
                          "the loop needs some resistance: r + esr + the diode's slope resistance must be > 0",
                          option.r)
    v_bias = max(v_dd - b.v_sw_low - drop, 0.0)
    c_eff = capacitance(option.c, c_tol=option.c_tol, dielectric=parse_dielectric(option.dielectric),
                        v_applied=v_bias, v_rating=option.v_rating, dc_bias=option.dc_bias, corner=corner)
    g_gs = 0.0 if design.gate.r_gs is None else 1.0 / design.gate.r_gs
    return BootstrapCircuit(c=float(c_eff), r_ext=r_ext, r_tot=r_tot, diode=kind, v_f=v_f, i_s=i_s,
                            n_vt=n_vt, v_dd=v_dd, i_q=design.driver.i_q, i_leak=option.i_leak, g_gs=g_gs,
                            q_on=charge_per_turn_on(design), q_off=charge_per_turn_off(design),
                            v_clamp=option.v_clamp,
                            q_rr=option.q_rr, c_j=option.c_j,
                            v_bus=b.v_bus, v_sw_low=b.v_sw_low, v_bias=v_bias, v_hold=required_rail(design))


# --------------------------------------------------------------------------- loops

def ffill_levels(dt, v_sw, hs_on, periodic: bool, v_prev0: float, hs_prev0: bool):
    """Level and HS state of the previous interval of non-zero length (zero-length ones are skipped)."""
    n = dt.shape[-1]
    v_sw = broadcast_as(v_sw, dt.shape, float)
    hs_on = broadcast_as(hs_on, dt.shape, bool)
    zero = dt <= 0
    if zero.any():
        # zero-length intervals inherit the state of the nearest earlier live interval (cyclically when
        # periodic, else the state before the first): an index forward fill, no loop over intervals
        idx = np.where(zero, -1, np.arange(n))
        last = np.maximum.accumulate(idx, axis=-1)
        if periodic:
            wrap = last[..., -1:]
            last = np.where(last < 0, np.where(wrap < 0, n - 1, wrap), last)
            lev = _take_last(v_sw, last)
            hs = _take_last(hs_on, last)
        else:
            safe = np.maximum(last, 0)
            lev = np.where(last < 0, v_prev0, _take_last(v_sw, safe))
            hs = np.where(last < 0, hs_prev0, _take_last(hs_on, safe))
    else:
        lev, hs = np.array(v_sw, dtype=float), hs_on
    prev_l = previous(lev, None if periodic else v_prev0)
    prev_h = previous(hs, None if periodic else hs_prev0)
    return lev, prev_l, prev_h


def _take_last(a: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """``np.take_along_axis(a, idx, axis=-1)`` for ``idx`` shaped like ``a`` (one fancy index, rows × columns)."""
    if a.ndim == 1:
        return a[idx]
    n = a.shape[-1]
    a2 = a.reshape(-1, n)
    return a2[np.arange(a2.shape[0])[:, None], idx.reshape(-1, n)].reshape(idx.shape)


def reverse_biased(lev, prev_l, live, v_dd, v_hold=0.0):
    """Where the diode is reverse-biased for every rail the design accepts, and where it becomes so.

    The diode's reverse voltage is V_B − V_DD = v_sw + v − V_DD (Kirchhoff's voltage law around V_DD,
    the diode, C_boot and the switch node). For a rail v ≥ ``v_hold`` (the lowest rail the design
    accepts, :func:`~explorer.loads.required_rail`) it is at least v_sw + v_hold − V_DD, so the diode
    is reverse-biased throughout an interval whose switch-node level is at or above V_DD − v_hold:
    the SW-high intervals of a bus at or above V_DD, and those of a bus below V_DD down to
    V_DD − v_hold. Where the rail holds its requirement the rule is exact; where the steady orbit shows
    it does not, :func:`steady_state` solves again with ``v_hold = 0`` (the design then fails its rail
    check anyway). In a start-up from 0 V the leakage it counts is conservative. Below that
    level the diode is taken as neither leaking nor recovering: it is forward-biased or in its dead
    band for a rail near its charge target, and refreshes the rail while SW is high when the rail
    falls below V_DD − v_sw − V_F. ``v_hold = 0`` gives the rule for any non-negative rail.

    Parameters
    ----------
    lev, prev_l : arrays [V]   level of each interval and of the one before (:func:`ffill_levels`)
    live : array of bool       intervals of non-zero length
    v_dd : float or array [V]  aux rail (the diode's anode side)
    v_hold : float [V]         the lowest rail presumed (default 0 V)

    Returns
    -------
    rev : array of bool        reverse-biased intervals (leakage flows from V_B back to V_DD)
    onset : array of bool      live intervals where it starts (the recovery charge is swept out)
    """
    edge = v_dd - v_hold
    rev = lev >= edge
    onset = live & rev & ~(prev_l >= edge)
    return rev, onset


@dataclass(frozen=True)
class LoopMasks:
    """Where each interval stands (arrays shaped like the interval durations).

    ``lev``/``prev_l`` the switch-node level of the interval and of the live one before [V],
    ``prev_h`` the HS state before, ``live`` the intervals of non-zero length, ``rev``/``onset`` where
    the diode is reverse-biased and where that starts (:func:`reverse_biased`).
    """

    lev: np.ndarray
    prev_l: np.ndarray
    prev_h: np.ndarray
    live: np.ndarray
    rev: np.ndarray
    onset: np.ndarray


def loop_masks(circ: BootstrapCircuit, dt, v_sw, hs_on, *, periodic: bool, v_prev0: float | None = None,
               hs_prev0: bool = False) -> LoopMasks:
    """The interval masks :func:`schedule_loop` builds its loop from (one place for the rule, so the
    loss split reads the same reverse-biased intervals the loop counted)."""
    v_prev0 = circ.v_sw_low if v_prev0 is None else v_prev0
    lev, prev_l, prev_h = ffill_levels(dt, v_sw, hs_on, periodic, v_prev0, hs_prev0)
    live = dt > 0
    rev, onset = reverse_biased(lev, prev_l, live, circ.v_dd, circ.v_hold)
    return LoopMasks(lev=lev, prev_l=prev_l, prev_h=prev_h, live=live, rev=rev, onset=onset)


def schedule_loop(circ: BootstrapCircuit, dt, v_sw, hs_on, *, periodic: bool,
                  v_prev0: float | None = None, hs_prev0: bool = False, masks: LoopMasks | None = None) -> Loop:
    """The interval loop of the bootstrap for interval arrays shaped ``(..., n)``.

    Parameters
    ----------
    circ : BootstrapCircuit
    dt : array [s]
        Interval durations (zero-length intervals are allowed and act as nothing).
    v_sw : array [V]
        Switch-node level per interval.
    hs_on : array of bool
        HS gate on (a delivered pulse; withheld pulses must already be at ``v_sw_low``).
    periodic : bool
        The last interval precedes the first (steady state) or not (start-up).
    v_prev0, hs_prev0 :
        SW level and HS state before the first interval when not periodic
        (default: ``v_sw_low`` and off).
    masks : LoopMasks, optional
        :func:`loop_masks` of the same arguments, when already at hand.

    Returns
    -------
    Loop
        Charge removed at each interval start: Q_G + Q_LS at an HS turn-on,
        Q_rr where the diode becomes reverse-biased (:func:`reverse_biased`), C_j·Δv_sw at every SW level change. Load: I_Q
        always, i_leak while the diode is reverse-biased, 1/R_GS while the HS is on.
    """
    dt = np.asarray(dt, dtype=float)
    v_sw = broadcast_as(v_sw, dt.shape, float)
    hs_on = broadcast_as(hs_on, dt.shape, bool)
    m = masks or loop_masks(circ, dt, v_sw, hs_on, periodic=periodic, v_prev0=v_prev0, hs_prev0=hs_prev0)
    lev, prev_l = m.lev, m.prev_l
    turn_on = m.live & hs_on & ~m.prev_h
    turn_off = m.live & ~hs_on & m.prev_h
    q = (circ.q_on * turn_on + circ.q_off * turn_off + circ.q_rr * m.onset + circ.c_j * (lev - prev_l))
    # the reset pulse is drawn on the turn-off command, while SW is still high; C_j hands its charge back
    # only as SW falls, so the rail first dips by Q_off/C (the step's net charge is the same either way)
    q_lead = circ.q_off * turn_off if circ.q_off > 0.0 and circ.c_j > 0.0 else None
    i_load = circ.i_q + circ.i_leak * m.rev
    g_load = circ.g_gs * hs_on
    v_src = circ.v_dd - v_sw
    return Loop(dt=dt, v_src=v_src, c=circ.c, r=circ.r_tot, i_load=i_load, g_load=g_load,
                q_step=q, v_f=circ.v_f, i_s=circ.i_s, n_vt=circ.n_vt, diode=circ.diode, v_clamp=circ.v_clamp,
                q_lead=q_lead)


def _schedule_arrays(s: Schedule):
    return s.dt, s.v_sw, s.hs_on


# --------------------------------------------------------------------------- steady state

@dataclass(frozen=True)
class SteadyState:
    """Periodic orbit of the rail over the analysis period (see :class:`OrbitSolution`)."""

    schedule: Schedule
    loop: Loop
    orbit: OrbitSolution
    integrals: dict
    circuit: BootstrapCircuit  # the circuit solved (its v_hold: the rail reverse_biased presumed)
    masks: LoopMasks  # the loop's interval masks (reverse-biased intervals and their onsets)

    @property
    def t(self) -> np.ndarray:
        return self.schedule.t_start

    def charge_balance(self) -> tuple[float, float]:
        """Charge the diode delivers and the charge the loads take over the period [C], [C].

        Loads: the steps (gate + level shift, recovery, junction capacitance),
        the constant currents, the pull-down conductance times ∫V dt and a clamp's charge.
        In a periodic steady state the two are equal (conservation of charge).
        """
        ints = self.integrals
        q_in = float(np.sum(ints["q_d"]))
        q_out = (float(np.sum(self.loop.q_step)) + float(np.sum(self.loop.i_load * self.schedule.dt))
                 + float(np.sum(self.loop.g_load * ints["int_v"])) + float(np.sum(ints.get("q_clamp", 0.0))))
        return q_in, q_out


def steady_state(design: Design, option: BootstrapOption, corner: str = "nominal",
                 circ: BootstrapCircuit | None = None) -> SteadyState:
    """Periodic steady state over :func:`~explorer.schedule.period_schedule` (exact; see the engine)."""
    circ = circ or bootstrap_circuit(design, option, corner)
    s = period_schedule(design)
    masks = loop_masks(circ, s.dt, s.v_sw, s.hs_on, periodic=True)
    loop = schedule_loop(circ, s.dt, s.v_sw, s.hs_on, periodic=True, masks=masks)
    lp = _bc(loop)  # the same loop broadcast, for the solver and the integrals
    orb = solve_orbit(lp)
    if not _presumption_holds(circ, masks, orb):
        circ = dataclasses.replace(circ, v_hold=0.0)
        masks = loop_masks(circ, s.dt, s.v_sw, s.hs_on, periodic=True)
        loop = schedule_loop(circ, s.dt, s.v_sw, s.hs_on, periodic=True, masks=masks)
        lp = _bc(loop)
        orb = solve_orbit(lp)
    if not orb.converged:
        warnings.warn("bootstrap steady state: the orbit iteration did not converge; figures are approximate",
                      ModelValidityWarning, stacklevel=2)
    ints = (interval_integrals(post_step(orb, loop), lp, r_ext=circ.r_ext) if np.isfinite(orb.v_start).all()
            else {})
    return SteadyState(s, loop, orb, ints, circ, masks)


def post_step(orb: OrbitSolution, loop: Loop) -> np.ndarray:
    """The rail just after each interval's charge step, before a clamp acts on it [V]: ``orb.v_start``
    without a clamp; with one, V_pre − q/C (a step that would end above the clamp hands it the excess,
    which the interval integrals count as the clamp's)."""
    return orb.v_start if loop.v_clamp is None else orb.v_pre - loop.q_step / loop.c


def orbit_contraction(ss: SteadyState) -> float:
    """How much of a deviation from the steady orbit survives one analysis period [-].

    The product of the interval maps' slopes dv_end/dv_start at the orbit (the charge steps shift a
    map, they do not change its slope): ρ = Π_k s_k, so a rail δ off the orbit is ρ·δ off one period
    later and settles with e-fold time T/(−ln ρ). At most 1 (the maps are contractions); NaN when the
    orbit has no finite solution (a rail never refreshed).
    """
    from ..engines.rail_orbit import interval_map
    v0 = ss.orbit.v_start
    if not np.all(np.isfinite(v0)):
        return math.nan
    _, slope = interval_map(v0, _bc(ss.loop))
    return float(np.prod(np.where(ss.loop.dt > 0, slope, 1.0)))


def _presumption_holds(circ: BootstrapCircuit, m: LoopMasks, orb) -> bool:
    """Whether the orbit bears out the rail :func:`reverse_biased` presumed (``circ.v_hold``).

    The rule counts an interval reverse-biased where V_SW + v_hold ≥ V_DD. The orbit says whether
    it is: the diode's reverse voltage V_SW + v − V_DD at the interval's lowest rail (its start after
    the charge step, or its end) is ≥ 0. Where it is not, the rail has fallen below v_hold, so the
    design fails its rail check anyway; :func:`steady_state` then solves again under the rule for
    any non-negative rail (v_hold = 0: reverse-biased only where V_SW ≥ V_DD, true for every rail
    ≥ 0), which keeps the loss split's leakage and recovery terms consistent and ≥ 0. Over a batch of
    orbits (a margin map) the answer is one per orbit.
    """
    if circ.v_hold <= 0.0 or (np.all(circ.i_leak <= 0.0) and np.all(circ.q_rr <= 0.0)):
        return np.True_
    finite = np.isfinite(orb.v_start).all(axis=-1) & np.isfinite(orb.v_end).all(axis=-1)
    low = np.minimum(orb.v_start, orb.v_end)
    return finite & ~(m.rev & m.live & (m.lev + low < circ.v_dd)).any(axis=-1)


def _bc(loop: Loop) -> Loop:
    from ..engines.rail_loop import broadcast_loop
    return broadcast_loop(loop)


# --------------------------------------------------------------------------- start-up

@dataclass(frozen=True)
class StartupSolution:
    """Start-up trajectory at the interval boundaries.

    Attributes
    ----------
    schedule : Schedule
    v_pre, v_start, v_end : ndarray [V]
        Rail before and after each interval's step, and at its end.
    delivered : ndarray of bool
        HS actually on in the interval (pulses withheld below UVLO are False).
    i_start : ndarray [A]
        Diode current at each interval start.
    t_uvlo : float or None [s]
    k_uvlo : int or None
        Interval in which the rail first reaches UVLO-on.
    segments : int
        Pieces solved between UVLO events.
    k_settled : int or None
        First interval of the settled tail (from there on the trajectory is the
        periodic orbit of the schedule's repeating pattern, to the start-up
        tolerance); None where the tail was solved interval by interval.
    """

    schedule: Schedule
    v_pre: np.ndarray
    v_start: np.ndarray
    v_end: np.ndarray
    delivered: np.ndarray
    i_start: np.ndarray
    t_uvlo: float | None
    k_uvlo: int | None
    segments: int
    k_settled: int | None = None


def startup(design: Design, option: BootstrapOption, corner: str = "nominal",
            circ: BootstrapCircuit | None = None, n_cycles: int | None = None,
            steady: SteadyState | None = None) -> StartupSolution:
    """Start-up from 0 V through :func:`~explorer.schedule.startup_schedule`.

    HS pulses are withheld (SW rests at the schedule's ``v_hold``, the topology's rule) while the driver is in
    UVLO: from the start until the rail first reaches ``uvlo_on``, and again
    after it falls below ``uvlo_off`` until it is back at ``uvlo_on``. UVLO is
    sampled at interval boundaries (a pulse is delivered or withheld whole).

    Between UVLO events the intervals are solved together (affine prefix scan
    for the straight-line diode, Newton on the trajectory where cut-off
    crossings or the junction diode make them nonlinear), in windows that
    double in length, so the work is sequential only from one event to the next.

    Settled tail: where the schedule repeats one pattern to its end (after the
    soft-start ramp), the periodic orbit of that pattern is solved once; when
    the trajectory reaches it to within the start-up tolerance at a pattern
    boundary, with the UVLO state held and the orbit clear of the UVLO
    thresholds, the rest of the trajectory is that orbit repeated. Every
    interval map is a contraction (slope in (0, 1]), so the distance to the
    orbit never grows and the result equals the interval-by-interval solution
    to the same tolerance (checked in the tests). ``steady`` (optional, the
    :func:`steady_state` of the same circuit) is used for that orbit where its
    interval loop is the tail pattern's, rotated.
    """
    circ = circ or bootstrap_circuit(design, option, corner)
    s = startup_schedule(design, n_cycles=n_cycles)
    drv = design.driver
    n = len(s)
    v_pre = np.empty(n)
    v_start = np.empty(n)
    v_end = np.empty(n)
    delivered = np.zeros(n, dtype=bool)
    state = np.zeros(n, dtype=bool)  # driver enabled (out of UVLO) in each accepted interval
    p = 0
    v = 0.0
    enabled = False
    prev_l, prev_h = s.v_rest, False
    t_uvlo = None
    k_uvlo = None
    segments = 0
    restarts = 0
    window = 1  # the first intervals one at a time (exact maps) while the driver is held in UVLO
    tail = _periodic_tail(s)
    check = None if tail is None else tail[0] + _SETTLE_PATTERNS * tail[1]  # next settle check
    tail_orbits: dict[bool, OrbitSolution | None] = {}
    k_settled = None
    while p < n:
        q_end = min(n, p + window)
        if check is not None and p < check < q_end:
            q_end = check
        sl = slice(p, q_end)
        pred = _predict_enabled(state, s.cycle, p, q_end, enabled)
        hs = s.hs_on[sl] & pred
        vsw = np.where(s.hs_on[sl] & ~pred, s.v_hold[sl], s.v_sw[sl])
        loop = _bc(schedule_loop(circ, s.dt[sl], vsw, hs, periodic=False, v_prev0=prev_l, hs_prev0=prev_h))
        orb = propagate(loop, v, tol=STARTUP_TOL)
        segments += 1
        # the UVLO rule, sampled at interval boundaries: an enabled driver drops out when the rail is
        # below UVLO-off at either end of an interval (or in the dip of a turn-off's leading charge); a
        # disabled one restarts once it ends at UVLO-on
        nxt = np.where(pred, ~((orb.v_low < drv.uvlo_off) | (orb.v_end < drv.uvlo_off)),
                       orb.v_end >= drv.uvlo_on)
        bad = (nxt[:-1] != pred[1:]).nonzero()[0]
        stop = int(bad[0]) + 1 if bad.size else q_end - p
        k = slice(p, p + stop)
        v_pre[k] = orb.v_pre[:stop]
        v_start[k] = orb.v_start[:stop]
        v_end[k] = orb.v_end[:stop]
        delivered[k] = hs[:stop]
        state[k] = pred[:stop]
        live = (s.dt[p:p + stop] > 0).nonzero()[0]
        if live.size:
            prev_l = float(vsw[live[-1]])
            prev_h = bool(hs[live[-1]])
        v = float(orb.v_end[stop - 1])
        if t_uvlo is None:
            hit = _uvlo_crossing(s, drv.uvlo_on, orb, ~pred[:stop] & nxt[:stop], p, loop)
            if hit is not None:
                t_uvlo, k_uvlo = hit
        enabled = bool(nxt[stop - 1])
        p_new = p + stop
        if check is not None and p_new >= check:
            if enabled not in tail_orbits:
                tail_orbits[enabled] = _tail_orbit(circ, s, tail[0], tail[1], enabled, drv, steady)
            k_settled = _settle(s, tail, tail_orbits[enabled], enabled, p_new,
                                (v_pre, v_start, v_end, delivered, state))
            if k_settled is not None:
                break
            check = tail[0] + 2 * (check - tail[0])
        if bad.size:
            restarts += 1
        window = _next_window(window, bool(bad.size), restarts, stop, enabled, t_uvlo is not None, p_new, n)
        p += stop
    # the diode current depends on the loop's source and diode only, not on its loads and steps
    src = Loop(dt=s.dt, v_src=circ.v_dd - s.sw_levels(delivered), c=circ.c, r=circ.r_tot, v_f=circ.v_f,
               i_s=circ.i_s, n_vt=circ.n_vt, diode=circ.diode)
    i_start = _diode_current(v_start, src, circ)
    return StartupSolution(s, v_pre, v_start, v_end, delivered, i_start, t_uvlo, k_uvlo, segments, k_settled)


def _uvlo_crossing(s: Schedule, uvlo_on: float, orb: OrbitSolution, up: np.ndarray, p: int,
                   loop: Loop) -> tuple[float, int] | None:
    """(t_uvlo [s], interval) of the first interval of a solved piece (starting at interval ``p``, its
    broadcast interval loop ``loop``) in which a driver held in UVLO sees the rail reach UVLO-on (``up``
    marks them), exact within the interval; or None."""
    up = up.nonzero()[0]
    if not up.size:
        return None
    j = int(up[0])
    kk = p + j
    sub = take_loop(loop, slice(j, j + 1))  # the crossing needs the interval's source and loads, not its step
    dtc = crossing_time(orb.v_start[j:j + 1], uvlo_on, sub)[0]
    t_kk = float(np.cumsum(s.dt[:kk])[-1]) if kk else 0.0  # s.t_start[kk], summed over the intervals before only
    return float(t_kk + (dtc if np.isfinite(dtc) else s.dt[kk])), int(kk)


def _settle(s: Schedule, tail: tuple, orb_t: OrbitSolution | None, enabled: bool, p_new: int,
            arrays: tuple) -> int | None:
    """The settled tail: where the trajectory (``arrays`` v_pre, v_start, v_end, delivered, state, solved up to
    ``p_new``) has reached the tail pattern's orbit at its last pattern boundary, with the UVLO state held,
    fill the rest with that orbit repeated and return the boundary; else None (see :func:`startup`)."""
    v_pre, v_start, v_end, delivered, state = arrays
    n = len(v_pre)
    j1, L = tail
    p_b = j1 + ((p_new - j1) // L) * L  # last pattern boundary reached
    u0 = orb_t.v_pre[0] if orb_t is not None else np.nan
    v_b = v_end[p_b - 1]
    if not (orb_t is not None and (state[p_b - L:p_new] == enabled).all()
            and abs(v_b - u0) <= STARTUP_TOL * (1.0 + abs(u0))):
        return None
    k = slice(p_b, n)
    rep = np.arange(n - p_b) % L  # the orbit repeated to the end
    v_pre[k] = orb_t.v_pre[rep]
    v_start[k] = orb_t.v_start[rep]
    v_end[k] = orb_t.v_end[rep]
    delivered[k] = s.hs_on[k] & enabled
    state[k] = enabled
    return p_b


def _next_window(window: int, guessed_wrong: bool, restarts: int, stop: int, enabled: bool, reached: bool,
                 p_new: int, n: int) -> int:
    """Intervals of the next piece of the start-up solve.

    A wrong guess of the UVLO state costs the rest of the window: restart short, grow while the
    guesses hold; after the first restart with a held state the rest usually goes in one piece. The
    sequential head (one interval at a time) goes on to the rest in one piece once UVLO-on is reached.
    """
    if guessed_wrong:
        return n if (enabled and reached and restarts == 1) else max(256, 2 * stop)
    if window == 1:
        return n if enabled else (1 if p_new < _HEAD else 256)
    return window * 4


#: Intervals stepped one at a time at the start while the driver waits for UVLO-on (a pre-charge
#: pulse or the first low-side intervals usually get there; the windowed solve takes over after).
_HEAD = 8
#: Pattern repeats solved past the start of a periodic schedule tail before the first settle check.
_SETTLE_PATTERNS = 64


def _periodic_tail(s: Schedule) -> tuple[int, int] | None:
    """Start ``j1`` and length ``L`` of the pattern the schedule repeats to its end (None: none).

    ``L`` is the interval count of the last switching period; the tail is where
    every interval equals the one ``L`` later in duration, SW level and HS
    command. ``j1`` is one pattern after the tail's first interval, so that the
    interval before ``j1`` (which sets ``j1``'s edge charges) is in the tail too.
    """
    n = len(s)
    L = int(np.count_nonzero(s.cycle == s.cycle[-1])) if n else 0
    if L <= 0 or n < 3 * L + _SETTLE_PATTERNS * L:
        return None
    same = (s.dt[:-L] == s.dt[L:]) & (s.v_sw[:-L] == s.v_sw[L:]) & (s.hs_on[:-L] == s.hs_on[L:])
    diff = (~same).nonzero()[0]
    j0 = int(diff[-1]) + 1 if diff.size else 0
    j1 = j0 + L
    if j1 + _SETTLE_PATTERNS * L >= n:
        return None
    return j1, L


def _tail_orbit(circ: BootstrapCircuit, s: Schedule, j1: int, L: int, enabled: bool, drv,
                steady: SteadyState | None = None) -> OrbitSolution | None:
    """Periodic orbit of the tail pattern at a held UVLO state, or None where the state would not hold.

    The orbit must keep the UVLO state with a margin of twice the start-up
    tolerance: enabled, no boundary value below UVLO-off; disabled, no end value
    at UVLO-on. Taken from ``steady`` where its loop equals the pattern's up to a rotation.
    """
    k = slice(j1, j1 + L)
    hs = s.hs_on[k] & enabled
    vsw = np.where(s.hs_on[k] & ~hs, s.v_hold[k], s.v_sw[k])
    loop = _bc(schedule_loop(circ, s.dt[k], vsw, hs, periodic=True))
    orb = _rotated_orbit(loop, steady) if steady is not None else None
    if orb is None:
        orb = solve_orbit(loop)
    vals = np.concatenate((orb.v_low, orb.v_end))
    if not (orb.converged and np.isfinite(vals).all()):
        return None
    m = 2.0 * STARTUP_TOL * (1.0 + np.abs(vals))
    if enabled:
        ok = (vals >= drv.uvlo_off + m).all()
    else:
        ok = (orb.v_end < drv.uvlo_on - m[L:]).all()
    return orb if ok else None


def _rotated_orbit(loop: Loop, steady: SteadyState) -> OrbitSolution | None:
    """``steady``'s orbit rotated onto ``loop`` where their interval loops agree exactly (else None)."""
    ref = _bc(steady.loop)
    L = loop.dt.shape[-1]
    if ref.dt.shape != loop.dt.shape or ref.diode != loop.diode:
        return None
    names = loop_fields(ref)
    if names != loop_fields(loop):
        return None
    a = np.array([getattr(ref, k) for k in names])
    b = np.array([getattr(loop, k) for k in names])
    k = np.arange(L)
    for r in range(L):
        idx = (k + r) % L  # np.roll(x, -r) is x[idx]
        if (a[:, idx] == b).all():
            o = steady.orbit
            return OrbitSolution(v_pre=o.v_pre[idx], v_start=o.v_start[idx], v_end=o.v_end[idx], v_min=o.v_min,
                                 v_max=o.v_max, passes=o.passes, converged=o.converged,
                                 v_dip=None if o.v_dip is None else o.v_dip[idx])
    return None


def _predict_enabled(state, cycle, p, q_end, enabled):
    """Guess of the UVLO state over intervals ``p … q_end − 1`` from the accepted history.

    Once the rail drops out and recovers in a repeating pattern (a line leg whose rail falls below
    UVLO-off every line period), the last switching period's pattern is repeated; otherwise the
    present state is held. The guess only sets how far one solve reaches: every interval is
    checked against the UVLO rule and the run is cut at the first wrong guess, so the result is
    the same as stepping interval by interval.
    """
    m = q_end - p
    pred = np.full(m, enabled)
    if p == 0:
        return pred
    h = state[max(0, p - 8192):p]
    rise = (h[1:] & ~h[:-1]).nonzero()[0]
    if rise.size >= 2:  # period of the drop-out pattern: the distance between the last two restarts
        period = int(rise[-1] - rise[-2])
    else:  # else the last switching period, if the state changed in it
        period = int(np.count_nonzero(cycle[:p] == cycle[p - 1]))
    if period <= 0 or period > h.size:
        return pred
    hist = h[h.size - period:]
    if hist.all() or not hist.any():
        return pred
    pred = np.resize(hist, m)  # periodic continuation
    pred[0] = enabled
    return pred


def _diode_current(v, loop: Loop, circ: BootstrapCircuit) -> np.ndarray:
    """Diode current at rail voltage ``v`` in each interval [A]."""
    if circ.diode == "linear":
        return np.maximum(loop.v_src - circ.v_f - v, 0.0) / circ.r_tot * (loop.v_src - circ.v_f > 0)
    lp = _bc(loop)
    return np.where(lp.v_src > 0, np.maximum(junction_current(v, lp), 0.0), 0.0)


# --------------------------------------------------------------------------- duty sweeps

def duty_slots(design: Design, t_hs, t_ls, lvl_a, lvl_b, period, v_rest=None):
    """Interval arrays ``(..., 4·K)`` of K switching periods from per-period slot times.

    The slot layout of :mod:`explorer.schedule` (:func:`~explorer.schedule.slot_layout`:
    [HS][dead][LS][dead], an LS slot that vanishes makes the HS on for the whole period, an HS
    pulse shorter than ``t_on_min`` is dropped, light load replaces the second dead time by the
    rest at V_out), keeping zero-length intervals so that every member of a batch has the same
    interval count.

    Parameters
    ----------
    t_hs, t_ls, lvl_a, lvl_b : arrays ``(..., K)`` [s], [s], [V], [V]
    period : array broadcasting to ``(..., K)`` [s]
    v_rest : array broadcasting to ``(..., K)`` [V], optional
        Light load's rest level (default the design's V_out).
    """
    dt, v, _, _, _ = slot_layout(design.bridge, design.driver, t_hs, t_ls, lvl_a, lvl_b, period, v_rest)
    np.maximum(dt, 0.0, out=dt)
    hs = np.zeros(dt.shape, dtype=bool)
    hs[..., 0] = True
    shp = dt.shape[:-2] + (dt.shape[-2] * 4,)
    return dt.reshape(shp), v.reshape(shp), hs.reshape(shp)


def _levels(design: Design):
    """Dead-time SW levels of the period of highest duty."""
    b = design.bridge
    k = np.zeros(1, dtype=int)
    if topology_of(b).fundamental and not is_standstill(b):
        s = period_schedule(design)
        k = np.array([int(np.argmax(s.duty))])
    _, _, la, lb = hs_duty_per_period(b, k, np.ones(1))
    return float(la[0]), float(lb[0])


def _period(design: Design) -> float:
    return design.bridge.period


def rail_min_map(design: Design, option: BootstrapOption, f_sw, duty, *, corner: str = "nominal",
                 circ: BootstrapCircuit | None = None, full: bool = False, v_guess=None, levels=None):
    """Steady-state rail minimum over a grid of switching frequency × HS duty [V].

    Each point is one switching period ``[HS duty·T][dead][LS][dead]`` with the
    design's dead-time levels (the light-load layout for a light-load buck),
    held for ever (the standstill case of a three-phase leg). All points are
    solved at once by :func:`explorer.engines.rail_orbit.steady_rail`.

    Parameters
    ----------
    f_sw : array_like [Hz]
        Switching frequency (for ``line_leg`` the line frequency).
    duty : array_like [-]
        HS on-time share of the period, 0…1; broadcasts with ``f_sw``.
    full : bool
        Return the whole :class:`OrbitSolution` instead of the minimum.
    v_guess : array_like [V], optional
        Starting trajectory shaped ``broadcast(f_sw, duty) + (4,)`` (the
        ``v_start`` of a nearby map); speeds up the junction diode's iteration
        without changing the answer beyond its tolerance.
    levels : (float, float) [V], optional
        The dead-time levels (``_levels(design)``) when already at hand.

    Returns
    -------
    ndarray [V]
        Shape of ``broadcast(f_sw, duty)``; NaN where the rail is never refreshed,
        0 where it collapses.

    Examples
    --------
    >>> from explorer import demo_design
    >>> d = demo_design()
    >>> m = rail_min_map(d, d.options[0], [100e3, 200e3], [[0.5], [0.9]])
    >>> m.shape
    (2, 2)
    """
    circ = circ or bootstrap_circuit(design, option, corner)
    shape = np.broadcast(f_sw, duty).shape
    f_flat = full_as(f_sw, shape).reshape(-1)
    h_flat = np.clip(full_as(duty, shape).reshape(-1), 0.0, 1.0)
    la, lb = _levels(design) if levels is None else levels
    td = design.bridge.dead_time
    n_pts = f_flat.size
    out = np.empty(n_pts)
    parts = []
    g_flat = None if v_guess is None else np.reshape(np.asarray(v_guess, dtype=float), (n_pts, -1))
    # a light-load buck rests at V_out, which is the duty variable: each point at its own
    rest = light_load(design.bridge)
    for a in range(0, max(n_pts, 1), _MAP_BLOCK):  # blocks keep the temporaries in cache
        T = 1.0 / f_flat[a:a + _MAP_BLOCK, None]
        h = h_flat[a:a + _MAP_BLOCK, None]
        t_hs = h * T
        v_rest = topology_of(design.bridge).duty_setting(design.bridge, h, 1.0 / T) if rest else None
        dt, v, hs = duty_slots(design, t_hs, T - t_hs - 2 * td, la, lb, T, v_rest)
        guess = None if g_flat is None else g_flat[a:a + _MAP_BLOCK]
        masks = loop_masks(circ, dt, v, hs, periodic=True)
        loop = _bc(schedule_loop(circ, dt, v, hs, periodic=True, masks=masks))
        orb = _map_orbit(loop, guess)
        redo = ~np.broadcast_to(_presumption_holds(circ, masks, orb), dt.shape[:-1])
        if redo.any():  # as steady_state: where the rail falls below the v_hold presumed, the rule for any rail
            c0 = dataclasses.replace(circ, v_hold=0.0)
            m0 = loop_masks(c0, dt[redo], v[redo], hs[redo], periodic=True)
            l0 = _bc(schedule_loop(c0, dt[redo], v[redo], hs[redo], periodic=True, masks=m0))
            orb = _merge_orbits(orb, _map_orbit(l0, None if guess is None else guess[redo]), redo)
        out[a:a + _MAP_BLOCK] = np.where(_refresh_mask(loop, orb), orb.v_min, np.nan)
        if full:
            parts.append(orb)
    if full:
        cat = {k: (getattr(parts[0], k) if len(parts) == 1 else np.concatenate([getattr(o, k) for o in parts]))
               for k in ("v_pre", "v_start", "v_end", "v_min", "v_max", "v_dip") if getattr(parts[0], k) is not None}
        n = cat["v_pre"].shape[-1]
        return OrbitSolution(**{k: (v.reshape(shape + (n,)) if v.ndim == 2 else v.reshape(shape))
                                for k, v in cat.items()},
                             passes=max(o.passes for o in parts), converged=all(o.converged for o in parts))
    return _reported_min(out).reshape(shape)


def _map_orbit(loop: Loop, v_guess) -> OrbitSolution:
    """The steady orbits of a batch of one-period loops (:func:`rail_min_map`)."""
    return steady_rail(loop.dt, loop.v_src, c=loop.c, r=loop.r, v_f=loop.v_f, i_load=loop.i_load,
                       g_load=loop.g_load, q_step=loop.q_step, diode=loop.diode, i_s=loop.i_s, n_vt=loop.n_vt,
                       v_guess=v_guess, v_clamp=loop.v_clamp, q_lead=loop.q_lead)


def _merge_orbits(orb: OrbitSolution, part: OrbitSolution, rows: np.ndarray) -> OrbitSolution:
    """``orb`` with the orbits of ``rows`` (a mask over its leading axis) taken from ``part``."""
    fields = {}
    for k in ("v_pre", "v_start", "v_end", "v_min", "v_max", "v_dip"):
        x = getattr(orb, k)
        if x is not None:
            x = np.array(x, copy=True)
            x[rows] = getattr(part, k)
        fields[k] = x
    return OrbitSolution(**fields, passes=max(orb.passes, part.passes), converged=orb.converged and part.converged)


def _orbit_rows(orb: OrbitSolution, rows: np.ndarray) -> OrbitSolution:
    """The orbits of ``rows`` (a mask over the leading axis) of a batch."""
    return OrbitSolution(**{k: (None if getattr(orb, k) is None else getattr(orb, k)[rows])
                            for k in ("v_pre", "v_start", "v_end", "v_min", "v_max", "v_dip")},
                         passes=orb.passes, converged=orb.converged)


def _reported_min(v_min):
    """Rail minimum as reported: a collapsing rail reads 0 V, as in evaluate_option (below 0 V the
    constant-load model no longer holds)."""
    return np.where(v_min < 0.0, 0.0, v_min)


#: Design points per block in :func:`rail_min_map`.
_MAP_BLOCK = 8192


#: The 33 points of a bisection bracket as shares of it (a fixed grid, see :func:`duty_limit`).
_FRAC_33 = np.linspace(0.0, 1.0, 33)
_FRAC_33.flags.writeable = False


def duty_limit(design, circ, thresholds, h_lo=0.0, h_hi=1.0):
    """Largest HS duty whose steady-state minimum stays at or above each threshold (None: none)."""
    f = analysis_frequency(design.bridge)
    th = np.asarray(thresholds, dtype=float)
    grid = np.linspace(h_lo, h_hi, DUTY_GRID + 1)
    levels = _levels(design)
    coarse = rail_min_map(design, None, f, grid, circ=circ, full=True, levels=levels)
    vm = _reported_min(coarse.v_min)
    vm = np.where(np.isfinite(vm), vm, -np.inf)
    out: list = [None] * th.size
    lo = np.zeros(th.size)
    hi = np.zeros(th.size)
    open_ = []
    for i, x in enumerate(th):
        ok = vm >= x
        if ok.all():
            out[i] = h_hi
        elif ok[0]:
            j = int(np.argmax(~ok))
            lo[i], hi[i] = grid[j - 1], grid[j]
            open_.append(i)
    if open_:
        # one bisection round of 32 steps for all thresholds at once, then linear
        # interpolation of the (smooth) minimum inside the final bracket
        idx = np.array(open_)
        g = np.linspace(lo[idx], hi[idx], 33, axis=-1)
        # start each refined orbit from the coarse orbits on either side, interpolated in duty (the
        # junction's Newton iteration; the straight-line diode's orbit is solved without a start)
        guess = None
        if circ.diode != "linear":
            j_hi = np.rint((hi[idx] - h_lo) / (grid[1] - grid[0])).astype(int)
            frac = _FRAC_33[None, :, None]
            guess = (coarse.v_start[j_hi - 1][:, None, :] * (1.0 - frac) + coarse.v_start[j_hi][:, None, :] * frac)
        m = rail_min_map(design, None, f, g, circ=circ, v_guess=guess, levels=levels)
        m = np.where(np.isfinite(m), m, -np.inf)
        okg = m >= th[idx, None]
        j = np.where(okg.all(axis=-1), 32, np.argmax(~okg, axis=-1))
        brackets = {}  # threshold index -> [duty that holds, its rail, duty that does not, its rail]
        for r, i in enumerate(open_):
            jj = int(j[r])
            if jj == 0 or jj == 32 or not np.isfinite(m[r, jj]):
                out[i] = float(g[r, max(jj - 1, 0)])
                continue
            brackets[i] = [float(g[r, jj - 1]), float(m[r, jj - 1]), float(g[r, jj]), float(m[r, jj])]
        out = _checked_interpolation(design, circ, f, th, brackets, out, levels)
    return out


#: Most corrections of the interpolated duty limit (:func:`_checked_interpolation`).
_LIMIT_STEPS = 8


def _checked_interpolation(design, circ, f, th, brackets: dict, out: list, levels) -> list:
    """The duty limit inside each final bracket: linear interpolation of the rail minimum, checked.

    The interpolation presumes a smooth minimum. Where it is not (a curve bent within the bracket, or
    a rail that holds only without HS pulses and jumps at the first one) the interpolated duty may not
    hold, so each one is evaluated: a duty that holds is the limit; one that does not becomes the
    bracket's failing end and the interpolation is repeated (regula falsi with the Illinois step,
    Dowell & Jarratt, BIT 11, 1971, doi:10.1007/BF01934364), up to :data:`_LIMIT_STEPS` times, after
    which the last duty known to hold is the limit. A limit is never optimistic.
    """
    keep = {i: 1.0 for i in brackets}  # Illinois weight of the end kept twice in a row
    for _ in range(_LIMIT_STEPS):
        if not brackets:
            break
        keys = list(brackets)
        h_try = []
        for i in keys:
            a, ma, b, mb = brackets[i]
            fa, fb = (ma - th[i]) * keep[i], mb - th[i]
            h_try.append(a + (b - a) * (fa / (fa - fb)) if (np.isfinite(fb) and fa != fb) else 0.5 * (a + b))
        m_try = np.atleast_1d(rail_min_map(design, None, f, np.array(h_try), circ=circ, levels=levels))
        for i, h, v in zip(keys, h_try, m_try):
            if np.isfinite(v) and v >= th[i]:
                out[i] = float(h)
                del brackets[i]
            else:
                brackets[i][2:] = [float(h), float(v) if np.isfinite(v) else -np.inf]
                keep[i] *= 0.5
    for i, (a, _, _, _) in brackets.items():
        out[i] = a
    return out


# --------------------------------------------------------------------------- topology terms

#: Lowest output frequency searched, as f_sw / this many switching periods: below it the schedule
#: analyses the leg as standstill (explorer.schedule.QUASI_STATIC_PERIODS).
F_O_SEARCH_PERIODS = QUASI_STATIC_PERIODS


def full_fundamental_min(design, circ, m, f_o):
    """Steady-state rail minimum over a whole fundamental, every interval solved (reference path) [V]."""
    b = design.bridge
    n = periods_per_fundamental(b.f_sw, f_o)
    k = np.arange(n)
    t_hs, t_ls, la, lb = hs_duty_per_period(dataclasses.replace(b, m=float(m), f_o=f_o), k, np.ones(n))
    dt, v, hs = duty_slots(design, t_hs, t_ls, la, lb, 1.0 / b.f_sw)
    loop = schedule_loop(circ, dt, v, hs, periodic=True)
    vm = float(solve_orbit(_bc(loop)).v_min)
    return vm if math.isfinite(vm) else -math.inf


def _worst_period(design, circ, t_hs_max):
    """One switching period that discharges the rail at least as much as any period with HS on-time ≤ t_hs_max.

    HS on for ``t_hs_max`` (the whole period when no LS slot is left), both dead
    times at the bus (no refresh, leakage on), the LS slot the rest of the
    period, and every edge charge taken at the HS turn-on *and* again at the
    last dead time (the recovery and junction charge a period can draw, none
    returned). Its rate of change is at every instant at most that of any such
    period and its cumulative charge removal at least as large, so by the
    comparison principle for first-order ODEs (Hartman, *Ordinary Differential
    Equations*, 2nd ed., SIAM 2002, ch. III, §4) its period map lies below
    every such period map (used as a bound, never as a result).

    Parameters
    ----------
    t_hs_max : ndarray [s], shape ``(rows,)``

    Returns
    -------
    Loop of shape ``(rows, 4)`` (broadcast).
    """
    b = design.bridge
    T = 1.0 / b.f_sw
    td = b.dead_time
    t_hs = np.asarray(t_hs_max, dtype=float)
    t_ls = T - t_hs - 2 * td
    full = t_ls <= 0.0
    dt = np.stack([np.where(full, T, np.maximum(t_hs, 0.0)), np.where(full, 0.0, td),
                   np.where(full, 0.0, t_ls), np.where(full, 0.0, td)], axis=-1)
    low = min(circ.v_sw_low, -b.v_undershoot)
    q_edge = circ.q_rr + circ.c_j * (b.v_bus - low)
    hi_leak = circ.i_leak
    ls_leak = circ.i_leak if circ.v_sw_low > 0.5 * b.v_bus else 0.0
    # a low-side pulse shorter than the driver's minimum is not given: at worst SW stays at the bus
    v_ls = np.where(ls_dropped(np.where(full, 0.0, t_ls), design.driver.t_on_min_ls), b.v_bus, circ.v_sw_low)
    levels = np.stack(np.broadcast_arrays(b.v_bus, b.v_bus, v_ls, b.v_bus), axis=-1)
    loop = Loop(dt=dt, v_src=circ.v_dd - levels, c=circ.c,
                r=circ.r_tot, i_load=circ.i_q + np.array([hi_leak, hi_leak, ls_leak, hi_leak]),
                g_load=np.array([circ.g_gs, 0.0, 0.0, 0.0]),
                q_step=np.array([circ.q_on + q_edge, circ.q_off, 0.0, q_edge]), v_f=circ.v_f, i_s=circ.i_s,
                n_vt=circ.n_vt, diode=circ.diode, v_clamp=circ.v_clamp)
    return _bc(loop)


def _rail_ceiling(design, circ):
    """An upper bound of the rail in steady state [V]: the highest charge target plus the junction charge."""
    b = design.bridge
    low = min(circ.v_sw_low, -b.v_undershoot)
    return circ.v_dd - low - circ.v_f + circ.c_j * (b.v_bus - low) / circ.c


def _peak_span(bridge, n):
    """Index range [lo, hi] of the highest duty over a fundamental of ``n`` periods (topology.peak_span)."""
    lo, hi = peak_span(bridge)
    return n * lo / (2 * np.pi), n * hi / (2 * np.pi)


def fundamental_bounds(design, circ, cases, burn: int = 256, core: int = 64):
    """Lower and upper bounds of the rail minimum over a fundamental for each ``(m, f_o)`` [V].

    * Lower: the periodic minimum of :func:`_worst_period` at the peak duty. Its
      period map lies below every period map of the fundamental and all maps are
      increasing contractions, so the orbit cannot go below it.
    * Upper: the least value over short windows of periods (at the peak duty and
      at three later angles, where a lagging or clipped rail bottoms out) of the
      trajectory started at :func:`_rail_ceiling` ``burn`` periods before the
      window. The maps are increasing, so that trajectory lies above the orbit,
      and the orbit's minimum over the fundamental is at most its value there.

    Both cost a few thousand switching periods whatever ``f_sw/f_o``; they
    decide a limit search wherever the threshold lies outside [lower, upper].
    """
    b = design.bridge
    T = 1.0 / b.f_sw
    u_top = _rail_ceiling(design, circ)
    peak_hs = []
    arrs = []
    owner = []
    for i, (mi, f_o) in enumerate(cases):
        br = dataclasses.replace(b, m=float(mi), f_o=f_o)
        peak_hs.append(nominal_duty(br) * T - b.dead_time)
        n = periods_per_fundamental(b.f_sw, f_o)
        c_lo, c_hi = _peak_span(b, n)
        for shift in (0.0, n / 64, n / 16, n / 8):
            k1 = int(math.floor(c_lo + (c_hi - c_lo if shift else 0.0) + shift)) - core // 3
            k = np.arange(k1 - burn - 1, k1 + core + int(math.ceil(c_hi - c_lo)))
            arrs.append(hs_duty_per_period(br, k, np.ones(k.size)))
            owner.append(i)
    worst = _worst_period(design, circ, np.array(peak_hs))
    lower = steady_rail(worst.dt, worst.v_src, c=worst.c, r=worst.r, v_f=worst.v_f, i_load=worst.i_load,
                        g_load=worst.g_load, q_step=worst.q_step, diode=worst.diode, i_s=worst.i_s,
                        n_vt=worst.n_vt, v_clamp=worst.v_clamp, q_lead=worst.q_lead).v_min
    lower = np.where(np.isfinite(lower), lower, -np.inf)
    size = min(a[0].size for a in arrs)
    t_hs, t_ls, la, lb = (np.array([a[j][-size:] for a in arrs]) for j in range(4))
    dt, v, hs = duty_slots(design, t_hs, t_ls, la, lb, T)
    loop = _bc(schedule_loop(circ, dt, v, hs, periodic=False))
    loop = map_loop(loop, lambda a: a[:, 4:])
    orb = propagate(loop, np.full(len(arrs), u_top))
    row_min = np.where(np.isfinite(orb.v_min), orb.v_min, np.inf)  # every boundary value and dip
    upper = np.full(len(cases), np.inf)
    np.minimum.at(upper, np.array(owner), row_min)
    return lower, upper


def fundamental_passes(design, circ, cases, need, exact=None):
    """Whether the rail minimum over a fundamental stays at or above ``need`` for each ``(m, f_o)``.

    ``cases`` must be ordered from the easiest to the hardest (m rising or f_o
    falling): the rail minimum falls monotonically along them (tested), so the
    answer is a run of passes followed by a run of failures. Each case is first
    screened by :func:`fundamental_bounds` (passes where its lower bound is at
    or above ``need``, fails where its upper bound is below); the boundary among
    the undecided ones is found by bisection on exact minima
    (:func:`full_fundamental_min`, or ``exact(m, f_o)`` when given, e.g. a
    memoised one), a few exact solves instead of one per undecided case.
    """
    exact = exact or (lambda m, f_o: full_fundamental_min(design, circ, m, f_o))
    n = np.array([periods_per_fundamental(design.bridge.f_sw, f_o) for _, f_o in cases])
    lower = np.full(len(cases), -np.inf)
    upper = np.full(len(cases), np.inf)
    big = np.flatnonzero(n > _BOUNDS_FROM)  # below this the exact solve is cheaper than the bounds
    if big.size:
        lower[big], upper[big] = fundamental_bounds(design, circ, [cases[i] for i in big])
    fails = np.flatnonzero(upper < need)
    hi = int(fails[0]) if fails.size else len(cases)       # cases from hi on fail
    holds = np.flatnonzero(lower[:hi] >= need)
    lo = int(holds[-1]) if holds.size else -1              # cases up to lo pass
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if exact(*cases[mid]) >= need:
            lo = mid
        else:
            hi = mid
    ok = np.zeros(len(cases), dtype=bool)
    ok[:lo + 1] = True
    return ok


#: Fundamentals of more switching periods than this are first screened by :func:`fundamental_bounds`.
_BOUNDS_FROM = 8192


def three_phase_terms(design, circ, need):
    """Highest m at this f_o (grid rounds, then interpolation) and lowest f_o at this m (grid rounds in log f_o).

    The rail minimum falls as m rises and as f_o falls (tested with hypothesis).
    Each grid point is decided by :func:`fundamental_passes` (bounds first, the exact
    minimum only where they do not decide); the final bracket of m is
    interpolated between exact minima. f_o is searched down to the lowest legal
    value, f_sw / ``F_O_SEARCH_PERIODS``.
    """
    b = design.bridge
    out = {}
    memo: dict = {}

    def exact(m, f_o):  # each exact minimum once per evaluation (grid rounds share their ends)
        key = (float(m), float(f_o))
        if key not in memo:
            memo[key] = full_fundamental_min(design, circ, m, f_o)
        return memo[key]

    lo, hi = 0.0, 4 / math.pi
    m_max = None
    bracket = None
    for _ in range(3):
        g = np.linspace(lo, hi, 17)
        ok = fundamental_passes(design, circ, [(float(x), b.f_o) for x in g], need, exact)
        if ok.all():
            m_max = float(hi)
            bracket = None
            break
        if not ok[0]:
            m_max = None if lo == 0.0 else float(lo)
            bracket = None
            break
        j = int(np.argmax(~ok))
        lo, hi = float(g[j - 1]), float(g[j])
        bracket = (lo, hi)
    if bracket is not None:
        m0, m1 = (exact(x, b.f_o) for x in bracket)
        frac = (m0 - need) / (m0 - m1) if np.isfinite(m1) and m0 != m1 else 0.0
        m_max = float(lo + min(max(frac, 0.0), 1.0) * (hi - lo))
    out["m_max"] = m_max
    if exact(b.m, 0.0) >= need:
        out["f_o_min"] = 0.0
        return out
    f_hi = b.f_sw / 2.0
    f_lo = b.f_sw / F_O_SEARCH_PERIODS
    for r in range(4):  # grid rounds in log f_o, from high to low f_o: ratio (f_hi/f_lo)^(16^-4) at the end
        g = np.geomspace(f_lo, f_hi, 17)
        if r:
            g = g[1:-1]  # the bracket ends are known
        ok = fundamental_passes(design, circ, [(b.m, float(f)) for f in g[::-1]], need, exact)[::-1]
        if r == 0 and not ok[-1]:
            out["f_o_min"] = None
            return out
        if r == 0 and ok[0]:
            out["f_o_min"] = f_lo
            out["f_o_min_note"] = (f"holds down to f_sw/{F_O_SEARCH_PERIODS:g}; below it the leg is "
                                   "analysed as standstill, which fails")
            return out
        j = int(np.argmax(ok))  # first passing point from below
        if r:
            lo_new = f_lo if j == 0 else float(g[j - 1])
            f_hi = float(g[j]) if ok.any() else f_hi
            f_lo = lo_new if ok.any() else float(g[-1])
        else:
            f_lo, f_hi = float(g[j - 1]), float(g[j])
    out["f_o_min"] = f_hi
    return out


def topology_terms(design, circ, h_max, need, v_min_ss):
    """The duty limit in the topology's own terms (the table's rule; three_phase searches m and f_o)."""
    b = design.bridge
    limit = topology_of(b).duty_limit
    if limit is None:
        return three_phase_terms(design, circ, need)
    ok = bool(v_min_ss is not None and v_min_ss >= need)
    return limit(b, h_max, _period(design), ok)


# --------------------------------------------------------------------------- evaluation

def _fmt(x: float, unit: str) -> str:
    from ..units import format_eng
    return format_eng(x, unit)


#: Common practice, no source: a loop time constant below this share of the edge time is not resolved.
TAU_EDGE_RATIO = 0.1


def _validity_messages(design: Design, circ: BootstrapCircuit) -> list[str]:
    """Plain-words reasons why the model's assumptions do not hold for this design (may be empty).

    * The switch-node edges are steps (instantaneous) in the model, so its time
      resolution is the edge time ``t_edge``: a charging loop with
      ``τ = (r + esr + r_d)·C`` below ``TAU_EDGE_RATIO·t_edge`` settles within
      an edge, and its peak and RMS currents are set by the edge, not the loop.

    Edges longer than an interval of the schedule (a dead time, the LS refresh
    window, an HS pulse) are flagged for every model by
    :func:`explorer.schedule.schedule_validity`, which :func:`explorer.evaluate` reports.
    """
    b = design.bridge
    out = []
    tau = circ.r_tot * circ.c
    if tau < TAU_EDGE_RATIO * b.t_edge:
        out.append(f"the charging loop's time constant (r + esr + diode)·C = {_fmt(tau, 's')} is far below the "
                   f"switch-node edge time {_fmt(b.t_edge, 's')}, which the model treats as instantaneous: the "
                   "loop settles within an edge, so the peak and RMS currents are set by the edge and not resolved")
    return out


@dataclass(frozen=True)
class _SteadyPart:
    """The steady state's part of a bootstrap result: rail statistics [V] (None when never refreshed),
    the interval integrals, the plotted waveform and the details it gives."""

    refreshed: bool
    rail: RailStats
    v_min: float | None
    v_max: float | None
    ints: dict
    t_wave: np.ndarray
    v_wave: np.ndarray
    details: dict


def _steady_part(ss: SteadyState, warn: list) -> _SteadyPart:
    """Steady state: rail statistics over the analysis period (a collapse shown at 0 V) and the waveform."""
    orb, sched = ss.orbit, ss.schedule
    T = sched.period
    details: dict = {"newton_passes_steady": orb.passes}
    if not _is_refreshed(ss):
        warn.append("the rail is never refreshed in steady state (the high side is on for the whole "
                    "analysis period): it only holds up for the time given under hold-up")
        return _SteadyPart(refreshed=False, rail=RailStats(0.0, 0.0, 0.0), v_min=None, v_max=None, ints={},
                           t_wave=np.zeros(0), v_wave=np.zeros(0), details=details)
    ints = ss.integrals
    v_min, v_max = float(orb.v_min), float(orb.v_max)
    v_mean = float(ints["int_v"].sum() / T)
    if v_min < 0.0:
        warn.append("the rail collapses to 0 V in steady state (below 0 V the model's constant load "
                    "current no longer holds; the minimum is shown as 0 V)")
        details["v_min_model"] = v_min
        v_min = 0.0
        v_max, v_mean = max(v_max, 0.0), max(v_mean, 0.0)
    t_wave, v_wave = _waveform(sched.t_start, T, orb.v_pre, orb.v_start, orb.v_end[-1], orb.v_dip)
    return _SteadyPart(refreshed=True, rail=RailStats(v_min, v_max, v_mean), v_min=v_min, v_max=v_max, ints=ints,
                       t_wave=t_wave, v_wave=v_wave, details=details)


def _waveform(t_start, t_end: float, v_pre, v_start, v_last: float, v_dip=None):
    """The rail as a polyline through the interval boundaries: each start twice (before and after its step;
    three times with ``v_dip``, the dip of a step's leading charge, between them), then the end (times [s],
    rail [V])."""
    n = len(t_start)
    cols = (v_pre, v_start) if v_dip is None else (v_pre, v_dip, v_start)
    m = len(cols)
    t = np.empty(m * n + 1)
    v = np.empty(m * n + 1)
    for j, col in enumerate(cols):
        t[j:-1:m] = t_start
        v[j:-1:m] = col
    t[-1] = t_end
    v[-1] = v_last
    return t, v


def _startup_part(design: Design, option: BootstrapOption, circ: BootstrapCircuit, su: StartupSolution,
                  warn: list) -> tuple[Startup, dict]:
    """Start-up from 0 V: the Startup part (UVLO time and cycles, peak current, V_DD dip) and its details."""
    drv, aux = design.driver, design.aux
    s2 = su.schedule
    i_peak_su = float(su.i_start.max(initial=0.0))
    first_live = (su.i_start > 0).nonzero()[0]
    i_first = float(su.i_start[first_live[0]]) if first_live.size else 0.0
    on_idx = su.delivered.nonzero()[0]
    k_w = int(on_idx[0]) if on_idx.size else len(s2) - 1
    t0 = s2.t_start
    t_w = float(t0[k_w]) if on_idx.size else s2.period
    v_w = float(su.v_pre[k_w]) if on_idx.size else float(su.v_end[-1])
    q_w = circ.c * v_w + circ.i_q * t_w  # charge drawn from the aux rail until the first delivered pulse
    v_dd_dip = q_w / (aux.c_dd + circ.c)  # charge sharing with the aux decoupling (no regulator help)
    cycles = None
    if su.k_uvlo is not None:
        cycles = int(max(s2.cycle[su.k_uvlo], -1) + 1)
    t_su, v_su = _waveform(t0, s2.period, su.v_pre, su.v_start, su.v_end[-1])
    start = Startup(t_uvlo=su.t_uvlo, cycles_uvlo=cycles, i_peak=i_peak_su, v_dd_dip=v_dd_dip, t=t_su, v=v_su)
    details = {"i_first_pulse": i_first, "startup_segments": su.segments,
               "startup_v_max": float(su.v_start.max(initial=0.0)),
               "startup_v_sw_hold": _first_hold(s2), "startup_sw_hold": s2.hold_words}
    if su.t_uvlo is None:
        warn.append(f"the rail does not reach UVLO-on ({_fmt(drv.uvlo_on, 'V')}) within the "
                    f"{s2.n_cycles} start-up cycles analysed")
    if aux.c_dd < C_DD_RATIO * option.c:
        warn.append(f"the aux decoupling ({_fmt(aux.c_dd, 'F')}) is less than {C_DD_RATIO:g}× the bootstrap "
                    f"capacitor (common practice): V_DD dips by about {_fmt(v_dd_dip, 'V')} while it fills")
    return start, details


#: Common practice, no source: a refresh window shorter than this many switch-node edge times is
#: not resolved by a model that treats edges as steps.
REFRESH_EDGES = 2.0


def refresh_window(design: Design, h: float) -> float:
    """Time per switching period the switch node is low (at or below ``v_sw_low``) at HS share ``h`` [s].

    From the same slot layout the duty-limit search uses (:func:`duty_slots`, the period of
    highest duty's dead-time levels): the LS pulse if the driver gives it (``t_on_min_ls``) and
    the dead times the load current holds low.
    """
    b = design.bridge
    T = _period(design)
    la, lb = _levels(design)
    t_hs = h * T
    dt, v, _ = duty_slots(design, np.array([t_hs]), np.array([T - t_hs - 2 * b.dead_time]), la, lb, T)
    low = v <= max(b.v_sw_low, 0.0) + 1e-9
    return float(dt[low].sum())


def _duty_part(design: Design, circ: BootstrapCircuit, steady: _SteadyPart, sched: Schedule, need: float,
               warn: list) -> tuple[DutyLimits, dict]:
    """Duty limits: the HS duty range that keeps the rail, the hold-up at 100 % and the topology's terms."""
    b, drv = design.bridge, design.driver
    refreshed, v_min, v_max = steady.refreshed, steady.v_min, steady.v_max
    h_need, h_uvlo = duty_limit(design, circ, [need, drv.uvlo_off])
    h_min = min(1.0, drv.t_on_min / _period(design))
    # below the driver's shortest pulse the HS never turns on, so a rail that holds only there (or only
    # at duty 0) holds no duty the leg can run: no limit (not a range from h_min down to a lower h_need)
    h_need, h_uvlo = (None if h is not None and (h < h_min or h <= 0.0) else h for h in (h_need, h_uvlo))
    # hold-up at 100 % duty from the steady-state maximum (the full charge target if never refreshed)
    v_top = v_max if refreshed else max(circ.v_dd - circ.v_sw_low - float(circ.drop(0.0)), 0.0)
    if circ.v_clamp is not None:
        v_top = min(v_top, circ.v_clamp)
    q_edge = circ.q_on + circ.q_rr + circ.c_j * (b.v_bus - circ.v_sw_low)
    hold, hold_uvlo = (hold_up_time(v_top, q_edge, th, i_load=circ.i_q + circ.i_leak, g_load=circ.g_gs, c=circ.c)
                       for th in (need, drv.uvlo_off))
    T_sw = _period(design)
    t_ls_min = None if h_need is None else max(0.0, (1.0 - h_need) * T_sw - 2 * b.dead_time)
    if light_load(b) and h_need is not None:
        t_ls_min = _ls_pulse_min(design, circ, need)
    if t_ls_min is not None and t_ls_min < drv.t_on_min_ls:
        t_ls_min = None  # at the limit the driver gives no LS pulse: the rail refreshes without one
    window = None if h_need is None else refresh_window(design, h_need)
    if window is not None and h_need < 1.0 and window < REFRESH_EDGES * b.t_edge:
        warn.append(f"at the duty limit {h_need:.4g} the switch node is low for only {_fmt(window, 's')} per "
                    f"period, under {REFRESH_EDGES:g}\u00d7 its edge time {_fmt(b.t_edge, 's')}: the model "
                    "treats edges as steps, so the rail's recovery in that window is optimistic (give the "
                    "driver's minimum low-side on-time, driver.t_on_min_ls)")
    topo = topology_terms(design, circ, h_need, need, v_min)
    duty = DutyLimits(min=h_min if h_need is not None else None, max=h_need, hold_up=hold,
                      t_ls_min=t_ls_min, topology=topo, hold_up_threshold=need, hold_up_to=HOLD_UP_TO)
    op_duty = float(sched.duty.max())
    f_txt = _fmt(analysis_frequency(b), "Hz")
    if refreshed and v_min < drv.uvlo_off:
        where = (f"at HS duty above {h_uvlo:.3g}" if h_uvlo is not None else "at every HS duty")
        warn.append(f"the rail falls below UVLO-off ({_fmt(drv.uvlo_off, 'V')}) {where} at {f_txt}; "
                    f"this operating point reaches HS duty {op_duty:.3g}")
    elif refreshed and v_min < need:
        where = (f"at HS duty above {h_need:.3g}" if h_need is not None else "at every HS duty")
        warn.append(f"the rail falls below the required {_fmt(need, 'V')} {where} at {f_txt}; "
                    f"this operating point reaches HS duty {op_duty:.3g}")
    return duty, {"hold_up_uvlo_off": hold_uvlo, "duty_max_uvlo_off": h_uvlo, "t_refresh_at_limit": window}


def _clamp_words(circ: BootstrapCircuit, power: _PowerPart) -> list[str]:
    """A clamp below the ordinary charge target conducts at every refresh, not only after an overcharge."""
    p = (power.losses or {}).get("clamp", 0.0)
    target = overcharge_ceiling(circ.v_dd, float(circ.drop(circ.i_q)), circ.v_sw_low)
    if circ.v_clamp is None or p <= 0.0 or circ.v_clamp >= target:
        return []
    return [f"the clamp across C_boot ({_fmt(circ.v_clamp, 'V')}) sits below the rail's ordinary charge target "
            f"V_DD − V_F − V_SW(low) = {_fmt(target, 'V')}, so it conducts at every refresh and takes "
            f"{_fmt(p, 'W')}; a clamp against the dead-time overcharge belongs above that target"]


def overcharge_ceiling(v_dd: float, v_f: float, v_sw_lowest: float, v_clamp: float | None = None) -> float:
    """Highest rail the bootstrap can charge to [V]: V_DD − V_F − (lowest switch-node level), clamp-limited.

    Kirchhoff's voltage law around the charging loop while the switch node sits at its lowest
    level (a negative excursion in the dead time: the LS body diode's, or a GaN leg's reverse
    conduction) with the diode's current at zero: the capacitor charges to V_DD − V_F + |V_SW|,
    or to ``v_clamp`` where a clamp across it conducts first.
    """
    v = v_dd - v_f - v_sw_lowest
    return v if v_clamp is None else min(v, v_clamp)


def _stress_part(design: Design, option: BootstrapOption, circ: BootstrapCircuit, steady: _SteadyPart,
                 ss: SteadyState, start: Startup, startup_v_max: float) -> tuple[tuple, dict]:
    """Capacitor and diode stress over the steady state and the start-up: (capacitors, details)."""
    b, aux = design.bridge, design.aux
    refreshed, v_min, v_max, ints = steady.refreshed, steady.v_min, steady.v_max, steady.ints
    low_levels = [circ.v_sw_low, -b.v_undershoot]
    v_ceiling = overcharge_ceiling(aux.v_dd * (1 + aux.v_dd_tol), float(circ.drop(circ.i_q)), min(low_levels),
                                   circ.v_clamp)
    v_cap_max = max(v_ceiling, v_max or 0.0, startup_v_max)
    if refreshed:
        turn_on = ss.loop.q_step  # charge per interval start
        q2 = np.sum(np.asarray(turn_on) ** 2) / b.t_edge
        i_rms = math.sqrt((float(ints["i2_c"].sum()) + q2) / ss.schedule.period)
        i_pk_ss = float(ints["i_d0"].max(initial=0.0))
    else:
        i_rms, i_pk_ss = 0.0, 0.0
    i_peak_su = start.i_peak
    i_pk = max(i_pk_ss, i_peak_su, circ.q_on / b.t_edge)
    caps = (CapacitorStress(name="C_boot", c_eff=circ.c, v_max=v_cap_max, v_rating=option.v_rating,
                            ripple=(v_max - v_min) if refreshed else 0.0, i_rms=i_rms, i_peak=i_pk),)
    v_rev = b.v_bus + aux.v_dd * (1 + aux.v_dd_tol)
    return caps, {"v_max_nominal": v_max, "v_max_ceiling": v_ceiling, "diode_v_reverse": v_rev,
                  "diode_i_peak": max(i_pk_ss, i_peak_su)}


@dataclass(frozen=True)
class _PowerPart:
    """Power split of a refreshed rail [W] (all None, no losses, for a rail never refreshed)."""

    p_aux: float | None = None
    p_bus: float | None = None
    p_del: float | None = None
    efficiency: float | None = None
    losses: dict = dataclasses.field(default_factory=dict)
    details: dict = dataclasses.field(default_factory=dict)
    assumptions: tuple = ()


def _power_part(design: Design, circ: BootstrapCircuit, ss: SteadyState, steady: _SteadyPart,
                collapsed: bool) -> _PowerPart:
    """Power drawn from the aux rail and the bus, delivered to the gate side, losses by mechanism.

    Energy conservation over the steady-state period (Tellegen's theorem): aux + bus power equals the
    delivered power plus the losses. A collapsed rail (below 0 V in the model, whose constant loads
    then no longer hold: the driver's clamp and UVLO take over) has no power split (all None, as a
    rail never refreshed).
    """
    if not steady.refreshed or collapsed:
        return _PowerPart()
    sched, orb, loop, ints = ss.schedule, ss.orbit, ss.loop, steady.ints
    T = sched.period
    m = ss.masks  # the interval loop's own masks
    lev, prev_l, rev, rise = m.lev, m.prev_l, m.rev, m.onset
    n_rise = int(np.count_nonzero(rise))
    t_rev = float(sched.dt[rev].sum())
    q_d = float(ints["q_d"].sum())
    q_ret = circ.q_rr * n_rise + circ.i_leak * t_rev
    p_aux = circ.v_dd * (q_d - q_ret) / T
    e_sw = -float((sched.v_sw * ints["q_d"]).sum())  # energy the switch node adds while below ground
    # rail voltage of a charge step: Q·(V_pre + V_post)/2, V_post the step's own end (a step that would
    # end above a clamp hands the clamp the excess: ints["e_clamp"])
    v_step = 0.5 * (orb.v_pre + post_step(orb, loop))
    # recovery and leakage flow from the cathode, V_B = V_SW + v, back to the anode at V_DD: the bus
    # gives Q·V_SW, C_boot gives Q·v (a step at each rise, a current over the reverse-biased intervals),
    # V_DD takes Q·V_DD back (q_ret, credited to the aux draw); the diode dissipates the difference
    e_rr_bus = circ.q_rr * float(lev[rise].sum())
    e_rr = e_rr_bus + circ.q_rr * float(v_step[rise].sum()) - circ.v_dd * circ.q_rr * n_rise
    cj_edges = capacitive_edge_power(circ.c_j, sched)  # ½·C_j·ΔV² per hard edge, ~0 per ZVS edge
    e_cj = cj_edges.dissipated * T
    e_lk_bus = circ.i_leak * float((lev[rev] * sched.dt[rev]).sum())
    e_lk = e_lk_bus + circ.i_leak * float(ints["int_v"][rev].sum()) - circ.v_dd * circ.i_leak * t_rev
    p_bus = (e_rr_bus + e_cj + e_lk_bus + e_sw) / T
    # C_j's charge leaves C_boot at one edge and returns at the next at another rail voltage (the rail
    # droops in between): Q·(V_pre + V_post)/2 per step, the energy of a capacitor's charge step. The
    # sum is what the rail hands the power stage through C_j; drawn, not delivered, not dissipated here.
    e_cj_rail = float((circ.c_j * (lev - prev_l) * v_step).sum())
    e_gate = float(((circ.q_on * sched.hs_turn_on + circ.q_off * sched.hs_turn_off)
                          * v_step).sum())  # gate and both level-shift pulses
    e_q = circ.i_q * float(ints["int_v"].sum())
    e_g = float((ints["e_load"] - loop.i_load * ints["int_v"]).sum())
    p_del = (e_gate + e_q + e_g) / T
    losses = {"resistor": float(ints["e_r"].sum()) / T, "diode": float(ints["e_d"].sum()) / T,
              "recovery": e_rr / T, "junction": e_cj / T, "leakage": e_lk / T,
              "junction_exchange": e_cj_rail / T}
    if "e_clamp" in ints:  # the clamp across C_boot, while it holds the rail
        losses["clamp"] = float(ints["e_clamp"].sum()) / T
    eff = p_del / (p_aux + p_bus) if (p_aux + p_bus) > 0 else None
    return _PowerPart(p_aux=p_aux, p_bus=p_bus, p_del=p_del, efficiency=eff, losses=losses,
                      details={"q_diode_per_period": q_d, "energy_switch_node": e_sw / T,
                               "p_junction_gross": cj_edges.gross},
                      assumptions=(edge_words("diode junction capacitance c_j", cj_edges),) if circ.c_j > 0 else ())


def _checks_part(design: Design, option: BootstrapOption, steady: _SteadyPart, need: float, v_cap_max: float,
                 v_rev: float, su: StartupSolution) -> list:
    """The shared checks (rail, start-up, capacitor) and the diode's reverse voltage."""
    checks = []
    if steady.refreshed:
        checks.append(rail_min_check(design, steady.v_min, f"steady-state rail stays above max(UVLO-off, V_GS "
                                                           f"needed) + margin = {_fmt(need, 'V')}"))
    else:
        checks.append(rail_min_check(design, 0.0, "the rail is refreshed in steady state"))
    checks.append(rail_max_v_bs_check(design, v_cap_max, "rail maximum (V_DD at its tolerance, SW undershoot) "
                                                         "stays below the driver's V_BS(max)"))
    checks.append(rail_max_v_gs_check(design, v_cap_max, "rail maximum stays below the gate's V_GS(max)"))
    cap_check = cap_voltage_check(design, "C_boot", v_cap_max, option.v_rating,
                                  "bootstrap capacitor voltage within its derated rating")
    if cap_check is not None:
        checks.append(cap_check)
    if option.v_rrm is not None:
        checks.append(Check("diode_v_rrm", v_rev, option.v_rrm * design.checks.diode_derating, "max", "V",
                            "diode V_RRM covers V_bus + V_DD after derating"))
    checks.append(startup_uvlo_check(design, float(su.v_end.max(initial=0.0)),
                                     "the rail reaches UVLO-on during start-up"))
    if design.bridge.v_undershoot > 0:  # the dead-time excursion overcharges: against both ratings
        limit = min(design.gate.v_gs_max, design.driver.v_bs_max)
        checks.append(Check("overcharge", v_cap_max, limit, "max", "V",
                            "rail after the negative switch-node excursion in the dead time (clamp-limited) stays "
                            "within min(V_GS(max), V_BS(max))"))
    if design.driver.cmti is not None:  # the level shifter of a bootstrapped driver sees the edge too
        checks.append(cmti_check(design, design.driver.cmti, "the driver's level shifter"))
    return checks


def evaluate_option(design: Design, option: BootstrapOption, *, corner: str = "nominal") -> OptionResult:
    """Evaluate one bootstrap option of a design.

    Parameters
    ----------
    design : Design
    option : BootstrapOption
    corner : {"nominal", "min", "max"}
        Capacitance corner (EIA-198 class envelope and tolerance).

    Returns
    -------
    OptionResult
        Steady state over the analysis period, start-up from 0 V, duty limits,
        capacitor and diode stress, power split and checks with margins.
        ``details`` (:class:`~explorer.options.details.BootstrapDetails`) holds
        the figures without a slot of their own (nominal steady-state maximum,
        duty at which the rail reaches UVLO-off, the first-pulse inrush,
        start-up segments, Newton passes).

    Notes
    -----
    One step per part of the result: steady state (:func:`_steady_part`), start-up
    (:func:`_startup_part`), duty limits (:func:`_duty_part`), stress (:func:`_stress_part`), power
    (:func:`_power_part`) and checks (:func:`_checks_part`); each also gives its share of the details.
    """
    circ = bootstrap_circuit(design, option, corner)
    need = required_rail(design)
    warn: list[str] = []
    ss = steady_state(design, option, corner, circ)
    circ = ss.circuit  # the rail the reverse-bias rule presumes, as the steady orbit settled it
    for msg in _validity_messages(design, circ):
        warnings.warn(msg, ModelValidityWarning, stacklevel=2)
        warn.append(msg)
    steady = _steady_part(ss, warn)
    su = startup(design, option, corner, circ, steady=ss)
    start, su_details = _startup_part(design, option, circ, su, warn)
    duty, duty_details = _duty_part(design, circ, steady, ss.schedule, need, warn)
    caps, stress_details = _stress_part(design, option, circ, steady, ss, start, su_details["startup_v_max"])
    power = _power_part(design, circ, ss, steady, "v_min_model" in steady.details)
    warn += _clamp_words(circ, power)
    checks = _checks_part(design, option, steady, need, caps[0].v_max, stress_details["diode_v_reverse"], su)
    feasible, verdict = verdict_from(checks, warn)
    details = BootstrapDetails(c_eff=circ.c, required_rail=need, **steady.details, **su_details, **duty_details,
                               **stress_details, **power.details)
    hold_words = su.schedule.hold_words
    p_drawn = None if power.p_aux is None else power.p_aux + power.p_bus
    return OptionResult(label=option.label, kind=option.kind, feasible=feasible, verdict=verdict,
                        warnings=tuple(warn), v_rail=steady.rail if steady.refreshed else None,
                        efficiency=power.efficiency, p_delivered=power.p_del, p_drawn=p_drawn, startup=start,
                        duty=duty, r_out=None, capacitors=caps, p_drawn_aux=power.p_aux, p_drawn_bus=power.p_bus,
                        losses=power.losses, checks=tuple(checks), details=details,
                        assumptions=((hold_words,) if hold_words else ()) + power.assumptions,
                        t=steady.t_wave, v=steady.v_wave)


#: What ``DutyLimits.hold_up`` of a bootstrap counts down to (``hold_up_threshold`` gives the value;
#: the time to UVLO-off is ``BootstrapDetails.hold_up_uvlo_off``).
HOLD_UP_TO = "required rail: max(UVLO-off, V_GS needed) + margin"


def _is_refreshed(ss: SteadyState) -> bool:
    """The diode delivers charge in the periodic steady state.

    A finite orbit is not enough: with a gate pull-down R_GS a never-refreshed rail still has a
    fixed point (the load's own, V = −I·R_GS, below 0 V), which is a decay to nothing, not a
    refreshed orbit.
    """
    if not np.isfinite(ss.orbit.v_start).all():
        return False
    return bool(_refresh_mask(ss.loop, ss.orbit))


def _refresh_mask(loop: Loop, orb: OrbitSolution) -> np.ndarray:
    """Where the diode conducts somewhere in the orbit (shape of the orbit's rows; see :func:`_is_refreshed`).

    An interval conducts where the rail dips below its conduction level: V_src − V_F for the
    straight-line diode, V_src (forward bias) for the junction. The rail is monotone within an
    interval, so its start (after the step) and its end tell; zero-length intervals do not count.
    """
    lp = _bc(loop)
    level = lp.v_src - (lp.v_f if loop.diode == "linear" else 0.0)
    low = np.minimum(orb.v_start, orb.v_end)
    return ((low < level) & (lp.dt > 0)).any(axis=-1)


def hold_up_time(v_top: float, q_edge: float, v_threshold: float, *, i_load: float, g_load: float,
                 c: float) -> float | None:
    """Time a rail stays above ``v_threshold`` with the HS held on, never refreshed [s].

    The rail starts at ``v_top`` [V] and loses ``q_edge`` [C] at the turn-on (gate, level shift,
    recovery, junction charge); then C·dV/dt = −I − V·g (constant current ``i_load`` [A] and the
    pull-down conductance ``g_load`` = 1/R_GS [S]), the first-order response
    V(t) = (V₀ + I/g)·exp(−g·t/C) − I/g, so t = (C/g)·ln((V₀ + I/g)/(V_th + I/g)), and
    t = C·(V₀ − V_th)/I without a pull-down (Alexander & Sadiku, *Fundamentals of Electric
    Circuits*, 6th ed., 2017, ch. 7, first-order circuits). 0 when the turn-on step already takes it
    below the threshold; None when it never gets there (no load at all).
    """
    v0 = v_top - q_edge / c
    if v0 <= v_threshold:
        return 0.0
    t = float(off_time_to(np.array(v0), np.array(v_threshold), np.array(i_load), np.array(g_load), np.array(c)))
    return t if math.isfinite(t) else None


def _first_hold(s: Schedule) -> float | None:
    """Switch-node level of the first withheld HS pulse of a start-up schedule [V] (None: no HS slot)."""
    if s.v_hold is None or not s.hs_on.any():
        return None
    return float(s.v_hold[s.hs_on.nonzero()[0][0]])


def _ls_pulse_min(design, circ, need):
    """Light-load buck: shortest LS pulse that keeps the steady-state minimum at ``need`` [s]."""
    b = design.bridge
    T = 1.0 / b.f_sw
    hs_t, _, la, lb = hs_duty_per_period(b, np.zeros(1, dtype=int), np.ones(1))
    t_max = T - hs_t[0] - 2 * b.dead_time

    def vmin(pulses):
        dts = []
        for tp in pulses:
            span = T * (1 + b.skip_cycles)
            dts.append([hs_t[0], b.dead_time, tp, max(span - hs_t[0] - b.dead_time - tp, 0.0)])
        dt = np.array(dts)
        v = np.broadcast_to([b.v_bus, la[0], b.v_sw_low, b.v_out], dt.shape)
        hs = np.broadcast_to([True, False, False, False], dt.shape)
        loop = schedule_loop(circ, dt, v, hs, periodic=True)
        m = solve_orbit(_bc(loop)).v_min
        return np.where(np.isfinite(m), m, -np.inf)

    g = np.linspace(0.0, t_max, 33)[1:]
    m = vmin(g)
    if not np.any(m >= need):
        return None
    j = int(np.argmax(m >= need))
    if j == 0:
        lo, hi = 0.0, g[0]
    else:
        lo, hi = g[j - 1], g[j]
    for _ in range(4):
        gg = np.linspace(lo, hi, 17)
        mm = vmin(np.maximum(gg, 1e-15))
        j = int(np.argmax(mm >= need))
        lo, hi = gg[max(j - 1, 0)], gg[j]
    return float(hi)


# --------------------------------------------------------------------------- SPICE

def rail_min_batch(design: Design, option: BootstrapOption, factors) -> np.ndarray:
    """Steady-state rail minimum for many spread samples in one batched solve [V].

    ``factors`` is an :class:`explorer.tolerance.Factors` of equal-length
    arrays. Sample ``i`` is what :func:`evaluate_option` gives for the design
    perturbed by :func:`explorer.tolerance.apply_factors` with ``factors.at(i)``
    (capacitance × k_c with its DC bias at the sample's charge target, gate
    charge, quiescent current, aux rail and diode forward voltage scaled,
    leakage grown with temperature); all samples share the analysis period and
    are solved at once by :func:`explorer.engines.rail_orbit.steady_rail`.
    A collapsing rail reads 0 V and a never-refreshed one NaN, as in
    ``evaluate_option``.
    """
    from ..tolerance import apply_factors

    k_c = np.atleast_1d(np.asarray(factors.k_c, dtype=float))
    n = k_c.size

    def col(x):
        return np.broadcast_to(np.asarray(x, dtype=float), (n,))[:, None]

    nominal = apply_factors(design, option.label, type(factors)(t=design.checks.t_amb))
    base = bootstrap_circuit(nominal, nominal.option(option.label))
    v_dd = design.aux.v_dd * col(factors.v_dd)
    q_on = design.gate.q_g * col(factors.q_g) + design.driver.q_ls
    i_q = design.driver.i_q * col(factors.i_q)
    leak = option.i_leak * col(factors.leak(design))
    d = option.diode
    if isinstance(d, JunctionDiode):
        vt = 0.025852  # the same reference as tolerance.apply_factors
        v_ref = d.n * vt * math.log(0.1 / d.i_s)
        i_s = 0.1 * np.exp(-col(factors.v_f) * v_ref / (d.n * vt))
        drop = base.n_vt * np.log1p(i_q / i_s) + d.r_s * i_q
        v_f = 0.0
    else:
        i_s = base.i_s
        v_f = d.v_f * col(factors.v_f)
        drop = v_f
    v_bias = np.maximum(v_dd - design.bridge.v_sw_low - drop, 0.0)
    c_eff = capacitance(option.c * col(factors.k_c), v_applied=v_bias, v_rating=option.v_rating,
                        dc_bias=option.dc_bias)
    circ = dataclasses.replace(base, c=c_eff, v_f=v_f, i_s=i_s, v_dd=v_dd, i_q=i_q, i_leak=leak, q_on=q_on,
                               v_bias=v_bias)
    s = period_schedule(design)
    dt, v, hs = s.dt[None, :], s.v_sw[None, :], s.hs_on[None, :]
    masks = loop_masks(circ, dt, v, hs, periodic=True)
    loop = schedule_loop(circ, dt, v, hs, periodic=True, masks=masks)
    orb = solve_orbit(_bc(loop))
    redo = ~np.broadcast_to(_presumption_holds(circ, masks, orb), (n,))
    if redo.any():  # as steady_state: the samples whose rail falls below the v_hold presumed, under the rule
        c0 = dataclasses.replace(circ, v_hold=0.0)  # for any rail (the samples' circuits are one batch: all again)
        m0 = loop_masks(c0, dt, v, hs, periodic=True)
        orb = _merge_orbits(orb, _orbit_rows(solve_orbit(_bc(schedule_loop(c0, dt, v, hs, periodic=True, masks=m0))),
                                             redo), redo)
    v_min = np.where(_refresh_mask(loop, orb), np.asarray(orb.v_min, dtype=float), np.nan).reshape(n)
    return np.where(v_min < 0.0, 0.0, v_min)


# --------------------------------------------------------------------------- the family's model

class BootstrapModel(SupplyModel):
    """The bootstrap family for the registry (:mod:`explorer.options.base`)."""

    kind = "bootstrap"
    option_class = BootstrapOption
    capacitor_names = ("C_boot",)
    sized_capacitor = "c"
    glossary_parts = (("bootstrap diode, straight line", LinearDiode),
                      ("bootstrap diode, exponential junction", JunctionDiode))
    netlist_probes = {"cap": "v(vb)-v(cb)"}

    evaluate = staticmethod(evaluate_option)
    rail_min_batch = staticmethod(rail_min_batch)
    rail_min_map = staticmethod(rail_min_map)

    def capacitors(self, option) -> tuple:
        return (option.capacitor,)

    def apply_factors(self, design, option, factors):
        """Capacitance × ``k_c`` (class applied), diode forward voltage × ``v_f``, leakage at ``t``."""
        diode = option.diode
        if isinstance(diode, JunctionDiode):
            # a forward-voltage factor on an exponential junction: scale i_s so that v_j at a
            # reference current moves by the same factor (v_j = n·V_T·ln(i/i_s))
            vt = 0.025852  # thermal voltage at 300 K [V] (k·T/q, CODATA constants)
            v_ref = diode.n * vt * np.log(0.1 / diode.i_s)
            diode = dataclasses.replace(diode, i_s=float(0.1 * np.exp(-factors.v_f * v_ref / (diode.n * vt))))
        else:
            diode = dataclasses.replace(diode, v_f=diode.v_f * factors.v_f)
        return dataclasses.replace(option, c=option.c * factors.k_c, c_tol=0.0, dielectric="ideal", diode=diode,
                                   i_leak=option.i_leak * float(factors.leak(design)))

    def spread_ranges(self, design, option) -> dict:
        """The shared spreads, plus the diode's forward voltage and, with leakage, the temperature."""
        out = super().spread_ranges(design, option)
        out["v_f"] = (1 - design.spread.v_f, 1 + design.spread.v_f)
        if option.i_leak > 0:
            out["t"] = (design.checks.t_min, design.checks.t_max)
        return out

    def temperature_changes(self, design, index, option, t) -> dict:
        """Leakage grows by ``spread.leak_per_100k`` per 100 K above the design's ``t_amb``."""
        if option.i_leak <= 0:
            return {}
        growth = design.spread.leak_per_100k ** ((t - design.checks.t_amb) / 100.0)
        return {f"options[{index}].i_leak": option.i_leak * growth}

    def netlist_settle_time(self, design, option, result, corner):
        """SETTLE_TAU e-folds of the slower of two rates: the loop's τ = R·C over the SW-low share of the
        period, and the steady orbit's own contraction per analysis period (:func:`orbit_contraction`).

        The second is what sets the approach to the orbit when the diode conducts for less than the
        SW-low time: a rail that the dead-time undershoot lifts above V_DD − V_F refreshes only in the
        dead time (half bridge, 200 ns of 10 µs), so it settles over tens of periods, not a few τ.
        """
        from ..netlist import SETTLE_TAU
        circ = bootstrap_circuit(design, option, corner)
        s = period_schedule(design)
        tau = circ.r_tot * circ.c
        # the loop only refreshes while SW is at the low-side level or below (not while it rests at V_out)
        is_low = s.v_sw <= max(design.bridge.v_sw_low, 0.0)
        low = float(s.dt[is_low].sum() / s.period)
        rate = low / tau
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", ModelValidityWarning)
            rho = orbit_contraction(steady_state(design, option, corner, circ))
        if 0.0 < rho < 1.0:
            rate = min(rate, -math.log(rho) / s.period)
        # a stretch without refresh that began before the rail settled carries its deviation to its end
        # (a three-phase leg's HS clamp of 120°): the steady window starts after the longest of them
        return SETTLE_TAU / max(rate, 1e-3 / tau) + longest_run(s.dt, ~is_low)

    def netlist_delivered(self, design, option, corner, schedule, n_cycles, t_uvlo):
        """The pulses the model's own start-up delivers (UVLO decided interval by interval)."""
        return startup(design, option, corner, n_cycles=n_cycles).delivered

    def netlist_lines(self, design, option, plan, corner):
        from ..netlist import bootstrap_lines
        return bootstrap_lines(design, option, plan, corner)


MODEL = BootstrapModel()
