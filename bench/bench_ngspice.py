"""Model against ngspice: the agreement as measured, and ngspice's speed at its cheapest accurate settings.

1. Agreement. The figures the ngspice tests compare, model against ngspice, as relative differences:
   the bootstrap reference circuit (tests/reference/bootstrap, exponential diode: rail maximum and
   minimum of the last period, time to UVLO-on, and the start-up waveform at every interval boundary,
   relative to V_DD) and the charge-pump reference cases (tests/reference/charge_pump, stored ngspice
   39 runs: R_out and the rail at the end of sampled start-up cycles).
2. ngspice settings. The bootstrap reference circuit is run at several output steps (points per
   switching period, also the largest internal step) and relative tolerances. The finest run is the
   reference; a setting counts as accurate when every figure is within a tenth of what the tests
   allow the model (rail 5e-3 -> 5e-4, time 3e-2 -> 3e-3) of the finest run. The cheapest accurate
   setting is the one with the fewest points per period, then the loosest reltol.
3. Speed. ngspice on the demo's bootstrap start-up (2,000 switching periods, straight-line diode) at
   the default settings of explorer.netlist, then at the settings accurate on the reference circuit,
   cheapest first, until one also agrees with the default run on this circuit; against the model's
   start-up. One run each.

Prints figures for docs/performance.md. Run: python bench/bench_ngspice.py [--no-speed]
"""

from __future__ import annotations

import importlib.util
import json
import os
import re
import subprocess
import sys
import tempfile
import time
import warnings

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

from _timing import median_s  # noqa: E402

import explorer  # noqa: E402
from explorer.design import load_design  # noqa: E402
from explorer.netlist import POINTS_PER_PERIOD, RELTOL, export_netlist  # noqa: E402
from explorer.options import bootstrap as B  # noqa: E402
from explorer.spice import ngspice_path, run_transient  # noqa: E402

REF = os.path.join(ROOT, "tests", "reference", "bootstrap")
sys.path.insert(0, REF)
import regenerate as boot_regen  # noqa: E402


def _load(name, path):
    spec = importlib.util.spec_from_file_location(name, path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def with_settings(net: str, points: float, reltol: float) -> str:
    """The netlist with another output/largest step (``points`` per the netlist's own step) and reltol."""
    m = re.search(r"^\.tran (\S+) (\S+) 0 (\S+) uic$", net, re.M)
    step = float(m.group(1)) * POINTS_PER_PERIOD / points
    net = net[:m.start()] + f".tran {step:.6g} {m.group(2)} 0 {step:.6g} uic" + net[m.end():]
    return re.sub(r"reltol=\S+", f"reltol={reltol:g}", net)


def bootstrap_figures(design, wave) -> dict:
    o = design.options[0]
    fig = boot_regen.reference_figures(design, o, wave)
    su = B.startup(design, o)
    t_b = su.schedule.t_start[1:]
    fig["v_boundaries"] = np.interp(t_b - 1e-12, wave["time"], wave[boot_regen.CAP])
    return fig


def agreement():
    d = load_design(os.path.join(REF, "design.json"))
    o = d.options[0]
    r = B.evaluate_option(d, o)
    su = B.startup(d, o)
    model = {"v_max_last_period": r.v_rail.max, "v_min_last_period": r.v_rail.min, "t_uvlo": r.startup.t_uvlo}
    with open(os.path.join(REF, "reference.json")) as fh:
        stored = json.load(fh)
    print("1. model against ngspice (relative differences; the tests allow 5e-3 on rails, 3e-2 on times)")
    print("  bootstrap reference circuit (exponential diode), stored ngspice 39 figures:")
    for k in ("v_max_last_period", "v_min_last_period", "t_uvlo"):
        print(f"    {k:18s} model {model[k]:.10g}  ngspice {stored[k]:.10g}  rel. diff {abs(model[k] / stored[k] - 1):.2e}")
    if ngspice_path():
        net = export_netlist(d, o.label, n_cycles=d.bridge.startup_cycles)
        wave = run_transient(net, [boot_regen.CAP])
        fig = bootstrap_figures(d, wave)
        dv = float(np.max(np.abs(su.v_pre[1:] - fig["v_boundaries"]))) / d.aux.v_dd
        print(f"    live run, start-up waveform at every interval boundary: max |model - ngspice| / V_DD = {dv:.2e}"
              " (the test allows 5e-3)")
    cp_test = _load("cp_test", os.path.join(ROOT, "tests", "test_charge_pump_ngspice.py"))
    print("  charge pumps (stored ngspice 39 runs; the tests allow 1e-2):")
    worst = {}
    for name, case in sorted(cp_test.CASES.items()):
        mod = cp_test.model_figures(case)
        ng = cp_test.REFERENCE[name]["ngspice"]
        for key, value in mod.items():
            rel = float(np.max(np.abs(np.asarray(value) / np.asarray(ng[key]) - 1)))
            worst[key] = max(worst.get(key, 0.0), rel)
            print(f"    {name:20s} {key:16s} largest rel. diff {rel:.2e}")
    return d


def settings_scan(d):
    o = d.options[0]
    net = export_netlist(d, o.label, n_cycles=d.bridge.startup_cycles)
    grid = [(400, 1e-5)] + [(p, rt) for rt in (1e-4, 1e-3, 1e-2) for p in (100, 50, 20, 10, 5)]
    rows = []
    for p, rt in grid:
        t = time.perf_counter()
        wave = run_transient(with_settings(net, p, rt), [boot_regen.CAP])
        dt = time.perf_counter() - t
        rows.append((p, rt, dt, bootstrap_figures(d, wave)))
    ref = rows[0][3]
    print("2. ngspice settings on the bootstrap reference circuit (60 periods); finest run = 400 points per "
          "period, reltol 1e-5")
    ok_rows = []
    for p, rt, dt, fig in rows[1:]:
        e_rail = max(abs(fig[k] / ref[k] - 1) for k in ("v_max_last_period", "v_min_last_period"))
        e_t = abs(fig["t_uvlo"] / ref["t_uvlo"] - 1)
        e_wave = float(np.max(np.abs(fig["v_boundaries"] - ref["v_boundaries"]))) / d.aux.v_dd
        ok = e_rail <= 5e-4 and e_t <= 3e-3 and e_wave <= 5e-4
        default = " (explorer.netlist default)" if (p, rt) == (POINTS_PER_PERIOD, RELTOL) else ""
        print(f"    {p:4d} points/period, reltol {rt:g}: {dt:6.2f} s; vs finest: rails {e_rail:.1e}, t_uvlo "
              f"{e_t:.1e}, waveform {e_wave:.1e} -> {'accurate' if ok else 'NOT accurate'}{default}")
        if ok:
            ok_rows.append((p, -rt))
    # cheapest in work, not in this run's (noisy, sub-second) times: fewest points, then loosest reltol
    return [(p, -mrt) for p, mrt in sorted(ok_rows)]


def speed(candidates):
    """ngspice on the demo start-up at the default settings, then at each setting accurate on the reference
    circuit, cheapest first (one reltol per step size: the loosest), until one also agrees with the default
    run on the demo (the same criterion)."""
    d = explorer.demo_design()
    o = d.options[0]
    su = median_s(lambda: B.startup(d, o), 15)
    net = export_netlist(d, o.label, n_cycles=d.bridge.startup_cycles)
    print(f"3. demo bootstrap start-up, {d.bridge.startup_cycles} periods (straight-line diode): model "
          f"{su * 1e3:.2f} ms (median of 15)")

    def run(p, rt, what):
        t = time.perf_counter()  # run_transient writes the vector to a file; every run pays that alike
        wave = run_transient(with_settings(net, p, rt), [boot_regen.CAP], timeout=3600)
        dt = time.perf_counter() - t
        print(f"    ngspice, {p} points/period, reltol {rt:g} ({what}): {dt:.2f} s (one run) = "
              f"{dt / su:,.0f}x the model's start-up")
        return boot_regen.reference_figures(d, o, wave)

    ref = run(POINTS_PER_PERIOD, RELTOL, "explorer.netlist default")
    tried = set()
    for p, rt in candidates:
        if p >= POINTS_PER_PERIOD:
            break
        if p in tried:  # one run per step size (on the reference circuit reltol 1e-4..1e-2 gave the same figures)
            continue
        tried.add(p)
        fig = run(p, rt, "accurate on the reference circuit")
        e_rail = max(abs(fig[k] / ref[k] - 1) for k in ("v_max_last_period", "v_min_last_period"))
        e_t = abs(fig["t_uvlo"] / ref["t_uvlo"] - 1)
        ok = e_rail <= 5e-4 and e_t <= 3e-3
        print(f"      differs from the default run by: rails {e_rail:.1e}, t_uvlo {e_t:.1e} -> "
              f"{'accurate here too: the cheapest accurate setting' if ok else 'NOT accurate on this circuit'}")
        if ok:
            break


def main():
    warnings.simplefilter("ignore", explorer.ExplorerWarning)
    d = agreement()
    if not ngspice_path():
        print("ngspice not installed: no settings scan, no speed ratio")
        return
    candidates = settings_scan(d)
    print("  accurate settings, cheapest first: " + ", ".join(f"{p} points/period reltol {rt:g}" for p, rt in candidates))
    if "--no-speed" not in sys.argv:
        speed(candidates)


if __name__ == "__main__":
    main()
