"""The engine's batches over element values, its closed-form modal maps and exact extrema.

References outside the project: scipy.linalg.expm (the engine's ``method="expm"``
is Van Loan's block exponential evaluated by scipy) and scipy.integrate.solve_ivp
on hand-written state equations (general-purpose reference software).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.integrate import solve_ivp

from explorer.errors import DesignError
from explorer.options.charge_pump import pump_durations, pump_network
from explorer.engines.elements import Cap, ISrc, Res, VSrc
from explorer.engines.network import Network
from explorer.engines.periodic import periodic_steady_state
from explorer.engines.startup import startup

RNG = np.random.default_rng(11)
N = 6
C_FLY = 100e-9 * RNG.uniform(0.5, 2.0, N)
C_OUT = 1e-6 * RNG.uniform(0.5, 2.0, N)
R_ON = RNG.uniform(0.5, 3.0, N)
ESR = 0.01 * RNG.uniform(0.5, 2.0, N)
V_IN = RNG.uniform(5.0, 24.0, N)
I_L = RNG.uniform(1e-3, 20e-3, N)
PROBES = ["v(out)", "x(c_fly)", "i(s1)", "i(s3)", "i(c_out)", "i(v_in)", "v(b)"]


@pytest.mark.parametrize("ratio", ["1:1", "1:2", "2:1"])
def test_batched_networks_equal_single_networks(ratio):
    d = pump_durations(400e3, 30e-9)
    net = pump_network(ratio, c_fly=C_FLY, r_on=R_ON, esr_fly=ESR, c_out=C_OUT, esr_out=ESR / 2, r_load=2e3)
    assert net.batch_shape == (N,)
    sol = periodic_steady_state(net, d, np.stack([V_IN, I_L], axis=-1))
    lo, hi = sol.extrema(PROBES)
    for k in range(N):
        one_net = pump_network(ratio, c_fly=C_FLY[k], r_on=R_ON[k], esr_fly=ESR[k], c_out=C_OUT[k],
                               esr_out=ESR[k] / 2, r_load=2e3)
        one = periodic_steady_state(one_net, d, [V_IN[k], I_L[k]])
        assert_allclose(sol.x0[k], one.x0, rtol=1e-12)
        assert_allclose(sol.mean(PROBES)[k], one.mean(PROBES), rtol=1e-10, atol=1e-15)
        assert_allclose(sol.rms(PROBES)[k], one.rms(PROBES), rtol=1e-9)
        assert_allclose(sol.samples(PROBES, n=8)[1][k], one.samples(PROBES, n=8)[1], rtol=1e-10, atol=1e-12)
        olo, ohi = one.extrema(PROBES)
        assert_allclose(lo[k], olo, rtol=1e-12, atol=1e-12)
        assert_allclose(hi[k], ohi, rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("ratio", ["1:1", "1:2", "2:1"])
def test_modal_maps_equal_scipy_expm(ratio):
    # closed-form modal maps against Van Loan's block exponential evaluated by scipy.linalg.expm,
    # on a batch of networks and over six decades of phase length
    net = pump_network(ratio, c_fly=C_FLY, r_on=R_ON, esr_fly=ESR, c_out=C_OUT, esr_out=ESR / 2, r_load=2e3)
    assert net.modes is not None
    for f in (1e3, 1e6, 1e9):
        d = pump_durations(f, 0.05 / f)
        E1, S1 = net.phase_maps(d, method="modal")
        E2, S2 = net.phase_maps(d, method="expm")
        assert_allclose(E1, E2, rtol=1e-9, atol=1e-12)
        assert_allclose(S1, S2, rtol=1e-9, atol=1e-12 / f)


def test_batch_over_durations_and_values_together():
    # element values (N, 1) against durations (3, 4): a (N, 3) grid of networks × clocks
    net = pump_network("2:1", c_fly=C_FLY[:, None], r_on=1.0, c_out=1e-6)
    d = pump_durations(np.array([1e5, 1e6, 1e7]), 0.0)
    sol = periodic_steady_state(net, d, [24.0, 5e-3])
    assert sol.x0.shape == (N, 3, 2)
    for k in (0, N - 1):
        for j in range(3):
            one = periodic_steady_state(pump_network("2:1", c_fly=C_FLY[k], r_on=1.0, c_out=1e-6), d[j],
                                        [24.0, 5e-3])
            assert_allclose(sol.x0[k, j], one.x0, rtol=1e-12)


def test_batches_refused_where_one_network_is_meant():
    net = pump_network("1:1", c_fly=C_FLY, r_on=1.0, c_out=1e-6)
    with pytest.raises(DesignError, match="one network"):
        startup(net, pump_durations(1e5), [5.0, 0.0], cycles=[0, 1])
    with pytest.raises(DesignError, match="broadcast"):
        Network([Cap("a", "x", "0", np.ones(2) * 1e-6), Res("r", "x", "0", np.ones(3))], n_phases=1).batch_shape


# ------------------------------------------------------------------ exact extrema against solve_ivp

C = (1e-6, 2.2e-6, 0.47e-6)
RL = (1.0, 2.0, 0.5)
V, I = 10.0, 0.3
D = np.array([4e-6, 6e-6])  # charge from V, then discharge through the ladder into the load


def ladder():
    """V → R0 (phase 0) → C0 → R1 → C1 → R2 → C2, a load I from C2's node: three modes."""
    return Network([VSrc("v", "s", "0", "v"), Res("r0", "s", "a", RL[0], (0,)), Cap("c0", "a", "0", C[0]),
                    Res("r1", "a", "b", RL[1]), Cap("c1", "b", "0", C[1]), Res("r2", "b", "c", RL[2]),
                    Cap("c2", "c", "0", C[2]), ISrc("i", "c", "0", "i")], inputs=("v", "i"), n_phases=2)


def ladder_rhs(phase):
    """Hand-written state equations of ladder() (independent of the engine's nodal analysis)."""
    def f(t, x):
        i0 = (V - x[0]) / RL[0] if phase == 0 else 0.0
        i1 = (x[0] - x[1]) / RL[1]
        i2 = (x[1] - x[2]) / RL[2]
        return [(i0 - i1) / C[0], (i1 - i2) / C[1], (i2 - I) / C[2]]
    return f


def test_exact_extrema_match_a_dense_solve_ivp_trajectory():
    net = ladder()
    sol = periodic_steady_state(net, D, [V, I])
    lo, hi = sol.extrema(["x(c0)", "x(c1)", "x(c2)"])
    x = sol.x0
    traj = []
    for p, dur in enumerate(D):
        r = solve_ivp(ladder_rhs(p), (0, dur), x, method="Radau", rtol=1e-12, atol=1e-14, dense_output=True)
        traj.append(r.sol(np.linspace(0, dur, 20001)))
        x = r.y[:, -1]
    y = np.concatenate(traj, axis=1)
    assert_allclose(x, sol.x0, rtol=1e-8)  # the engine's periodic orbit closes under solve_ivp
    # the dense trajectory's extremes, to its sampling error (|y''|·h²/8, far below 1e-9 V here)
    assert_allclose(lo, y.min(axis=1), rtol=1e-8)
    assert_allclose(hi, y.max(axis=1), rtol=1e-8)
    # the ladder's middle node peaks inside a phase (three modes: the Rolle bracketing is exercised)
    ends = sol.at_phase_starts(["x(c1)"])[0]
    assert hi[1] > ends.max() + 1e-3


def test_exact_extrema_bound_the_engine_samples():
    for ratio in ("1:1", "1:2", "2:1"):
        net = pump_network(ratio, c_fly=220e-9, r_on=1.0, esr_fly=0.01, c_out=1e-6, esr_out=0.005, r_load=500.0)
        sol = periodic_steady_state(net, pump_durations(2e5, 100e-9), [12.0, 0.02])
        lo, hi = sol.extrema(PROBES)
        _, y = sol.samples(PROBES, n=2000)
        scale = np.abs(y).max(axis=-1)
        assert np.all(lo <= y.min(axis=-1) + 1e-12 * scale)
        assert np.all(hi >= y.max(axis=-1) - 1e-12 * scale)
        assert_allclose(lo, y.min(axis=-1), rtol=1e-6, atol=1e-9 * scale.max())
        assert_allclose(hi, y.max(axis=-1), rtol=1e-6, atol=1e-9 * scale.max())


def test_own_matrix_exponential_matches_scipy():
    # reference software: scipy.linalg.expm (Al-Mohy & Higham 2009); ours is Higham 2005's Padé(13)
    # scaling and squaring, so the two agree to rounding over norms from 1e-3 to 30
    import scipy.linalg as sl

    from explorer.engines.expm import expm
    rng = np.random.default_rng(0)
    for scale in (1e-3, 0.1, 1.0, 5.0, 30.0):
        a = rng.standard_normal((5, 6, 6)) * scale
        ref = np.stack([sl.expm(x) for x in a])
        got = expm(a)
        err = np.abs(got - ref).max(axis=(-2, -1)) / np.abs(ref).max(axis=(-2, -1))
        assert err.max() < 1e-12
        assert np.allclose(expm(a[0]), ref[0], rtol=1e-12, atol=1e-12 * np.abs(ref[0]).max())
