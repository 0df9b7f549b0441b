"""Model-validity warnings of the charge-pump model (explorer.options.charge_pump.pump_validity).

Every design here is an invented scenario: the demo design (itself invented) with one pump pushed just
inside and just outside one limit of the model. The limits are the module's rules of thumb (marked
"common practice, no source" where they are defined); what is checked against outside sources is the
arithmetic the limits are applied to (RC loop time constants, the RC response the pull-down estimate
rests on, against scipy's solve_ivp), that a warning appears only outside its limit, once, and, with
ngspice, that the pulse-rate limit separates designs the model describes from designs it does not.
"""

import math
import warnings

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

import explorer
from explorer import ModelValidityWarning, demo_design, replace_field
from explorer.options.charge_pump import (DEAD_SHARE, EDGE_PHASES, PULSE_CYCLES_MIN, RGS_RIPPLE_SHARE,
                                          TAU_TRANSITION_RATIO, evaluate_option, longest_on_time, pump_validity)
from explorer.schedule import Schedule, period_schedule

PUMP = 1  # options[1] of the demo: "pump 1:1" (1:1, 500 kHz, C_fly 100 nF, C_out 1 µF, r_on 2 Ω)

EDGE = "switch-node edge times"
DEAD = "dead time"
LOOP = "fastest charge-transfer loop"
PULSE = "cycles between high-side turn-ons"
PULL = "gate pull-down R_GS"


def _pump(**fields):
    """The demo with fields of options[1] replaced (ideal dielectrics: the capacitances are the nominal ones)."""
    d = demo_design()
    for key in ("c_fly", "c_out"):
        d = replace_field(d, f"options[{PUMP}].{key}.dielectric", "ideal")
    for k, v in fields.items():
        d = replace_field(d, k if "." in k else f"options[{PUMP}].{k}", v)
    return d


def _quiet(d):
    """evaluate_option of the pump; any warning fails (pytest runs with filterwarnings = error)."""
    return evaluate_option(d, d.options[PUMP])


def _flagged(d, phrase):
    """evaluate_option of the pump, which must warn with ``phrase``; returns the result."""
    with pytest.warns(ModelValidityWarning, match=phrase):
        return evaluate_option(d, d.options[PUMP])


def _shown_once(d, phrase):
    """explorer.evaluate of the whole design: the phrase is warned once and listed once, under the pump."""
    with pytest.warns(ModelValidityWarning) as rec:
        comp = explorer.evaluate(d)
    assert sum(phrase in str(w.message) for w in rec) == 1
    listed = [(r.label, w) for r in comp.options for w in r.warnings if phrase in w]
    assert len(listed) == 1 and listed[0][0] == d.options[PUMP].label
    assert comp.to_text().count(phrase) == 1


def test_demo_pumps_are_inside_every_limit():
    d = demo_design()
    for o in d.options:
        if o.kind == "charge_pump":
            r = evaluate_option(d, o)  # no warning (filterwarnings = error)
            assert r.warnings == ()


# --------------------------------------------------------------------------- edge time against the pump phase

def test_pump_phase_of_a_few_edge_times_is_flagged():
    # conducting phase t_c = 1/(2·f_cp) (no dead time) against EDGE_PHASES·t_edge = 100 ns (t_edge 10 ns)
    t_edge = demo_design().bridge.t_edge
    f_in = 1.0 / (2.0 * EDGE_PHASES * t_edge * 1.01)   # t_c = 101 ns
    f_out = 1.0 / (2.0 * EDGE_PHASES * t_edge * 0.99)  # t_c = 99 ns
    r = _quiet(_pump(f_cp=f_in))
    assert not any(EDGE in w for w in r.warnings)
    r = _flagged(_pump(f_cp=f_out), EDGE)
    assert sum(EDGE in w for w in r.warnings) == 1
    _shown_once(_pump(f_cp=f_out), EDGE)


def test_edge_longer_than_a_schedule_interval_is_said_once_for_every_model():
    # t_edge 2 µs outlasts the demo buck's 1.25 µs HS pulse: explorer.schedule.schedule_validity says so for
    # every model, and the pump does not add its own edge warning on top
    d = replace_field(demo_design(), "bridge.t_edge", 2e-6)
    with pytest.warns(ModelValidityWarning) as rec:
        comp = explorer.evaluate(d)
    assert sum("edge time t_edge" in str(w.message) for w in rec) == 1
    assert not any(EDGE in str(w.message) for w in rec)
    assert not any(EDGE in w for r in comp.options for w in r.warnings)


# --------------------------------------------------------------------------- the pump's dead time

def test_dead_time_filling_the_phase_is_flagged():
    # t_d > DEAD_SHARE·(T/2 − t_d) ⟺ t_d > T·DEAD_SHARE/(2·(1 + DEAD_SHARE)) = T/10 at 500 kHz: 200 ns
    T = 1.0 / demo_design().options[PUMP].f_cp
    limit = T * DEAD_SHARE / (2.0 * (1.0 + DEAD_SHARE))
    assert limit == pytest.approx(200e-9, rel=1e-12)
    r = _quiet(_pump(dead_time_cp=0.99 * limit))
    assert not any(DEAD in w and "conducting phase" in w for w in r.warnings)
    r = _flagged(_pump(dead_time_cp=1.01 * limit), "more than 0.25 of its conducting phase")
    _shown_once(_pump(dead_time_cp=1.01 * limit), "more than 0.25 of its conducting phase")


# --------------------------------------------------------------------------- loop time constant against the dead time

def _loop_tau(d):
    """Fastest charge-transfer loop of the 1:1 pump: min over its two loops of R·C, with C_fly charged from
    the input through two switches (φ1) and C_fly in series with C_out through two switches (φ2).
    Source: natural response of a first-order RC circuit, τ = R·C, and series capacitors
    C_s = C1·C2/(C1 + C2) (J. W. Nilsson and S. A. Riedel, "Electric Circuits", ch. 6–7)."""
    o = d.options[PUMP]
    cf, co = o.c_fly.c, o.c_out.c
    tau1 = (2 * o.r_on + o.c_fly.esr) * cf
    tau2 = (2 * o.r_on + o.c_fly.esr + o.c_out.esr) * cf * co / (cf + co)
    return min(tau1, tau2)


def test_loop_faster_than_the_switch_transitions_is_flagged():
    # r_on 10 mΩ: loops of a few ns; the check compares them with TAU_TRANSITION_RATIO of the dead time
    base = _pump(r_on=0.01)
    tau = _loop_tau(base)
    r = _quiet(base)  # no dead time given: ideal switches, nothing to compare with
    # the engine's fastest mode is that loop (the averaged R_GS resistor of 400 kΩ moves it by ~1e-8)
    assert r.details.tau_loop == pytest.approx(tau, rel=1e-6)
    t_in = 0.99 * tau / TAU_TRANSITION_RATIO   # 0.1·t_d just below τ
    t_out = 1.01 * tau / TAU_TRANSITION_RATIO
    r = _quiet(_pump(r_on=0.01, dead_time_cp=t_in))
    assert not any(LOOP in w for w in r.warnings)
    _flagged(_pump(r_on=0.01, dead_time_cp=t_out), LOOP)
    _shown_once(_pump(r_on=0.01, dead_time_cp=t_out), LOOP)


# --------------------------------------------------------------------------- pump clock against the turn-on rate

def test_too_few_pump_cycles_per_turn_on_are_flagged():
    # a synchronous buck in CCM turns the HS on once per switching period (by definition of the PWM;
    # R. W. Erickson and D. Maksimović, "Fundamentals of Power Electronics", 3rd ed., ch. 2), so the pump runs
    # f_cp/f_sw cycles per turn-on; the limit PULSE_CYCLES_MIN = 2 lies at f_cp = 400 kHz for f_sw = 200 kHz
    f_sw = demo_design().bridge.f_sw
    assert period_schedule(demo_design()).hs_turn_on.sum() == 1
    f_in, f_out = 1.01 * PULSE_CYCLES_MIN * f_sw, 0.99 * PULSE_CYCLES_MIN * f_sw
    r = _quiet(_pump(f_cp=f_in))
    assert r.details.pump_cycles_per_turn_on == pytest.approx(f_in / f_sw, rel=1e-12)
    r = _flagged(_pump(f_cp=f_out), PULSE)
    assert r.details.pump_cycles_per_turn_on == pytest.approx(f_out / f_sw, rel=1e-12)
    _shown_once(_pump(f_cp=f_out), PULSE)


# --------------------------------------------------------------------------- the averaged R_GS share of the load

def _slow_buck(r_gs):
    """The demo at f_sw = 2 kHz: a 125 µs HS on-time, far above the pump's R_out·C_out, with R_GS given."""
    return _pump(**{"bridge.f_sw": 2e3, "gate.r_gs": r_gs})


def _sag_share(r_gs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)
        r = evaluate_option(_slow_buck(r_gs), _slow_buck(r_gs).options[PUMP])
    return r.details.pull_down_sag / (r.v_rail.max - r.v_rail.min)


def test_averaged_pull_down_over_long_on_times_is_flagged():
    # the R_GS at which the hidden sag is RGS_RIPPLE_SHARE of the reported ripple, then 2 % either side
    r_lim = brentq(lambda r: _sag_share(r) - RGS_RIPPLE_SHARE, 5e3, 1e6, rtol=1e-10)
    r = _quiet(_slow_buck(1.02 * r_lim))
    assert not any(PULL in w for w in r.warnings)
    _flagged(_slow_buck(0.98 * r_lim), PULL)
    _shown_once(_slow_buck(0.98 * r_lim), PULL)


@pytest.mark.parametrize("r, c, t_on, d", [
    (20.0, 1e-6, 1e-3, 0.5),     # on-time far above R·C: quasi-static
    (20.0, 1e-6, 1e-6, 0.25),    # far below: charge I·t/C
    (20.0, 1e-6, 20e-6, 0.25),   # comparable
    (5.0, 10e-6, 200e-6, 0.8),   # long on, short off
])
def test_pull_down_sag_estimate_bounds_the_rc_response(r, c, t_on, d):
    """ΔV = I·(1 − d)·min(R, t_on/C) against the periodic response of C·dv/dt = −v/R − (i(t) − d·I) to the
    zero-mean part of a pull-down current I drawn during t_on out of every t_on/d, integrated by
    scipy.integrate.solve_ivp (general-purpose reference software): the true sag below the average lies
    between half the estimate and the estimate."""
    i = 1e-3
    T = t_on / d

    def rhs(t, v):
        on = (t % T) < t_on
        return [(-v[0] / r - ((i if on else 0.0) - d * i)) / c]

    v = [0.0]
    lo = math.inf
    for _ in range(int(max(3, 12 * r * c / T)) + 2):  # run to the periodic state (τ = R·C), keep the last period
        a = solve_ivp(rhs, (0.0, t_on), v, method="LSODA", rtol=1e-10, atol=1e-14, max_step=t_on / 200)
        b = solve_ivp(rhs, (t_on, T), a.y[:, -1], method="LSODA", rtol=1e-10, atol=1e-14, max_step=(T - t_on) / 200)
        lo = min(a.y[0].min(), b.y[0].min())
        v = b.y[:, -1]
    est = i * (1 - d) * min(r, t_on / c)
    assert 0.5 * est <= -lo <= est * (1 + 1e-6)


def test_longest_on_time_wraps_round_a_periodic_schedule():
    # hand-made schedule: on 1 µs, off 2 µs, on 3 µs, on 1 µs (the last run wraps onto the first)
    dt = np.array([1e-6, 2e-6, 3e-6, 1e-6])
    on = np.array([True, False, True, True])
    z = np.zeros(4, bool)
    s = Schedule(dt=dt, v_sw=np.zeros(4), hs_on=on, hs_turn_on=z, sw_rise=z, sw_fall=z, cycle=np.zeros(4, int),
                 duty=np.zeros(1), t_switch=float(dt.sum()), v_bus=48.0, periodic=True)
    assert longest_on_time(s) == pytest.approx(5e-6, rel=1e-15)
    s2 = Schedule(dt=dt, v_sw=np.zeros(4), hs_on=on, hs_turn_on=z, sw_rise=z, sw_fall=z, cycle=np.zeros(4, int),
                  duty=np.zeros(1), t_switch=float(dt.sum()), v_bus=48.0, periodic=False)
    assert longest_on_time(s2) == pytest.approx(4e-6, rel=1e-15)


def test_pump_validity_is_a_pure_list_of_reasons():
    d = _pump(f_cp=0.99 * PULSE_CYCLES_MIN * demo_design().bridge.f_sw)
    out = pump_validity(d, d.options[PUMP], tau_loop=1e-6, r_th=20.0, c_out=1e-6, v_mean=12.0, ripple=0.05)
    assert len(out) == 1 and PULSE in out[0]
    assert pump_validity(demo_design(), demo_design().options[PUMP], tau_loop=1e-6, r_th=20.0, c_out=1e-6,
                         v_mean=12.0, ripple=0.05) == []


# --------------------------------------------------------------------------- the pulse-rate limit against ngspice

def _pulse_scenario(f_cp):
    """The demo's 1:1 pump (invented scenario) with an ESR-free C_out, so that the rail is the capacitor's own
    voltage and a 10 ns gate pulse leaves no ESR spike on it, and no R_GS (the pulse train alone loads the rail
    beside I_Q)."""
    return _pump(f_cp=f_cp, **{f"options[{PUMP}].c_out.esr": 0.0, "gate.r_gs": None})


def _ngspice_rail_min(d, phase):
    """Lowest rail over the last two pulse periods of an ngspice transient of the pump with the gate-charge
    pulse train: the model's own netlist (explorer.engines.spice_text.to_spice, from its parameters) plus a current pulse of
    charge Q_G + Q_LS (10 ns) at each HS turn-on, ``phase`` [s] after the start of a pump cycle, and Q_LS at each
    turn-off; started from the model's periodic state under the average load and run for 12 time constants R_out·C_out."""
    from explorer.loads import charge_per_turn_on
    from explorer.options.charge_pump import resolve_pump, pump_network
    from explorer.engines.periodic import periodic_steady_state
    from explorer.engines.spice_text import spice_t0, to_spice
    from explorer.spice import run_transient, spice_number

    o = d.options[PUMP]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)
        r = evaluate_option(d, o)
    p = resolve_pump(d, o, "nominal")
    net = pump_network(o.ratio, c_fly=p.c_fly, r_on=p.r_on, esr_fly=p.esr_fly, output="load", c_out=p.c_out,
                       esr_out=p.esr_out)
    T, t_p, q = float(p.durations.sum()), 1.0 / d.bridge.f_sw, charge_per_turn_on(d)
    x0 = periodic_steady_state(net, p.durations, [p.v_in, d.driver.i_q + (q + d.driver.q_ls) / t_p]).x0
    cycles = int(math.ceil(12.0 * r.r_out * p.c_out / T)) + 4
    lines = to_spice(net, p.durations, [p.v_in, d.driver.i_q], cycles=cycles, x0=x0).splitlines()
    t0, tr, pw = spice_t0(p.durations), 1e-9, 9e-9  # trapezoid of charge amp·(pw + tr) = q
    lines.insert(len(lines) - 1, f"Igate out 0 PULSE(0 {spice_number(q / (pw + tr))} {spice_number(t0 + phase)} "
                                 f"{spice_number(tr)} {spice_number(tr)} {spice_number(pw)} {spice_number(t_p)})")
    # the level shifter's reset pulse, Q_LS, at each HS turn-off (the HS on-time after the turn-on)
    from explorer.schedule import period_schedule
    s = period_schedule(d)
    t_hs, q_ls = float(s.dt[s.hs_on].sum()), d.driver.q_ls
    if q_ls > 0:
        lines.insert(len(lines) - 1, f"Ireset out 0 PULSE(0 {spice_number(q_ls / (pw + tr))} "
                                     f"{spice_number(t0 + phase + t_hs)} {spice_number(tr)} {spice_number(tr)} "
                                     f"{spice_number(pw)} {spice_number(t_p)})")
    res = run_transient("\n".join(lines) + "\n", ["v(out)"])
    keep = res["time"] > t0 + cycles * T - 2.0 * max(T, t_p)
    return float(res["v(out)"][keep].min()), r


@pytest.mark.ngspice
def test_pulse_rate_limit_against_ngspice(ngspice):
    # reference: ngspice 39 transients of the pump with its gate-charge pulse train, one per relative phase.
    # Inside the limit (2.5 pump cycles per turn-on) the model's worst-phase rail minimum holds to a tenth of the
    # pulse dip Q/C_out at every phase tried; outside it (0.5 cycles per turn-on), with the pulse landing just
    # before the transfer phase, the rail falls more than a quarter of Q/C_out below the model's figure, the
    # error the warning speaks of.
    d = _pulse_scenario(500e3)
    T = 1.0 / d.options[PUMP].f_cp
    lows = []
    for frac in (0.0, 0.1, 0.2, 0.3, 0.4, 0.475):  # turn-ons come every 2.5 T: phases repeat every T/2
        low, r = _ngspice_rail_min(d, frac * T)
        lows.append(low)
    q_c = r.details.q_pulse / r.details.c_out_eff
    assert min(lows) >= r.v_rail.min - 0.1 * q_c

    d = _pulse_scenario(100e3)
    with pytest.warns(ModelValidityWarning, match=PULSE):
        evaluate_option(d, d.options[PUMP])
    T = 1.0 / d.options[PUMP].f_cp
    low, r = _ngspice_rail_min(d, 0.5 * T - 30e-9)
    q_c = r.details.q_pulse / r.details.c_out_eff
    assert low < r.v_rail.min - 0.25 * q_c
