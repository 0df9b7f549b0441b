"""SPICE netlist export: each option's circuit driven by the design's schedule.

The SPICE netlist is the trade's common exchange format. :func:`export_netlist`
writes a complete, self-contained netlist (plain SPICE elements and the
standard ``D`` and ``SW`` models only, numbers in plain exponent notation) of
one option of a design, so that an engineer can re-run the model's case in the
circuit simulator of their choice. It is checked against the open-source
ngspice simulator in ``tests/test_netlist.py``.

What the netlist holds
----------------------
*The bridge leg.* The switch node ``vs`` is a piecewise-linear (PWL) voltage
source following :func:`explorer.schedule.startup_schedule` (the optional
low-side pre-charge, the soft-start ramp, then the operating point; the
schedule continues periodically, so its last periods are the steady state of
:func:`explorer.schedule.period_schedule`). Every level change takes the
design's ``bridge.t_edge``. High-side pulses that the driver withholds while
its rail is below UVLO-on are decided by the model (for the bootstrap the
model's start-up solution; for a pump or an isolated module the model's time
to UVLO-on) and leave ``vs`` where the topology holds it (the schedule's
``v_hold``: a buck's starting output, a boost's input, a line leg's bus, else
the dead-time level), as in the model.

*The gate load* between the rail ``vb`` and ``vs``: a current pulse carrying
Q_G + Q_LS over ``t_edge`` at each delivered HS turn-on and Q_LS at each turn-off, the driver's
quiescent current I_Q as a DC source, and R_GS switched in while the HS is on
(a voltage-controlled switch driven by the 0/1 node ``hs``).

*The option's parts.*

* bootstrap: V_DD, R_boot, the diode as a SPICE ``D`` model (a junction diode
  with its IS, N, RS; a straight-line diode as a sharp ideal junction in
  series with V_F and r_D), its junction capacitance (CJO with grading M = 0,
  i.e. a constant C_j, as the model takes it), its reverse leakage while SW is
  high and its recovery charge at each SW rising edge (current pulses), and
  C_boot (effective capacitance at the corner) with its ESR.
* charge pump: the input rail, the four switches clocked at f_cp (standard
  ``SW`` model, on-resistance R_on) with the pump's dead times, C_fly and
  C_out (effective) with their ESRs. 1:1 charges the flying capacitor from the
  ground-referenced input and transfers in the SW domain; for 1:2 and 2:1 the
  input rail is referred to the switch node, which is the model's stated
  assumption (see :mod:`explorer.options.charge_pump`).
* isolated: the module as a PWL source (0 until ``t_start``, a ramp to
  ``v_out`` over ``t_ramp``) behind ``r_out``, C_out (effective) with its
  ESR, and C_iso from the SW domain across the barrier to the primary ground,
  in series with a 0 V source ``VCM`` whose current is the common-mode current.

Parasitics that the models count only as losses (a pump's bottom-plate and
domain-crossing capacitance, its switches' gate drive; a module's input side)
are not drawn.

The netlist ends with ``.options`` (reltol = 1e-4), a ``.tran … uic`` line
covering the start-up plus a few analysis periods from dead capacitors, and
no ``.control``/``.end``, so that :func:`explorer.spice.run_transient` can
append its control block; ``standalone=True`` appends a control block that
writes the rail to a text file, and ``.end``.

Results are estimates to be confirmed by measurement.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from .design import BootstrapOption, ChargePumpOption, Design, IsolatedOption, JunctionDiode
from .engines.rail_loop import thermal_voltage
from .errors import DesignError
from .loads import charge_per_turn_off, charge_per_turn_on
from .schedule import Schedule, period_schedule, previous, startup_schedule
from .spice import spice_number as _n
from .topology import topology_of

__all__ = ["export_netlist", "export_all", "netlist_probes", "netlist_plan", "NetlistPlan",
           "STEADY_PERIODS", "SETTLE_TAU", "POINTS_PER_PERIOD", "RELTOL"]

#: Analysis periods simulated after the rail has settled [-].
STEADY_PERIODS = 4
#: Time constants allowed for the rail to settle after start-up (e^-12 ≈ 6e-6): of the rail's slowest approach
#: to its steady state (a bootstrap: the steady orbit's contraction per period, see the option model) [-].
SETTLE_TAU = 12.0
#: Output points per fastest period of interest (switching or pump clock) [-]; the
#: PWL corners are breakpoints, so the simulator also steps onto every edge.
POINTS_PER_PERIOD = 100
#: Relative tolerance of the transient.
RELTOL = 1e-4
#: Off resistance of the pump's switches [Ω] (ngspice 39 finds the first step singular
#: with a floating flying capacitor above about this; it leaks V/1e6 per open switch).
R_OFF = 1e6
#: Saturation current [A] and emission coefficient [-] of the sharp junction that stands for
#: the knee of a straight-line diode.
SHARP_IS, SHARP_N = 1e-14, 0.01
#: Start of the pump clock after t = 0, in pump periods [-].
PUMP_DELAY = 0.25
#: Smallest resistance written where the design allows zero [Ω].
R_MIN = 1e-6

_CAUTION = ("results are estimates to be confirmed by measurement; bus voltages can be lethal "
            "and stored charge persists after power-off")


# --------------------------------------------------------------------------- plan

@dataclass(frozen=True)
class NetlistPlan:
    """What one exported netlist simulates (all times from t = 0, dead capacitors).

    Attributes
    ----------
    label, kind : str
    schedule : Schedule
        The start-up schedule the switch node follows.
    delivered : ndarray of bool
        HS pulses delivered (the others are withheld by UVLO).
    n_cycles : int
        Switching periods of the schedule (after the pre-charge).
    t_stop : float [s]
        End of the transient.
    t_step : float [s]
        Output step (and largest internal step) of the transient.
    t_steady : float [s]
        Start of the last ``STEADY_PERIODS`` analysis periods (steady-state window).
    t_pump0 : float [s]
        Start of the pump clock's first phase (0 for the other kinds): :data:`PUMP_DELAY`
        pump periods plus the control edge of :func:`explorer.engines.spice_text.spice_t0`.
    t_uvlo_model : float or None [s]
        Model's time to UVLO-on, in the netlist's time frame.
    result : OptionResult
        The model's result for the same design, option and corner.
    """

    label: str
    kind: str
    schedule: Schedule
    delivered: np.ndarray
    n_cycles: int
    t_stop: float
    t_step: float
    t_steady: float
    t_pump0: float
    t_uvlo_model: float | None
    result: object


def _option(design: Design, label: str):
    if not isinstance(label, str):
        raise DesignError("label", "expected an option label (text)", label)
    return design.option(label)


def _model(option):
    from .options import supply_model
    model = supply_model(option.kind)
    if model is None:
        raise DesignError("kind", "no model for this option kind", option.kind)
    return model


def netlist_plan(design: Design, label: str, *, n_cycles: int | None = None,
                 corner: str = "nominal") -> NetlistPlan:
    """The schedule, delivered pulses and time span an exported netlist simulates.

    Parameters
    ----------
    design : Design
    label : str
        Label of the option.
    n_cycles : int, optional
        Switching periods of the start-up schedule to simulate (after the
        pre-charge). Default: the soft-start or the model's time to UVLO-on,
        whichever is longer, plus :data:`SETTLE_TAU` time constants of the
        rail, plus :data:`STEADY_PERIODS` analysis periods.
    corner : {"nominal", "min", "max"}
        Capacitance corner (:func:`explorer.capacitors.capacitance`).
    """
    option = _option(design, label)
    model = _model(option)
    b = design.bridge
    result = model.evaluate(design, option, corner=corner)
    per = period_schedule(design)
    t_sw = per.t_switch
    t_pump0 = 0.0
    t_uvlo = result.startup.t_uvlo if result.startup is not None else None
    durations = model.netlist_clock(design, option)
    if durations is not None:
        from .engines.spice_text import spice_t0
        # a quarter period late, so that for commensurate clocks the pump's edges do not fall on
        # the PWM's (a coincidence shifts ngspice's rail by about 0.05 %; the clocks are asynchronous)
        t_pump0 = PUMP_DELAY * float(durations.sum()) + spice_t0(durations)
    if t_uvlo is not None:
        t_uvlo = t_uvlo + t_pump0
    if n_cycles is None:
        t_ss = b.soft_start if topology_of(b).soft_start else 0.0
        t_first = max(t_ss, t_uvlo if t_uvlo is not None else b.startup_cycles * t_sw)
        n_cycles = (math.ceil((t_first + model.netlist_settle_time(design, option, result, corner)) / t_sw)
                    + STEADY_PERIODS * per.n_cycles)
    if not isinstance(n_cycles, (int, np.integer)) or isinstance(n_cycles, bool) or n_cycles < 1:
        raise DesignError("n_cycles", "expected a whole number of switching periods \u2265 1", n_cycles)
    n_cycles = int(n_cycles)
    s = startup_schedule(design, n_cycles=n_cycles)
    delivered = model.netlist_delivered(design, option, corner, s, n_cycles, t_uvlo)
    t_stop = s.period
    fastest = min(t_sw, s.t_switch)
    if durations is not None:
        fastest = min(fastest, float(durations.sum()))
    t_step = min(fastest / POINTS_PER_PERIOD, t_stop / 50.0)
    t_steady = max(0.0, t_stop - STEADY_PERIODS * per.period)
    return NetlistPlan(label=option.label, kind=option.kind, schedule=s, delivered=np.asarray(delivered, bool),
                       n_cycles=n_cycles, t_stop=t_stop, t_step=t_step, t_steady=t_steady, t_pump0=t_pump0,
                       t_uvlo_model=t_uvlo, result=result)


# --------------------------------------------------------------------------- text helpers

_ASCII = {"\u2192": "->", "\u00b5": "u", "\u03bc": "u", "\u03a9": "Ohm", "\u2126": "Ohm", "\u00b7": ".",
          "\u2013": "-", "\u2014": "-", "\u2264": "<=", "\u2265": ">=", "\u00d7": "x", "\u00b0": "deg"}


def _ascii(text: str) -> str:
    """Comment text in plain ASCII (some simulators reject other bytes)."""
    out = "".join(_ASCII.get(ch, ch) for ch in str(text))
    out = out.encode("ascii", "replace").decode("ascii")
    return " ".join(out.split())


def _later(a: float, b: float) -> bool:
    """``a`` is after ``b`` as written in the netlist (a PWL time must increase after printing)."""
    return a > b and _n(a) != _n(b)


def _pwl(points, per_line: int = 4) -> str:
    """``PWL(t1 v1 t2 v2 …)`` with continuation lines."""
    pairs = [f"{_n(t)} {_n(v)}" for t, v in points]
    rows = [" ".join(pairs[i:i + per_line]) for i in range(0, len(pairs), per_line)]
    return "PWL(" + "\n+ ".join(rows) + ")"


def _steps(t0: np.ndarray, dt: np.ndarray, levels: np.ndarray, edge: float, start: float, t_stop: float,
           threshold: float):
    """PWL points of a staircase: level k from t0[k], each change a ramp of ``edge``.

    A change that crosses ``threshold`` upward ramps just after t0[k], one
    that crosses it downward just before t0[k], so that every interval below
    the threshold keeps its whole length (for the switch node: the refresh
    window of a bootstrap is exactly the model's); any other change is
    centred on t0[k]. A ramp never takes more than half of the interval on
    either side of it.
    """
    prev_dt = previous(dt, np.inf)
    pts = [(0.0, start)]
    prev = start
    for tk, dk, dp, lv in zip(t0, dt, prev_dt, levels):
        if dk <= 0 or lv == prev:
            continue
        e = min(edge, 0.5 * dk, 0.5 * dp)
        if prev < threshold <= lv:
            a = tk
        elif lv < threshold <= prev:
            a = tk - e
        else:
            a = tk - 0.5 * e
        a = max(a, pts[-1][0])
        if a > pts[-1][0]:
            pts.append((a, prev))
        pts.append((a + e, lv))
        prev = lv
    if _later(t_stop, pts[-1][0]):
        pts.append((t_stop, prev))
    return pts


def _pulses(times: np.ndarray, widths: np.ndarray, height: float, t_stop: float):
    """PWL points of pulses starting at ``times``, area ``height·width`` (rise and fall 1e-3 of the width)."""
    pts = [(0.0, 0.0)]
    for a, w in zip(times, widths):
        r = 1e-3 * w
        if a > pts[-1][0]:
            pts.append((a, 0.0))
        pts += [(a + r, height), (a + w, height), (a + w + r, 0.0)]
    if t_stop > pts[-1][0]:
        pts.append((t_stop, 0.0))
    return pts


def _edge_widths(s: Schedule, k: np.ndarray, edge: float) -> np.ndarray:
    """Width of the edge at the start of intervals ``k``: t_edge, at most half of either neighbour [s]."""
    prev = previous(s.dt, np.inf)
    return np.minimum(edge, 0.5 * np.minimum(s.dt[k], prev[k]))


def _charge_pulses(name: str, a: str, b: str, s: Schedule, k: np.ndarray, q: float, edge: float,
                   t_stop: float, at: str = "edge") -> list[str]:
    """Current sources drawing charge ``q`` from ``a`` to ``b`` at each interval start in ``k``.

    ``at``: ``"edge"`` over the edge width from the interval start; ``"after"`` over the same
    width just after it, with the switch node at its new level; ``"before"`` over the width before
    a falling edge (which :func:`_steps` ends at the interval start), while the switch node is
    still at its old level. One source per distinct edge width keeps each pulse's charge exact.
    """
    w = _edge_widths(s, k, edge)
    shift = {"edge": 0.0, "after": 1.0, "before": -2.0}[at]
    out = []
    for j, wj in enumerate(np.unique(w)):
        kk = k[w == wj]
        t0 = s.t_start[kk] + shift * wj
        out.append(f"{name}{j} {a} {b} {_pwl(_pulses(t0, np.full(kk.size, wj), q / wj, t_stop))}")
    return out


# --------------------------------------------------------------------------- shared parts

def _bridge_lines(design: Design, plan: NetlistPlan) -> list[str]:
    """Switch node, HS-on control node and the gate load between vb and vs."""
    b, s = design.bridge, plan.schedule
    v_low = s.v_rest
    live = s.dt > 0
    v_sw = s.sw_levels(plan.delivered)
    t0, dt = s.t_start, s.dt
    edge = b.t_edge
    lines = ["* --- bridge leg: switch node and high-side gate load (from the design's schedule)",
             f"VSW vs 0 {_pwl(_steps(t0, dt, v_sw, edge, v_low, plan.t_stop, 0.5 * b.v_bus))}",
             f"VHS hs 0 {_pwl(_steps(t0, dt, plan.delivered.astype(float), edge, 0.0, plan.t_stop, 0.5))}"]
    prev = previous(plan.delivered, False)
    on = np.flatnonzero(plan.delivered & ~prev & live)
    q = charge_per_turn_on(design)
    if on.size and q > 0:
        lines.append("* gate charge Q_G + Q_LS drawn over the SW edge at each delivered HS turn-on")
        lines += _charge_pulses("IG", "vb", "vs", s, on, q, edge, plan.t_stop)
    off = np.flatnonzero(~plan.delivered & prev & live)
    q_off = charge_per_turn_off(design)
    if off.size and q_off > 0:
        lines.append("* level-shift charge Q_LS at each HS turn-off (reset pulse), drawn before the SW edge")
        lines += _charge_pulses("ILS", "vb", "vs", s, off, q_off, edge, plan.t_stop, at="before")
    lines.append(f"IQ vb vs DC {_n(design.driver.i_q)}")
    if design.gate.r_gs is not None:
        lines += ["* gate pull-down R_GS, connected while the HS is on",
                  f"RGS vb gs {_n(design.gate.r_gs)}",
                  "SGS gs vs hs 0 SWGS",
                  f".model SWGS SW(VT=0.5 VH=0 RON={_n(R_MIN * 1e3)} ROFF=1e12)"]
    return lines


def _startup_masks(circ, plan: NetlistPlan):
    """The bootstrap model's own interval masks of the start-up it simulates (:func:`explorer.options.
    bootstrap.loop_masks`, as the model's start-up builds them: SW resting at ``v_rest`` before)."""
    from .options.bootstrap import loop_masks
    s = plan.schedule
    return loop_masks(circ, s.dt, s.sw_levels(plan.delivered), plan.delivered, periodic=False, v_prev0=s.v_rest)


def _sw_high_pwl(design: Design, plan: NetlistPlan, circ) -> list:
    """1 where the bootstrap diode is reverse-biased (SW + the presumed rail ``v_hold`` at or above V_DD), else 0."""
    s = plan.schedule
    rev = _startup_masks(circ, plan).rev
    rest = float(s.v_rest >= circ.v_dd - circ.v_hold)  # the rule of bootstrap.reverse_biased at the rest level
    return _steps(s.t_start, s.dt, rev.astype(float), design.bridge.t_edge, rest, plan.t_stop, 0.5)


# --------------------------------------------------------------------------- options

def bootstrap_lines(design: Design, option: BootstrapOption, plan: NetlistPlan, corner: str) -> list[str]:
    """SPICE lines of a bootstrap supply (its model's netlist writer)."""
    from .options.bootstrap import bootstrap_circuit, steady_state
    circ = bootstrap_circuit(design, option, corner)
    if option.i_leak > 0 or option.q_rr > 0:  # the rail the model's reverse-bias rule settled on
        circ = steady_state(design, option, corner, circ).circuit
    d = option.diode
    lines = ["* --- bootstrap: V_DD -> R -> diode -> C_boot (with ESR) between vb and vs",
             f"VDD dd 0 DC {_n(circ.v_dd)}",
             f"RB dd a {_n(max(option.r, R_MIN))}"]
    cj = f" CJO={_n(option.c_j)} M=0" if option.c_j > 0 else ""
    if isinstance(d, JunctionDiode):
        lines += ["* junction diode from the design's i_s, n, r_s; C_j constant (M = 0)",
                  "DB a vb DBOOT",
                  f".model DBOOT D(IS={_n(d.i_s)} N={_n(d.n)} RS={_n(d.r_s)}{cj})"]
    else:
        # the sharp junction adds n·V_T·ln(1 + i/IS) to the drop; V_F is reduced by that at the
        # average diode current, so the drop matches v_f + r_d·i to about 1 mV over the conduction range
        s_avg = period_schedule(design)
        i_avg = design.driver.i_q + (charge_per_turn_on(design) * np.count_nonzero(s_avg.hs_turn_on)
                                     + charge_per_turn_off(design) * np.count_nonzero(s_avg.hs_turn_off)) / s_avg.period
        v_j = SHARP_N * thermal_voltage(design.checks.t_amb) * math.log1p(i_avg / SHARP_IS)
        lines += ["* straight-line diode (v_f + r_d*i): a sharp ideal junction in series with a source and r_d;",
                  f"* the source is V_F less the junction's own drop at the average diode current ({_n(v_j)} V);"
                  " C_j constant (M = 0)",
                  "DB a k1 DBOOT",
                  f"VF k1 k2 DC {_n(d.v_f - v_j)}",
                  f"RD k2 vb {_n(max(d.r_d, R_MIN))}",
                  f".model DBOOT D(IS={_n(SHARP_IS)} N={_n(SHARP_N)}{cj})"]
    if option.i_leak > 0:
        lines += ["* diode reverse leakage while it is reverse-biased (from vb back to the anode)",
                  f"VHI swhi 0 {_pwl(_sw_high_pwl(design, plan, circ))}",
                  f"GLK vb a swhi 0 {_n(option.i_leak)}"]
    if option.q_rr > 0:
        s = plan.schedule
        k = np.flatnonzero(_startup_masks(circ, plan).onset)  # onsets are live intervals
        if k.size:
            # just after the edge, at the full reverse voltage, as the model prices it (an upper bound: a
            # recovery during the rise sees less of the bus)
            lines.append("* diode recovery charge Q_rr wherever the diode becomes reverse-biased (after the edge)")
            lines += _charge_pulses("IRR", "vb", "a", s, k, option.q_rr, design.bridge.t_edge, plan.t_stop,
                                    at="after")
    lines += [f"* C_boot: {_n(option.c)} F nominal, {_n(circ.c)} F effective at the '{corner}' corner",
              f"CBOOT vb cb {_n(circ.c)} IC=0",
              f"RESR cb vs {_n(max(option.esr, R_MIN))}"]
    if option.v_clamp is not None:
        # a sharp Zener across C_boot's terminals: the model's ideal clamp holds the rail at v_clamp
        lines += ["* clamp across C_boot: a sharp Zener, 1 mA at v_clamp (within about 2 mV of it from 1 uA to 1 A)",
                  "DZ vs vb DCLAMP",
                  f".model DCLAMP D(IS={_n(SHARP_IS)} N={_n(SHARP_N)} BV={_n(option.v_clamp)} IBV=0.001 "
                  f"NBV={_n(SHARP_N)})"]
    return lines


def pump_lines(design: Design, option: ChargePumpOption, plan: NetlistPlan) -> list[str]:
    """SPICE lines of a charge pump (its model's netlist writer), written from the model's own network.

    The network is :func:`explorer.options.charge_pump.pump_network` with the effective capacitances
    of the result, its lines :func:`explorer.engines.spice_text.network_lines`: the pump's nodes are
    the rail's (its output ``out`` is ``vb``, its reference the switch node ``vs``), its load is left
    out (the gate side of this netlist loads the rail), and a 1:1 pump's input side (the input source
    and the switches of the charging phase) is referred to ground. Resistances below R_MIN are
    raised to it; the switches are open with R_OFF.
    """
    from .engines.spice_text import network_lines
    from .options.charge_pump import CIRCUITS, pump_durations, pump_network
    circ = CIRCUITS[option.ratio]
    r = plan.result
    v_in = option.v_in if option.v_in is not None else design.aux.v_dd
    d = pump_durations(option.f_cp, option.dead_time_cp)
    domain_crossing = circ.ratio == "1:1"
    lines = [f"* --- charge pump {circ.ratio} clocked at {_n(option.f_cp)} Hz "
             f"(phases: charge, dead, transfer, dead)"]
    if domain_crossing:
        lines.append("* 1:1: the flying capacitor charges from the ground-referenced input and transfers "
                     "across C_out in the SW domain")
    else:
        lines.append("* the input rail is referred to the switch node, as the model assumes "
                     "(explorer.options.charge_pump)")
    c_fly = float(r.details.c_fly_eff)
    c_out = float(r.details.c_out_eff)
    lines += [f"* C_fly: {_n(option.c_fly.c)} F nominal, {_n(c_fly)} F effective",
              f"* C_out: {_n(option.c_out.c)} F nominal, {_n(c_out)} F effective"]
    net = pump_network(circ.ratio, c_fly=c_fly, r_on=max(option.r_on, R_MIN),
                       esr_fly=max(option.c_fly.esr, R_MIN), output="load", c_out=c_out,
                       esr_out=max(option.c_out.esr, R_MIN))
    rename = {"b": "fb", "out": "vb"}

    def node(element, name: str, phase) -> str:
        if name != "0":
            return rename.get(name, name)
        grounded = domain_crossing and (element.name == "v_in" or phase == 0)
        return "0" if grounded else "vs"

    return lines + network_lines(net, d, [v_in, 0.0], t0=plan.t_pump0, node=node, skip=("i_load",), r_off=R_OFF)


def isolated_lines(design: Design, option: IsolatedOption, plan: NetlistPlan) -> list[str]:
    """SPICE lines of an isolated module (its model's netlist writer)."""
    c_out = float(plan.result.capacitors[0].c_eff)
    t1 = option.t_start
    t2 = t1 + max(option.t_ramp, 1e-3 * design.bridge.t_edge)
    from .options.isolated import module_output
    v_mod = module_output(design, option)
    pts = [(0.0, 0.0)] + ([(t1, 0.0)] if t1 > 0 else []) + [(t2, v_mod)]
    if _later(plan.t_stop, t2):
        pts.append((plan.t_stop, v_mod))
    return ["* --- isolated module: source (delay t_start, ramp t_ramp) behind r_out, C_out with ESR",
            f"VMOD m vs {_pwl(pts)}",
            f"RMOD m vb {_n(max(option.r_out, R_MIN))}",
            f"* C_out: {_n(option.c_out.c)} F nominal, {_n(c_out)} F effective",
            f"COUT vb co {_n(c_out)} IC=0",
            f"RCOUT co vs {_n(max(option.c_out.esr, R_MIN))}",
            "* isolation capacitance from the SW domain across the barrier; i(VCM) is the common-mode current",
            f"CISO vs iso {_n(option.c_iso)}",
            "VCM iso 0 DC 0"]


# --------------------------------------------------------------------------- probes and export

def netlist_probes(design: Design, label: str) -> dict:
    """Vector expressions to read from an exported netlist, by meaning.

    Keys: ``"rail"`` (V_B − V_S at the terminals), ``"cap"`` (the rail's
    capacitor without its ESR drop, the state the models report), ``"sw"``
    (the switch node); for an isolated option also ``"i_cm"`` (common-mode
    current through C_iso) and for a pump ``"fly"`` (the flying capacitor).
    """
    option = _option(design, label)
    return {"rail": "v(vb)-v(vs)", "sw": "v(vs)", **_model(option).netlist_probes}


def _slug(label: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "_", label).strip("_").lower()
    return s or "option"


def _fmt_opt(x, unit):
    return "n/a" if x is None else f"{x:.6g} {unit}"


def export_netlist(design: Design, label: str, *, n_cycles: int | None = None, corner: str = "nominal",
                   standalone: bool = False) -> str:
    """A complete SPICE netlist of one option driven by the design's schedule.

    Parameters
    ----------
    design : Design
    label : str
        Label of the option to export.
    n_cycles : int, optional
        Switching periods of the start-up schedule to simulate (see
        :func:`netlist_plan`; the default covers the start-up, the rail's
        settling and :data:`STEADY_PERIODS` analysis periods).
    corner : {"nominal", "min", "max"}
        Capacitance corner: capacitors are written at their effective value
        (tolerance, temperature class, DC bias) as the model uses it.
    standalone : bool
        Append a ``.control`` block (run, ``wrdata`` of time and the rail to
        ``<label>.txt``, quit) and ``.end``. Without it the text ends at the
        ``.tran`` line, as :func:`explorer.spice.run_transient` expects.

    Returns
    -------
    str
        The netlist (first line is the title, as SPICE requires). The header
        names the design, the caution, the nodes to probe and the model's own
        figures for comparison.

    Raises
    ------
    DesignError
        For an unknown label, a bad ``n_cycles`` or an unknown corner.

    Examples
    --------
    >>> from explorer import demo_design
    >>> text = export_netlist(demo_design(), "bootstrap 220n", n_cycles=20)
    >>> text.splitlines()[0]
    '* explorer netlist: bootstrap 220n (bootstrap)'
    >>> ".end" in text.split()
    False
    """
    if corner not in ("nominal", "min", "max"):
        raise DesignError("corner", "expected 'nominal', 'min' or 'max'", corner)
    option = _option(design, label)
    plan = netlist_plan(design, label, n_cycles=n_cycles, corner=corner)
    r = plan.result
    probes = netlist_probes(design, label)
    b = design.bridge
    head = [f"* explorer netlist: {_ascii(option.label)} ({option.kind})",
            f"* Generated by explorer from the design \"{_ascii(design.title)}\", option "
            f"\"{_ascii(option.label)}\", capacitance corner '{corner}'.",
            f"* CAUTION: {_CAUTION}.",
            "* Simulates start-up from dead capacitors (uic) through the design's start-up schedule:",
            f"*   pre-charge {_n(b.precharge)} s, soft-start {_n(b.soft_start)} s, {plan.n_cycles} switching "
            f"periods of {_n(plan.schedule.t_switch)} s, edges t_edge = {_n(b.t_edge)} s;",
            f"*   {int(np.count_nonzero(plan.delivered))} of {int(np.count_nonzero(plan.schedule.hs_on))} HS pulses "
            "delivered (the rest withheld by UVLO, as the model decides).",
            "* Probe:",
            f"*   {probes['rail']}  floating rail V_BS at the driver's terminals",
            f"*   {probes['cap']}  rail capacitor voltage without its ESR drop (the models' rail)",
            f"*   {probes['sw']}  switch node; v(hs) 1 while the high side is on"]
    if "fly" in probes:
        head.append(f"*   {probes['fly']}  flying capacitor voltage")
    if "i_cm" in probes:
        head.append(f"*   {probes['i_cm']}  common-mode current through the isolation capacitance")
    head.append(f"* Steady state: the last {STEADY_PERIODS} analysis periods, from t = {_n(plan.t_steady)} s.")
    t_ss = b.soft_start if topology_of(b).soft_start else 0.0
    if plan.t_steady < max(t_ss, plan.t_uvlo_model or 0.0):
        head.append("* Note: this span ends before the start-up does (soft-start or UVLO-on), so its last "
                    "periods are not yet the steady state.")
    if r.v_rail is not None:
        t_su = r.startup.t_uvlo if r.startup is not None else None
        when = f"time to UVLO-on {_fmt_opt(t_su, 's')}"
        if plan.t_pump0 > 0.0 and t_su is not None:  # the same figure, counted from the pump clock's start
            when += (f" from the start of the pump clock, which this netlist starts at t = {_n(plan.t_pump0)} s "
                     f"(so at t = {_fmt_opt(plan.t_uvlo_model, 's')} on its time axis)")
        head.append(f"* Model figures for comparison: rail min {_fmt_opt(r.v_rail.min, 'V')}, max "
                    f"{_fmt_opt(r.v_rail.max, 'V')}, mean {_fmt_opt(r.v_rail.mean, 'V')}; {when}.")
    model = _model(option)
    head += model.netlist_notes
    lines = head
    lines += _bridge_lines(design, plan)
    lines += model.netlist_lines(design, option, plan, corner)
    t_amb = _n(design.checks.t_amb)
    lines += ["* --- analysis",
              f".options reltol={_n(RELTOL)} abstol=1e-12 vntol=1e-6 method=gear temp={t_amb} tnom={t_amb}",
              f".tran {_n(plan.t_step)} {_n(plan.t_stop)} 0 {_n(plan.t_step)} uic"]
    text = "\n".join(lines) + "\n"
    if standalone:
        vecs = " ".join(dict.fromkeys([probes["rail"], probes["cap"], probes["sw"]]))
        text += (".control\nset noaskquit\nset wr_singlescale\nset wr_vecnames\nrun\n"
                 f"wrdata {_slug(option.label)}.txt {vecs}\nquit\n.endc\n.end\n")
    return text


def export_all(design: Design, *, corner: str = "nominal", standalone: bool = False) -> dict:
    """:func:`export_netlist` of every option: label → netlist text."""
    return {o.label: export_netlist(design, o.label, corner=corner, standalone=standalone)
            for o in design.options}
