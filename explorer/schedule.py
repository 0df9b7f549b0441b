"""Switching schedules of one bridge leg, as flat numpy arrays.

A schedule is a list of intervals. Each interval has a duration, the level of
the switch node (SW) during it, and whether the high-side (HS) gate is on;
the edge events at interval starts (HS turn-on, SW rising, SW falling) are
derived from those. Supply models integrate the arrays directly, so no
per-cycle Python objects exist.

Each switching period is built from four slots, in this order::

    [HS on] [dead time after HS turn-off] [LS on] [dead time before HS turn-on]

and zero-length slots are dropped. Conventions (DOMAIN.md's topology table):

* ``sync_buck`` CCM: HS on D·T with D = V_out/(η·V_in) (volt-second balance,
  Erickson & Maksimović, *Fundamentals of Power Electronics*, 3rd ed., 2020,
  ch. 2; η = 1 is the ideal, loss-free duty), LS on (1 − D)·T − 2·t_dead. The load current flows out
  of SW, so in both dead times the LS body diode conducts and SW sits at
  −v_undershoot.
* ``sync_buck`` light load: HS on D·T, dead time, LS on for ``ls_pulse`` (the
  inductor current reaches zero), then both switches off and SW rests at V_out
  for the rest of the period and ``skip_cycles`` whole skipped periods.
* ``sync_boost`` CCM: the LS is the main switch, on D·T with D = 1 − η·V_in/V_out
  (same source, ch. 2); the HS is the synchronous rectifier, on
  (1 − D)·T − 2·t_dead. The current flows into SW, so in dead time the HS body
  diode holds SW at the bus.
* ``half_bridge`` and ``line_leg``: HS on d·T − t_dead, LS on (1 − d)·T − t_dead
  (d = 0.5 gives DOMAIN's 0.5 − t_dead/T). Zero-voltage switching: SW falls in the
  dead time after HS turn-off and rises in the dead time before HS turn-on.
  ``line_leg`` switches once per line period.
* ``full_bridge`` (one leg) and ``three_phase``: HS on d·T − t_dead (turn-on
  delayed by the dead time). Sine PWM, regular-sampled at the start of each
  switching period: d_k = ½(1 + m·sin θ_k), θ_k = 2πk/N, N = round(f_sw/f_o)
  (Mohan, Undeland & Robbins, *Power Electronics*, 3rd ed., 2003, ch. 8); with
  third-harmonic injection the reference is m·(sin θ + sin 3θ / 6)
  (Holmes & Lipo, *Pulse Width Modulation for Power Converters*, IEEE Press/Wiley, 2003).
  Over-modulation clips d to [0, 1]. The dead-time level follows the sign of
  the load current sin(θ − φ). Standstill (f_o = 0) holds the worst angle, the
  highest duty, for ever: one switching period is analysed.

A duty whose LS slot vanishes keeps the HS on for the whole period (no dead
times); an HS pulse shorter than the driver's ``t_on_min`` is dropped.

The per-topology rules above (slot layout, operating duty, soft-start, analysis
period) are the table in :mod:`explorer.topology`; this module assembles them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .design import Bridge, Design, Driver
from .errors import DesignError
from .memo import Memory
from .topology import (QUASI_STATIC_PERIODS, analysis_period, hold_level, is_standstill, light_load,
                       periods_per_fundamental, topology_of)

__all__ = ["Schedule", "edge_kinds", "ls_dropped", "period_schedule", "startup_schedule", "nominal_duty", "hs_duty_per_period",
           "schedule_validity", "QUASI_STATIC_PERIODS", "periods_per_fundamental", "is_standstill", "longest_run",
           "previous", "slot_layout", "slot_edges", "map_periods"]


def longest_run(dt, mask, periodic: bool = True) -> float:
    """Longest stretch of consecutive intervals where ``mask`` holds [s], wrapping round from the last to
    the first when ``periodic`` (the whole length when it always holds; 0 when it never does)."""
    dt = np.asarray(dt, dtype=float)
    mask = np.asarray(mask, dtype=bool)
    if mask.all():
        return float(dt.sum())
    k = int(np.flatnonzero(~mask)[0]) if periodic else 0  # a cyclic scan starts at an interval outside
    d, m = np.concatenate((dt[k:], dt[:k])), np.concatenate((mask[k:], mask[:k]))  # np.roll by −k
    c = np.cumsum(np.where(m, d, 0.0))
    base = np.maximum.accumulate(np.where(m, 0.0, c))  # the running total where each stretch began
    return float(np.max(c - base))


@dataclass(frozen=True)
class Schedule:
    """Intervals of a switching schedule (all arrays have one entry per interval).

    Attributes
    ----------
    dt : ndarray of float [s]
        Interval durations.
    v_sw : ndarray of float [V]
        Switch-node level during the interval (referred to the power return).
    hs_on : ndarray of bool
        High-side gate on during the interval.
    hs_turn_on : ndarray of bool
        The HS turns on at the start of the interval.
    sw_rise, sw_fall : ndarray of bool
        SW rises to (falls from) the bus at the start of the interval.
    cycle : ndarray of int
        Index of the switching period (line period for ``line_leg``) each
        interval belongs to.
    duty : ndarray of float [-]
        HS on-time / period of each switching period.
    t_switch : float [s]
        One switching period (one line period for ``line_leg``).
    v_bus : float [V]
        Bus voltage, the high level of SW.
    periodic : bool
        True for a steady-state analysis period (the last interval precedes the
        first); False for start-up (HS off before the first, SW at ``v_rest``).
    v_hold : ndarray of float [V] or None
        Start-up only: the switch-node level of each interval if its HS pulse is
        withheld by UVLO (the topology's rule, :func:`explorer.topology.hold_level`);
        equal to ``v_sw`` where the HS is not commanded on.
    hold_words : str
        The assumption behind ``v_hold`` in plain words ("" for a periodic schedule).
    v_rest : float [V]
        Switch-node level before the first interval of a start-up schedule.
    edge_hard : ndarray of bool or None
        The switch-node edge at the start of each interval (where the level changes) is
        hard-switched: a switch turning on forces the node, and a capacitance across it dissipates
        ½·C·ΔV² (False: the load current moves the node in a dead time, zero-voltage, ~0). The
        rule: an edge into an HS or LS on-time (or the pre-charge pulse) is hard, one into a dead
        time or a light-load rest is not; ``bridge.edge_rise`` / ``edge_fall`` override it. None:
        every edge hard.
    """

    dt: np.ndarray
    v_sw: np.ndarray
    hs_on: np.ndarray
    hs_turn_on: np.ndarray
    sw_rise: np.ndarray
    sw_fall: np.ndarray
    cycle: np.ndarray
    duty: np.ndarray
    t_switch: float
    v_bus: float
    periodic: bool
    v_hold: np.ndarray | None = None
    hold_words: str = ""
    v_rest: float = 0.0
    edge_hard: np.ndarray | None = None

    @property
    def hs_turn_off(self) -> np.ndarray:
        """The HS turns off at the start of the interval (it was on in the interval before)."""
        return previous(self.hs_on, None if self.periodic else False) & ~self.hs_on

    def sw_levels(self, delivered) -> np.ndarray:
        """Switch-node level per interval with the HS pulses not in ``delivered`` withheld [V]."""
        if self.v_hold is None:
            return self.v_sw
        return np.where(self.hs_on & ~np.asarray(delivered, dtype=bool), self.v_hold, self.v_sw)

    @property
    def period(self) -> float:
        """Total duration [s]."""
        return float(self.dt.sum())

    @property
    def t_start(self) -> np.ndarray:
        """Start time of each interval [s]."""
        out = np.empty(max(self.dt.size, 1))
        out[0] = 0.0
        np.cumsum(self.dt[:-1], out=out[1:])
        return out

    @property
    def n_cycles(self) -> int:
        """Number of switching periods covered."""
        return int(self.duty.size)

    @property
    def sw_high(self) -> np.ndarray:
        """SW at the bus (above half of it) during the interval."""
        return self.v_sw > 0.5 * self.v_bus

    def __len__(self) -> int:
        return int(self.dt.size)


# --------------------------------------------------------------------------- duty

def nominal_duty(bridge: Bridge) -> float:
    """HS duty command of the operating point (before dead time) [-] (the topology table's).

    For three_phase this is the highest duty over the fundamental.
    """
    return topology_of(bridge).nominal_duty(bridge)


def _n_per_fundamental(bridge: Bridge) -> int:
    return periods_per_fundamental(bridge.f_sw, bridge.f_o)


def hs_duty_per_period(bridge: Bridge, k: np.ndarray, ramp: np.ndarray):
    """Per-period HS command, slot times and dead-time SW levels.

    Parameters
    ----------
    bridge : Bridge
    k : ndarray of int
        Switching-period indices (angle index for three_phase).
    ramp : ndarray of float
        Soft-start factor 0…1 per period.

    Returns
    -------
    t_hs, t_ls : ndarray [s]
        Raw HS and LS slot durations (may be ≤ 0; see :func:`_assemble`).
    lvl_a, lvl_b : ndarray [V]
        SW level in the dead time after HS turn-off and before HS turn-on.
    """
    return topology_of(bridge).slots(bridge, k, ramp, analysis_period(bridge))


# --------------------------------------------------------------------------- assembly

def previous(a: np.ndarray, first=None) -> np.ndarray:
    """Each interval's predecessor along the last axis: cyclically the last (``first`` None, a periodic
    schedule) or ``first`` before the first (a start-up)."""
    out = np.empty(a.shape, dtype=a.dtype)
    out[..., 1:] = a[..., :-1]
    out[..., 0] = a[..., -1] if first is None else first
    return out


def slot_layout(bridge: Bridge, driver: Driver, t_hs, t_ls, lvl_a, lvl_b, period, v_rest=None):
    """Slot times and SW levels of switching periods, zero-length slots kept: ``(dt, v, full_on, dropped, ls_off)``.

    The one place of the slot rules (module notes): ``[HS][dead][LS][dead]`` from the per-period
    slot times; light load (:func:`explorer.topology.light_load`) replaces the second dead time by
    the rest at V_out over ``skip_cycles`` more periods; an LS slot that vanishes puts the HS on for
    the whole period (``full_on``); an HS pulse shorter than ``t_on_min`` is not given (``dropped``:
    the period in the LS slot); an LS pulse shorter than ``t_on_min_ls`` is not given either
    (``ls_off``: SW stays at the first dead-time level). ``dt`` and ``v`` have shape ``(..., 4)``, the
    masks ``(...)``; every member of a batch keeps its four slots, so arrays of designs line up.

    Parameters
    ----------
    t_hs, t_ls, lvl_a, lvl_b : arrays broadcasting together [s], [s], [V], [V]
    period : float or array broadcasting with them [s]
        The switching period T.
    v_rest : float or array broadcasting with them [V], optional
        SW's rest level in light load (default ``bridge.v_out``; a grid over a buck's duty rests at
        each point's own V_out).
    """
    td = bridge.dead_time
    shape = np.broadcast(t_hs, t_ls, lvl_a, lvl_b, period).shape
    dt, v = np.empty(shape + (4,)), np.empty(shape + (4,))
    dt[..., 0] = t_hs
    dt[..., 1] = td
    dt[..., 2] = t_ls
    dt[..., 3] = td
    v[..., 0] = bridge.v_bus
    v[..., 1] = lvl_a
    v[..., 2] = bridge.v_sw_low
    v[..., 3] = lvl_b
    dropped = (dt[..., 0] <= 0.0) | (dt[..., 0] < driver.t_on_min)
    if light_load(bridge):
        dt[..., 2] = bridge.ls_pulse
        dt[..., 3] = np.maximum(period * (1 + bridge.skip_cycles) - dt[..., 0] - dt[..., 1] - dt[..., 2], 0.0)
        v[..., 3] = bridge.v_out if v_rest is None else v_rest
        full_on = np.zeros(shape, dtype=bool)
    else:
        full_on = dt[..., 2] <= 0.0
    dropped &= ~full_on
    ls_off = ls_dropped(dt[..., 2], driver.t_on_min_ls) & ~full_on & ~dropped
    v[..., 2] = np.where(ls_off, v[..., 1], v[..., 2])
    for whole, slot in ((full_on, 0), (dropped, 2)):  # the period in one slot, the others empty
        if whole.any():
            dt[whole] = 0.0
            dt[..., slot] = np.where(whole, period, dt[..., slot])
    return dt, v, full_on, dropped, ls_off


def slot_edges(dt, hs) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """HS state, HS turn-ons and HS turn-offs of periodic intervals that may include zero-length ones.

    A zero-length interval takes the state of the last interval of nonzero length before it
    (cyclically), so only real transitions count: a dropped HS pulse gives none, a whole-period
    HS on-time gives none, and a zero dead time moves the turn-off to the LS slot's start, the same
    instant. Shapes ``(..., n)`` like ``dt``; the schedule's own arrays (zero-length intervals
    dropped) give back ``hs``, ``hs & ~previous(hs)`` and ``~hs & previous(hs)``.
    """
    dt = np.asarray(dt, dtype=float)
    hs = np.broadcast_to(np.asarray(hs, dtype=bool), dt.shape)
    n = dt.shape[-1]
    last = np.maximum.accumulate(np.where(dt > 0.0, np.arange(n), -1), axis=-1)
    last = np.where(last < 0, last[..., -1:], last)  # before the first real interval: the period's last one
    state = np.take_along_axis(hs, np.maximum(last, 0), axis=-1)
    prev = previous(state)
    return state, state & ~prev, ~state & prev


def map_periods(bridge: Bridge, driver: Driver, f_sw, duty) -> tuple[np.ndarray, ...]:
    """One switching period per point of a margin map: ``(dt, hs_on, turn_on, turn_off)``, each ``(n, 4)``.

    ``f_sw`` [Hz] and ``duty`` (the HS on-time share, clipped to 0…1) are flat arrays of the points;
    the period is ``[HS duty·T][dead][LS][dead]`` under the slot rules (:func:`slot_layout`, zero-length
    slots kept) with the HS state and its real transitions (:func:`slot_edges`). SW levels are left
    out (the models that need them lay out their own, with their levels).
    """
    f = np.asarray(f_sw, dtype=float)
    bad = f[~(np.isfinite(f) & (f > 0.0))]
    if bad.size:
        raise DesignError("f_sw", "expected frequencies > 0 Hz", float(bad[0]))
    T = 1.0 / f
    t_hs = np.clip(np.asarray(duty, dtype=float), 0.0, 1.0) * T
    dt = np.maximum(slot_layout(bridge, driver, t_hs, T - t_hs - 2 * bridge.dead_time, 0.0, 0.0, T)[0], 0.0)
    hs = np.zeros(dt.shape, dtype=bool)
    hs[..., 0] = True
    return (dt, *slot_edges(dt, hs))


def _assemble(bridge: Bridge, driver: Driver, t_hs, t_ls, lvl_a, lvl_b, periodic: bool,
              pre: float = 0.0, hold=None, hold_words: str = "") -> Schedule:
    """Build the interval arrays from per-period slot times (vectorised, :func:`slot_layout`)."""
    T = analysis_period(bridge)
    skipping = light_load(bridge)
    K = t_hs.size
    if skipping and bridge.ls_pulse > t_ls.max(initial=0.0):
        raise DesignError("bridge.ls_pulse", f"must be shorter than the low-side slot "
                          f"{t_ls.max(initial=0.0):.4g} s", bridge.ls_pulse)
    # flat interval arrays, a low-side pre-charge pulse first where there is one; the periods are a
    # (K, 4) view of the rest, one row per period
    p = 1 if pre > 0.0 else 0
    n = 4 * K + p
    dt_f, v_f, vh_f = np.empty(n), np.empty(n), np.empty(n)
    hs_f, on_f = np.zeros(n, dtype=bool), np.zeros(n, dtype=bool)
    cyc_f = np.empty(n, dtype=int)
    dt, v, vh, hs, cyc, on_slot = (x[p:].reshape(K, 4) for x in (dt_f, v_f, vh_f, hs_f, cyc_f, on_f))
    dt[:], v[:], _, _, ls_off = slot_layout(bridge, driver, t_hs, t_ls, lvl_a, lvl_b, T)
    hs[:, 0] = True
    cyc[:] = np.arange(K)[:, None]
    duty = dt[:, 0] / (((dt[:, 0] + dt[:, 1]) + dt[:, 2]) + dt[:, 3])  # the period summed in order
    if hold is not None:
        vh[:] = v
        vh[:, 0] = hold
    on_slot[:, 0] = True  # an edge into HS or LS on-time is forced
    on_slot[:, 2] = ~ls_off
    if p:  # low-side pre-charge pulse before the first period
        dt_f[0], v_f[0], vh_f[0], hs_f[0], cyc_f[0], on_f[0] = pre, bridge.v_sw_low, bridge.v_sw_low, False, -1, True
    keep = dt_f > 0.0
    dt, v, hs, cyc, on_slot = dt_f[keep], v_f[keep], hs_f[keep], cyc_f[keep], on_f[keep]
    high = v > 0.5 * bridge.v_bus
    v_rest = bridge.v_sw_low if hold is None else float(np.ravel(hold)[0]) if np.size(hold) else 0.0
    first = None if periodic else False
    prev_high, prev_hs = previous(high, first), previous(hs, first)
    prev_v = previous(v, None if periodic else v_rest)
    edge_hard = edge_kinds(bridge, on_slot, v > prev_v)
    return Schedule(dt=dt, v_sw=v, hs_on=hs, hs_turn_on=hs & ~prev_hs, sw_rise=high & ~prev_high,
                    sw_fall=~high & prev_high, cycle=cyc, duty=duty,
                    t_switch=T * (1 + (bridge.skip_cycles if skipping else 0)),
                    v_bus=bridge.v_bus, periodic=periodic, v_hold=None if hold is None else vh_f[keep],
                    hold_words=hold_words, edge_hard=edge_hard, v_rest=v_rest)


def ls_dropped(t_ls, t_on_min_ls: float) -> np.ndarray:
    """LS pulses the driver does not give: shorter than its minimum low-side on-time (and not zero).

    The low side then stays off for that slot and the switch node stays where the load current
    holds it in the dead time before (a buck's freewheeling body diode keeps it low and still
    refreshes a bootstrap; a boost's HS body diode keeps it at the bus and does not).
    """
    t_ls = np.asarray(t_ls, dtype=float)
    return (t_ls > 0.0) & (t_ls < t_on_min_ls)


def edge_kinds(bridge: Bridge, on_slot, rising) -> np.ndarray:
    """Whether the edge into each interval is hard-switched (see :attr:`Schedule.edge_hard`).

    ``on_slot``: the interval is a switch's on-time (HS, LS or the pre-charge pulse); ``rising``:
    the level rises into it. ``bridge.edge_rise`` / ``edge_fall`` = "hard" or "soft" override the
    schedule's rule for that direction.
    """
    on_slot = np.asarray(on_slot, dtype=bool)
    rising = np.asarray(rising, dtype=bool)
    out = on_slot.copy()
    for mode, mask in ((bridge.edge_rise, rising), (bridge.edge_fall, ~rising)):
        if mode != "auto":
            out = np.where(mask, mode == "hard", out)
    return out


def period_schedule(design: Design, bridge: Bridge | None = None) -> Schedule:
    """The steady-state analysis period of the leg.

    One switching period, except: three_phase covers a whole fundamental
    period (N = round(f_sw/f_o) switching periods; one period at standstill);
    line_leg covers one line period; a light-load buck covers one pulse and
    its skipped periods.

    Examples
    --------
    >>> from explorer import demo_design
    >>> s = period_schedule(demo_design())
    >>> round(s.period * demo_design().bridge.f_sw, 12)
    1.0
    """
    b = bridge or design.bridge
    return _PERIODS.get((b, design.driver), lambda: _period_schedule(b, design.driver))


#: Analysis periods by (bridge, driver), the only fields they depend on: every option of a design asks
#: for the same one (:mod:`explorer.memo`; emptied with the other memories).
_PERIODS = Memory("period schedules", maxsize=32)


def _period_schedule(b: Bridge, driver: Driver) -> Schedule:
    n = _n_per_fundamental(b) if topology_of(b).fundamental else 1
    k = np.arange(n)
    t_hs, t_ls, la, lb = hs_duty_per_period(b, k, np.ones(n))
    return _assemble(b, driver, t_hs, t_ls, la, lb, periodic=True)


def startup_schedule(design: Design, bridge: Bridge | None = None, n_cycles: int | None = None) -> Schedule:
    """Start-up from a dead rail: optional LS pre-charge, then the soft-start ramp.

    The duty command rises linearly from 0 over ``soft_start`` (a buck's HS
    duty, a boost's main-switch duty, a full bridge's command, a three-phase
    leg's modulation index; a half bridge and a line leg keep their duty).
    ``n_cycles`` (default ``bridge.startup_cycles``) switching periods are
    covered after the pre-charge. Whether an HS pulse is really delivered
    depends on the rail reaching UVLO, which the supply model decides; where it
    is withheld the switch node rests at ``v_hold`` (the topology's rule,
    :func:`explorer.topology.hold_level`: a buck at its starting output, a boost
    at its input, a line leg at the bus, the others where the load current holds
    it in the dead time), and before the first interval at ``v_rest``.
    """
    b = bridge or design.bridge
    n = b.startup_cycles if n_cycles is None else int(n_cycles)
    T = analysis_period(b)
    k = np.arange(n)
    if b.soft_start > 0 and topology_of(b).soft_start:
        ramp = np.minimum(1.0, (k * T) / b.soft_start)
    else:
        ramp = np.ones(n)
    t_hs, t_ls, la, lb = hs_duty_per_period(b, k, ramp)
    hold, words = hold_level(b, lb)
    return _assemble(b, design.driver, t_hs, t_ls, la, lb, periodic=False, pre=b.precharge, hold=hold,
                     hold_words=words)


def schedule_validity(design: Design, schedule: Schedule | None = None) -> list[str]:
    """Plain-words reasons why the schedule leaves the range the models assume (empty: none).

    Every supply model treats a switch-node edge as an instantaneous step at an interval start
    (the edge time only sizes dv/dt and pulse currents) and needs each interval to be a real
    stretch of its level. That no longer holds when

    * the edge time ``t_edge`` is longer than an interval of the steady-state schedule (the switch
      node would still be moving when the next interval starts), or
    * the dead time is longer than a delivered HS pulse (the pulse would end before the edges
      around it have settled).

    The caller warns with :class:`~explorer.errors.ModelValidityWarning`
    (:func:`explorer.compare.evaluate` does).
    """
    s = schedule if schedule is not None else period_schedule(design)
    b = design.bridge
    out = []
    live = s.dt[s.dt > 0]
    if live.size and b.t_edge > float(live.min()):
        out.append(f"the switch-node edge time t_edge = {b.t_edge:.3g} s is longer than the shortest "
                   f"interval of the schedule ({float(live.min()):.3g} s): the models treat edges as steps "
                   "between intervals, so the rail figures near that interval are not reliable")
    if topology_of(b).fundamental and b.f_o and is_standstill(b):
        out.append(f"the output frequency f_o = {b.f_o:.3g} Hz is below f_sw/{QUASI_STATIC_PERIODS} = "
                   f"{b.f_sw / QUASI_STATIC_PERIODS:.3g} Hz: the leg is analysed as standstill (the highest "
                   "duty held for ever), which bounds the slow fundamental from the safe side")
    pulses = s.dt[s.hs_on & (s.dt > 0)]
    if pulses.size and b.dead_time > float(pulses.min()):
        out.append(f"the dead time {b.dead_time:.3g} s is longer than the shortest high-side pulse "
                   f"({float(pulses.min()):.3g} s): the edges around that pulse overlap it, which the "
                   "schedule does not model")
    return out
