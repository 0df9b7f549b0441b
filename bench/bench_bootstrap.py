"""Benchmark of the bootstrap model (prints figures; not a test).

Run from the repository root::

    python3 bench/bench_bootstrap.py            # model figures only
    python3 bench/bench_bootstrap.py --ngspice  # also the ngspice speed ratio (minutes)
    python3 bench/bench_bootstrap.py --quick    # one run per design in the topology table

Prints:

* for the demo design (an invented scenario) with its straight-line diode and
  with an exponential junction diode in its place: steady state + start-up
  (2,000 cycles) + duty limits, median of many runs; the whole
  ``evaluate_option``; the margin map (steady-state rail minimum over an
  f_sw × duty grid) in points per second;
* ``evaluate_option`` of a set of designs of every topology and both diode
  kinds (all invented scenarios, chosen to include the hard cases: a
  three-phase leg at a low output frequency, standstill, a line-frequency leg
  at 50 Hz with 100 kHz switching whose rail drops out every line cycle, a
  light-load buck with skipped cycles, a full bridge at 100 % command), median
  and worst of several runs; the target is 50 ms for every design;
* with ``--ngspice``: ngspice on the same start-up circuit (2,000 cycles, same
  pulses), one run, and the speed ratio ngspice / model.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time

import numpy as np

sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..")))

from _timing import median_s, run_times  # noqa: E402

from explorer import demo_design, load_design  # noqa: E402
from explorer.loads import required_rail  # noqa: E402
from explorer.netlist import export_netlist  # noqa: E402
from explorer.options import bootstrap as B  # noqa: E402
from explorer.spice import ngspice_path  # noqa: E402

JUNCTION = {"i_s": 1e-8, "n": 1.5, "r_s": 0.3}


def _median_ms(fn, repeat: int) -> float:
    return 1e3 * median_s(fn, repeat)


def _designs():
    d = demo_design()
    dd = d.to_dict()
    dd["options"][0]["diode"] = dict(JUNCTION)
    return {"straight-line diode": d, "exponential diode": load_design(dd)}


def _variant(bridge: dict, option: dict | None = None, junction: bool = False, **sections):
    """The demo design (invented scenario) with its bridge and option changed."""
    dd = demo_design().to_dict()
    dd["options"] = dd["options"][:1]
    dd["bridge"].update(bridge)
    dd["options"][0].update(option or {})
    if junction:
        dd["options"][0]["diode"] = dict(JUNCTION)
    for sec, upd in sections.items():
        dd[sec].update(upd)
    return load_design(dd)


#: Designs of every topology (invented scenarios), keyed by a short name.
CASES = {
    "buck ccm 200 kHz (demo)": dict(bridge={}),
    "buck light load, 10 skipped": dict(bridge={"mode": "light_load", "ls_pulse": 1e-6, "skip_cycles": 10}),
    "boost 24->48 V": dict(bridge={"topology": "sync_boost", "v_in": 24.0, "v_out": None}),
    "half bridge 500 kHz": dict(bridge={"topology": "half_bridge", "f_sw": 500e3, "v_out": None}),
    "full bridge 100 % command": dict(bridge={"topology": "full_bridge", "duty": 1.0, "v_out": None}),
    "three-phase 20 kHz, f_o 50 Hz, m 1.1": dict(bridge={"topology": "three_phase", "f_sw": 20e3, "m": 1.1,
                                                         "f_o": 50.0, "v_out": None, "phi": 0.5}),
    "three-phase 100 kHz, f_o 1 Hz": dict(bridge={"topology": "three_phase", "f_sw": 100e3, "m": 0.95,
                                                  "f_o": 1.0, "v_out": None}),
    "three-phase standstill, 47 nF": dict(bridge={"topology": "three_phase", "f_sw": 20e3, "m": 1.0,
                                                  "f_o": 0.0, "v_out": None}, option={"c": 47e-9}),
    "three-phase 100 kHz, f_o 0.05 Hz (f_sw/f_o 2e6)": dict(bridge={"topology": "three_phase", "f_sw": 100e3,
                                                                     "m": 0.95, "f_o": 0.05, "v_out": None}),
    "three-phase 20 kHz, f_o 1 Hz, m 1.0, 10 uF": dict(bridge={"topology": "three_phase", "f_sw": 20e3, "m": 1.0,
                                                              "f_o": 1.0, "v_out": None},
                                                      option={"c": 10e-6, "v_rating": 25.0}),
    "line leg 50 Hz / 100 kHz, 220 nF": dict(bridge={"topology": "line_leg", "f_sw": 100e3, "f_line": 50.0,
                                                   "v_out": None}, option={"c": 220e-9}),
    "line leg 50 Hz / 100 kHz, 100 uF": dict(bridge={"topology": "line_leg", "f_sw": 100e3, "f_line": 50.0,
                                                     "v_out": None},
                                             option={"c": 100e-6, "v_rating": 25.0}),
}


def _core(design):
    o = design.options[0]
    circ = B.bootstrap_circuit(design, o)

    def run():  # as evaluate_option does: the start-up reuses the steady orbit for its settled tail
        ss = B.steady_state(design, o, circ=circ)
        B.startup(design, o, circ=circ, steady=ss)
        B.duty_limit(design, circ, [required_rail(design), design.driver.uvlo_off])
    return run


def _ngspice_seconds(design) -> float | None:
    """Wall time of one ngspice transient of the start-up circuit (no output written)."""
    exe = ngspice_path()
    if exe is None:
        return None
    o = design.options[0]
    net = export_netlist(design, o.label, n_cycles=design.bridge.startup_cycles)
    text = net + ".control\nset noaskquit\nrun\nquit\n.endc\n.end\n"
    with tempfile.TemporaryDirectory() as tmp:
        cir = os.path.join(tmp, "bench.cir")
        with open(cir, "w") as fh:
            fh.write(text)
        t = time.perf_counter()
        subprocess.run([exe, "-b", cir], capture_output=True, text=True, check=True, cwd=tmp)
        return time.perf_counter() - t


def _times_ms(fn, repeat: int):
    ts = run_times(fn, repeat)
    return 1e3 * float(np.median(ts)), 1e3 * float(np.max(ts))


def main() -> None:
    with_spice = "--ngspice" in sys.argv
    print("bootstrap model benchmark (demo design, an invented scenario; "
          f"{demo_design().bridge.startup_cycles} start-up cycles)")
    for name, d in _designs().items():
        core = _median_ms(_core(d), 50)
        full = _median_ms(lambda: B.evaluate_option(d, d.options[0]), 30)
        print(f"  {name:20s} steady + start-up + duty limits: {core:7.2f} ms (median of 50)")
        print(f"  {name:20s} evaluate_option (everything):    {full:7.2f} ms (median of 30)")
        f = np.geomspace(20e3, 1e6, 1000)[:, None]
        h = np.linspace(0.02, 0.95, 1000)[None, :]
        t = time.perf_counter()
        B.rail_min_map(d, d.options[0], f, h)
        dt = time.perf_counter() - t
        print(f"  {name:20s} margin map 1000 x 1000:           {dt:7.3f} s  = {1e6 / dt:,.0f} points/s")
        if with_spice:
            t_sp = _ngspice_seconds(d)
            if t_sp is None:
                print("  ngspice not installed: no speed ratio")
                continue
            su = _median_ms(lambda: B.startup(d, d.options[0]), 30)
            print(f"  {name:20s} ngspice start-up (one run):      {t_sp:7.2f} s; model start-up {su:.2f} ms; "
                  f"ratio {t_sp / (su / 1e3):,.0f}x (start-up only), {t_sp / (core / 1e3):,.0f}x (with steady "
                  "state and duty limits)")
    print("evaluate_option over designs of every topology (invented scenarios), target <= 50 ms each;")
    print("  split: steady state over the analysis period / start-up / duty limits / topology terms (one run each)")
    worst = 0.0
    quick = "--quick" in sys.argv  # one run per design (the f_sw/f_o = 2e6 designs take seconds)
    for name, spec in CASES.items():
        for junction in (False, True):
            d = _variant(junction=junction, **spec)
            med, mx = _times_ms(lambda: B.evaluate_option(d, d.options[0]), 1 if quick else 5)
            worst = max(worst, med)
            kind = "exponential" if junction else "straight-line"
            parts = _split_ms(d)
            print(f"  {name:48s} {kind:13s} median {med:9.1f} ms  max {mx:9.1f} ms   "
                  + " / ".join(f"{x:.1f}" for x in parts))
    print(f"  slowest median: {worst:.1f} ms")


def _split_ms(design):
    """ms of the steady state, start-up, duty limits and topology terms of one design (one run each)."""
    o = design.options[0]
    circ = B.bootstrap_circuit(design, o)
    need = required_rail(design)
    out = []
    for fn in (lambda: B.steady_state(design, o, circ=circ), lambda: B.startup(design, o, circ=circ),
               lambda: B.duty_limit(design, circ, [need, design.driver.uvlo_off]),
               lambda: B.topology_terms(design, circ, None, need, None)):
        t = time.perf_counter()
        fn()
        out.append(1e3 * (time.perf_counter() - t))
    return out


if __name__ == "__main__":
    main()
