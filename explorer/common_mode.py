"""Common-mode currents through a capacitance that straddles the switch node.

Any capacitance C between the ground domain and the switch-node (SW) domain
(an isolated supply's barrier capacitance, a bootstrap diode's junction, a
charge pump's domain-crossing parasitic) is charged and discharged at every
SW edge. The laws used are the capacitor's constitutive relations

    i = C·dv/dt                                              (1)
    Q = C·V                                                  (2)

(any circuit-theory textbook, e.g. Alexander & Sadiku, *Fundamentals of
Electric Circuits*, 6th ed., 2017, §6.2), and, for a full
swing 0 → V → 0 repeated at f, the energy drawn from the source per cycle
Q·V = C·V², so

    P = C·V²·f                                               (3)

(half of it is dissipated while charging, half while discharging; the same
eq. gives the switching loss of any node capacitance, Erickson & Maksimović,
*Fundamentals of Power Electronics*, 3rd ed., 2020, ch. 4, switching loss).

All functions are pure and broadcast over numpy arrays (the result is a numpy
float or array; scalar inputs give a scalar-shaped result).
"""

from __future__ import annotations

import numpy as np

from dataclasses import dataclass

from .schedule import Schedule, previous

__all__ = ["edge_dv_dt", "cm_current", "edge_charge", "cm_power", "cmti_required", "cmti_ratio",
           "rising_edge_swings", "bus_power_per_edges", "EdgePower", "edge_swings", "capacitive_edge_power",
           "edge_words",
           "EDGE_SHAPE_FACTOR", "switch_node_dv_dt", "cmti_check"]


def edge_dv_dt(v_swing, t_edge):
    """Average slew rate of a switch-node edge, dv/dt = |ΔV|/t_edge [V/s].

    Parameters
    ----------
    v_swing : float or array [V]
        Voltage swing of the edge (for a bridge leg, the bus voltage).
    t_edge : float or array [s], > 0
        Rise (or fall) time of the edge.

    Returns
    -------
    float or ndarray [V/s]

    Examples
    --------
    >>> float(edge_dv_dt(400.0, 8e-9))
    50000000000.0
    """
    return np.abs(np.asarray(v_swing, dtype=float)) / np.asarray(t_edge, dtype=float)


#: Peak slope of an edge over its average slope V/t_edge, by edge shape: a linear ramp 1; a raised
#: cosine v = V/2·(1 − cos(π·t/t_edge)) has dv/dt = (π/2)·(V/t_edge)·sin(π·t/t_edge), peak π/2.
EDGE_SHAPE_FACTOR = {"linear": 1.0, "raised_cosine": np.pi / 2.0}


def switch_node_dv_dt(bridge) -> float:
    """Peak dv/dt of the leg's switch-node edge [V/s]: the shape factor × V_bus/t_edge.

    ``bridge.edge_shape`` ``"linear"`` gives V_bus/t_edge; ``"raised_cosine"`` (π/2)·V_bus/t_edge, the
    derivative's maximum of V/2·(1 − cos(π·t/t_edge)) at mid-edge.
    """
    return float(EDGE_SHAPE_FACTOR[bridge.edge_shape] * edge_dv_dt(bridge.v_bus, bridge.t_edge))


def cmti_check(design, cmti: float, what: str):
    """The ``cmti`` check: a driver's immunity at least ``checks.cmti_margin`` × the switch node's peak dv/dt."""
    from .results import Check
    dv_dt = switch_node_dv_dt(design.bridge)
    return Check("cmti", cmti, float(cmti_required(dv_dt, design.checks.cmti_margin)), "min", "V/s",
                 f"{what} CMTI is at least {design.checks.cmti_margin:g} \u00d7 the switch-node peak dv/dt "
                 f"{dv_dt:.4g} V/s ({design.bridge.edge_shape} edge)")


def cm_current(c, dv_dt):
    """Common-mode current through a capacitance, i = C·dv/dt (eq. 1) [A].

    Parameters
    ----------
    c : float or array [F], ≥ 0
        Capacitance across the domain boundary.
    dv_dt : float or array [V/s]
        Slew rate of the voltage across it.

    Examples
    --------
    >>> round(float(cm_current(10e-12, 50e9)), 12)
    0.5
    """
    return np.asarray(c, dtype=float) * np.asarray(dv_dt, dtype=float)


def edge_charge(c, v_swing):
    """Charge moved through a capacitance by one edge, Q = C·ΔV (eq. 2) [C].

    Parameters
    ----------
    c : float or array [F], ≥ 0
    v_swing : float or array [V]
        Voltage change across the capacitance at the edge.
    """
    return np.asarray(c, dtype=float) * np.asarray(v_swing, dtype=float)


def cm_power(c, v_swing, f):
    """Power drawn by charging and discharging a capacitance, P = C·V²·f (eq. 3) [W].

    Parameters
    ----------
    c : float or array [F], ≥ 0
    v_swing : float or array [V]
        Full swing 0 → V → 0 of each cycle.
    f : float or array [Hz]
        Cycles per second.

    Examples
    --------
    >>> round(float(cm_power(10e-12, 400.0, 100e3)), 12)
    0.16
    """
    v = np.asarray(v_swing, dtype=float)
    return np.asarray(c, dtype=float) * v * v * np.asarray(f, dtype=float)


def cmti_required(dv_dt, margin):
    """Common-mode transient immunity a driver needs: margin·dv/dt [V/s].

    Parameters
    ----------
    dv_dt : float or array [V/s]
        Slew rate of the switch node.
    margin : float or array [-], ≥ 1
        Required ratio of CMTI to the slew rate (``checks.cmti_margin``); the
        ratio itself is a design choice of common practice, no source.
    """
    return np.asarray(margin, dtype=float) * np.asarray(dv_dt, dtype=float)


def cmti_ratio(cmti, dv_dt):
    """Ratio of a driver's CMTI to the slew rate it sees [-] (≥ margin passes)."""
    return np.asarray(cmti, dtype=float) / np.asarray(dv_dt, dtype=float)


def rising_edge_swings(schedule: Schedule) -> np.ndarray:
    """Voltage step of every SW rising edge of a schedule [V].

    A rising edge is an interval start flagged ``sw_rise``; its swing is the
    interval's SW level minus the level before it (the last interval's for
    the first one of a periodic schedule, 0 V before a start-up schedule).
    """
    v = schedule.v_sw
    return (v - previous(v, None if schedule.periodic else 0.0))[schedule.sw_rise]


def bus_power_per_edges(c, v_bus, swings, period):
    """Average power the bus supplies to charge a capacitance at SW rising edges [W].

    At each rising edge the bus supplies the charge C·ΔV (eq. 2) at the bus
    voltage, so P = V_bus·C·ΣΔV / T. For one full swing 0 → V_bus per
    switching period this is C·V_bus²·f_sw (eq. 3); a rise that starts below
    0 V (dead-time undershoot) or above it (a light-load buck resting at
    V_out) costs correspondingly more or less.

    Parameters
    ----------
    c : float or array [F]
        Capacitance from the SW domain to the ground domain.
    v_bus : float [V]
        Bus voltage.
    swings : array [V]
        Step of each rising edge within ``period`` (:func:`rising_edge_swings`).
    period : float [s]
        Duration the edges are spread over.
    """
    total = float(np.sum(np.asarray(swings, dtype=float)))
    return np.asarray(c, dtype=float) * (v_bus * total / period)


# --------------------------------------------------------------------------- energy by edge type

def edge_swings(schedule: Schedule) -> tuple[np.ndarray, np.ndarray]:
    """Every switch-node level change of a schedule: the step ΔV [V] and whether it is hard-switched.

    Edges are the interval starts where the level differs from the interval before (the last one
    for the first of a periodic schedule, ``v_rest`` before a start-up schedule); their kind is
    :attr:`~explorer.schedule.Schedule.edge_hard` (all hard where the schedule does not say).
    """
    v = schedule.v_sw
    dv = v - previous(v, None if schedule.periodic else schedule.v_rest)
    edge = dv != 0.0
    hard = np.ones(v.shape, dtype=bool) if schedule.edge_hard is None else schedule.edge_hard
    return dv[edge], hard[edge]


@dataclass(frozen=True)
class EdgePower:
    """Power lost charging a capacitance at the switch-node edges, by edge type.

    Attributes
    ----------
    dissipated : float [W]
        ½·C·ΔV² per hard-switched edge, none for a load-current-driven (zero-voltage) edge.
    gross : float [W]
        ½·C·ΔV² per edge of either kind: C·V²·f for a plain 0 → V → 0 swing, the figure a
        hard-switched leg would dissipate.
    n_hard, n_soft : int
        Edges of each kind over the schedule.
    """

    dissipated: float
    gross: float
    n_hard: int
    n_soft: int


def capacitive_edge_power(c, schedule: Schedule) -> EdgePower:
    """Power a capacitance from the switch-node domain to the ground domain costs at the edges [W].

    A hard-switched edge: the switch that turns on charges (or discharges) the capacitance from a
    stiff source through its channel; the source supplies C·V·ΔV while the stored energy changes by
    ½·C·(V₂² − V₁²), so ½·C·ΔV² is dissipated whatever the resistance (the switching loss of a
    node capacitance at hard turn-on, Erickson & Maksimović, *Fundamentals of Power Electronics*,
    3rd ed., 2020, ch. 4, switching loss). An edge moved by the load current in a dead time
    (zero-voltage switching) exchanges the capacitance's energy with the inductor without loss
    (same source, ch. 20, soft switching). A hard-switched pair of edges per period gives the
    textbook C·V²·f (eq. 3).

    Parameters
    ----------
    c : float [F], ≥ 0
    schedule : Schedule
        With its edge kinds (:func:`explorer.schedule.edge_kinds`).
    """
    dv, hard = edge_swings(schedule)
    e = 0.5 * float(c) * dv * dv
    period = schedule.period
    return EdgePower(dissipated=float(np.sum(e[hard])) / period, gross=float(np.sum(e)) / period,
                     n_hard=int(np.count_nonzero(hard)), n_soft=int(np.count_nonzero(~hard)))


def edge_words(what: str, ep: EdgePower) -> str:
    """Plain words for how a capacitance's edge energy is charged (for ``OptionResult.assumptions``)."""
    return (f"{what}: charged \u00bdC\u00b7\u0394V\u00b2 at each of the {ep.n_hard} hard-switched switch-node "
            f"edges of the analysis period and nothing at the {ep.n_soft} edges the load current moves in a "
            f"dead time (zero-voltage); the gross C\u00b7V\u00b2\u00b7f, every edge hard, is given beside it "
            "(bridge.edge_rise / edge_fall override the edge kinds)")
