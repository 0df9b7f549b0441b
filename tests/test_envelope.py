"""Sweeps, tolerance corners, Monte Carlo and inverse sizing (issue: the whole envelope)."""

import copy
import math
import warnings

import numpy as np
import pytest
from scipy import optimize, stats

from explorer import DEMO, DesignError, ModelValidityWarning, evaluate, load_design, replace_field
from explorer.options.bootstrap import evaluate_option as boot_eval
from explorer.sizing import size_bootstrap_resistor, size_capacitor, size_isolated_rating, size_pump_frequency
from explorer.sweep import margin_map, sweep
from explorer.tolerance import (Factors, apply_factors, clopper_pearson, corner_factors, monte_carlo,
                                sample_factors, worst_case)

BOOT = "bootstrap 220n"


def demo_with(**changes):
    d = copy.deepcopy(DEMO)
    for path, v in changes.items():
        node = d
        *head, last = path.split(".")
        for h in head:
            node = node[int(h)] if h.isdigit() else node[h]
        node[last] = v
    return load_design(d)


# ----------------------------------------------------------------------------- sweeps

# at 700 kHz switching the demo's 500 kHz pumps see fewer than two pump cycles per turn-on, which the
# pump model rightly flags (ModelValidityWarning); this test compares the sweep with point evaluations
@pytest.mark.filterwarnings("ignore::explorer.errors.ModelValidityWarning")
def test_sweep_equals_point_evaluate():
    d = load_design(DEMO)
    f = np.array([80e3, 250e3, 700e3])
    c = np.array([47e-9, 220e-9])
    s = sweep(d, {"bridge.f_sw": f, "options[0].c": c})
    for i in range(f.size):
        for j in range(c.size):
            ref = evaluate(replace_field(replace_field(d, "bridge.f_sw", f[i]), "options[0].c", c[j]))
            for r in ref.options:
                got = s.figures[r.label]
                assert got["rail_min"][i, j] == pytest.approx(r.v_rail.min, rel=1e-12)
                assert got["efficiency"][i, j] == pytest.approx(r.efficiency, rel=1e-12)
                if r.startup.t_uvlo is not None:
                    assert got["t_uvlo"][i, j] == pytest.approx(r.startup.t_uvlo, rel=1e-12)


def test_sweep_marks_invalid_points_and_rejects_bad_axes():
    d = load_design(DEMO)
    s = sweep(d, {"bridge.v_out": [12, 60]}, labels=[BOOT], figures=["rail_min"])
    assert np.isfinite(s.figures[BOOT]["rail_min"][0]) and np.isnan(s.figures[BOOT]["rail_min"][1])
    assert "bridge.v_out" in s.invalid[(1,)]
    with pytest.raises(DesignError, match="no such field"):
        sweep(d, {"bridge.nothing": [1, 2]})
    with pytest.raises(DesignError, match="figures"):
        sweep(d, {"bridge.f_sw": [1e5]}, figures=["nonsense"])


def _same_sweep(a, b):
    assert a.invalid == b.invalid
    assert a.warnings == b.warnings
    assert a.figures.keys() == b.figures.keys()
    for lab, figs in a.figures.items():
        for n, x in figs.items():
            assert np.array_equal(x, b.figures[lab][n], equal_nan=True), (lab, n)


@pytest.mark.parametrize("axes", [
    {"options[0].c": [100e-9, 220e-9, 470e-9], "options[1].c_fly.c": [47e-9, 100e-9]},
    {"bridge.v_out": [12.0, 60.0], "options[2].c_fly.c": [100e-9, 220e-9]},  # an invalid common field
    {"options[3].f_cp": [500e3, 1e6, 2e6]},
    {"bridge.f_sw": [200e3, 700e3], "options[1].c_fly.c": [47e-9, 100e-9]},  # warnings at 700 kHz
])
@pytest.mark.filterwarnings("ignore::explorer.errors.ModelValidityWarning")
def test_factorised_sweep_equals_one_evaluation_per_point(axes):
    # consistency of the two ways of running a grid (no outside source: the figures themselves are checked
    # against evaluate above and against outside sources in the model tests)
    d = load_design(DEMO)
    _same_sweep(sweep(d, axes), sweep(d, axes, factorise=False))
    _same_sweep(sweep(d, axes, labels=["pump 1:1"]), sweep(d, axes, labels=["pump 1:1"], factorise=False))


@pytest.mark.filterwarnings("ignore::explorer.errors.ModelValidityWarning")
def test_sweep_in_worker_processes_equals_one_process():
    # consistency of the two ways of running a grid (no outside source: the figures are checked against
    # evaluate above): every figure, invalid point and warning text the same, whole grid and factorised
    d = load_design(DEMO)
    axes = {"bridge.f_sw": [200e3, 700e3], "duty": [0.2, 0.5, 0.99]}  # warnings at 700 kHz, duty 0.99 fails
    _same_sweep(sweep(d, axes, workers=2), sweep(d, axes))
    axes = {"bridge.v_out": [12.0, 60.0], "options[2].c_fly.c": [100e-9, 220e-9]}  # an invalid common field
    _same_sweep(sweep(d, axes, workers=2), sweep(d, axes))
    done = []
    sweep(d, {"bridge.f_sw": [150e3, 200e3, 250e3]}, figures=["rail_min"], workers=2,
          progress=lambda k, n: done.append((k, n)))
    assert done[-1] == (3, 3)
    for bad in (0, -1, 1.5, True, "2"):
        with pytest.raises(DesignError, match="workers"):
            sweep(d, {"bridge.f_sw": [1e5]}, workers=bad)


def test_sweep_workers_from_a_script_without_a_main_guard_says_what_to_do(tmp_path):
    # each spawned worker imports the calling script afresh (Python's multiprocessing, "spawn" start
    # method); a script that sweeps at its top level starts workers from within workers, which stop
    import subprocess
    import sys
    script = tmp_path / "no_guard.py"
    script.write_text("import explorer\nfrom explorer.sweep import sweep\n"
                      "sweep(explorer.demo_design(), {'bridge.f_sw': [1e5, 2e5]}, figures=['rail_min'], workers=2)\n")
    run = subprocess.run([sys.executable, "-W", "ignore", str(script)], capture_output=True, text=True, timeout=300)
    assert run.returncode != 0
    assert "DesignError: workers:" in run.stderr and 'if __name__ == "__main__":' in run.stderr


def test_sweep_gives_one_summary_warning_per_category_and_keeps_every_points_warnings():
    # the per-point texts are those evaluate gives at that point (consistency with evaluate, no outside
    # source: the warnings' conditions are checked in the model tests)
    d = load_design(DEMO)
    f = [80e3, 200e3, 700e3, 900e3]
    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always")
        s = sweep(d, {"bridge.f_sw": f}, figures=["rail_min"])
    assert len(rec) == 1 and rec[0].category is ModelValidityWarning
    assert rec[0].filename == __file__  # pointed at the caller's line
    msg = str(rec[0].message)
    assert msg.startswith(f"{len(s.warnings)} of 4 grid points gave a ModelValidityWarning")
    assert "bridge.f_sw = 700 kHz" in msg and "Sweep.warnings" in msg
    for i, x in enumerate(f):
        with warnings.catch_warnings(record=True) as ref:
            warnings.simplefilter("always")
            evaluate(replace_field(d, "bridge.f_sw", x))
        texts = tuple(dict.fromkeys(str(w.message) for w in ref))
        assert s.warnings.get((i,), ()) == texts
    assert (2,) in s.warnings and (3,) in s.warnings
    assert s.to_dict()["warnings"]["(2,)"] == list(s.warnings[(2,)])


def test_factorised_sweep_evaluates_each_option_once_per_value_of_its_own_axes():
    from explorer import memo
    d = load_design(DEMO)
    memo.clear()
    s = sweep(d, {"options[0].c": [100e-9, 150e-9, 470e-9], "options[1].c_fly.c": [47e-9, 68e-9]})
    assert s.figures[BOOT]["rail_min"].shape == (3, 2)
    # bootstrap 3 values, pump 1:1 two, the other three options once each (6 points x 5 options in full)
    assert memo.stats()["option results"]["misses"] == 3 + 2 + 3
    assert np.all(s.figures[BOOT]["rail_min"][:, 0] == s.figures[BOOT]["rail_min"][:, 1])
    assert len(np.unique(s.figures[BOOT]["rail_min"])) == 3


def test_margin_map_vectorised_equals_evaluate():
    d = load_design(DEMO)
    f = np.geomspace(30e3, 1.5e6, 7)
    u = np.array([0.05, 0.3, 0.55, 0.8, 0.93])
    m = margin_map(d, BOOT, f, u)
    assert m.vectorised and m.margin.shape == (7, 5)
    for i in (0, 3, 6):
        for j in range(u.size):
            dd = replace_field(replace_field(d, "bridge.f_sw", f[i]), "bridge.v_out", u[j] * 48)
            r = boot_eval(dd, dd.options[0])
            if r.v_rail is None:  # HS on for the whole period: never refreshed, in the map too
                assert np.isnan(m.rail_min[i, j])
                continue
            assert m.rail_min[i, j] == pytest.approx(r.v_rail.min, rel=1e-12)
            assert m.margin[i, j] == pytest.approx(r.v_rail.min - d.driver.uvlo_off, rel=1e-12)


#: Invented variants of the demo (an invented scenario) that move the map's slot layout: light load,
#: the other legs, no R_GS and no level-shifter charge, no dead time, a three-phase leg at standstill
#: (its duty alias counts the dead time and the crest, tests/test_schedule.py).
MAP_VARIANTS = {
    "demo": {},
    "light_load": {"bridge.mode": "light_load", "bridge.ls_pulse": 200e-9, "bridge.skip_cycles": 3},
    "boost": {"bridge.topology": "sync_boost", "bridge.v_in": 36.0, "bridge.v_out": None},
    "half_bridge": {"bridge.topology": "half_bridge", "bridge.v_out": None},
    "no_r_gs_no_q_ls": {"gate.r_gs": None, "driver.q_ls": 0.0},
    "no_dead_time": {"bridge.dead_time": 0.0},
    "three_phase_standstill": {"bridge.topology": "three_phase", "bridge.m": 0.9, "bridge.f_o": 0.0,
                               "bridge.v_out": None},
    # a leg that switches at line frequency: the map's frequency axis is its f_line
    "line_leg": {"bridge.topology": "line_leg", "bridge.f_line": 50.0, "bridge.f_sw": 1e7, "bridge.v_out": None},
}


@pytest.mark.filterwarnings("ignore::explorer.errors.ModelValidityWarning")
@pytest.mark.parametrize("variant", sorted(MAP_VARIANTS))
def test_every_margin_map_equals_evaluate(variant):
    # every option's vectorised map is the point evaluation at every grid point, to rounding: the HS
    # pulse dropped (duty 0.01 at 200 kHz is 50 ns < t_on_min), the HS on for the whole period (high
    # duty at 1.5 MHz), the R_GS share in and out, a light-load buck resting at each point's own V_out.
    # evaluate_option's rail minimum is itself checked against ngspice (tests/test_netlist.py:
    # test_bootstrap_against_ngspice, test_pumps_against_ngspice, test_isolated_against_ngspice); this
    # checks that the map is that computation at every point.
    from explorer.design import replace_fields
    from explorer.options import supply_model
    from explorer.sweep import duty_field
    from explorer.topology import frequency_field
    d = replace_fields(load_design(DEMO), MAP_VARIANTS[variant])
    f_path = frequency_field(d.bridge)
    f = np.array([30e3, 200e3, 1.5e6])
    u = np.array([0.0, 0.01, 0.3, 0.8, 0.93, 1.0])
    compared = 0
    for k, o in enumerate(d.options):
        m = margin_map(d, o.label, f, u)
        assert m.vectorised and m.rail_min.shape == (3, 6)
        for i in range(f.size):
            for j in range(u.size):
                path, value = duty_field(d, u[j], f[i])
                try:
                    dd = replace_fields(d, {f_path: f[i], path: value})
                except DesignError:  # a boost at duty 1 is no design; the map still has a value there
                    continue
                r = supply_model(o.kind).evaluate(dd, dd.options[k])
                if r.v_rail is None:  # a bootstrap never refreshed (HS on for the whole period): NaN in the map
                    assert o.kind == "bootstrap" and np.isnan(m.rail_min[i, j]), (o.label, f[i], u[j])
                    continue
                assert m.rail_min[i, j] == pytest.approx(r.v_rail.min, rel=1e-12, abs=1e-12), (o.label, f[i], u[j])
                compared += 1
    assert compared >= 36  # the points that are designs (a buck at duty 0 or 1 is none, a crest duty below ½ neither)


def test_pump_map_answers_a_large_grid_at_once():
    # the map of a pump over 200 x 200 points is one batched computation per block, and its rows and
    # columns are the same computation as a single point (common practice, no source: a batch must not
    # depend on its neighbours)
    from explorer.options.charge_pump import rail_min_map
    d = load_design(DEMO)
    f = np.geomspace(20e3, 2e6, 200)
    u = np.linspace(0.0, 1.0, 200)
    grid = rail_min_map(d, d.options[1], f[:, None], u[None, :])
    assert grid.shape == (200, 200) and np.isfinite(grid).all()
    for i, j in ((0, 0), (57, 133), (199, 199), (120, 1)):
        assert grid[i, j] == pytest.approx(float(rail_min_map(d, d.options[1], f[i], u[j])), rel=1e-13)
    # more load (higher f_sw: more gate charge per second) never raises the rail at a fixed duty
    assert (np.diff(grid[:, 100]) <= 1e-12).all()


# ----------------------------------------------------------------------------- corners and Monte Carlo

def test_clopper_pearson_reference_values():
    # Clopper & Pearson (1934) exact interval; reference values from scipy's binomtest (general-purpose
    # reference software), which implements the same interval
    for k, n in [(0, 50), (3, 50), (25, 50), (50, 50), (212, 1000)]:
        ref = stats.binomtest(k, n).proportion_ci(confidence_level=0.95, method="exact")
        lo, hi = clopper_pearson(k, n, 0.95)
        assert lo == pytest.approx(ref.low, abs=1e-12) and hi == pytest.approx(ref.high, abs=1e-12)


def _cap_only_design(uvlo_off):
    """Demo bootstrap at a long duty with only a gaussian capacitance spread (3σ = 30 %)."""
    d = copy.deepcopy(DEMO)
    d["options"] = [d["options"][0] | {"c": "47n", "c_tol": 0.3, "dielectric": "ideal", "i_leak": 0}]
    d["bridge"]["v_out"] = 40
    d["aux"]["v_dd_tol"] = 0.0
    d["spread"] = {"distribution": "gaussian"}
    d["driver"]["uvlo_off"] = uvlo_off
    d["driver"]["uvlo_on"] = uvlo_off + 0.5
    return load_design(d)


def test_monte_carlo_matches_gaussian_capacitance_spread():
    base = _cap_only_design(7.0)
    label = base.options[0].label

    def rail(k):
        dk = apply_factors(base, label, Factors(k_c=k))
        return boot_eval(dk, dk.options[0]).v_rail.min

    k_crit = 0.92
    uvlo_off = rail(k_crit)
    d = _cap_only_design(uvlo_off)
    # the rail minimum rises with capacitance, so a trip is k_c < k_crit, and with k_c ~ N(1, 0.1):
    p_exact = stats.norm.cdf((k_crit - 1.0) / 0.1)  # the normal CDF (Φ), the analytic answer
    mc = monte_carlo(d, label, 20_000, seed=7, confidence=0.999)
    assert mc.vectorised
    assert mc.ci[0] <= p_exact <= mc.ci[1]
    assert mc.p_trip == pytest.approx(p_exact, abs=0.02)
    # the root of rail(k) = uvlo_off recovers k_crit (monotone rail)
    assert optimize.brentq(lambda k: rail(k) - uvlo_off, 0.5, 1.5) == pytest.approx(k_crit, rel=1e-6)


def test_monte_carlo_same_seed_same_numbers():
    d = demo_with(**{"spread": {"q_g": 0.1, "v_f": 0.1}})
    a = monte_carlo(d, BOOT, 500, seed=3)
    b = monte_carlo(d, BOOT, 500, seed=3)
    c = monte_carlo(d, BOOT, 500, seed=4)
    assert np.array_equal(a.rail_min, b.rail_min)
    assert not np.array_equal(a.rail_min, c.rail_min)


@pytest.mark.parametrize("label", [BOOT, "isolated 1 W"])
def test_batched_samples_equal_evaluate(label):
    d = demo_with(**{"spread": {"q_g": 0.15, "i_q": 0.3, "v_f": 0.1}, "options.0.i_leak": 1e-5})
    f = sample_factors(d, label, 8, np.random.default_rng(11))
    from explorer.options import supply_model
    model = supply_model(d.option(label).kind)
    batch = model.rail_min_batch(d, d.option(label), f)
    for i in range(8):
        di = apply_factors(d, label, f.at(i))
        r = model.evaluate(di, di.option(label))
        assert batch[i] == pytest.approx(r.v_rail.min, rel=1e-12)


def test_worst_case_bounds_monte_carlo_and_is_the_expected_corner():
    d = demo_with(**{"spread": {"q_g": 0.1, "i_q": 0.2, "v_f": 0.1}, "options.0.i_leak": 1e-5})
    w = worst_case(d, BOOT)
    assert len(w.corners) == 2 ** 6  # k_c, q_g, i_q, v_dd, v_f, t all spread
    mc = monte_carlo(d, BOOT, 4000, seed=1)
    assert w.rail_min <= mc.rail_min.min() + 1e-12
    # physics: less capacitance, more gate charge and load, lower aux rail, more diode drop, hotter
    assert w.corner == "k_c low, q_g high, i_q high, v_dd low, v_f high, t high"
    assert w.margin == pytest.approx(w.rail_min - (max(7.8, 8) + 0.5), rel=1e-12)


def test_corner_names_cover_only_live_spreads():
    d = demo_with(**{"aux.v_dd_tol": 0.0, "checks": {"t_min": 25, "t_max": 25, "t_amb": 25}})
    names = [n for n, _ in corner_factors(d, BOOT)]
    assert names == ["k_c low", "k_c high"]


# ----------------------------------------------------------------------------- sizing

def test_size_bootstrap_capacitor_holds_and_next_lower_fails():
    d = demo_with(**{"bridge.v_out": 44, "spread": {"q_g": 0.1}})
    r = size_capacitor(d, BOOT, series="E12")
    assert r.value is not None and r.below is not None
    # re-evaluate independently: the chosen value holds at the worst corner, the next lower fails
    assert worst_case(replace_field(d, "options[0].c", r.value), BOOT).margin >= 0
    assert worst_case(replace_field(d, "options[0].c", r.below), BOOT).margin < 0
    from explorer.preferred import SERIES
    mant = r.value / 10 ** math.floor(math.log10(r.value))
    assert round(mant, 6) in SERIES["E12"]


def test_size_pump_flying_capacitor_and_frequency():
    # invented scenario: the demo's 1:1 pump slowed to 50 kHz, four times below the 400 kHz (two pump
    # cycles per 200 kHz turn-on) where the pump model stops being reliable
    d = demo_with(**{"options.1.f_cp": "50k"})
    label = "pump 1:1"
    with pytest.warns(ModelValidityWarning, match="cycles between high-side turn-ons"):
        r = size_capacitor(d, label, series="E6", lo=1e-9, hi=10e-6)
    assert r.value is not None and "model validity" in r.note  # the answer carries its caveat
    assert _quiet_margin(replace_field(d, "options[1].c_fly.c", r.value), label) >= 0
    if r.below is not None:
        assert _quiet_margin(replace_field(d, "options[1].c_fly.c", r.below), label) < 0
    # the clock search never goes below the validity floor; here the floor itself holds
    rf = size_pump_frequency(d, label, f_lo=1e3, f_hi=5e6)
    floor = 2 * d.bridge.f_sw
    assert rf.value == pytest.approx(floor, rel=1e-6) and rf.below is None and "validity floor" in rf.note
    assert worst_case(replace_field(d, "options[1].f_cp", rf.value), label).margin >= 0
    # with a 1 nF flying capacitor the lowest holding clock lies above the floor: found by bisection
    d1 = replace_field(d, "options[1].c_fly.c", 1e-9)
    rf1 = size_pump_frequency(d1, label, f_lo=1e3, f_hi=50e6)
    assert rf1.value is not None and rf1.below is not None and rf1.below > floor
    assert worst_case(replace_field(d1, "options[1].f_cp", rf1.value), label).margin >= 0
    assert worst_case(replace_field(d1, "options[1].f_cp", rf1.below), label).margin < 0


def _quiet_margin(design, label):
    """Worst-corner margin of a design whose model-validity warnings are expected (held back)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)
        return worst_case(design, label).margin


def test_size_bootstrap_resistor_limits_inrush():
    d = load_design(DEMO)
    r = size_bootstrap_resistor(d, BOOT, i_max=1.0)
    assert r.value is not None
    dd = replace_field(d, "options[0].r", r.value)
    # Ohm's law on a dead capacitor: the first-pulse peak is (V_DD − V_F)/R_total ≤ i_max
    assert boot_eval(dd, dd.options[0]).startup.i_peak <= 1.0 + 1e-9
    with pytest.raises(DesignError, match="i_max"):
        size_bootstrap_resistor(d, BOOT, i_max=-1)


def test_size_isolated_rating():
    d = load_design(DEMO)
    r = size_isolated_rating(d, "isolated 1 W", headroom=2.0)
    assert r.value >= 2.0 * 0.0999
    with pytest.raises(DesignError, match="headroom"):
        size_isolated_rating(d, "isolated 1 W", headroom=0.5)


def test_temperature_sweep_grows_leakage():
    # junction leakage grows with temperature (the spread's leak_per_100k, here 100 per 100 K):
    # the rail minimum never rises as it gets hotter, and at t_amb the sweep equals evaluate
    d = demo_with(**{"options.0.i_leak": 2e-4, "checks": {"t_min": -40, "t_max": 150, "t_amb": 25}})
    t = np.array([-40.0, 25.0, 85.0, 125.0])
    s = sweep(d, {"temperature": t}, labels=[BOOT], figures=["rail_min"])
    rail = s.figures[BOOT]["rail_min"]
    assert np.all(np.diff(rail) <= 1e-12)
    assert rail[1] == pytest.approx(evaluate(d)[BOOT].v_rail.min, rel=1e-12)
    s2 = sweep(d, {"temperature": [200.0]}, labels=[BOOT], figures=["rail_min"])
    assert "checks.t_amb" in s2.invalid[(0,)]


def test_pump_capacitors_spread_each_within_its_own_class():
    # invented scenario: the demo's 1:1 pump with a C0G output capacitor (5 %) beside its X7R flying
    # capacitor (10 %). Sources: EIA-198 class limits (X7R ±15 % and C0G 0 ± 30 ppm/K, i.e. within
    # ±0.3 %, over −55…+125 °C) times each part's own tolerance
    d = demo_with(**{"options.1.c_out.dielectric": "C0G", "options.1.c_out.c_tol": 0.05,
                     "options.1.c_fly.c_tol": 0.10})
    label = "pump 1:1"
    f = sample_factors(d, label, 4000, np.random.default_rng(2))
    assert f.k_c.min() >= 0.90 * 0.85 - 1e-12 and f.k_c.max() <= 1.10 * 1.15 + 1e-12
    assert f.k_out.min() >= 0.95 * 0.997 - 1e-12 and f.k_out.max() <= 1.05 * 1.003 + 1e-12
    assert f.k_out.min() < 0.96 and f.k_c.min() < 0.80  # both envelopes are explored
    assert abs(np.corrcoef(f.k_c, f.k_out)[0, 1]) < 0.1  # drawn independently
    names = [n for n, _ in corner_factors(d, label)]
    assert any("k_out low" in n for n in names) and any("k_c high" in n and "k_out low" in n for n in names)
    # the batched samples equal evaluate_option on the design apply_factors perturbs
    from explorer.options.charge_pump import evaluate_option, rail_min_batch
    g = sample_factors(d, label, 6, np.random.default_rng(9))
    batch = rail_min_batch(d, d.option(label), g)
    for i in range(6):
        di = apply_factors(d, label, g.at(i))
        assert di.option(label).c_out.c == pytest.approx(1e-6 * g.k_out[i], rel=1e-15)
        assert batch[i] == pytest.approx(evaluate_option(di, di.option(label)).v_rail.min, rel=1e-12)
