"""Regenerate the ngspice reference numbers of the bootstrap start-up circuit.

Run from the repository root::

    python3 tests/reference/bootstrap/regenerate.py

It loads ``design.json`` (an invented scenario), lets the model decide which
high-side pulses are delivered during start-up (UVLO), writes the circuit with
:func:`explorer.netlist.export_netlist` (the project's one netlist writer) to
``startup.cir`` (so the netlist always follows the model's own parameters), runs ngspice (39 was used)
and stores the figures the tests compare in ``reference.json``.
"""

from __future__ import annotations

import json
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.abspath(os.path.join(HERE, "..", "..", "..")))

from explorer.design import load_design  # noqa: E402
from explorer.netlist import export_netlist, netlist_probes  # noqa: E402
from explorer.spice import run_transient  # noqa: E402

import numpy as np  # noqa: E402

#: Vector of the capacitor voltage (the model's state; the terminal rail adds the ESR drop).
CAP = "v(vb)-v(cb)"


def reference_figures(design, option, wave: dict) -> dict:
    """Figures of one ngspice waveform: first crossing of UVLO-on and the last period's extremes of the
    capacitor voltage (the model's state; the terminal rail adds the ESR drop)."""
    t = wave["time"]
    v = wave[CAP]
    th = design.driver.uvlo_on
    k = int(np.argmax(v >= th))
    t_cross = float(t[k - 1] + (th - v[k - 1]) * (t[k] - t[k - 1]) / (v[k] - v[k - 1]))
    period = 1.0 / design.bridge.f_sw
    last = t >= t[-1] - period
    return {"t_uvlo": t_cross, "v_max_last_period": float(v[last].max()),
            "v_min_last_period": float(v[last].min())}


def netlist_and_run(design, option):
    net = export_netlist(design, option.label, n_cycles=design.bridge.startup_cycles)
    assert netlist_probes(design, option.label)["cap"] == CAP
    wave = run_transient(net, [CAP])
    return net, wave


def main() -> None:
    design = load_design(os.path.join(HERE, "design.json"))
    option = design.options[0]
    net, wave = netlist_and_run(design, option)
    with open(os.path.join(HERE, "startup.cir"), "w") as fh:
        fh.write(net)
    fig = reference_figures(design, option, wave)
    fig["ngspice"] = wave["log"].split("\n")[0][:80] if wave["log"] else ""
    with open(os.path.join(HERE, "reference.json"), "w") as fh:
        json.dump({k: v for k, v in fig.items() if k != "ngspice"}, fh, indent=2)
        fh.write("\n")
    print(json.dumps(fig, indent=2))


if __name__ == "__main__":
    main()
