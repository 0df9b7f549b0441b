"""SPICE netlist export against the ngspice circuit simulator (general-purpose reference software).

Every option of the demo design (an invented scenario) is exported, run
through ngspice 39 and compared with the model evaluated on the same design.
The start-up is shortened (soft-start 20 µs, the isolated module's delay and
ramp 20 µs each) so that each ngspice run takes well under a few seconds; the
model is evaluated on that same shortened design. Tolerances are the option
issues': bootstrap rail steady-state max/min within 0.5 % and time to
UVLO-on within 3 %; pumps steady-state rail mean and min within 1 %;
isolated rail min/max within 1 %.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys

import numpy as np
import pytest

from explorer import DEMO, DesignError, demo_design
from explorer.design import load_design, replace_fields
from explorer.netlist import (STEADY_PERIODS, export_all, export_netlist, netlist_plan, netlist_probes)
from explorer.spice import run_transient

LABELS = [o["label"] for o in DEMO["options"]]
SHORT = {"bridge.soft_start": 20e-6, "bridge.startup_cycles": 100,
         "options[4].t_start": 20e-6, "options[4].t_ramp": 20e-6}
REFERENCE_DESIGN = os.path.join(os.path.dirname(__file__), "reference", "bootstrap", "design.json")



def _assert_bootstrap_tolerances(ng):
    """The bootstrap issue's tolerances: rail max/min within 0.5 %, time to UVLO-on within 3 %."""
    r = ng["plan"].result
    assert ng["max"] == pytest.approx(r.v_rail.max, rel=5e-3)
    assert ng["min"] == pytest.approx(r.v_rail.min, rel=5e-3)
    assert ng["t_uvlo"] == pytest.approx(r.startup.t_uvlo, rel=3e-2)

@pytest.fixture(scope="module")
def short_demo():
    """The demo design (an invented scenario) with a short start-up, for quick ngspice runs."""
    return replace_fields(demo_design(), SHORT)


# --------------------------------------------------------------------------- helpers

def _window(t, v, a, b):
    """Samples of v on [a, b], the ends interpolated."""
    sel = (t > a) & (t < b)
    tt = np.concatenate(([a], t[sel], [b]))
    vv = np.concatenate(([np.interp(a, t, v)], v[sel], [np.interp(b, t, v)]))
    return tt, vv


def ngspice_figures(design, label, **kw) -> dict:
    """Run the exported netlist in ngspice; read the steady-state window and the UVLO-on crossing."""
    plan = netlist_plan(design, label, **kw)
    probes = netlist_probes(design, label)
    res = run_transient(export_netlist(design, label, **kw), [probes["cap"], probes["rail"]])
    t, v = res["time"], res[probes["cap"]]
    tt, vv = _window(t, v, plan.t_steady, plan.t_stop)
    _, vr = _window(t, res[probes["rail"]], plan.t_steady, plan.t_stop)
    th = design.driver.uvlo_on
    k = int(np.argmax(v >= th))
    t_uvlo = None if v[k] < th else float(t[k - 1] + (th - v[k - 1]) * (t[k] - t[k - 1]) / (v[k] - v[k - 1]))
    span = tt[-1] - tt[0]
    return {"min": float(vv.min()), "max": float(vv.max()), "mean": float(np.trapezoid(vv, tt) / span),
            "mean_terminal": float(np.trapezoid(vr, tt) / span), "t_uvlo": t_uvlo, "plan": plan}


def _pwl_points(text: str, name: str) -> np.ndarray:
    """(t, v) pairs of the PWL source ``name`` in a netlist."""
    m = re.search(rf"^{name} \S+ \S+ PWL\((.*?)\)", text, flags=re.M | re.S)
    assert m, name
    nums = [float(x) for x in m.group(1).replace("+", " ").split()]
    return np.array(nums).reshape(-1, 2)


# --------------------------------------------------------------------------- against ngspice

@pytest.mark.ngspice
@pytest.mark.parametrize("label", [LABELS[0]])
def test_bootstrap_against_ngspice(label, short_demo, ngspice):
    # reference: ngspice 39 transient of the exported netlist (general-purpose circuit simulator);
    # tolerances from the bootstrap issue: rail max/min 0.5 %, time to UVLO-on 3 %
    ng = ngspice_figures(short_demo, label)
    _assert_bootstrap_tolerances(ng)


@pytest.mark.ngspice
@pytest.mark.parametrize("corner", ["min", "max"])
def test_bootstrap_corners_against_ngspice(corner, short_demo, ngspice):
    # reference: ngspice 39; the exported capacitor is the model's effective value at the corner
    ng = ngspice_figures(short_demo, LABELS[0], corner=corner)
    _assert_bootstrap_tolerances(ng)


@pytest.mark.ngspice
def test_bootstrap_junction_diode_against_ngspice(ngspice):
    # reference: ngspice 39 with the SPICE junction diode (IS, N, RS) of the design; the circuit of
    # tests/reference/bootstrap (an invented scenario); tolerances 0.5 % (rail) and 3 % (time)
    design = load_design(REFERENCE_DESIGN)
    label = design.options[0].label
    ng = ngspice_figures(design, label)
    _assert_bootstrap_tolerances(ng)


#: An invented half bridge whose 1 V dead-time undershoot lifts the rail above V_DD − V_F, so the diode
#: refreshes only in the 200 ns dead time of each 10 µs period and the rail settles over tens of periods.
DEAD_TIME_REFRESH = {"bridge.topology": "half_bridge", "bridge.v_out": None, "bridge.duty": 0.5, "bridge.v_bus": 60,
                     "bridge.f_sw": 100e3, "bridge.dead_time": 200e-9}


@pytest.mark.ngspice
def test_default_span_settles_a_rail_refreshed_only_in_the_dead_time(ngspice):
    # reference: ngspice 39 transient of the exported netlist at its default span; the bootstrap issue's
    # tolerance (rail min/max 0.5 %). The span once allowed 12 τ of continuous refresh and ngspice was
    # still 1.7 % below the orbit in its "steady" window; the span now follows the orbit's contraction.
    design = replace_fields(demo_design(), {**SHORT, **DEAD_TIME_REFRESH})
    ng = ngspice_figures(design, LABELS[0])
    _assert_bootstrap_tolerances(ng)
    # tighter than the 0.5 %: settled, ngspice is 5.5e-4 below the model here, the share of the
    # 200 ns refresh window that the netlist's 10 ns edge ramps take (1 ns edges: 7e-5); unsettled, 1.7e-2
    r = ng["plan"].result
    assert ng["min"] == pytest.approx(r.v_rail.min, rel=1e-3)


@pytest.mark.ngspice
def test_default_span_starts_after_a_hold_up_that_began_unsettled(ngspice):
    # reference: ngspice 39 at the default span; an invented three-phase leg with the HS clamped on for
    # 120° (dpwm120_top, 170 µs at f_o = 2 kHz). The rail settles in ~50 µs by its RC, but the first clamp
    # began before that and carried the deviation to its end: the window once started inside it and
    # ngspice's minimum was 0.65 % low. Now within 1e-3 (settled: 1e-5 to 2e-4 on this design)
    changes = {**SHORT, "bridge.topology": "three_phase", "bridge.v_out": None, "bridge.m": 0.9,
               "bridge.pwm": "dpwm120_top", "bridge.f_o": 2e3, "bridge.phi": 0.3, "bridge.f_sw": 100e3,
               "options[0].c": 1e-6}
    ng = ngspice_figures(replace_fields(demo_design(), changes), LABELS[0])
    r = ng["plan"].result
    assert ng["min"] == pytest.approx(r.v_rail.min, rel=1e-3)
    assert ng["max"] == pytest.approx(r.v_rail.max, rel=1e-3)


def test_longest_run_is_cyclic():
    # hand-worked: stretches of the mask [T, F, T, T, F] over durations 1..5 are {1}, {3, 4}: longest 7;
    # [T, F, F, T, T] wraps around: 4 + 5 + 1 = 10
    from explorer.schedule import longest_run
    assert longest_run([1, 2, 3, 4, 5], [True, False, True, True, False]) == 7.0
    assert longest_run([1, 2, 3, 4, 5], [True, False, False, True, True]) == 10.0
    assert longest_run([1, 2], [True, True]) == 3.0
    assert longest_run([1, 2], [False, False]) == 0.0
    assert longest_run([1, 2, 3, 4, 5], [True, False, False, True, True], periodic=False) == 9.0


@pytest.mark.ngspice
@pytest.mark.parametrize("v_bus, v_out", [(48.0, 12.0), (10.0, 5.0)])
def test_bus_power_of_recovery_and_leakage_against_ngspice(v_bus, v_out, ngspice):
    # reference: ngspice 39, the mean power of the switch-node source over the steady window, against the
    # model's p_drawn_bus: recovery Q_rr·V_SW at each onset and leakage I·V_SW while reverse-biased (plus
    # the dead-time undershoot's share of the diode charge); invented 48 V and 10 V buses under a 12 V aux
    # rail. C_j = 0: an ideal switch-node source returns a junction capacitance's charge at the next
    # edge, where a real hard-switched edge dissipates ½·C·ΔV² (the model counts that). Within 1 %.
    design = replace_fields(demo_design(), {**SHORT, "options[0].q_rr": 10e-9, "options[0].i_leak": 50e-6,
                                            "options[0].c_j": 0.0, "bridge.v_bus": v_bus, "bridge.v_out": v_out})
    plan = netlist_plan(design, LABELS[0])
    res = run_transient(export_netlist(design, LABELS[0]), ["i(vsw)", "v(vs)"])
    tt, p_sw = _window(res["time"], -res["i(vsw)"] * res["v(vs)"], plan.t_steady, plan.t_stop)
    p_bus = float(np.trapezoid(p_sw, tt) / (tt[-1] - tt[0]))
    assert p_bus == pytest.approx(plan.result.p_drawn_bus, rel=1e-2)


@pytest.mark.ngspice
@pytest.mark.parametrize("diode", [None, {"i_s": 2e-9, "n": 1.9, "r_s": 0.4}])
def test_clamp_against_a_zener(diode, ngspice):
    # reference: ngspice 39 with a sharp Zener across C_boot (the exported netlist), an invented 12 V aux
    # rail clamped at 11 V with a 2 V dead-time undershoot; the bootstrap issue's tolerances (rail 0.5 %,
    # time to UVLO-on 3 %). The model's clamp is ideal, the netlist's Zener is 2 mV above it at 1 A, so the
    # rail agrees to about 5e-4 (a cap on the charge target instead was 1.7 % low with the junction diode
    # and started 9 % late)
    changes = {**SHORT, "options[0].v_clamp": 11.0, "bridge.v_undershoot": 2.0, "bridge.dead_time": 100e-9}
    if diode:
        changes["options[0].diode"] = diode
    design = replace_fields(demo_design(), changes)
    ng = ngspice_figures(design, LABELS[0])
    _assert_bootstrap_tolerances(ng)
    r = ng["plan"].result
    assert ng["mean"] == pytest.approx(r.v_rail.mean, rel=1e-3)
    assert r.v_rail.max == pytest.approx(11.0, abs=1e-9)  # held at the clamp
    assert r.losses["clamp"] > 0


@pytest.mark.ngspice
def test_turn_off_reset_charge_dips_the_rail_before_the_junction_charge_returns(ngspice):
    # reference: ngspice 39 on the exported netlist, where the level-shift reset pulse is drawn while SW is
    # still high and the diode's C_j hands its charge back only as SW falls. An invented 100 kHz buck with a
    # 5 nC level shift, 100 nF C_boot and a 40 pF diode: ngspice's rail minimum is the dip Q_off/C below the
    # rail at the turn-off, about 68 mV. Measured: model 10.9170 V, ngspice 10.9184 V (1.3e-4). Before the
    # model kept the dip, it netted Q_off with C_j's return (about 27 mV of it), 3.9e-3 above an ngspice
    # run that drew the pulse before the edge.
    design = replace_fields(demo_design(), {**SHORT, "driver.q_ls": 5e-9, "options[0].c": 100e-9,
                                            "options[0].c_j": 40e-12, "bridge.f_sw": 100e3})
    ng = ngspice_figures(design, LABELS[0])
    _assert_bootstrap_tolerances(ng)
    r = ng["plan"].result
    assert ng["min"] == pytest.approx(r.v_rail.min, rel=5e-4)
    # the waveform shows the dip: its lowest point is the reported minimum (Q = C·ΔV by hand: the dip below
    # the rail just before the turn-off is Q_off / C_eff)
    c_eff = r.details.c_eff
    v = np.asarray(r.v)
    k = int(np.argmin(v))
    assert v[k] == pytest.approx(r.v_rail.min, abs=1e-12)
    assert v[k - 1] - v[k] == pytest.approx(5e-9 / c_eff, rel=1e-9)


@pytest.mark.ngspice
@pytest.mark.parametrize("label", LABELS[1:4])
def test_pumps_against_ngspice(label, short_demo, ngspice):
    # reference: ngspice 39 transient of the exported netlist; tolerance from the charge-pump issue: 1 %
    # (the model's minimum is a bound over every relative phase of the PWM and the pump clock)
    ng = ngspice_figures(short_demo, label)
    r = ng["plan"].result
    assert ng["mean"] == pytest.approx(r.v_rail.mean, rel=1e-2)
    assert ng["min"] == pytest.approx(r.v_rail.min, rel=1e-2)
    # the capacitor's ESR carries no mean current in steady state: terminal and capacitor means agree
    assert ng["mean_terminal"] == pytest.approx(ng["mean"], rel=1e-3)
    # time to UVLO-on, at the bootstrap issue's 3 % for a time figure
    assert ng["t_uvlo"] == pytest.approx(ng["plan"].t_uvlo_model, rel=3e-2)


@pytest.mark.ngspice
def test_isolated_against_ngspice(short_demo, ngspice):
    # reference: ngspice 39 transient of the exported netlist; tolerance from the isolated issue: 1 %
    ng = ngspice_figures(short_demo, LABELS[4])
    r = ng["plan"].result
    assert ng["min"] == pytest.approx(r.v_rail.min, rel=1e-2)
    assert ng["max"] == pytest.approx(r.v_rail.max, rel=1e-2)
    assert ng["t_uvlo"] == pytest.approx(r.startup.t_uvlo, rel=3e-2)


#: Other bridge legs (invented variants of the demo) with the same short start-up.
TOPOLOGIES = {
    "sync_boost": {"bridge.topology": "sync_boost", "bridge.v_in": 40, "bridge.v_out": None},
    "half_bridge": {"bridge.topology": "half_bridge", "bridge.v_out": None, "bridge.duty": 0.5},
    "full_bridge_90": {"bridge.topology": "full_bridge", "bridge.v_out": None, "bridge.duty": 0.9},
    "light_load_buck": {"bridge.mode": "light_load", "bridge.ls_pulse": 0.3e-6, "bridge.skip_cycles": 2},
    "three_phase": {"bridge.topology": "three_phase", "bridge.v_out": None, "bridge.m": 0.9,
                    "bridge.f_o": 20e3, "bridge.phi": 0.5},
}


@pytest.mark.ngspice
@pytest.mark.parametrize("topology", sorted(TOPOLOGIES))
@pytest.mark.parametrize("label", LABELS[:2])
def test_other_bridge_legs_against_ngspice(topology, label, ngspice):
    # reference: ngspice 39 transient of the exported netlist; the option issues' tolerances
    # (bootstrap 0.5 % rail, 3 % time; pump 1 % rail mean and minimum)
    design = replace_fields(demo_design(), {**SHORT, **TOPOLOGIES[topology]})
    ng = ngspice_figures(design, label)
    r = ng["plan"].result
    assert ng["min"] == pytest.approx(r.v_rail.min, rel=5e-3 if label == LABELS[0] else 1e-2)
    if label == LABELS[0]:
        assert ng["max"] == pytest.approx(r.v_rail.max, rel=5e-3)
        assert ng["t_uvlo"] == pytest.approx(r.startup.t_uvlo, rel=3e-2)
    else:
        assert ng["mean"] == pytest.approx(r.v_rail.mean, rel=1e-2)


_J = {"options[0].diode": {"i_s": 2e-9, "n": 1.9, "r_s": 0.4}}
#: Invented designs away from the demo (corners of the physics: junction diodes, recovery and leakage,
#: a bus below V_DD, undershoot, clamps, hold-up, asynchronous pump clocks); label indices to check.
AWAY_FROM_DEMO = {
    "boost_12_24_500k_junction": ({"bridge.topology": "sync_boost", "bridge.v_bus": 24, "bridge.v_in": 12,
                                   "bridge.v_out": None, "bridge.f_sw": 500e3, "gate.r_gs": 10e3, **_J}, [0, 1, 4]),
    "full_bridge_97": ({"bridge.topology": "full_bridge", "bridge.v_out": None, "bridge.duty": 0.97,
                        "bridge.f_sw": 50e3}, [0, 2]),
    "light_load_buck_5_skipped": ({"bridge.mode": "light_load", "bridge.ls_pulse": 0.2e-6, "bridge.skip_cycles": 5,
                                   "bridge.v_out": 5, "options[0].c": 470e-9}, [0, 3]),
    "buck_1MHz_low_vdd": ({"bridge.v_bus": 24, "bridge.v_out": 3.3, "aux.v_dd": 10, "bridge.f_sw": 1e6,
                           "options[0].r": 5.0, "options[0].i_leak": 50e-6, "options[0].q_rr": 2e-9,
                           "driver.uvlo_on": 8.0, "driver.uvlo_off": 7.5, "gate.v_gs_on_min": 7.0}, [0, 1]),
    "buck_8V_bus_below_vdd": ({"bridge.v_bus": 8, "bridge.v_out": 4, "options[0].i_leak": 30e-6,
                               "options[0].q_rr": 3e-9, "bridge.f_sw": 300e3}, [0]),
    "boost_near_100_junction_qrr": ({"bridge.topology": "sync_boost", "bridge.v_bus": 48, "bridge.v_in": 46,
                                     "bridge.v_out": None, "options[0].q_rr": 4e-9, "options[0].i_leak": 10e-6,
                                     **_J}, [0]),
    "three_phase_clamp_undershoot": ({"bridge.topology": "three_phase", "bridge.v_out": None, "bridge.m": 0.8,
                                      "bridge.f_o": 5e3, "bridge.f_sw": 100e3, "bridge.v_undershoot": 3.0,
                                      "bridge.dead_time": 150e-9, "options[0].v_clamp": 11.5}, [0]),
    "light_load_clamp_junction": ({"bridge.mode": "light_load", "bridge.ls_pulse": 0.3e-6, "bridge.skip_cycles": 3,
                                   "options[0].v_clamp": 11.2, "bridge.v_undershoot": 2.0, **_J}, [0]),
    "pump_dead_time_async": ({"options[1].f_cp": 333e3, "options[1].dead_time_cp": 100e-9,
                              "options[1].c_fly.esr": 0.2, "options[3].f_cp": 1.1e6, "options[3].dead_time_cp": 50e-9,
                              "bridge.f_sw": 150e3}, [1, 3]),
}


@pytest.mark.ngspice
@pytest.mark.filterwarnings("ignore::explorer.errors.ModelValidityWarning")  # a 500 kHz pump under 0.5-1 MHz PWM
@pytest.mark.parametrize("case", sorted(AWAY_FROM_DEMO))
def test_invented_designs_away_from_the_demo_against_ngspice(case, ngspice):
    # reference: ngspice 39 transients of the exported netlists; the option issues' tolerances (bootstrap
    # rail max/min 0.5 % and time to UVLO-on 3 %; pump rail mean and minimum 1 %; isolated rail 1 %).
    # Measured on these designs: bootstrap rail 2e-6 to 8e-4, times 2e-4 to 1.1e-2; pumps 3e-6 to 3e-3.
    changes, labels = AWAY_FROM_DEMO[case]
    design = replace_fields(demo_design(), {**SHORT, **changes})
    for i in labels:
        option = design.options[i]
        ng = ngspice_figures(design, option.label)
        r = ng["plan"].result
        if option.kind == "bootstrap":
            _assert_bootstrap_tolerances(ng)
        elif option.kind == "charge_pump":
            assert ng["mean"] == pytest.approx(r.v_rail.mean, rel=1e-2)
            assert ng["min"] == pytest.approx(r.v_rail.min, rel=1e-2)
            assert ng["t_uvlo"] == pytest.approx(ng["plan"].t_uvlo_model, rel=3e-2)
        else:
            assert ng["min"] == pytest.approx(r.v_rail.min, rel=1e-2)
            assert ng["max"] == pytest.approx(r.v_rail.max, rel=1e-2)


@pytest.mark.ngspice
def test_every_demo_netlist_runs(ngspice):
    # the unmodified demo design: each option's netlist (20 switching periods) runs in ngspice without errors
    design = demo_design()
    for label, text in export_all(design).items():
        short = export_netlist(design, label, n_cycles=20)
        res = run_transient(short, [netlist_probes(design, label)["rail"]])
        assert res["time"][-1] == pytest.approx(netlist_plan(design, label, n_cycles=20).t_stop, rel=1e-9)
        assert np.all(np.isfinite(res[netlist_probes(design, label)["rail"]]))
        assert text.startswith(f"* explorer netlist: {label}")


@pytest.mark.ngspice
@pytest.mark.slow
def test_every_demo_netlist_runs_in_full(ngspice):
    # the unmodified demo design with the default span (its 2 ms soft-start): about 5 s per option
    design = demo_design()
    for label, text in export_all(design).items():
        probe = netlist_probes(design, label)["cap"]
        res = run_transient(text, [probe])
        plan = netlist_plan(design, label)
        tt, vv = _window(res["time"], res[probe], plan.t_steady, plan.t_stop)
        r = plan.result
        assert vv.min() == pytest.approx(r.v_rail.min, rel=1e-2)
        assert vv.max() == pytest.approx(r.v_rail.max, rel=1e-2)


@pytest.mark.ngspice
def test_standalone_netlist_runs_by_itself(short_demo, tmp_path, ngspice):
    # a user's run: ngspice in batch mode on the file alone writes the rail with wrdata
    text = export_netlist(short_demo, LABELS[0], standalone=True)
    (tmp_path / "boot.cir").write_text(text)
    proc = subprocess.run([ngspice, "-b", "boot.cir"], cwd=tmp_path, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    data = np.loadtxt(tmp_path / "bootstrap_220n.txt", skiprows=1, ndmin=2)
    assert data.shape[1] == 4  # time and three vectors
    plan = netlist_plan(short_demo, LABELS[0])
    assert data[-1, 0] == pytest.approx(plan.t_stop, rel=1e-9)


# --------------------------------------------------------------------------- the text itself

@pytest.fixture(scope="module")
def texts(short_demo):
    return export_all(short_demo)


def test_export_all_has_every_option(texts):
    assert list(texts) == LABELS


@pytest.mark.parametrize("label", LABELS)
def test_header_and_analysis_lines(texts, label):
    text = texts[label]
    lines = text.splitlines()
    assert lines[0].startswith("* explorer netlist: ")
    head = "\n".join(x for x in lines if x.startswith("*"))
    assert "Demo (invented scenario)" in head and "Generated by explorer" in head
    assert "estimates to be confirmed by measurement" in head
    assert "v(vb)-v(vs)" in head
    assert not re.search(r"(?im)^\s*\.(control|endc|end)\b", text)
    tran = [x for x in lines if x.startswith(".tran")]
    assert len(tran) == 1 and tran[0].endswith(" uic")
    opts = [x for x in lines if x.startswith(".options")]
    assert len(opts) == 1 and "reltol=0.0001" in opts[0]
    assert text.isascii()


@pytest.mark.parametrize("label", LABELS)
def test_numbers_are_plain(texts, label):
    # every value token is a plain float (no SPICE scale suffixes such as m, u, n, meg)
    n = 0
    for line in texts[label].splitlines():
        if line.startswith("*"):
            continue
        toks = re.split(r"[\s()=]+", line.strip())
        for tok in toks[1:]:  # after the element name or dot-command
            if tok and tok[0] in "0123456789-.+":
                float(tok)
                n += 1
    assert n > 20


@pytest.mark.parametrize("label", LABELS)
def test_pwl_times_increase(texts, label):
    for name in re.findall(r"^(\w+) \S+ \S+ PWL\(", texts[label], flags=re.M):
        pts = _pwl_points(texts[label], name)
        assert np.all(np.diff(pts[:, 0]) > 0), name


@pytest.mark.parametrize("topology", sorted(TOPOLOGIES) + ["line_leg"])
def test_other_bridge_legs_write_valid_sources(topology):
    changes = TOPOLOGIES.get(topology, {"bridge.topology": "line_leg", "bridge.v_out": None,
                                        "bridge.f_line": 50.0})
    design = replace_fields(demo_design(), {**SHORT, **changes})
    for label in LABELS:
        text = export_netlist(design, label, n_cycles=3)
        for name in re.findall(r"^(\w+) \S+ \S+ PWL\(", text, flags=re.M):
            assert np.all(np.diff(_pwl_points(text, name)[:, 0]) > 0), (label, name)
        _check_gate_charge(design, label, text, n_cycles=3)


def _check_gate_charge(design, label, text, **kw):
    plan = netlist_plan(design, label, **kw)
    d = plan.delivered
    n_on = int(np.count_nonzero(d & ~np.concatenate(([False], d[:-1]))))
    q = 0.0
    for name in re.findall(r"^(IG\d+) ", text, flags=re.M):
        pts = _pwl_points(text, name)
        q += np.trapezoid(pts[:, 1], pts[:, 0])
    assert q == pytest.approx(n_on * (design.gate.q_g + design.driver.q_ls), rel=1e-9, abs=1e-18), label
    return n_on


def test_gate_charge_pulses_carry_q_per_delivered_turn_on(short_demo, texts):
    # charge in the gate-load sources = (Q_G + Q_LS) × delivered HS turn-ons (charge conservation)
    for label in LABELS:
        assert _check_gate_charge(short_demo, label, texts[label]) > 0


def test_switch_node_follows_the_schedule(short_demo, texts):
    # between edges the switch node sits at the schedule's level (withheld pulses at v_sw_low)
    plan = netlist_plan(short_demo, LABELS[0])
    pts = _pwl_points(texts[LABELS[0]], "VSW")
    s = plan.schedule
    v_sw = np.where(s.hs_on & ~plan.delivered, short_demo.bridge.v_sw_low, s.v_sw)
    mid = s.t_start + 0.5 * s.dt
    assert np.allclose(np.interp(mid, pts[:, 0], pts[:, 1]), v_sw)


def test_standalone_block():
    design = replace_fields(demo_design(), SHORT)
    text = export_netlist(design, LABELS[2], standalone=True)
    tail = text.rstrip().splitlines()
    assert tail[-1] == ".end"
    ctrl = tail[tail.index(".control"):]
    assert "run" in ctrl and "quit" in ctrl and ".endc" in ctrl
    assert any(x.startswith("wrdata pump_1_2_from_5_v.txt v(vb)-v(vs)") for x in ctrl)


def test_default_span_covers_start_up_and_steady_periods(short_demo):
    for label in LABELS:
        plan = netlist_plan(short_demo, label)
        assert plan.t_steady > (plan.t_uvlo_model or 0.0)
        assert plan.t_stop - plan.t_steady == pytest.approx(STEADY_PERIODS / short_demo.bridge.f_sw)


@pytest.mark.parametrize("kw, path", [
    ({"label": "no such option"}, "options"),
    ({"label": LABELS[0], "n_cycles": 0}, "n_cycles"),
    ({"label": LABELS[0], "n_cycles": 2.5}, "n_cycles"),
    ({"label": LABELS[0], "corner": "typical"}, "corner"),
])
def test_bad_input_names_the_field(kw, path):
    with pytest.raises(DesignError) as e:
        export_netlist(demo_design(), **kw)
    assert e.value.path == path


# --------------------------------------------------------------------------- command line

def _cli(*args):
    return subprocess.run([sys.executable, "-m", "explorer", *args], capture_output=True, text=True, timeout=120)


def test_cli_writes_the_netlist(tmp_path):
    p = tmp_path / "demo.json"
    p.write_text(json.dumps(DEMO))
    out = tmp_path / "boot.cir"
    r = _cli("netlist", str(p), "--label", LABELS[0], "--out", str(out), "--cycles", "5")
    assert r.returncode == 0, r.stderr
    text = out.read_text()
    assert text == export_netlist(demo_design(), LABELS[0], n_cycles=5, standalone=True)


@pytest.mark.parametrize("args, needle", [
    (["--label", "nope"], "error: --label: no option labelled 'nope'"),
    (["--label", LABELS[0], "--cycles", "0"], "error: --cycles:"),
    (["--label", LABELS[0], "--out", "/nonexistent-dir/x.cir"], "error: --out:"),
])
def test_cli_bad_input_exit_2_one_line(tmp_path, args, needle):
    p = tmp_path / "demo.json"
    p.write_text(json.dumps(DEMO))
    r = _cli("netlist", str(p), *args)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(needle), r.stderr
    assert "Traceback" not in r.stderr
