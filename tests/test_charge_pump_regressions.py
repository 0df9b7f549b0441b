"""Regressions from the reliability fuzz run (designs generated at random, kept verbatim).

Each check is a conservation law: in a periodic steady state every capacitor's
charge returns to its start, so the mean input current of an ideal-ratio pump
is M times the mean output current (Kirchhoff's current law), and the power
drawn equals the power dissipated plus the power delivered (Tellegen's theorem;
circuit-theory textbooks).
"""

import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from explorer import load_design
from explorer.options.charge_pump import CIRCUITS, evaluate_option, pump_durations, pump_network
from explorer.engines.periodic import periodic_steady_state

# fuzz finding charge_pump-charge-imbalance-slow-output: a 0.13 mΩ flying-capacitor ESR beside a slow
# output (C_out 133 µF, R_GS share 200 kΩ): charge imbalance 1.2e-4 from the 1/ESR stamp before the fix
SLOW_OUTPUT = {
    "format": "explorer-design", "version": 1, "title": "fuzz (generated)",
    "bridge": {"topology": "line_leg", "v_bus": 9.99976974414163, "f_sw": 100000.0,
               "dead_time": 2.37274628106235e-07, "t_edge": 3.527660825422229e-07, "soft_start": 0.0001,
               "precharge": 2.0000000000000003e-06, "v_undershoot": 2, "startup_cycles": 20, "f_line": 50.0},
    "gate": {"q_g": 4.479407606781853e-07, "v_gs_max": 20.0, "v_gs_on_min": 9.139551169053052, "r_gs": 100000.0},
    "driver": {"i_q": 0.0009253544180432985, "q_ls": 1e-09, "uvlo_on": 11.308083418919859,
               "uvlo_off": 9.155088825785269, "v_bs_max": 22.0, "t_on_min": 0},
    "aux": {"v_dd": 5.0, "c_dd": 1e-07, "v_dd_tol": 0.05},
    "options": [{"label": "opt0", "kind": "charge_pump", "ratio": "1:1", "f_cp": 1000.000000000001,
                 "c_fly": {"c": 1.1578012734815814e-07, "esr": 0.00013335385945633348, "c_tol": 0.2,
                           "dielectric": "ideal", "v_rating": None},
                 "c_out": {"c": 0.00013335385945633348, "esr": 1.0, "c_tol": 0.2, "dielectric": "X7R",
                           "v_rating": None},
                 "r_on": 51.61266958703714, "v_in": None, "c_par": 0, "alpha_bp": 0, "q_g_sw": 1e-09}],
}


def balance(ratio, *, c_fly, r_on, esr_fly, c_out, esr_out, r_load, f_cp, dead, v_in, i_load):
    net = pump_network(ratio, c_fly=c_fly, r_on=r_on, esr_fly=esr_fly, c_out=c_out, esr_out=esr_out, r_load=r_load)
    sol = periodic_steady_state(net, pump_durations(f_cp, dead), [v_in, i_load])
    i_in, v_out = sol.mean(["i(v_in)", "v(out)"])
    i_out = i_load + v_out / r_load
    return -i_in, CIRCUITS[ratio].m * i_out


def test_slow_output_tiny_esr_conserves_charge_and_energy():
    d = load_design(SLOW_OUTPUT)
    o = d.options[0]
    r = evaluate_option(d, o)
    x = r.details
    p_in = r.p_drawn_aux - r.losses["bottom_plate"] - r.losses["pump_gate_drive"]
    assert abs(x.energy_residual) <= 1e-9 * abs(p_in)
    i_in, m_i_out = balance("1:1", c_fly=x.c_fly_eff, r_on=o.r_on, esr_fly=o.c_fly.esr, c_out=x.c_out_eff,
                            esr_out=o.c_out.esr, r_load=1.0 / x.g_load, f_cp=o.f_cp, dead=0.0,
                            v_in=x.v_in, i_load=x.i_load_const)
    assert_allclose(i_in, m_i_out, rtol=1e-9)


# found by this test: 1:1, C_fly 1 nF, C_out 1 mF, R_load 10 Ω, 1 kHz clock (time constants ~1e6 apart);
# the current integrals of S·z lost 2.8e-8 of the balance before the integral about the phase equilibrium
@settings(max_examples=60, deadline=None)
@example(ratio="1:1", lc=-9.0, lco=-3.0, lr=-2.5, lesr=-3.0, lesro=0.0, lrl=1.0, lf=3.0, dead=0.0)
@example(ratio="1:2", lc=-5.0, lco=-3.0, lr=0.0, lesr=0.0, lesro=0.0, lrl=6.0, lf=7.0, dead=0.0)
@given(ratio=st.sampled_from(sorted(CIRCUITS)), lc=st.floats(-9, -5), lco=st.floats(-7, -3),
       lr=st.floats(-3, 2), lesr=st.floats(-6, 0), lesro=st.floats(-6, 0), lrl=st.floats(1, 6),
       lf=st.floats(3, 7), dead=st.floats(0, 0.2))
def test_charge_balance_over_wide_value_spreads(ratio, lc, lco, lr, lesr, lesro, lrl, lf, dead):
    f = 10 ** lf
    i_in, m_i_out = balance(ratio, c_fly=10 ** lc, r_on=10 ** lr, esr_fly=10 ** lesr, c_out=10 ** lco,
                            esr_out=10 ** lesro, r_load=10 ** lrl, f_cp=f, dead=dead / f, v_in=12.0, i_load=1e-3)
    # The output's time constant R_load*C_out spans kappa = f*R_load*C_out periods (up to 1e10 here): the
    # periodic solve inverts (1 - Phi) with Phi within 1/kappa of identity, so round-off grows like
    # kappa*u (relative error <~ condition number x unit round-off; Higham, "Accuracy and Stability of
    # Numerical Algorithms", 2nd ed., ch. 7). Measured: 4.2e-8 at kappa = 1e10 (1:2 corner above),
    # 1.3e-11 at kappa = 1e5. The allowance is a tenth of kappa*u on top of 1e-8, so an algorithmic loss
    # like the 2.8e-8 one above (kappa = 10) still fails.
    kappa = f * 10 ** lrl * 10 ** lco
    assert_allclose(i_in, m_i_out, rtol=1e-8 + 0.1 * 2.2e-16 * kappa, atol=1e-15)


@pytest.mark.filterwarnings("ignore::explorer.errors.ModelValidityWarning")  # 0.01 pump cycles per turn-on
def test_a_vanishing_r_gs_share_is_left_out_of_the_network():
    # fuzz finding (margin-map fuzz run): an HS on-time of 1e-280 of the period gave an R_GS share of
    # about 1e283 Ω, and the nodal analysis refused the pump as singular ("a loop of capacitors without
    # ESR"). Such a share carries < 1e-12 of a switch's current, so the rail is that of the same design
    # without R_GS, to rounding (Kirchhoff's current law: the share's current is the only difference)
    import copy
    from explorer.design import replace_fields
    d = copy.deepcopy(SLOW_OUTPUT)
    d["bridge"] |= {"topology": "half_bridge", "duty": 0.5, "f_line": None, "dead_time": 0.0}
    base = load_design(d)
    tiny = replace_fields(base, {"bridge.duty": 1e-280})
    r = evaluate_option(tiny, tiny.options[0])
    ref = evaluate_option(replace_fields(tiny, {"gate.r_gs": None}), tiny.options[0])
    assert_allclose(r.v_rail.min, ref.v_rail.min, rtol=1e-12)
    assert_allclose(r.v_rail.mean, ref.v_rail.mean, rtol=1e-12)
