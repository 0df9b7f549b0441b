"""Regenerate the ngspice reference numbers of the charge-pump models.

Usage (from the repository root, ngspice installed)::

    python3 tests/reference/charge_pump/regenerate.py

For every case below the netlist is written from the model's own parameters
(``explorer.options.charge_pump.pump_network`` → ``explorer.engines.spice_text.to_spice``),
saved next to this script as ``<case>.cir``, run through ngspice, and the
figures read from the ngspice waveforms are written to ``reference.json``.
The test suite re-writes the netlists and fails if they differ from the saved
ones, and compares the model with the saved numbers (and, where ngspice is
installed, with a fresh ngspice run).

The part values are a scenario of our own invention.
"""

from __future__ import annotations

import json
import os
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.abspath(os.path.join(HERE, "..", "..", "..")))

from explorer.options.charge_pump import CIRCUITS, pump_durations, pump_network  # noqa: E402
from explorer.engines.spice_text import spice_t0, to_spice  # noqa: E402
from explorer.spice import run_transient  # noqa: E402

C_FLY = 220e-9
R_ON = 1.0
ESR_FLY = 0.01


def _corner(ratio: str) -> float:
    """Pump clock where R_SSL = R_FSL at 50 % phases: Σa_c²/(C·f) = 2·Σ R·a_r² [Hz]."""
    c = CIRCUITS[ratio]
    return sum(a * a for a in c.a_c) / (C_FLY * 2 * (R_ON * sum(a * a for a in c.a_r)))


def cases() -> list[dict]:
    """The reference cases: R_out at three clocks across the corner, and a loaded start-up."""
    out = []
    for ratio, v_in in (("2:1", 24.0), ("1:2", 5.5)):
        fc = _corner(ratio)
        m = CIRCUITS[ratio].m
        for tag, k in (("slow", 0.1), ("corner", 1.0), ("fast", 10.0)):
            f = float(f"{fc * k:.4g}")
            out.append(dict(name=f"rout_{ratio.replace(':', 'to')}_{tag}", kind="rout", ratio=ratio, v_in=v_in,
                            v_out=m * v_in - 1.0, f_cp=f, dead_time_cp=0.0, c_fly=C_FLY, r_on=R_ON,
                            esr_fly=ESR_FLY, cycles=60 if k < 5 else 150))
        out.append(dict(name=f"startup_{ratio.replace(':', 'to')}", kind="startup", ratio=ratio, v_in=v_in,
                        f_cp=500e3, dead_time_cp=20e-9, c_fly=C_FLY, r_on=R_ON, esr_fly=ESR_FLY,
                        c_out=1e-6, esr_out=0.005, i_load=0.01, cycles=60,
                        sample_cycles=[1, 2, 3, 5, 10, 20, 40, 60]))
    return out


def network(case: dict):
    if case["kind"] == "rout":
        return pump_network(case["ratio"], c_fly=case["c_fly"], r_on=case["r_on"], esr_fly=case["esr_fly"],
                            output="source")
    return pump_network(case["ratio"], c_fly=case["c_fly"], r_on=case["r_on"], esr_fly=case["esr_fly"],
                        output="load", c_out=case["c_out"], esr_out=case["esr_out"])


def netlist(case: dict) -> str:
    """The case's netlist, written from the model's parameters."""
    d = pump_durations(case["f_cp"], case["dead_time_cp"])
    u = [case["v_in"], case["v_out"]] if case["kind"] == "rout" else [case["v_in"], case["i_load"]]
    return to_spice(network(case), d, u, cycles=case["cycles"], title=f"charge pump {case['name']}")


def measure(case: dict, res: dict) -> dict:
    """Figures read from an ngspice run."""
    d = pump_durations(case["f_cp"], case["dead_time_cp"])
    T = float(d.sum())
    t0 = spice_t0(d)
    t = res["time"]
    if case["kind"] == "rout":
        i = res["i(vv_out)"]
        a, b = t0 + (case["cycles"] - 2) * T, t0 + case["cycles"] * T
        sel = (t >= a) & (t <= b)
        tt = np.concatenate(([a], t[sel], [b]))
        ii = np.concatenate(([np.interp(a, t, i)], i[sel], [np.interp(b, t, i)]))
        i_avg = float(np.trapezoid(ii, tt) / (b - a))
        m = CIRCUITS[case["ratio"]].m
        return {"i_out": i_avg, "r_out": (m * case["v_in"] - case["v_out"]) / i_avg}
    v = res["v(out)"]
    ks = case["sample_cycles"]
    ts = [t0 + k * T - 1e-3 * float(d[-1] if d[-1] > 0 else d[-2]) for k in ks]
    return {"v_out_cycle_end": [float(np.interp(x, t, v)) for x in ts], "cycles": ks}


def vectors(case: dict) -> list[str]:
    return ["i(vv_out)"] if case["kind"] == "rout" else ["v(out)"]


def main() -> None:
    ref = {"source": "ngspice transient of the netlists in this folder (see README.md)", "cases": {}}
    for case in cases():
        text = netlist(case)
        with open(os.path.join(HERE, case["name"] + ".cir"), "w") as fh:
            fh.write(text)
        res = run_transient(text, vectors(case))
        ref["cases"][case["name"]] = {"case": case, "ngspice": measure(case, res)}
        print(case["name"], ref["cases"][case["name"]]["ngspice"])
    with open(os.path.join(HERE, "reference.json"), "w") as fh:
        json.dump(ref, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
