"""Start-up over many cycles without stepping (explorer.engines.transient.StartupTransient).

References:
* stepping: the cycle-to-cycle recurrence x_{k+1} = Φ·x_k + Γ·u run one cycle at a time,
  every cycle's phases sampled finely and the first sample at or above the threshold bracketed
  and solved by scipy.optimize.brentq on the exact phase map; the in-cycle extremes of every
  stepped cycle from dense samples. Required: the same cycle, the time within 1e-9 relative.
* scipy.integrate.solve_ivp (Radau) on the pump's state equations with a terminal event at the
  threshold, for a start-up short enough to integrate.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from explorer.errors import DesignError
from explorer.options.charge_pump import pump_durations, pump_network
from explorer.engines.network import cycle_map
from explorer.engines.startup import startup
from explorer.engines.transient import StartupTransient

#: (ratio, c_fly, c_out, r_on, f_cp, dead time, v_in, i_q, threshold): scenarios of our own invention
#: spanning the slow- and fast-switching limits, a flying capacitor above and far below C_out,
#: dead time, and one rail that peaks above the threshold only inside a phase.
DESIGNS = [
    ("1:2", 18e-9, 1e-9, 0.019, 1481.0, 0.0, 5.0, 2.5e-7, 7.7),
    ("1:1", 100e-9, 10e-6, 1.0, 1e5, 50e-9, 12.0, 1e-4, 10.0),
    ("2:1", 220e-9, 1e-6, 1.0, 5e5, 20e-9, 24.0, 1e-2, 10.0),
    ("1:2", 1e-6, 1e-3, 0.1, 1e3, 1e-6, 5.0, 1e-6, 9.5),
    ("2:1", 1e-6, 1e-6, 100.0, 1e6, 0.0, 24.0, 1e-4, 11.9),
    ("1:1", 1e-6, 1e-6, 100.0, 1e6, 0.0, 12.0, 1e-4, 11.0),
    ("1:2", 1e-6, 1e-6, 100.0, 1e6, 100e-9, 12.0, 1e-4, 22.0),
    ("1:1", 10e-9, 100e-6, 0.5, 5e7, 2e-9, 12.0, 1e-6, 11.0),
]
STRESS = ["x(c_fly)", "x(c_out)", "i(s1)", "i(s2)", "i(s3)", "i(s4)", "i(c_fly)", "i(c_out)", "v(out)"]


def build(ratio, c_fly, c_out, r_on, f_cp, dead, v_in, i_q):
    net = pump_network(ratio, c_fly=c_fly, r_on=r_on, esr_fly=0.01, c_out=c_out, esr_out=0.005)
    return net, pump_durations(f_cp, dead), np.array([v_in, i_q])


def stepped_cycles(net, d, u, n):
    """Cycle-start states of cycles 0..n−1 by stepping the recurrence one cycle at a time."""
    _, _, tot = cycle_map(net, d)
    nx = net.n_x
    phi, b = tot[:nx, :nx], tot[:nx, nx:] @ u
    xs = np.zeros((n, nx))
    x = np.zeros(nx)
    for k in range(n):
        xs[k] = x
        x = phi @ x + b
    return xs


def phase_samples(net, d, u, xs, name, n=64):
    """The probe at n + 1 points of every phase of every given cycle, shape (cycles, P, n + 1), and the
    phase-start augmented states (cycles, P, n_z)."""
    E, _, _ = cycle_map(net, d)
    Es = net.phase_maps(d / n)[0]
    K = net.stacked(net.probe_index([name]))[1][:, 0, :]
    z = np.concatenate([xs, np.broadcast_to(u, (xs.shape[0], u.size))], axis=1)
    ys, zs = [], []
    for p in range(net.n_phases):
        zs.append(z)
        zz, row = z, [z @ K[p]]
        for _ in range(n):
            zz = zz @ Es[p].T
            row.append(zz @ K[p])
        ys.append(np.stack(row, axis=-1))
        z = z @ E[p].T
    return np.stack(ys, axis=1), np.stack(zs, axis=1)


def stepping_first_reach(net, d, u, name, thr, n_cycles, n=64):
    """Reference: first crossing by stepping every cycle and bracketing between samples (module notes)."""
    xs = stepped_cycles(net, d, u, n_cycles)
    y, z = phase_samples(net, d, u, xs, name, n)
    hit = np.argwhere(y >= thr)
    if hit.size == 0:
        return None, None
    k, p, j = hit[0]  # argwhere runs in cycle, phase, sample order
    t0 = k * d.sum() + d[:p].sum()
    if j == 0:
        return int(k), float(t0)
    K = net.stacked(net.probe_index([name]))[1][p, 0, :]

    def f(t):
        dd = np.zeros(net.n_phases)
        dd[p] = t
        return K @ (net.phase_maps(dd)[0][p] @ z[k, p]) - thr

    t = brentq(f, (j - 1) * d[p] / n, j * d[p] / n, xtol=1e-300, rtol=1e-15)
    return int(k), float(t0 + t)


@pytest.mark.parametrize("design", DESIGNS, ids=lambda d: f"{d[0]}-{d[4]:g}Hz-{d[2]:g}F")
def test_first_reach_equals_stepping(design):
    # reference: cycle-by-cycle stepping with sampled phases and brentq (module notes), same cycle,
    # time within 1e-9 relative
    *params, thr = design
    net, d, u = build(*params)
    k, t = StartupTransient(net, d, u).first_reach("v(out)", thr)
    assert k is not None
    k_ref, t_ref = stepping_first_reach(net, d, u, "v(out)", thr, k + 2)
    assert k == k_ref
    assert_allclose(t, t_ref, rtol=1e-9)


def test_first_reach_after_two_hundred_thousand_cycles_equals_stepping():
    # reference: stepping (module notes) over 2e5 cycles; C_out/C_fly = 2e4 at a 1 kHz clock
    net, d, u = build("1:2", 50e-9, 1e-3, 0.5, 1e3, 1e-6, 5.0, 1e-7)
    thr = 9.0
    k, t = StartupTransient(net, d, u).first_reach("v(out)", thr)
    assert 1e4 < k < 2e5
    xs = stepped_cycles(net, d, u, k + 2)
    y, _ = phase_samples(net, d, u, xs[k - 1:], "v(out)", n=8)
    assert y[0].max() < thr <= y[1].max()  # cycle k − 1 stays below, cycle k reaches
    k_ref, t_ref = stepping_first_reach(net, d, u, "v(out)", thr, 1)  # not within the first cycle
    assert k_ref is None
    xk = xs[k:k + 1]
    yk, zk = phase_samples(net, d, u, xk, "v(out)")
    _, p, j = np.argwhere(yk >= thr)[0]
    K = net.stacked(net.probe_index(["v(out)"]))[1][p, 0, :]

    def f(tt):
        dd = np.zeros(net.n_phases)
        dd[p] = tt
        return K @ (net.phase_maps(dd)[0][p] @ zk[0, p]) - thr

    t_in = brentq(f, (j - 1) * d[p] / 64, j * d[p] / 64, xtol=1e-300, rtol=1e-15) if j else 0.0
    assert_allclose(t, k * d.sum() + d[:p].sum() + t_in, rtol=1e-9)


def test_never_reached_gives_none():
    # the steady-state maximum of a 1:1 pump from 12 V is below 12 V (a passive network cannot exceed
    # its source; circuit-theory textbooks)
    net, d, u = build("1:1", 1e-6, 1e-6, 1.0, 1e5, 0.0, 12.0, 1e-3)
    tr = StartupTransient(net, d, u)
    assert tr.first_reach("v(out)", 12.0) == (None, None)
    assert tr.extrema(["v(out)"])[1][0] < 12.0


def pump_rhs(ratio, c_fly, c_out, r_on, v_in, i_q, esr_fly=0.01, esr_out=0.005):
    """Hand-written state equations of the pump per phase (charge balance on C_fly and C_out)."""
    def rhs(p):
        def f(t, x):
            vf, vo = x
            i_f = i_o = 0.0  # current into C_fly (+ plate t) and into C_out
            if p == 0:  # φ1: C_fly charged
                if ratio in ("1:1", "1:2"):
                    i_f = (v_in - vf) / (2 * r_on + esr_fly)
                else:  # 2:1: C_fly in series with C_out across V_in
                    i = (v_in - vf - vo) / (2 * r_on + esr_fly + esr_out)
                    i_f, i_o = i, i
            elif p == 2:  # φ2: transfer
                e = {"1:1": vf, "1:2": vf + v_in, "2:1": vf}[ratio]
                i = (e - vo) / (2 * r_on + esr_fly + esr_out)
                i_f, i_o = -i, i
            return [i_f / c_fly, (i_o - i_q) / c_out]
        return f
    return rhs


@pytest.mark.parametrize("ratio,thr", [("1:1", 10.0), ("2:1", 10.0), ("1:2", 9.0)])
def test_first_reach_matches_solve_ivp(ratio, thr):
    # reference: scipy.integrate.solve_ivp (Radau, rtol 1e-10) on the hand-written pump equations,
    # cycle by cycle, with the rail v(out) = x_out + ESR·i crossing found by brentq on the dense output
    c_fly, c_out, r_on, f, v_in, i_q = 100e-9, 2.2e-6, 2.0, 2e5, {"1:1": 12.0, "2:1": 24.0, "1:2": 5.0}[ratio], 1e-4
    net, d, u = build(ratio, c_fly, c_out, r_on, f, 0.0, v_in, i_q)
    k, t = StartupTransient(net, d, u).first_reach("v(out)", thr)
    rhs = pump_rhs(ratio, c_fly, c_out, r_on, v_in, i_q)
    x = np.zeros(2)
    esr_o = 0.005
    t_ref = None
    for cyc in range(k + 1):
        t0 = cyc * d.sum()
        for p, dur in enumerate(d):
            sol = solve_ivp(rhs(p), (0, dur), x, method="Radau", rtol=1e-10, atol=1e-13, dense_output=True)
            if cyc == k and t_ref is None:
                def v_out(tt, p=p, sol=sol):
                    xx = sol.sol(tt)
                    return xx[1] + esr_o * (rhs(p)(tt, xx)[1] * c_out + i_q) - thr
                ts = np.linspace(0, dur, 400)
                vs = np.array([v_out(tt) for tt in ts])
                idx = np.flatnonzero(vs >= 0)
                if idx.size:
                    i = idx[0]
                    t_ref = t0 + (0.0 if i == 0 else brentq(v_out, ts[i - 1], ts[i], xtol=1e-16))
            x = sol.y[:, -1]
            t0 += dur
    assert t_ref is not None
    assert_allclose(t, t_ref, rtol=1e-6)


@pytest.mark.parametrize("design", DESIGNS[:7], ids=lambda d: f"{d[0]}-{d[4]:g}Hz-{d[2]:g}F")
def test_startup_extremes_bound_and_meet_the_stepped_cycles(design):
    # reference: stepping (module notes); the start-up extremes enclose every stepped, densely sampled
    # cycle and the steady state, and are met by one of them (or by the steady state) to 1e-6
    *params, _ = design
    net, d, u = build(*params)
    tr = StartupTransient(net, d, u)
    lo, hi = tr.extrema(STRESS)
    n = int(min(max(20 * tr.settling_cycles, 50), 20000))
    xs = stepped_cycles(net, d, u, n)
    ss_lo, ss_hi = tr.periodic.extrema(STRESS)
    scale = np.maximum(np.abs(lo), np.abs(hi))
    for m, name in enumerate(STRESS):
        y, _ = phase_samples(net, d, u, xs, name, n=32)
        assert y.max() <= hi[m] + 1e-9 * scale[m] and y.min() >= lo[m] - 1e-9 * scale[m]
        seen_hi = max(y.max(), ss_hi[0, m])
        seen_lo = min(y.min(), ss_lo[0, m])
        # dense samples can miss an in-phase peak by a little: the exact value is at or above them
        assert hi[m] - seen_hi <= 1e-3 * scale[m] and seen_lo - lo[m] <= 1e-3 * scale[m], name


def test_states_equal_the_closed_form_of_startup():
    # the cycle-start states agree with explorer.engines.startup.startup (eigen-decomposition) and with stepping
    net, d, u = build("2:1", 220e-9, 1e-6, 1.0, 5e5, 20e-9, 24.0, 1e-2)
    ks = np.arange(40)
    tr = StartupTransient(net, d, u)
    assert_allclose(tr.states(ks), startup(net, d, u, cycles=ks).z_start[:, 0, :2], rtol=1e-12, atol=1e-12)
    assert_allclose(tr.states(ks), stepped_cycles(net, d, u, 40), rtol=1e-10, atol=1e-12)


def test_batched_network_is_refused():
    net = pump_network("1:1", c_fly=np.array([1e-6, 2e-6]), r_on=1.0, c_out=1e-6)
    with pytest.raises(DesignError, match="one network"):
        StartupTransient(net, pump_durations(1e5), [5.0, 0.0])
