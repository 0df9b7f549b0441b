"""Benchmark of the bootstrap model (prints figures; not a test).

Run from the repository root::

    python3 bench/bench_bootstrap.py

Prints, for the demo design (an invented scenario) with its straight-line
diode and with an exponential junction diode in its place:

* steady state + start-up (2,000 cycles) + duty limits, median of many runs;
* the whole ``evaluate_option`` (adds stress, power and checks), median;
* the margin map: steady-state rail minimum over an f_sw × duty grid, points per second;
* ngspice on the same start-up circuit (2,000 cycles, same pulses), one run,
  and the speed ratio ngspice / model.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time

import numpy as np

sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..")))

from explorer import demo_design, load_design  # noqa: E402
from explorer.loads import required_rail  # noqa: E402
from explorer.options import bootstrap as B  # noqa: E402
from explorer.spice import ngspice_path  # noqa: E402


def _median_ms(fn, repeat: int) -> float:
    fn()
    ts = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t)
    return 1e3 * float(np.median(ts))


def _designs():
    d = demo_design()
    dd = d.to_dict()
    dd["options"][0]["diode"] = {"i_s": 1e-8, "n": 1.5, "r_s": 0.3}
    return {"straight-line diode": d, "exponential diode": load_design(dd)}


def _core(design):
    o = design.options[0]
    circ = B.bootstrap_circuit(design, o)

    def run():
        B.steady_state(design, o, circ=circ)
        B.startup(design, o, circ=circ)
        B._duty_limit(design, circ, [required_rail(design), design.driver.uvlo_off])
    return run


def _ngspice_seconds(design) -> float | None:
    """Wall time of one ngspice transient of the start-up circuit (no output written)."""
    exe = ngspice_path()
    if exe is None:
        return None
    o = design.options[0]
    su = B.startup(design, o)
    net = B.spice_netlist(design, o, n_cycles=design.bridge.startup_cycles, delivered=su.delivered,
                          tstep=20e-9)
    text = net + ".control\nset noaskquit\nrun\nquit\n.endc\n.end\n"
    with tempfile.TemporaryDirectory() as tmp:
        cir = os.path.join(tmp, "bench.cir")
        with open(cir, "w") as fh:
            fh.write(text)
        t = time.perf_counter()
        subprocess.run([exe, "-b", cir], capture_output=True, text=True, check=True, cwd=tmp)
        return time.perf_counter() - t


def main() -> None:
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
        t_sp = _ngspice_seconds(d)
        if t_sp is None:
            print("  ngspice not installed: no speed ratio")
        else:
            su = _median_ms(lambda: B.startup(d, d.options[0]), 30)
            print(f"  {name:20s} ngspice start-up (one run):      {t_sp:7.2f} s; model start-up {su:.2f} ms; "
                  f"ratio {t_sp / (su / 1e3):,.0f}x (start-up only), {t_sp / (core / 1e3):,.0f}x (with steady state "
                  "and duty limits)")


if __name__ == "__main__":
    main()
