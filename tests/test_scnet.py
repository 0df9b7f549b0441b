"""The switched-capacitor engine against independent references.

* scipy.integrate.solve_ivp on hand-written state equations of a small network
  (general-purpose reference software);
* the charge-sharing loss ½·C1·C2/(C1+C2)·ΔV² of two capacitors joined through a
  resistor, whatever the resistance (the two-capacitor problem: A. K. Singal,
  "The paradox of two charged capacitors", arXiv:1309.5034, eq. 2, and
  circuit-theory textbooks);
* conservation of energy over a periodic steady state (Tellegen's theorem:
  power delivered by the sources equals power dissipated in the resistors when
  the capacitors' stored energy returns to its start).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.integrate import solve_ivp

from explorer.errors import DesignError
from explorer.engines.elements import Cap, ISrc, Res, VSrc
from explorer.engines.network import Network
from explorer.engines.periodic import periodic_steady_state, phase_square_integrals
from explorer.engines.startup import startup

C1, C2, R, RS, ESR2, V, I = 1e-6, 2.2e-6, 0.5, 2.0, 0.05, 10.0, 0.2
D = np.array([3e-6, 0.5e-6, 2e-6])  # share, dead, charge


def small_network():
    """C1 is charged from V through RS (phase 2), shares with C2 (ESR2) through R (phase 0);
    phase 1 is a dead time; a constant load I is drawn from C2's node."""
    return Network([VSrc("v", "s", "0", "v"), Res("rs", "s", "a", RS, (2,)), Cap("c1", "a", "0", C1),
                    Res("r", "a", "n", R, (0,)), Cap("c2", "n", "0", C2, ESR2), ISrc("i", "n", "0", "i")],
                   inputs=("v", "i"), n_phases=3)


def rhs(phase):
    """Hand-written state equations of small_network (independent of the engine's MNA)."""
    def f(t, x):
        v1, v2 = x[0], x[1]
        if phase == 0:
            i = (v1 - v2 + ESR2 * I) / (R + ESR2)  # loop current, KCL at n with the load
            d1, d2 = -i / C1, (i - I) / C2
            p_r = i * i * R
        elif phase == 1:
            d1, d2, p_r = 0.0, -I / C2, 0.0
        else:
            d1, d2, p_r = (V - v1) / (RS * C1), -I / C2, 0.0
        return [d1, d2, v2, p_r]  # also ∫v2 dt and the energy in R
    return f


def ode_cycle(x0, n=1):
    x = np.concatenate([x0, [0.0, 0.0]])
    for _ in range(n):
        for p, d in enumerate(D):
            sol = solve_ivp(rhs(p), (0, d), x, method="Radau", rtol=1e-11, atol=1e-14)
            x = sol.y[:, -1]
    return x


def test_startup_matches_solve_ivp():
    # reference: scipy.integrate.solve_ivp (Radau, rtol 1e-11) on the hand-written equations
    net = small_network()
    s = startup(net, D, [V, I], cycles=np.arange(6))
    ref = ode_cycle(np.zeros(2), 5)
    assert_allclose(s.z_start[5, 0, :2], ref[:2], rtol=1e-7, atol=1e-9)


def test_periodic_state_is_a_fixed_point_of_solve_ivp():
    # reference: one cycle integrated by solve_ivp from the engine's periodic state returns to it
    net = small_network()
    sol = periodic_steady_state(net, D, [V, I])
    x0 = sol.x0
    ref = ode_cycle(x0)
    assert_allclose(ref[:2], x0, rtol=1e-8)
    # the exact cycle integrals agree with the ODE quadrature
    assert_allclose(sol.integral(["x(c2)"])[0], ref[2], rtol=1e-8)
    assert_allclose(sol.square_integral(["i(r)"])[0] * R, ref[3], rtol=1e-7)


def test_energy_balance_in_steady_state():
    # Tellegen's theorem: source power = resistor power when stored energy is periodic
    net = small_network()
    sol = periodic_steady_state(net, D, [V, I])
    p_src = -V * sol.mean(["i(v)"])[0]
    sq = sol.square_integral(["i(rs)", "i(r)", "i(c2)"]) / D.sum()
    p_res = sq[0] * RS + sq[1] * R + sq[2] * ESR2
    p_load = I * sol.mean(["v(n)"])[0]
    assert_allclose(p_src, p_res + p_load, rtol=1e-9)


@settings(max_examples=30, deadline=None)
@given(c1=st.floats(1e-9, 1e-5), c2=st.floats(1e-9, 1e-5), r=st.floats(1e-2, 1e3),
       v1=st.floats(-50, 50), v2=st.floats(-50, 50))
def test_charge_sharing_loss(c1, c2, r, v1, v2):
    # Singal, arXiv:1309.5034, eq. 2 (two-capacitor problem): ½·C1·C2/(C1+C2)·ΔV², independent of R
    net = Network([Cap("c1", "a", "0", c1), Cap("c2", "b", "0", c2), Res("r", "a", "b", r)], n_phases=1)
    tau = r * c1 * c2 / (c1 + c2)
    d = np.array([60 * tau])
    s = startup(net, d, [], x0=[v1, v2], cycles=[0])
    e = phase_square_integrals(net, d, s.z_start[0], ["i(r)"])[0, 0] * r
    expect = 0.5 * c1 * c2 / (c1 + c2) * (v1 - v2) ** 2
    assert_allclose(e, expect, rtol=1e-8, atol=1e-12 * (c1 + c2) * (abs(v1) + abs(v2) + 1) ** 2)
    # and the charge is conserved
    xe = s.E[0] @ s.z_start[0, 0]
    assert_allclose(c1 * xe[0] + c2 * xe[1], c1 * v1 + c2 * v2, rtol=1e-9, atol=1e-15)


def test_batched_durations_equal_single_runs():
    net = small_network()
    ds = np.array([D, D * 2, D * 0.5])
    sol = periodic_steady_state(net, ds, [V, I])
    for k in range(3):
        one = periodic_steady_state(net, ds[k], [V, I])
        assert_allclose(sol.mean(["v(n)"])[k], one.mean(["v(n)"]), rtol=1e-12)
        assert_allclose(sol.rms(["i(r)"])[k], one.rms(["i(r)"]), rtol=1e-10)


def test_current_source_into_floating_node_is_refused():
    net = Network([Cap("c", "a", "0", 1e-6), Res("s", "a", "b", 1.0, (0,)), ISrc("i", "b", "0", "i")],
                  inputs=("i",), n_phases=2)
    with pytest.raises(DesignError, match="current source"):
        net.systems


def test_loop_without_resistance_is_refused():
    net = Network([VSrc("v", "a", "0", "v"), Cap("c", "a", "0", 1e-6)], inputs=("v",), n_phases=1)
    with pytest.raises(DesignError, match="loop"):
        net.systems


def test_bad_elements_are_refused():
    with pytest.raises(DesignError, match="network.c"):
        Network([Cap("c", "a", "0", -1.0)])
    with pytest.raises(DesignError, match="input not declared"):
        Network([VSrc("v", "a", "0", "vin")])
    with pytest.raises(DesignError, match="unique"):
        Network([Cap("c", "a", "0", 1.0), Cap("c", "b", "0", 1.0)])
