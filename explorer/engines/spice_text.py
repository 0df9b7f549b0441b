"""SPICE netlist text of a switched-capacitor network, for an independent check with ngspice.

The netlist is written from the same :class:`~explorer.engines.network.Network`
the engine integrates, so the circuit is described once.
"""

from __future__ import annotations

import numpy as np

from ..errors import DesignError
from .elements import Cap, ISrc, Res, VSrc
from .network import Network

__all__ = ['to_spice', 'spice_t0']


def to_spice(net: Network, durations, u, *, cycles: int, x0=None, title: str = "switched-capacitor network",
             points_per_phase: int = 200, reltol: float = 1e-5) -> str:
    """A SPICE netlist of the same network for an independent transient check (ngspice).

    Capacitors become C (with ``ic=``) plus a series R for the ESR; switches
    become voltage-controlled switches (``sw`` model, ron = r, roff = 1e6 Ω, the largest value with
    which ngspice 39 does not find the first step singular while a flying capacitor floats;
    it leaks V/1e6 through each open switch)
    driven by one pulse source per phase, so a switch closed in phase p
    conducts exactly during that phase; sources and loads become DC sources.
    Phase 0 of the first cycle starts at t = ``t0`` = 1e-2 of the shortest
    phase after the start (switches are open before), the time the control
    pulses need to rise; :func:`spice_t0` returns it. The text ends with a
    ``.tran … uic`` line and no ``.end`` (as :func:`explorer.spice.run_transient`
    expects).

    Parameters
    ----------
    durations : array_like (n_phases,) [s]
    u : array_like (n_u,) [V]/[A]
    cycles : int
        Cycles to simulate.
    x0 : array_like (n_x,), optional
        Initial capacitor voltages [V] (default 0).
    """
    from ..spice import spice_number as n

    if net.batch_shape != ():
        raise DesignError("network", "a netlist takes one network (scalar element values)", net.batch_shape)
    d = np.asarray(durations, float)
    T = float(d.sum())
    x0 = np.zeros(net.n_x) if x0 is None else np.asarray(x0, float)
    u = np.asarray(u, float)
    t0 = spice_t0(d)
    tr = t0
    lines = [f"* {title}", "* written by explorer.engines.spice_text.to_spice from the model's own parameters"]
    starts = np.concatenate(([0.0], np.cumsum(d)[:-1])) + t0
    used = sorted({p for e in net.elements if isinstance(e, Res) and e.closed is not None for p in e.closed})
    for p in used:
        if d[p] <= 0:
            continue
        lines.append(f"VPH{p} ph{p} 0 PULSE(0 1 {n(starts[p] - tr / 2)} {n(tr)} {n(tr)} {n(d[p] - tr)} {n(T)})")
    inp = {name: i for i, name in enumerate(net.inputs)}
    for e in net.elements:
        if isinstance(e, Cap):
            k = net.caps.index(e)
            if e.esr > 0:
                mid = f"{e.name}_esr"
                lines.append(f"C{e.name} {e.a} {mid} {n(e.c)} ic={n(x0[k])}")
                lines.append(f"R{e.name}_esr {mid} {e.b} {n(e.esr)}")
            else:
                lines.append(f"C{e.name} {e.a} {e.b} {n(e.c)} ic={n(x0[k])}")
        elif isinstance(e, Res):
            if e.closed is None:
                lines.append(f"R{e.name} {e.a} {e.b} {n(e.r)}")
                continue
            lines.append(f".model SWM_{e.name} sw(vt=0.5 vh=0 ron={n(e.r)} roff=1e6)")
            for p in e.closed:
                if d[p] > 0:
                    lines.append(f"S{e.name}_{p} {e.a} {e.b} ph{p} 0 SWM_{e.name}")
        elif isinstance(e, VSrc):
            lines.append(f"V{e.name} {e.a} {e.b} DC {n(u[inp[e.input]])}")
        elif isinstance(e, ISrc):
            lines.append(f"I{e.name} {e.a} {e.b} DC {n(u[inp[e.input]])}")
    step = float(d[d > 0].min()) / points_per_phase
    lines.append(f".options reltol={n(reltol)} abstol=1e-12 vntol=1e-9 method=gear")
    lines.append(f".tran {n(step)} {n(t0 + cycles * T)} 0 {n(step)} uic")
    return "\n".join(lines) + "\n"


def spice_t0(durations) -> float:
    """Start of phase 0 of the first cycle in a :func:`to_spice` netlist [s]."""
    d = np.asarray(durations, float)
    return 1e-2 * float(d[d > 0].min())
