"""Isolated-supply model (DOMAIN.md "Option 3").

Check values come from outside the project: the capacitor laws Q = C·V and
i = C·dv/dt (Alexander & Sadiku, *Fundamentals of Electric Circuits*, 6th ed.,
2017, §6.2), the gate-drive power P = Q_G·V·f (Mohan, Undeland & Robbins,
*Power Electronics*, 3rd ed., 2003, §22-3), the two fitting points of the loss
model (its definition), calculus for the efficiency optimum, and scipy's
``solve_ivp`` as an independent integrator of the same circuit equations.
"""

import json
import math
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.integrate import solve_ivp

from explorer import DesignError, ModelValidityWarning, demo_design, evaluate, replace_field
from explorer.options import model_for
from explorer.options import isolated as iso
from explorer.schedule import period_schedule

LABEL = "isolated 1 W"
#: The demo design (an invented scenario), for property tests (hypothesis needs no function fixture).
DEMO = demo_design()


def _idx(design):
    return next(i for i, o in enumerate(design.options) if o.kind == "isolated")


def _set(design, **fields):
    """Copy of the design with fields of the isolated option changed (re-validated)."""
    i = _idx(design)
    for k, v in fields.items():
        design = replace_field(design, f"options[{i}].{k}", v)
    return design


def _run(design, **kw):
    return iso.evaluate_option(design, design.options[_idx(design)], **kw)


# --------------------------------------------------------------------------- loss model

@pytest.fixture
def loss_fit_points():
    """The two figures the loss model is fitted to (its definition: P_in(0) = P_0, η(P_rated) = eta_full).

    An invented module: 1 W rated, 80 mW at no load, 80 % at full load.
    """
    return {"p_rated": 1.0, "p_no_load": 0.08, "eta_full": 0.8}


def test_loss_model_reproduces_both_fitting_points(loss_fit_points):
    f = loss_fit_points
    k = iso.loss_coefficient(f["p_rated"], f["p_no_load"], f["eta_full"])
    # no load: the input power is P_0 (definition of the no-load figure)
    assert_allclose(iso.module_input_power(0.0, f["p_no_load"], k), f["p_no_load"], rtol=1e-12)
    # rated load: the efficiency is eta_full (definition of the full-load figure)
    assert_allclose(iso.module_efficiency(f["p_rated"], f["p_no_load"], k), f["eta_full"], rtol=1e-12)
    assert_allclose(iso.module_input_power(f["p_rated"], f["p_no_load"], k), f["p_rated"] / f["eta_full"],
                    rtol=1e-12)


@settings(max_examples=200, deadline=None)
@given(p_rated=st.floats(0.01, 100.0), eta=st.floats(0.05, 0.99), frac=st.floats(0.0, 0.99))
def test_loss_model_fitting_points_hold_for_any_module(p_rated, eta, frac):
    p0 = frac * p_rated * (1 / eta - 1)
    k = iso.loss_coefficient(p_rated, p0, eta)
    assert_allclose(iso.module_input_power(0.0, p0, k), p0, rtol=1e-12, atol=1e-15)
    assert_allclose(iso.module_efficiency(p_rated, p0, k), eta, rtol=1e-12)


@settings(max_examples=200, deadline=None)
@given(p_rated=st.floats(0.01, 100.0), eta=st.floats(0.05, 0.99), frac=st.floats(0.01, 0.99))
def test_efficiency_peaks_at_sqrt_p0_over_k(p_rated, eta, frac):
    # dη/dP = (P_0 − k·P²)/P_in² (calculus), zero at P* = sqrt(P_0/k): rising below, falling above
    p0 = frac * p_rated * (1 / eta - 1)
    k = float(iso.loss_coefficient(p_rated, p0, eta))
    p_star = float(iso.optimum_load(p0, k))
    below = np.linspace(0.05, 0.95, 19) * p_star
    above = np.linspace(1.05, 5.0, 19) * p_star
    eta_b = iso.module_efficiency(below, p0, k)
    eta_a = iso.module_efficiency(above, p0, k)
    e_star = float(iso.module_efficiency(p_star, p0, k))
    assert np.all(np.diff(eta_b) > 0)
    assert np.all(np.diff(eta_a) < 0)
    assert e_star > eta_b.max() and e_star > eta_a.max()
    # closed form at the optimum: η* = 1/(1 + 2·sqrt(P_0·k)) (substituting P* into η)
    assert_allclose(e_star, 1.0 / (1.0 + 2.0 * math.sqrt(p0 * k)), rtol=1e-12)


@settings(max_examples=300, deadline=None)
@given(p_rated=st.floats(0.01, 100.0), eta=st.floats(0.05, 0.99), frac=st.floats(0.0, 0.99),
       load=st.floats(1e-3, 10.0))
def test_module_efficiency_stays_in_open_unit_interval(p_rated, eta, frac, load):
    p0 = frac * p_rated * (1 / eta - 1)
    k = iso.loss_coefficient(p_rated, p0, eta)
    e = float(iso.module_efficiency(load * p_rated, p0, k))
    assert 0.0 < e < 1.0


@settings(max_examples=40, deadline=None)
@given(q_g=st.floats(1e-9, 200e-9), r_out=st.floats(0.0, 20.0), p_rated=st.floats(0.2, 5.0),
       c_iso=st.floats(0.0, 50e-12))
def test_option_efficiency_stays_in_open_unit_interval(q_g, r_out, p_rated, c_iso):
    d = replace_field(DEMO, "gate.q_g", q_g)
    d = _set(d, r_out=r_out, p_no_load=0.04 * p_rated, p_rated=p_rated, c_iso=c_iso)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)  # overload is allowed here
        r = _run(d)
    assert 0.0 < r.efficiency < 1.0
    assert_allclose(r.p_drawn, r.p_drawn_aux + r.p_drawn_bus, rtol=1e-12)
    assert_allclose(r.overhead, sum(r.losses.values()), rtol=1e-9)


# --------------------------------------------------------------------------- gate-drive load

def test_gate_drive_power_is_qg_v_f(demo):
    # P = Q_G·V·f_sw (Mohan, Undeland & Robbins 2003, §22-3), with no quiescent, level-shift or pull-down
    d = replace_field(demo, "driver.i_q", 0.0)
    d = replace_field(d, "driver.q_ls", 0.0)
    d = replace_field(d, "gate.r_gs", None)
    r = _run(d)
    q_g, f = d.gate.q_g, d.bridge.f_sw
    assert_allclose(r.p_delivered, q_g * r.v_rail.mean * f, rtol=1e-12)
    # and the mean rail is v_out − r_out·Q_G·f (charge balance on c_out, Ohm's law)
    opt = d.options[_idx(d)]
    assert_allclose(r.v_rail.mean, opt.v_out - opt.r_out * q_g * f, rtol=1e-12)
    # the module's input power is the loss model at that load
    k = iso.loss_coefficient(opt.p_rated, opt.p_no_load, opt.eta_full)
    assert_allclose(r.p_drawn_aux, r.p_delivered + opt.p_no_load + k * r.p_delivered ** 2, rtol=1e-12)


def test_ripple_is_q_over_c(demo):
    # one turn-on per period takes Q from c_out as a step: ΔV = Q/C (Q = C·V, Alexander & Sadiku 2017, §6.2)
    r = _run(demo)
    q = demo.gate.q_g + demo.driver.q_ls
    c = r.capacitors[0].c_eff
    v_step = q / c
    # the rail falls by the step and the pull-down during the on-time; with R_GS = 100 kΩ that adds < 0.1 %
    assert_allclose(r.capacitors[0].ripple, v_step, rtol=2e-3)
    d = replace_field(demo, "gate.r_gs", None)
    r = _run(d)
    assert_allclose(r.capacitors[0].ripple, v_step, rtol=1e-9)


# --------------------------------------------------------------------------- rail vs solve_ivp

def _ivp_rail(dt, hs_on, hs_turn_on, *, v_src, r_out, c, q, i_q, r_gs, periods=60):
    """Integrate C·dV/dt = (v_src − V)/r_out − I_Q − [on]·V/R_GS with scipy, steps of Q/C at turn-ons."""
    v = v_src
    for _ in range(periods):
        samples = []
        for k in range(len(dt)):
            before = v
            if hs_turn_on[k]:
                v -= q / c
            g = (1.0 / r_gs) if (hs_on[k] and r_gs) else 0.0
            sol = solve_ivp(lambda t, y: [((v_src - y[0]) / r_out - i_q - g * y[0]) / c],
                            (0.0, dt[k]), [v], method="DOP853", rtol=1e-12, atol=1e-14, dense_output=True)
            tt = np.linspace(0.0, dt[k], 201)
            samples.append((tt, sol.sol(tt)[0], before))
            v = sol.y[0, -1]
    vmin = min(min(s[1].min(), s[2]) for s in samples)
    vmax = max(max(s[1].max(), s[2]) for s in samples)
    mean = sum(np.trapezoid(s[1], s[0]) for s in samples) / float(np.sum(dt))
    return vmin, vmax, mean


def test_output_rail_matches_solve_ivp(demo):
    # reference: scipy.integrate.solve_ivp (DOP853) on the same circuit, run to steady state
    d = replace_field(demo, "gate.r_gs", 2e3)  # a strong pull-down so the on-time droop matters
    s = period_schedule(d)
    kw = dict(v_src=12.0, r_out=2.0, c=2.2e-6, q=41e-9, i_q=1e-3, r_gs=2e3)
    ref = _ivp_rail(s.dt, s.hs_on, s.hs_turn_on, **kw)
    sol = iso.output_rail(s.dt, s.hs_on, s.hs_turn_on, v_src=kw["v_src"], r_out=kw["r_out"], c_out=kw["c"],
                          q_pulse=kw["q"], i_q=kw["i_q"], r_gs=kw["r_gs"])
    assert_allclose([sol.min, sol.max], ref[:2], rtol=1e-9)
    assert_allclose(sol.mean, ref[2], rtol=1e-7)  # trapezoid on 201 points per interval


def test_output_rail_long_schedule_is_stable_and_balanced(demo):
    # a three-phase leg over a whole fundamental (4000 periods); the scan must stay finite and the
    # time-average must satisfy charge balance on c_out: (v_src − mean)/r_out = average load current
    d = demo.to_dict()
    d["bridge"].update({"topology": "three_phase", "m": 0.9, "f_o": 50.0, "v_out": None})
    from explorer import load_design
    d = load_design(d)
    d = replace_field(d, "gate.r_gs", None)
    s = period_schedule(d)
    assert s.n_cycles == 4000
    sol = iso.output_rail(s.dt, s.hs_on, s.hs_turn_on, v_src=12.0, r_out=5.0, c_out=1e-6, q_pulse=41e-9,
                          i_q=1e-4)
    n_on = np.count_nonzero(s.hs_turn_on)
    i_avg = (n_on * 41e-9 + 1e-4 * s.period) / s.period
    assert np.all(np.isfinite(sol.v_start))
    assert_allclose((12.0 - sol.mean) / 5.0, i_avg, rtol=1e-9)


@settings(max_examples=50, deadline=None)
@given(r_out=st.floats(0.01, 100.0), c=st.floats(1e-8, 1e-4), q=st.floats(0.0, 500e-9), i_q=st.floats(0.0, 1e-2))
def test_output_rail_charge_balance(r_out, c, q, i_q):
    # conservation of charge on c_out over a periodic steady state: mean source current = mean load current
    s = period_schedule(DEMO)
    sol = iso.output_rail(s.dt, s.hs_on, s.hs_turn_on, v_src=12.0, r_out=r_out, c_out=c, q_pulse=q, i_q=i_q)
    i_load = q / s.period + i_q
    assert_allclose((12.0 - sol.mean) / r_out, i_load, rtol=1e-7, atol=1e-12)


def test_output_rail_ideal_source_keeps_the_step(demo):
    # r_out = 0: the rail returns at once to v_src; the conservative minimum keeps the dip Q/C
    s = period_schedule(demo)
    sol = iso.output_rail(s.dt, s.hs_on, s.hs_turn_on, v_src=12.0, r_out=0.0, c_out=1e-6, q_pulse=40e-9)
    assert sol.max == 12.0 and sol.mean == 12.0
    assert_allclose(sol.min, 12.0 - 40e-9 / 1e-6, rtol=1e-12)


# --------------------------------------------------------------------------- start-up

@pytest.mark.parametrize("t_ramp, tau", [(0.5e-3, 50e-6), (0.5e-3, 2e-3), (0.0, 50e-6)])
def test_startup_voltage_matches_solve_ivp(t_ramp, tau):
    # reference: solve_ivp on dV/dt = (u(t) − V)/tau with u the delayed linear ramp
    v_f, t0 = 12.0, 1e-3

    def u(t):
        if t < t0:
            return 0.0
        return v_f if t_ramp == 0 else v_f * min((t - t0) / t_ramp, 1.0)

    t_end = t0 + t_ramp + 6 * tau
    ts = np.linspace(0.0, t_end, 301)
    sol = solve_ivp(lambda t, y: [(u(t) - y[0]) / tau], (0.0, t_end), [0.0], t_eval=ts, method="DOP853",
                    rtol=1e-11, atol=1e-12, max_step=tau / 20)
    v = iso.startup_voltage(ts, v_final=v_f, t_start=t0, t_ramp=t_ramp, tau=tau)
    assert_allclose(v, sol.y[0], atol=2e-7 * v_f)
    t_hit = iso.time_to_level(8.5, v_final=v_f, t_start=t0, t_ramp=t_ramp, tau=tau)
    assert_allclose(float(np.interp(t_hit, sol.t, sol.y[0])), 8.5, atol=1e-3)  # 301-point interpolation


def test_linear_ramp_time_to_uvlo():
    # tau = 0: the linear ramp itself reaches L at t_start + t_ramp·L/V (straight line)
    t = iso.time_to_level(8.5, v_final=12.0, t_start=1e-3, t_ramp=0.5e-3, tau=0.0)
    assert_allclose(t, 1e-3 + 0.5e-3 * 8.5 / 12.0, rtol=1e-12)
    assert iso.time_to_level(12.5, v_final=12.0, t_start=1e-3, t_ramp=0.5e-3, tau=0.0) is None
    assert iso.time_to_level(12.0, v_final=12.0, t_start=1e-3, t_ramp=0.5e-3, tau=1e-6) is None


def test_ramp_inrush_limits():
    # i = C·dV/dt (Alexander & Sadiku 2017, §6.2): 4.7 µF ramped 12 V in 0.5 ms → 112.8 mA
    assert_allclose(iso.ramp_inrush(c_out=4.7e-6, v_final=12.0, t_ramp=0.5e-3, r_out=0.0), 0.1128, rtol=1e-12)
    # a step through r_out: V/R (Ohm's law): 12 V through 1 Ω → 12 A
    assert_allclose(iso.ramp_inrush(c_out=4.7e-6, v_final=12.0, t_ramp=0.0, r_out=1.0), 12.0, rtol=1e-12)
    assert iso.ramp_inrush(c_out=4.7e-6, v_final=12.0, t_ramp=0.0, r_out=0.0) is None
    # with a lag the slope at the end of the ramp is m·(1 − exp(−t_ramp/tau)) < m
    i_lag = iso.ramp_inrush(c_out=4.7e-6, v_final=12.0, t_ramp=0.5e-3, r_out=100.0)
    assert_allclose(i_lag, 0.1128 * -math.expm1(-0.5e-3 / 4.7e-4), rtol=1e-12)


def test_demo_startup(demo):
    r = _run(demo)
    opt = demo.options[_idx(demo)]
    v_f = opt.v_out - opt.r_out * demo.driver.i_q
    tau = opt.r_out * r.capacitors[0].c_eff
    # tau (4.7 µs) ≪ t_ramp: close to the linear ramp t_start + t_ramp·UVLO/V, later by about tau
    t_lin = opt.t_start + opt.t_ramp * demo.driver.uvlo_on / v_f
    # (a ramp through a first-order lag trails it by at most tau)
    assert t_lin < r.startup.t_uvlo <= t_lin + tau * (1 + 1e-9)
    assert r.startup.cycles_uvlo == math.ceil(r.startup.t_uvlo * demo.bridge.f_sw)
    assert r.startup.t.size == r.startup.v.size and r.startup.v.max() <= v_f


def test_output_that_never_reaches_uvlo(demo):
    d = _set(demo, v_out=8.0)  # below uvlo_on = 8.5 V
    r = _run(d)
    assert r.startup.t_uvlo is None and r.startup.cycles_uvlo is None
    assert not r.feasible


def test_output_between_required_rail_and_uvlo_on_never_starts(demo):
    # with V_GS needed 7 V the running rail needs max(7.8, 7) + 0.5 = 8.3 V; 8.4 V holds it
    # but never lifts UVLO (8.5 V rising)
    d = replace_field(demo, "gate.v_gs_on_min", 7.0)
    r = _run(_set(d, v_out=8.4))
    assert next(c for c in r.checks if c.name == "rail_min").ok
    assert not next(c for c in r.checks if c.name == "startup_uvlo").ok
    assert r.startup.t_uvlo is None and not r.feasible


def test_step_start_inrush_through_r_out(demo):
    d = _set(demo, t_ramp=0.0)
    r = _run(d)
    opt = d.options[_idx(d)]
    assert_allclose(r.startup.i_peak, (opt.v_out - opt.r_out * d.driver.i_q) / opt.r_out, rtol=1e-12)
    d = _set(d, r_out=0.0)
    r = _run(d)
    assert r.startup.i_peak is None
    assert any("current limit" in w for w in r.warnings)
    assert any("ideal source" in w for w in r.warnings)


# --------------------------------------------------------------------------- common mode in the option

def test_common_mode_figures_through_the_model(demo):
    # 400 V bus, 8 ns edges, 100 kHz, 10 pF, no undershoot: 50 V/ns → 0.5 A, 4 nC per edge, 0.16 W
    # (i = C·dv/dt, Q = C·V, P = C·V²·f; Alexander & Sadiku 2017, §6.2)
    d = replace_field(demo, "bridge.v_bus", 400.0)
    d = replace_field(d, "bridge.t_edge", 8e-9)
    d = replace_field(d, "bridge.f_sw", 100e3)
    d = replace_field(d, "bridge.v_undershoot", 0.0)
    d = _set(d, c_iso=10e-12, cmti=200e9)
    r = _run(d)
    assert_allclose(r.details.dv_dt, 50e9, rtol=1e-12)
    assert_allclose(r.details.i_cm_peak, 0.5, rtol=1e-12)
    assert_allclose(r.details.q_cm_edge, 4e-9, rtol=1e-12)
    # a buck's falling edge is moved by the inductor current (no loss), its rising edge hard-switched:
    # ½·C·V²·f = 0.08 W lost, the gross C·V²·f = 0.16 W beside it (Erickson & Maksimović 2020, ch. 4)
    assert_allclose(r.p_drawn_bus, 0.08, rtol=1e-12)
    assert_allclose(r.losses["common_mode"], 0.08, rtol=1e-12)
    assert_allclose(r.details.p_cm_gross, 0.16, rtol=1e-12)
    # both edges hard-switched (design-file override): the whole C·V²·f
    r = _run(replace_field(replace_field(d, "bridge.edge_rise", "hard"), "bridge.edge_fall", "hard"))
    assert_allclose(r.losses["common_mode"], 0.16, rtol=1e-12)


def test_cmti_check(demo):
    # dv/dt = 48 V / 10 ns = 4.8 V/ns; with margin 2 the driver needs 9.6 V/ns
    r = _run(_set(demo, cmti=9.7e9))
    c = next(c for c in r.checks if c.name == "cmti")
    assert c.ok
    assert_allclose(c.limit, 9.6e9, rtol=1e-12)
    r = _run(_set(demo, cmti=9.5e9))
    assert not r.feasible and "CMTI" in r.verdict


def test_v_iso_check_and_warning(demo):
    # barrier peak = bus (48 V) + rail (≈ 12 V)
    r = _run(_set(demo, v_iso=50.0))
    assert not r.feasible and any(c.name == "v_iso" and not c.ok for c in r.checks)
    assert any("working voltage" in w for w in r.warnings)
    r = _run(_set(demo, v_iso=70.0))  # above the peak but within the headroom
    assert r.feasible and any("working voltage" in w for w in r.warnings)
    r = _run(demo)
    assert not any("working voltage" in w for w in r.warnings)


def test_insulation_statement_shows_in_the_comparison(demo):
    r = _run(demo)
    assert iso.INSULATION_STATEMENT in r.cautions and iso.INSULATION_STATEMENT not in r.warnings
    for std in ("IEC 62368-1", "IEC 61800-5-1", "IEC 60664-1", "local codes"):
        assert std in iso.INSULATION_STATEMENT
    alone = demo.to_dict()
    alone["options"] = [o for o in alone["options"] if o["kind"] == "isolated"]
    text = evaluate(alone).to_text()  # the comparison table's text view
    assert f"caution [{LABEL}]: {iso.INSULATION_STATEMENT}" in text
    assert iso.INSULATION_STATEMENT in evaluate(alone)._repr_html_()


# --------------------------------------------------------------------------- checks, duty, stress

def test_demo_result_is_complete(demo):
    r = _run(demo)
    assert r.feasible and r.kind == "isolated" and r.error is None
    assert (r.duty.min, r.duty.max, r.duty.hold_up) == (0.0, 1.0, None)
    names = {c.name for c in r.checks}
    assert names == {"rail_min", "startup_uvlo", "rail_max_v_gs", "rail_max_v_bs", "load_rating", "cmti", "v_iso",
                     "cap_voltage_c_out"}
    assert r.v_rail.min <= r.v_rail.mean <= r.v_rail.max
    assert r.t.size == r.v.size > 0
    json.dumps(r.to_dict(), allow_nan=False)
    assert model_for("isolated") is iso.evaluate_option


def test_overload_is_a_failed_check_and_a_validity_warning(demo):
    d = _set(demo, p_no_load=0.005, p_rated=0.05, eta_full=0.8)
    with pytest.warns(ModelValidityWarning, match="p_rated"):
        r = _run(d)
    c = next(c for c in r.checks if c.name == "load_rating")
    assert not c.ok and not r.feasible and "rating" in r.verdict
    assert r.duty.max == 1.0  # no duty limit, only the overload flag


def test_rail_min_check_fails_with_a_weak_module(demo):
    r = _run(_set(demo, v_out=8.55, r_out=10.0))
    c = next(c for c in r.checks if c.name == "rail_min")
    assert not c.ok and c.limit == pytest.approx(8.5)


def test_overvoltage_checks(demo):
    d = replace_field(demo, "gate.v_gs_max", 11.0)
    d = replace_field(d, "gate.v_gs_on_min", 7.0)
    r = _run(d)
    assert not next(c for c in r.checks if c.name == "rail_max_v_gs").ok
    r = _run(_set(demo, c_out={"c": 4.7e-6, "v_rating": 12.0}))
    c = next(c for c in r.checks if c.name == "cap_voltage_c_out")
    assert not c.ok and c.limit == pytest.approx(0.8 * 12.0)


def test_missing_rating_is_warned(demo):
    r = _run(_set(demo, c_out=4.7e-6))
    assert "cap_voltage_c_out" not in {c.name for c in r.checks}
    assert any("no voltage rating" in w for w in r.warnings)


def test_capacitance_corner(demo):
    lo, nom, hi = (_run(demo, corner=c) for c in ("min", "nominal", "max"))
    assert lo.capacitors[0].c_eff < nom.capacitors[0].c_eff < hi.capacitors[0].c_eff
    assert lo.capacitors[0].ripple > nom.capacitors[0].ripple > hi.capacitors[0].ripple
    with pytest.raises(DesignError, match="corner"):
        _run(demo, corner="typical")


def test_rms_current_of_the_gate_pulse(demo):
    # with r_out = 0 only the assumed rectangular pulse Q/t_edge over t_edge remains:
    # I_rms = sqrt(Q·(Q/t_edge)·f)  (RMS of a rectangular pulse train, definition of RMS)
    r = _run(_set(demo, r_out=0.0))
    q, t_e, f = 41e-9, demo.bridge.t_edge, demo.bridge.f_sw
    assert_allclose(r.capacitors[0].i_rms, math.sqrt(q * q / t_e * f), rtol=1e-12)
    assert_allclose(r.capacitors[0].i_peak, q / t_e, rtol=1e-12)


def test_wrong_option_kind_is_refused(demo):
    boot = next(o for o in demo.options if o.kind == "bootstrap")
    with pytest.raises(DesignError, match="isolated"):
        iso.evaluate_option(demo, boot)


def test_rating_limits_in_topology_terms():
    # gate-drive power P = Q_G·V·f (Mohan, Undeland & Robbins, Power Electronics, §22-3): at the reported
    # f_sw_max the gate load reaches p_rated, so just below it the rating check passes and just above fails
    from explorer import demo_design, replace_field
    from explorer.options.isolated import evaluate_option
    d = demo_design()
    i = [o.label for o in d.options].index("isolated 1 W")
    r = evaluate_option(d, d.options[i])
    f_max = r.duty.topology["f_sw_max"]
    for scale, ok in ((0.995, True), (1.005, False)):
        dd = replace_field(d, "bridge.f_sw", f_max * scale)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            rr = evaluate_option(dd, dd.options[i])
        load = next(c for c in rr.checks if c.name == "load_rating")
        assert load.ok is ok


def test_collapsed_rail_reports_no_efficiency():
    # found by the fuzz run: 1 µC per pulse from a 2.9 nF c_out at 4.3 MHz drains the rail far below
    # 0 V in the linear model; charge conservation (Q = C·V) says the module cannot refill it, so the
    # rail reads 0 V, no efficiency is given and the option fails (as the bootstrap and pump do)
    import copy

    from explorer import DEMO
    d = copy.deepcopy(DEMO)
    d["bridge"] = {"topology": "half_bridge", "v_bus": 6.26, "f_sw": 4.3e6, "dead_time": 7.4e-10,
                   "t_edge": 5.1e-9, "v_undershoot": 2, "startup_cycles": 10, "duty": 0.79}
    d["gate"] = {"q_g": 1e-6, "v_gs_max": 20.0, "v_gs_on_min": 5.37, "r_gs": None}
    d["options"] = [next(o for o in d["options"] if o["kind"] == "isolated")
                    | {"v_out": 16.9, "c_out": {"c": 2.92e-9, "esr": 1.5e-3, "c_tol": 0.2, "dielectric": "C0G",
                                                "v_rating": 50}, "r_out": 5}]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)
        r = evaluate(d).options[0]
    assert r.efficiency is None and not r.feasible
    assert r.v_rail.min == 0.0 and 0.0 <= r.v_rail.mean <= r.v_rail.max
    assert any("collapses" in w for w in r.warnings)


# --------------------------------------------------------------------------- module without output regulation

def test_unregulated_module_output_follows_its_input_in_proportion():
    # source: at a fixed duty the conversion ratio of a transformer-coupled converter is fixed, M = n·D
    # (Erickson & Maksimović, Fundamentals of Power Electronics, 3rd ed., 2020, ch. 6), so V_out ∝ V_in.
    # With r_out = 0 the module is an ideal source: the rail's highest value is that output exactly
    # (invented scenario: the demo's 12 V aux rail, a module specified at 12 V in)
    base = _set(DEMO, r_out=0.0, v_in_rated=12.0)
    r12 = _run(base)
    hi = replace_field(base, "aux.v_dd", 13.2)
    r13 = _run(hi)
    v_out = base.options[_idx(base)].v_out
    assert r12.v_rail.max == pytest.approx(v_out, rel=1e-12)
    assert r13.v_rail.max == pytest.approx(v_out * 13.2 / 12.0, rel=1e-12)
    # a regulated module (v_in_rated null) does not follow its input
    reg = replace_field(_set(DEMO, r_out=0.0), "aux.v_dd", 13.2)
    assert _run(reg).v_rail.max == pytest.approx(v_out, rel=1e-12)
    # an explicit module input rail sets the output, not the aux rail
    sep = _set(base, v_in=9.0)
    assert _run(sep).v_rail.max == pytest.approx(v_out * 9.0 / 12.0, rel=1e-12)


def test_unregulated_module_pre_pwm_rail_is_the_source_behind_r_out():
    # source: Ohm's law on the source-behind-r_out model with the driver's quiescent current as the
    # only load before the PWM starts, V = V_src − r_out·I_Q, with V_src = v_out·V_in/v_in_rated
    d = _set(DEMO, v_in_rated=10.0, r_out=2.0)
    r = _run(d)
    v_src = d.options[_idx(d)].v_out * 12.0 / 10.0
    assert r.details.v_pre_pwm == pytest.approx(v_src - 2.0 * d.driver.i_q, rel=1e-12)


def test_unregulated_module_spread_follows_the_aux_tolerance():
    # the aux-rail spread reaches an unregulated module's output: its corners include the rail
    # high and low, and the batched Monte Carlo samples equal evaluate_option on the perturbed design
    from explorer.options import supply_model
    from explorer.tolerance import apply_factors, corner_factors, sample_factors
    d = _set(DEMO, v_in_rated=12.0)
    names = [n for n, _ in corner_factors(d, LABEL)]
    assert any("v_dd high" in n for n in names) and any("v_dd low" in n for n in names)
    assert not any("v_dd" in n for n, _ in corner_factors(DEMO, LABEL))  # regulated: pinned
    f = sample_factors(d, LABEL, 6, np.random.default_rng(5))
    assert np.ptp(f.v_dd) > 0
    batch = supply_model("isolated").rail_min_batch(d, d.option(LABEL), f)
    for i in range(6):
        di = apply_factors(d, LABEL, f.at(i))
        assert batch[i] == pytest.approx(_run(di).v_rail.min, rel=1e-12)


def test_unregulated_module_netlist_source_reaches_the_scaled_output():
    from explorer.netlist import export_netlist
    d = _set(DEMO, v_in_rated=10.0)
    net = export_netlist(d, LABEL)
    v_src = d.options[_idx(d)].v_out * 12.0 / 10.0
    line = next(ln for ln in net.splitlines() if ln.startswith("VMOD"))
    pwl = [float(x) for x in line[line.index("PWL(") + 4:line.rindex(")")].split()]
    assert max(pwl[1::2]) == pytest.approx(v_src, rel=1e-11)  # the ramp's end level
