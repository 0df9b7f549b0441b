"""Property tests over random valid designs of every topology and option kind (issue 7).

The long run (:func:`test_fuzz_random_designs`) draws 10⁴ design files from
``tests/strategies.py`` and evaluates every option. Properties:

* nothing but :class:`~explorer.errors.DesignError` is raised, and no warning other than the
  package's own :class:`~explorer.errors.ExplorerWarning` (numpy RuntimeWarnings fail);
* no NaN or infinity anywhere in the result objects (walked before ``to_dict``, which would
  turn NaN into None);
* efficiency in (0, 1] where reported; bootstrap losses non-negative; rail statistics ordered
  min ≤ mean ≤ max;
* charge conservation per steady-state period to 1e-9 relative (bootstrap: diode charge in =
  step charges + load charge out, from the engine's interval integrals; isolated module: charge
  through r_out = gate, quiescent and pull-down charge, from the closed-form rail). Kirchhoff's
  current law on the rail capacitor over a periodic orbit (net charge zero) is the external law
  checked; any circuit-theory textbook, e.g. Alexander & Sadiku, *Fundamentals of Electric
  Circuits*, 6th ed., 2017, ch. 6 (capacitor charge q = C·v).

The run is split into two shards evaluated in two freshly started worker processes (the machine
has two cores), each a derandomized hypothesis run with its own digest, so the examples are the
same on every run.

An open finding is kept out of the long run by one narrow bound (:data:`FUZZ_MAX_PERIODS`, with
straight-line bootstraps only on three-phase legs) and checked by its stored reproducer; fixed
findings keep their reproducer as a plain regression test below.
"""

from __future__ import annotations

import collections
import json
import math
import multiprocessing
import os
import pathlib
import time
import traceback
import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

import explorer
from explorer import DesignError, ExplorerWarning
from explorer.design import JunctionDiode
from explorer.engines.rail_loop import broadcast_loop
from explorer.loads import charge_per_turn_on
from explorer.options import bootstrap as boot
from explorer.options import isolated as iso
from explorer.options import model_for
from explorer.schedule import period_schedule
from strategies import KINDS, TOPOLOGIES, designs, nonfinite_paths

#: Examples of the long run (two shards of half each).
FUZZ_EXAMPLES = 10_000
#: Relative tolerance of the charge balance (issue 7).
CHARGE_RTOL = 1e-9
#: Relative tolerance to which the bootstrap engine closes a periodic orbit (engines.rail_orbit.solve_orbit).
ORBIT_TOL = 1e-13
#: Start-up cycles drawn in the long run (short, so that 10⁴ examples fit in about five minutes).
FUZZ_STARTUP_CYCLES = (10, 30)
#: Most switching periods per three-phase fundamental in the long run. Bootstraps on three-phase legs
#: are drawn with both diodes (the junction-diode reproducer bootstrap-three-phase-junction-slow took
#: 36 s and now 0.7 s; a 10⁴ run with them takes about 85 s, slowest example 1.7 s). The bound stays
#: because at 10⁴ periods the isolated module's charge balance exceeds this file's rounding floor
#: (2e-14 C against 6e-15 C: the floor does not grow with the number of intervals summed; to be revisited).
FUZZ_MAX_PERIODS = 4000


FINDINGS = pathlib.Path(__file__).parent / "reference" / "bootstrap" / "fuzz"

_FUZZ_SETTINGS = dict(deadline=None, derandomize=True, database=None, print_blob=True,
                      # no shrinking: a failure reports the example as drawn, at once (shrinking
                      # designs that take a second each can run for half an hour)
                      phases=[Phase.explicit, Phase.reuse, Phase.generate],
                      suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much,
                                             HealthCheck.data_too_large])


# --------------------------------------------------------------------------- checks

def bootstrap_charge_residual(design, option):
    """Charge imbalance of the bootstrap's steady-state period and its tolerance [C] (None: never refreshed).

    Σ q_d (diode charge into C) against Σ q_step + Σ I·dt + Σ G·∫V dt (charge out: gate and
    level-shift steps, recovery and junction charge, quiescent and leakage current, pull-down), plus
    the charge a clamp across C_boot takes.
    Tolerance: 1e-9 of the charge flows, with a floor where a periodic orbit closed to the
    engine's Newton tolerance (1e-13 relative in V) leaves C·δV of the stored charge (the junction
    map gives q_d = C·ΔV + I·dt), plus the rounding of the charge the loop could move in the
    period, T·v_src/R (the straight-line diode gives q_d = (V_∞·t − ∫V dt)/R, which cancels when
    the diode current is tiny).
    None when the rail is never refreshed or the orbit did not converge (the model warns).
    """
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        ss = boot.steady_state(design, option)
    if not (ss.orbit.converged and np.all(np.isfinite(ss.orbit.v_start))):
        return None
    lp = broadcast_loop(ss.loop)
    ints = ss.integrals
    q_in = float(np.sum(ints["q_d"]))
    flows = [np.sum(lp.q_step), np.sum(lp.i_load * lp.dt), np.sum(lp.g_load * ints["int_v"])]
    if "q_clamp" in ints:  # a clamp across C_boot is one more branch the diode charge leaves by
        flows.append(np.sum(ints["q_clamp"]))
    q_out = float(sum(flows))
    scale = max(abs(q_in), sum(abs(float(f)) for f in flows))
    v_top = float(np.max(np.abs(ss.orbit.v_start)))
    q_loop = float(np.sum(lp.dt * np.abs(lp.v_src) / lp.r))
    # the periodic orbit is closed to the engine's Newton tolerance, 1e-13 relative in V (a stop
    # criterion on the last update, so the closure error can be a few times that)
    floor = 10 * ORBIT_TOL * float(np.max(lp.c)) * v_top + 64 * np.finfo(float).eps * q_loop * lp.dt.size
    return abs(q_in - q_out), CHARGE_RTOL * scale + floor


def isolated_charge_residual(design, option, result):
    """Relative charge imbalance of the isolated module's output over one analysis period.

    Charge through r_out, ∫(v_out − V)/r_out dt with ∫V dt from the closed-form exponentials,
    against n_on·(Q_G + Q_LS) + I_Q·T + ∫V/R_GS dt. The difference v_out·dt − ∫V dt cancels
    digits when r_out·I ≪ v_out, so the tolerance has a floor at the rounding of the charges
    involved, eps·v_out·(T/r_out + C_out).
    Returns (residual, floor) or None for r_out = 0 (an ideal source, no finite current).
    """
    if option.r_out == 0.0:
        return None
    s = period_schedule(design)
    c_eff = result.capacitors[0].c_eff
    v_src = iso.module_output(design, option)
    rail = iso.output_rail(s.dt, s.hs_on, s.hs_turn_on, v_src=v_src, r_out=option.r_out, c_out=c_eff,
                           q_pulse=charge_per_turn_on(design), i_q=design.driver.i_q, r_gs=design.gate.r_gs)
    with np.errstate(over="ignore"):
        decay = -np.expm1(-s.dt / rail.tau)
    area = rail.v_inf * s.dt + (rail.v_after - rail.v_inf) * rail.tau * decay
    q_mod = float(np.sum(v_src * s.dt - area)) / option.r_out
    g = s.hs_on / design.gate.r_gs if design.gate.r_gs is not None else np.zeros(s.dt.shape)
    q_load = (np.count_nonzero(s.hs_turn_on) * charge_per_turn_on(design) + design.driver.i_q * s.period
              + float(np.sum(g * area)))
    # the stored charge C·V is itself known only to eps·C·V, and V to eps·v_out·(1 + tau/T)
    floor = 64 * np.finfo(float).eps * v_src * (s.period / option.r_out + c_eff)
    return abs(q_mod - q_load), CHARGE_RTOL * max(abs(q_mod), abs(q_load)) + floor


def check_design(d: dict, stats: collections.Counter) -> None:
    """Every property of the long run for one design-file dict (raises AssertionError)."""
    try:
        design = explorer.load_design(d)
    except DesignError:
        stats["refused_by_load"] += 1
        return
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("error")                      # numpy RuntimeWarning etc. fail
        warnings.simplefilter("always", ExplorerWarning)    # the package's own are allowed
        try:
            comparison = explorer.evaluate(design)
        except DesignError:
            stats["refused_by_model"] += 1
            return
        stats["model_warnings"] += len(caught)
        for opt, r in zip(design.options, comparison.options):
            stats[f"kind:{opt.kind}"] += 1
            stats[f"topology:{design.bridge.topology}"] += 1
            assert r.error is None, f"{opt.label}: not evaluated: {r.error}"
            bad = nonfinite_paths(r)
            assert not bad, f"{opt.kind} {opt.label}: non-finite figures at {bad[:5]}"
            if r.efficiency is not None:
                assert 0.0 < r.efficiency <= 1.0, f"{opt.kind}: efficiency {r.efficiency}"
                stats["efficiency_checked"] += 1
            if opt.kind == "bootstrap" and r.losses:  # each dissipation is ∫(positive) dt; rounding slack 1e-9
                floor = -1e-9 * abs(r.p_drawn or 0.0)
                # junction_exchange is energy C_j's charge hands the power stage (a transfer, either sign)
                assert all(v >= floor for k, v in r.losses.items() if k != "junction_exchange"), \
                    f"bootstrap losses {r.losses}"
            if r.v_rail is not None:  # 1e-9 slack for quadrature
                slack = 1e-9 * max(abs(r.v_rail.min), abs(r.v_rail.max), 1.0)
                assert r.v_rail.min <= r.v_rail.mean + slack, r.v_rail
                assert r.v_rail.mean <= r.v_rail.max + slack, r.v_rail
            if opt.kind == "bootstrap" and isinstance(opt.diode, JunctionDiode):
                stats["junction_bootstraps"] += 1
            if opt.kind == "bootstrap":
                res = bootstrap_charge_residual(design, opt)
                if res is not None:
                    assert res[0] <= res[1], f"bootstrap charge imbalance {res[0]:.3g} > {res[1]:.3g}"
                    stats["charge_checked:bootstrap"] += 1
            elif opt.kind == "isolated":
                res = isolated_charge_residual(design, opt, r)
                if res is not None:
                    assert res[0] <= res[1], f"isolated charge imbalance {res[0]:.3g} > {res[1]:.3g}"
                    stats["charge_checked:isolated"] += 1
        # the JSON contract must serialise (no NaN slips through to_dict either)
        json.loads(comparison.to_json())
    stats["evaluated"] += 1


# --------------------------------------------------------------------------- the long run

def _run_shard(shard: int, n: int) -> dict:
    """One derandomized hypothesis run of ``n`` examples (executed in a worker process)."""
    stats: collections.Counter = collections.Counter()
    log = os.environ.get("EXPLORER_FUZZ_LOG")  # optional progress file, one line per 250 examples
    t0 = time.perf_counter()

    @settings(max_examples=n, **_FUZZ_SETTINGS)
    @given(designs(max_options=1, startup_cycles=FUZZ_STARTUP_CYCLES,
                   max_periods=FUZZ_MAX_PERIODS, bootstrap_three_phase=True))
    def prop(d):
        stats["examples_run"] += 1
        t = time.perf_counter()
        if log:
            with open(f"{log}.current.{shard}", "w", encoding="utf-8") as fh:
                fh.write(json.dumps(d))
        check_design(d, stats)
        slow = time.perf_counter() - t
        if slow > stats.get("slowest_ms", 0) / 1e3:
            stats["slowest_ms"] = int(slow * 1e3)
        if log and slow > 2.0:
            with open(f"{log}.slow", "a", encoding="utf-8") as fh:
                fh.write(f"{slow:.1f} s {json.dumps(d)}\n")
        if log and stats["examples_run"] % 250 == 0:
            with open(f"{log}.{shard}", "a", encoding="utf-8") as fh:
                fh.write(f"{stats['examples_run']} examples, {time.perf_counter() - t0:.0f} s, "
                         f"slowest {stats['slowest_ms']} ms\n")

    # a distinct derandomized stream per shard (hypothesis folds this into the test's digest,
    # as it does for pytest parametrisation)
    prop.hypothesis.inner_test._hypothesis_internal_add_digest = f"shard{shard}".encode()
    try:
        prop()
    except Exception:  # transported to the parent as text; the parent fails the test with it
        return {"stats": dict(stats), "failure": traceback.format_exc()}
    return {"stats": dict(stats), "failure": None}


_BLAS_THREADS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


@pytest.mark.fuzz
def test_fuzz_random_designs():
    """10⁴ random designs: only DesignError, finite figures, efficiency in (0, 1], charge conserved."""
    half = FUZZ_EXAMPLES // 2
    # fresh interpreters ("spawn"): a forked child can deadlock in a BLAS thread pool the parent
    # started; one BLAS thread each, since the two shards already fill the two cores
    ctx = multiprocessing.get_context("spawn")
    saved = {k: os.environ.get(k) for k in _BLAS_THREADS}
    os.environ.update({k: "1" for k in _BLAS_THREADS})
    try:
        with ctx.Pool(2) as pool:
            outs = pool.starmap(_run_shard, [(0, half), (1, FUZZ_EXAMPLES - half)])
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v
    total: collections.Counter = collections.Counter()
    for o in outs:
        total.update(o["stats"])
    failures = [o["failure"] for o in outs if o["failure"]]
    summary = ", ".join(f"{k}={v}" for k, v in sorted(total.items()))
    print(f"\nfuzz run: {summary}")
    assert not failures, failures[0]
    assert total["examples_run"] >= FUZZ_EXAMPLES
    for kind in KINDS:
        assert total[f"kind:{kind}"] > 500, summary
    for topo in TOPOLOGIES:
        assert total[f"topology:{topo}"] > 300, summary


def test_bootstrap_junction_with_pulldown_conserves_charge():
    """Fixed finding bootstrap-junction-ignores-pulldown-while-conducting (56bd75f), its stored
    reproducer: bus 5 V below a 9 V aux rail, junction diode, R_GS = 100 kΩ. The diode conducts in
    an interval with the HS on and the pull-down loading the rail; charge in = charge out per period
    (Kirchhoff's current law on the rail capacitor, see the module docstring)."""
    d = json.loads((FINDINGS / "bootstrap-junction-ignores-pulldown-while-conducting.json").read_text())
    design = explorer.load_design(d)
    opt = design.options[0]
    assert isinstance(opt.diode, JunctionDiode)
    lp = broadcast_loop(boot.steady_state(design, opt).loop)
    assert np.any((lp.v_src > 0) & (lp.g_load > 0))  # the case the finding was about
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        res = bootstrap_charge_residual(design, opt)
    assert res[0] <= res[1]


# --------------------------------------------------------------------------- start-up monotonicity

def _t(x):
    """A start-up time with None (never reaches UVLO) as infinity."""
    return math.inf if x is None else x


_MONO = dict(max_examples=150, **_FUZZ_SETTINGS)


@pytest.mark.fuzz
@settings(**_MONO)
@given(designs(max_options=1, kinds=["bootstrap"], startup_cycles=(30,)))
def test_bootstrap_more_resistance_never_shortens_startup(d):
    """Before UVLO releases the HS pulses the loads are the same, and each interval map is
    increasing in the start voltage and decreasing in R (an RC charge toward a fixed source,
    Alexander & Sadiku 2017, ch. 7), so the trajectory with 2·R stays below: t_uvlo(2R) ≥ t_uvlo(R)."""
    try:
        design = explorer.load_design(d)
        slower = explorer.replace_field(design, "options[0].r", 2 * design.options[0].r + 0.1)
    except DesignError:
        return
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        t1 = boot.startup(design, design.options[0]).t_uvlo
        t2 = boot.startup(slower, slower.options[0]).t_uvlo
    assert _t(t2) >= _t(t1) * (1 - 1e-9)


@pytest.mark.fuzz
@settings(**_MONO)
@given(designs(max_options=1, kinds=["bootstrap"], startup_cycles=(30,)))
def test_bootstrap_higher_aux_rail_never_lengthens_startup(d):
    """A higher V_DD raises every interval's charge target, so the rail reaches UVLO no later.
    (The DC-bias factor is left at 1 here: the strategies give no DC-bias curve.)"""
    try:
        design = explorer.load_design(d)
        faster = explorer.replace_field(design, "aux.v_dd", design.aux.v_dd + 1.0)
    except DesignError:
        return
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        t1 = boot.startup(design, design.options[0]).t_uvlo
        t2 = boot.startup(faster, faster.options[0]).t_uvlo
    assert _t(t2) <= _t(t1) * (1 + 1e-9)


@pytest.mark.fuzz
@settings(**_MONO)
@given(designs(max_options=1, kinds=["isolated"], startup_cycles=(30,)))
def test_isolated_startup_monotone_in_r_out_and_delay(d):
    """A larger r_out lags the ramp more and lowers its end level: no earlier UVLO; a longer
    start-up delay shifts the crossing by exactly the added delay (RC response to a delayed ramp,
    Alexander & Sadiku 2017, ch. 7)."""
    try:
        design = explorer.load_design(d)
        lag = explorer.replace_field(design, "options[0].r_out", 2 * design.options[0].r_out + 1.0)
        late = explorer.replace_field(design, "options[0].t_start", design.options[0].t_start + 1e-3)
    except DesignError:
        return
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        t0, t_lag, t_late = (iso.evaluate_option(x, x.options[0]).startup.t_uvlo for x in (design, lag, late))
    assert _t(t_lag) >= _t(t0) * (1 - 1e-12)
    if t0 is None:
        assert t_late is None
    else:
        assert t_late == pytest.approx(t0 + 1e-3, rel=1e-9, abs=1e-15)


@pytest.mark.fuzz
@settings(**_MONO)
@given(designs(max_options=1, kinds=["charge_pump"], startup_cycles=(30,)))
def test_pump_higher_input_never_lengthens_startup(d):
    """The pump is a linear network started from dead capacitors: its rail is v_in·a(t) − I_Q·b(t)
    with a(t) ≥ 0 (superposition), so a higher input reaches UVLO no later."""
    d["options"][0]["v_in"] = d["options"][0]["v_in"] or 12.0
    try:
        design = explorer.load_design(d)
        more = explorer.replace_field(design, "options[0].v_in", design.options[0].v_in * 1.25)
    except DesignError:
        return
    fn = model_for("charge_pump")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        t1 = fn(design, design.options[0]).startup.t_uvlo
        t2 = fn(more, more.options[0]).startup.t_uvlo
    assert _t(t2) <= _t(t1) * (1 + 1e-9)


def test_bootstrap_never_refreshed_rail_raises_no_numpy_warning():
    """Fixed finding bootstrap-linear-map-divide-by-zero (b313678): the rail rests at the cut-off
    equilibrium of C·dV/dt = −I − G·V, V = −I/G (first-order linear ODE, Boyce & DiPrima 2012,
    §2.1), where the regime-C slope divided by zero. No numpy warning; the collapsed rail is reported
    as such, at that equilibrium."""
    d = _NEVER_REFRESHED
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        warnings.simplefilter("ignore", ExplorerWarning)
        r = explorer.evaluate(d).options[0]
    i_q, g = d["driver"]["i_q"], 1.0 / d["gate"]["r_gs"]
    assert r.details.v_min_model == pytest.approx(-i_q / g, rel=1e-12)
    assert r.efficiency is None


#: The reproducer of bootstrap-linear-map-divide-by-zero (an invented test design): a half bridge
#: at duty 1 never refreshes the rail; 1 mF, 10 mA quiescent, 10 kΩ pull-down.
_NEVER_REFRESHED = {
    "format": "explorer-design", "version": 1, "title": "fuzz finding: never-refreshed bootstrap",
    "bridge": {"topology": "half_bridge", "v_bus": 10.0, "f_sw": 1000.0, "dead_time": 0.0, "t_edge": 3.125e-05,
               "startup_cycles": 10, "duty": 1.0},
    "gate": {"q_g": 1e-06, "v_gs_max": 20.0, "v_gs_on_min": 3.0, "r_gs": 10000.0},
    "driver": {"i_q": 0.01, "uvlo_on": 4.0, "uvlo_off": 3.0, "v_bs_max": 22.0},
    "aux": {"v_dd": 5.0, "c_dd": 0.001, "v_dd_tol": 0.05},
    "options": [{"label": "opt0", "kind": "bootstrap", "c": 0.001, "esr": 1.0, "c_tol": 0, "r": 1.0,
                 "diode": {"v_f": 1.0, "r_d": 1.0}}],
}


def test_bootstrap_junction_mean_within_min_and_max():
    """Fixed finding bootstrap-junction-mean-above-max: full bridge at 425 kHz, C0G 1 nF, junction diode
    (i_s 1e-15 A, n 1.21), an invented design. The mean rail lies between its extremes and equals
    the mean of the same steady-state period integrated by scipy.integrate.solve_ivp (DOP853) from
    the model's interval start values, with the diode current from the diode law through
    scipy.special.wrightomega (Lambert W form, Banwell & Jayakumar 2000)."""
    from scipy.integrate import solve_ivp
    from scipy.special import wrightomega
    with warnings.catch_warnings():  # its edges outlast the dead time (a ModelValidityWarning)
        warnings.simplefilter("ignore", ExplorerWarning)
        r = explorer.evaluate(_JUNCTION_MEAN).options[0]
        design = explorer.load_design(_JUNCTION_MEAN)
        ss = boot.steady_state(design, design.options[0])
    assert r.v_rail.min <= r.v_rail.mean <= r.v_rail.max
    lp = broadcast_loop(ss.loop)
    area = 0.0
    for k in range(lp.dt.size):
        R, th, i_s, vs = lp.r[k], lp.n_vt[k], lp.i_s[k], lp.v_src[k]

        def rhs(t, y, R=R, th=th, i_s=i_s, vs=vs, k=k):
            i_d = th / R * float(wrightomega(math.log(i_s * R / th) + (vs - y[0] + i_s * R) / th).real) - i_s
            i_d = i_d if vs > 0 else 0.0  # the model's cut-off below the switch node
            return [(i_d - lp.i_load[k] - lp.g_load[k] * y[0]) / lp.c[k], y[0]]

        sol = solve_ivp(rhs, (0, lp.dt[k]), [ss.orbit.v_start[k], 0.0], rtol=1e-12, atol=1e-20, method="DOP853")
        assert sol.y[0, -1] == pytest.approx(ss.orbit.v_end[k], rel=1e-9)
        area += sol.y[1, -1]
    assert r.v_rail.mean == pytest.approx(area / ss.schedule.period, rel=1e-9)


_JUNCTION_MEAN = {
    "format": "explorer-design", "version": 1, "title": "fuzz finding: junction mean above max",
    "bridge": {"topology": "full_bridge", "v_bus": 27.081057091886866, "f_sw": 425208.23223651684,
               "dead_time": 3.6294435245226934e-08, "t_edge": 1.0547892675289454e-07,
               "soft_start": 2.3517888982068493e-05, "v_undershoot": 0.7, "startup_cycles": 10, "duty": 0.5},
    "gate": {"q_g": 3.3287544378472526e-09, "v_gs_max": 20.0, "v_gs_on_min": 8.415679870229328,
             "r_gs": 100000.0},
    "driver": {"i_q": 0.0006674974726113693, "q_ls": 1e-09, "uvlo_on": 8.238356910895643,
               "uvlo_off": 7.622452961560958, "v_bs_max": 22.0, "t_on_min": 5e-08},
    "aux": {"v_dd": 8.5, "c_dd": 1e-07, "v_dd_tol": 0.05},
    "options": [{"label": "opt0", "kind": "bootstrap", "c": 1e-09, "esr": 1.0, "c_tol": 0.2, "dielectric": "C0G",
                 "v_rating": 25, "r": 0.01, "diode": {"i_s": 1e-15, "n": 1.2095480014302422, "r_s": 1.0},
                 "v_rrm": 100}],
}


def test_bootstrap_junction_efficiency_at_most_one():
    """Fixed finding bootstrap-efficiency-above-one-undershoot: half bridge 977 V at 3.35 MHz with 2 V
    undershoot, junction diode, an invented design. Its HS pulse is shorter than the edges allow, so
    the rail rests where the diode carries the quiescent current I: V_e = V_DD − n·V_T·ln(1 + I/i_s)
    − R·I (the Shockley diode law with a series resistance, solved for the voltage). Then the efficiency is V_e/V_DD, and the diode loses I·(V_DD − V_e − r_ext·I)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        r = explorer.evaluate(_JUNCTION_EFF).options[0]
        design = explorer.load_design(_JUNCTION_EFF)
        circ = boot.bootstrap_circuit(design, design.options[0])
    assert 0.0 < r.efficiency <= 1.0
    assert all(v >= 0.0 for v in r.losses.values())
    v_dd, i_q = circ.v_dd, design.driver.i_q
    assert period_schedule(design).hs_on.sum() == 0  # the premise: no HS pulse, I = I_Q throughout
    v_e = v_dd - circ.n_vt * math.log1p(i_q / circ.i_s) - circ.r_tot * i_q
    assert r.v_rail.mean == pytest.approx(v_e, rel=1e-9)
    # the diode charge per period is C·(V_end − V_start) + I·T: the orbit closes to rounding of V
    # (a few eps·V), which with C·V/(I·T) ≈ 2e7 here leaves ~1e-8 relative in the charge
    assert r.efficiency == pytest.approx(v_e / v_dd, rel=1e-7)
    assert r.losses["diode"] == pytest.approx(i_q * (v_dd - v_e - circ.r_ext * i_q), rel=1e-6)


_JUNCTION_EFF = {
    "format": "explorer-design", "version": 1, "title": "fuzz finding: junction efficiency above one",
    "bridge": {"topology": "half_bridge", "v_bus": 976.7487213631499, "f_sw": 3348618.8454789827,
               "dead_time": 1.034059755700993e-08, "t_edge": 9.119871532334469e-09,
               "soft_start": 2.986305835763046e-06, "precharge": 5.972611671526093e-08, "v_undershoot": 2,
               "startup_cycles": 30, "duty": 0.18563538014247513},
    "gate": {"q_g": 3.40801467670328e-07, "v_gs_max": 20.0, "v_gs_on_min": 9.0, "r_gs": 10000.0},
    "driver": {"i_q": 2.6570160282962653e-06, "q_ls": 0, "uvlo_on": 6.51551546878169,
               "uvlo_off": 5.868444288880859, "v_bs_max": 22.0, "t_on_min": 5e-08},
    "aux": {"v_dd": 17.155938866510258, "c_dd": 5.739737069878544e-06, "v_dd_tol": 0.05},
    "options": [{"label": "opt0", "kind": "bootstrap", "c": 3.1246563969720463e-06, "esr": 1.0, "c_tol": 0,
                 "dielectric": "Y5V", "r": 1.0, "diode": {"i_s": 1.666325807619017e-10, "n": 1.146100270229913,
                                                          "r_s": 1.0},
                 "c_j": 1e-11, "i_leak": 0.001, "v_rrm": 100}],
}


def test_pump_quiescent_load_efficiency_at_most_one():
    """2:1 pump on a half bridge at duty 1 (no HS turn-on: the rail carries only I_Q = 0.1 µA), an
    invented design drawn by the fuzz run: delivered power ≤ drawn power (conservation of energy)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        r = explorer.evaluate(_PUMP_QUIESCENT).options[0]
    assert r.p_delivered <= r.p_drawn
    assert 0.0 < r.efficiency <= 1.0


_PUMP_QUIESCENT = {
    "format": "explorer-design", "version": 1, "title": "fuzz finding: pump efficiency above one",
    "bridge": {"topology": "half_bridge", "v_bus": 13.483779968302022, "f_sw": 313545.85984053096,
               "dead_time": 1.2137641334765824e-07, "t_edge": 8.245045880417077e-08,
               "soft_start": 0.0006378652236126472, "precharge": 0, "v_undershoot": 2, "startup_cycles": 30,
               "duty": 1.0},
    "gate": {"q_g": 7.9183629582553e-08, "v_gs_max": 20.0, "v_gs_on_min": 5.205844801706542, "r_gs": None},
    "driver": {"i_q": 1e-07, "q_ls": 1e-09, "uvlo_on": 5.727036632170439, "uvlo_off": 4.581629305736351,
               "v_bs_max": 22.0, "t_on_min": 5e-08},
    "aux": {"v_dd": 13.0, "c_dd": 3.1050001318069184e-06, "v_dd_tol": 0.05},
    "options": [{"label": "opt0", "kind": "charge_pump", "ratio": "2:1", "f_cp": 557231.1925756793,
                 "c_fly": {"c": 0.00025311604323041454, "esr": 0.07943282347242814, "c_tol": 0, "dielectric": "Y5V",
                           "v_rating": 50},
                 "c_out": {"c": 8.756085264337341e-07, "esr": 0.001358709478533228, "c_tol": 0.2,
                           "dielectric": "Y5V", "v_rating": None},
                 "r_on": 20.83169795804563, "v_in": None, "c_par": 0, "alpha_bp": 0, "q_g_sw": 0}],
}


def test_bootstrap_clamp_with_junction_diode_every_property():
    """Fixed finding bootstrap-clamp-junction-crossing-overflow, its stored reproducer: a junction diode
    under a 15 V clamp on a 1.2 MHz line leg (an invented design from the fuzz). The clamp's crossing
    time was solved for every interval, and one whose source never reaches the clamp overflowed (a numpy
    RuntimeWarning); now only where the rail reaches the clamp. Every property of the long run holds
    (charge conserved per period: Kirchhoff's current law on the rail capacitor, the module docstring)."""
    d = json.loads((FINDINGS / "bootstrap-clamp-junction-crossing-overflow.json").read_text())
    stats: collections.Counter = collections.Counter()
    check_design(d, stats)
    assert stats["evaluated"] == 1 and stats["charge_checked:bootstrap"] == 1


def test_bootstrap_clamp_kink_is_relinearised():
    """Fixed finding bootstrap-clamp-junction-tangent-across-kink, its stored reproducer: a 64 µF C0G
    capacitor held at an 11 V clamp on a 50 Hz three-phase leg, junction diode (an invented design from
    the fuzz). The orbit's Newton iteration took the clamp's kink for a small curvature and kept stale
    tangents there: interval ends 1.6e-5 V off the exact map and a charge imbalance of 5e-5 of the diode
    charge. The clamp's intervals now keep the plain re-linearisation rule; charge in = charge out to 1e-9
    (Kirchhoff's current law on the rail capacitor, the module docstring)."""
    d = json.loads((FINDINGS / "bootstrap-clamp-junction-tangent-across-kink.json").read_text())
    stats: collections.Counter = collections.Counter()
    check_design(d, stats)
    assert stats["evaluated"] == 1 and stats["charge_checked:bootstrap"] == 1


def _on_a_slot_boundary(design, f: float, h: float) -> bool:
    """Whether the point's period sits on a layout boundary to rounding (an LS slot of zero length, an HS or
    LS pulse at its minimum on-time), where the map's and the design's own arithmetic may fall either side."""
    b, drv = design.bridge, design.driver
    T = 1.0 / f
    t_hs, t_ls = h * T, T - h * T - 2 * b.dead_time
    eps = 1e-9 * T
    return (abs(t_ls) < eps or abs(t_hs - drv.t_on_min) < eps or abs(t_ls - drv.t_on_min_ls) < eps
            or abs(t_hs) < eps)


@pytest.mark.fuzz
@settings(max_examples=150, **_FUZZ_SETTINGS)
@given(designs(max_options=3, startup_cycles=(30,)), st.floats(0.0, 1.0), st.floats(0.0, 1.0))
def test_margin_maps_equal_evaluate_on_random_designs(d, h1, h2):
    # every option's vectorised margin map is the point evaluation at each grid point (the map lays out
    # one period per point with the schedule's slot rules, the evaluation the design at that f and
    # duty); evaluate's rail is itself checked against ngspice in tests/test_netlist.py. On random
    # designs of every topology and kind this found: the three-phase and line-leg duty alias off by
    # the dead time and the crest factor, a light-load buck's map resting at the design's V_out, and
    # the bootstrap map keeping the reverse-bias presumption where the rail falls below it.
    from explorer.design import replace_fields
    from explorer.options import supply_model
    from explorer.sweep import duty_field
    from explorer.topology import analysis_frequency, frequency_field
    try:
        design = explorer.load_design(d)
        if design.bridge.topology == "three_phase" and design.bridge.f_o:  # the map is the standstill case
            design = replace_fields(design, {"bridge.f_o": 0.0})
    except DesignError:
        return
    f = analysis_frequency(design.bridge) * np.array([0.5, 1.0, 2.0])
    u = np.array(sorted((h1, h2)))
    f_path = frequency_field(design.bridge)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        for k, o in enumerate(design.options):
            model = supply_model(o.kind)
            try:
                grid = model.rail_min_map(design, o, f[:, None], u[None, :])
            except DesignError:  # a circuit with no solution: the evaluation refuses it too
                with pytest.raises(DesignError):
                    model.evaluate(design, o)
                continue
            for i in range(f.size):
                for j in range(u.size):
                    if _on_a_slot_boundary(design, float(f[i]), float(u[j])):
                        continue
                    path, value = duty_field(design, float(u[j]), float(f[i]))
                    try:
                        dp = replace_fields(design, {f_path: float(f[i]), path: float(value)})
                        r = model.evaluate(dp, dp.options[k])
                    except DesignError:  # not a design at this point (the map still has a value)
                        continue
                    if r.v_rail is None:
                        assert np.isnan(grid[i, j]), (o.label, f[i], u[j])
                        continue
                    assert abs(grid[i, j] - r.v_rail.min) <= 1e-9 * max(abs(r.v_rail.min), 1.0), \
                        (o.kind, design.bridge.topology, f[i], u[j], r.v_rail.min, grid[i, j])


@pytest.mark.fuzz
@settings(max_examples=150, **_FUZZ_SETTINGS)
@given(designs(max_options=3, startup_cycles=(30,)), st.integers(0, 2**32 - 1))
def test_monte_carlo_batches_equal_evaluate_on_random_designs(d, seed):
    # the batched Monte Carlo paths (rail_min_batch) are the evaluation of each perturbed design
    # (tolerance.apply_factors), which tests/test_netlist.py checks against ngspice. On random designs
    # this found the bootstrap batch keeping the reverse-bias presumption where a sample's rail falls
    # below it, and the isolated batch reporting a collapsed rail below 0 V where evaluate reads 0 V.
    from explorer.options import supply_model
    from explorer.tolerance import apply_factors, sample_factors
    try:
        design = explorer.load_design(d)
    except DesignError:
        return
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExplorerWarning)
        for o in design.options:
            model = supply_model(o.kind)
            f = sample_factors(design, o.label, 4, np.random.default_rng(seed))
            try:
                batch = model.rail_min_batch(design, o, f)
            except DesignError:  # a circuit with no solution: the evaluation refuses it too
                with pytest.raises(DesignError):
                    model.evaluate(design, o)
                continue
            for i in range(4):
                try:
                    di = apply_factors(design, o.label, f.at(i))
                    r = model.evaluate(di, di.option(o.label))
                except DesignError:
                    continue
                if r.v_rail is None:
                    assert np.isnan(batch[i]), (o.label, i)
                    continue
                assert abs(batch[i] - r.v_rail.min) <= 1e-9 * max(abs(r.v_rail.min), 1.0), \
                    (o.kind, design.bridge.topology, i, r.v_rail.min, batch[i])


@pytest.mark.fuzz
@settings(max_examples=120, **_FUZZ_SETTINGS)
@given(designs(max_options=1, kinds=["charge_pump"], startup_cycles=(30,)))
def test_pump_q_g_max_is_never_optimistic_on_random_designs(d):
    # at the highest Q_G a pump reports, the rail the evaluation computes still meets the requirement
    # (the averaged model the search starts from was up to 10 % optimistic; the evaluation's rail is
    # itself checked against ngspice in tests/test_netlist.py)
    from explorer.design import replace_fields
    from explorer.loads import required_rail
    try:
        design = explorer.load_design(d)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", ExplorerWarning)
            r = _first_option_result(design)
            q = (r.duty.topology or {}).get("q_g_max") if r.duty else None
            if not q:
                return
            at = replace_fields(design, {"gate.q_g": q})
            v = _first_option_result(at).v_rail.min
    except DesignError:
        return
    need = required_rail(design)
    assert v >= need - 1e-9 * need, (q, v, need)


def _first_option_result(design):
    """The first option's evaluation (the pump's own model)."""
    return model_for(design.options[0].kind)(design, design.options[0])
