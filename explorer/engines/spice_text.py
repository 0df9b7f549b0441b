"""SPICE netlist text of a switched-capacitor network, for an independent check with ngspice.

The netlist is written from the same :class:`~explorer.engines.network.Network`
the engine integrates, so the circuit is described once.
"""

from __future__ import annotations

import numpy as np

from ..errors import DesignError
from .elements import Cap, ISrc, Res, VSrc
from .network import Network

__all__ = ["to_spice", "network_lines", "spice_t0"]


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

    d = np.asarray(durations, float)
    T = float(d.sum())
    t0 = spice_t0(d)
    lines = [f"* {title}", "* written by explorer.engines.spice_text.to_spice from the model's own parameters"]
    lines += network_lines(net, d, u, x0=x0, t0=t0)
    step = float(d[d > 0].min()) / points_per_phase
    lines.append(f".options reltol={n(reltol)} abstol=1e-12 vntol=1e-9 method=gear")
    lines.append(f".tran {n(step)} {n(t0 + cycles * T)} 0 {n(step)} uic")
    return "\n".join(lines) + "\n"


def _same_node(element, node: str, phase) -> str:
    return node


def network_lines(net: Network, durations, u, *, x0=None, t0: float | None = None, node=_same_node,
                  skip=(), r_off: float | None = None) -> list[str]:
    """SPICE element lines of a network and the clock that drives its switches (no analysis lines).

    One pulse source ``VPH<p>`` (node ``ph<p>``, 0 → 1 V) per phase p in which a switch closes, high
    during phase p of every cycle from ``t0`` on (default :func:`spice_t0`; its edges take
    :func:`spice_t0` of the durations); a capacitor is a C with ``ic=`` (``x0``, default 0 V) in series
    with an R for its ESR (``<name>_esr``, none for esr = 0); a resistor an R; a switch a
    voltage-controlled switch per phase (its own ``sw`` model, ron = r, roff = ``r_off``); sources and
    loads DC sources at the inputs ``u``.

    Parameters
    ----------
    node : callable (element, node name, phase or None) -> str, optional
        The SPICE node of an element's terminal (a switch's per phase), for a network embedded in a
        larger netlist; default the network's own node names.
    skip : collection of str
        Element names left out (e.g. a load the larger netlist models itself).
    r_off : float [Ω], optional
        Off-resistance of the switches (default 1e6 Ω, written ``1e6``: the largest value with which
        ngspice 39 does not find the first step singular while a flying capacitor floats).
    """
    from ..spice import spice_number as n

    if net.batch_shape != ():
        raise DesignError("network", "a netlist takes one network (scalar element values)", net.batch_shape)
    d = np.asarray(durations, float)
    T = float(d.sum())
    x0 = np.zeros(net.n_x) if x0 is None else np.asarray(x0, float)
    u = np.asarray(u, float)
    tr = spice_t0(d)
    t0 = tr if t0 is None else t0
    roff = "1e6" if r_off is None else n(r_off)
    lines = []
    starts = np.concatenate(([0.0], np.cumsum(d)[:-1])) + t0
    used = sorted({p for e in net.elements if isinstance(e, Res) and e.closed is not None for p in e.closed})
    for p in used:
        if d[p] <= 0:
            continue
        lines.append(f"VPH{p} ph{p} 0 PULSE(0 1 {n(starts[p] - tr / 2)} {n(tr)} {n(tr)} {n(d[p] - tr)} {n(T)})")
    inp = {name: i for i, name in enumerate(net.inputs)}
    for e in net.elements:
        if e.name in skip:
            continue
        a, b = node(e, e.a, None), node(e, e.b, None)
        if isinstance(e, Cap):
            k = net.caps.index(e)
            if e.esr > 0:
                mid = f"{e.name}_esr"
                lines.append(f"C{e.name} {a} {mid} {n(e.c)} ic={n(x0[k])}")
                lines.append(f"R{e.name}_esr {mid} {b} {n(e.esr)}")
            else:
                lines.append(f"C{e.name} {a} {b} {n(e.c)} ic={n(x0[k])}")
        elif isinstance(e, Res):
            if e.closed is None:
                lines.append(f"R{e.name} {a} {b} {n(e.r)}")
                continue
            lines.append(f".model SWM_{e.name} sw(vt=0.5 vh=0 ron={n(e.r)} roff={roff})")
            for p in e.closed:
                if d[p] > 0:
                    lines.append(f"S{e.name}_{p} {node(e, e.a, p)} {node(e, e.b, p)} ph{p} 0 SWM_{e.name}")
        elif isinstance(e, VSrc):
            lines.append(f"V{e.name} {a} {b} DC {n(u[inp[e.input]])}")
        elif isinstance(e, ISrc):
            lines.append(f"I{e.name} {a} {b} DC {n(u[inp[e.input]])}")
    return lines


def spice_t0(durations) -> float:
    """Start of phase 0 of the first cycle in a :func:`to_spice` netlist [s]."""
    d = np.asarray(durations, float)
    return 1e-2 * float(d[d > 0].min())
