"""Hypothesis strategies: random design files of every topology and option kind.

The generated designs are meant to be valid by construction over wide but legal ranges
(1 kHz–5 MHz switching, 1 nF–1 mF capacitors, time constants many decades apart); the few
that still break a consistency rule must be refused with a DesignError, never anything else.
"""

import dataclasses
import math

import numpy as np
from hypothesis import strategies as st

TOPOLOGIES = ["sync_buck", "sync_boost", "half_bridge", "full_bridge", "three_phase", "line_leg"]
KINDS = ["bootstrap", "charge_pump", "isolated"]
#: Start-up cycles drawn by default (the design's own range reaches 1e6; the fuzz run keeps it short).
STARTUP_CYCLES = (50, 500, 2000)


def logu(lo, hi):
    """Log-uniform float in [lo, hi]."""
    import math
    return st.floats(math.log10(lo), math.log10(hi)).map(lambda e: float(10 ** e))


@st.composite
def bridges(draw, topologies=None, startup_cycles=STARTUP_CYCLES, max_periods=math.inf):
    topo = draw(st.sampled_from(list(topologies or TOPOLOGIES)))
    v_bus = draw(logu(5, 1000))
    f_sw = draw(logu(1e3, 5e6))
    T = 1 / f_sw
    b = {"topology": topo, "v_bus": v_bus, "f_sw": f_sw, "dead_time": draw(st.floats(0, 0.05)) * T,
         "t_edge": draw(st.floats(0.001, 0.05)) * T, "soft_start": draw(st.sampled_from([0, 10 * T, 200 * T])),
         "precharge": draw(st.sampled_from([0, 0.2 * T])), "v_undershoot": draw(st.sampled_from([0, 0.7, 2])),
         "startup_cycles": draw(st.sampled_from(list(startup_cycles)))}
    x = draw(st.floats(0.02, 0.98))
    if topo == "sync_buck":
        b["v_out"] = x * v_bus
        if draw(st.booleans()):
            b["mode"] = "light_load"
            b["ls_pulse"] = max(1e-12, (1 - x) * T * draw(st.floats(0.05, 0.5)) - 0.1 * T)
            b["skip_cycles"] = draw(st.sampled_from([0, 1, 10]))
    elif topo == "sync_boost":
        b["v_in"] = x * v_bus
    elif topo in ("half_bridge", "full_bridge"):
        b["duty"] = draw(st.sampled_from([x, 1.0, 0.5]))
    elif topo == "three_phase":
        b["m"] = draw(st.floats(0, 1.25))
        b["f_o"] = draw(st.sampled_from([0.0, f_sw / 400, f_sw / 37,
                                         50.0 if 200 < f_sw <= 50.0 * max_periods else 0.0]))
        b["third_harmonic"] = draw(st.booleans())
        b["phi"] = draw(st.floats(-1.5, 1.5))
    else:
        b["f_line"] = draw(st.sampled_from([50.0, 60.0, 400.0])) if f_sw > 1000 else f_sw / 10
    return b


def capacitor(draw, lo=1e-9, hi=1e-3, v=25):
    return {"c": draw(logu(lo, hi)), "esr": draw(logu(1e-4, 1)), "c_tol": draw(st.sampled_from([0, 0.1, 0.2])),
            "dielectric": draw(st.sampled_from(["X7R", "X5R", "C0G", "ideal", "Y5V"])),
            "v_rating": draw(st.sampled_from([None, v, 2 * v]))}


@st.composite
def options(draw, i, kinds=None, f_cp_min=1e3, junction=True):
    kind = draw(st.sampled_from(list(kinds or KINDS)))
    if kind == "bootstrap" and junction is None:  # no bootstrap here: draw another kind
        kind = draw(st.sampled_from([k for k in (kinds or KINDS) if k != "bootstrap"] or ["isolated"]))
    if kind == "bootstrap":
        cap = capacitor(draw)
        if not junction or draw(st.booleans()):
            diode = {"v_f": draw(st.floats(0.2, 1.2)), "r_d": draw(logu(1e-3, 10))}
        else:
            diode = {"i_s": draw(logu(1e-15, 1e-6)), "n": draw(st.floats(1, 2)), "r_s": draw(logu(1e-3, 10))}
        return {"label": f"opt{i}", "kind": kind, **cap, "r": draw(logu(1e-2, 1e3)), "diode": diode,
                "q_rr": draw(st.sampled_from([0, 1e-9, 20e-9])), "c_j": draw(st.sampled_from([0, 10e-12])),
                "i_leak": draw(st.sampled_from([0, 1e-6, 1e-3])), "v_rrm": draw(st.sampled_from([None, 100, 1200])),
                "v_clamp": draw(st.sampled_from([None, None, None, 5.0, 11.0, 15.0]))}
    if kind == "charge_pump":
        return {"label": f"opt{i}", "kind": kind, "ratio": draw(st.sampled_from(["1:1", "1:2", "2:1"])),
                "f_cp": draw(logu(f_cp_min, 5e6)), "c_fly": capacitor(draw), "c_out": capacitor(draw),
                "r_on": draw(logu(1e-2, 100)), "v_in": draw(st.sampled_from([None, 5.0, 24.0])),
                "c_par": draw(st.sampled_from([0, 10e-12])), "alpha_bp": draw(st.sampled_from([0, 0.02])),
                "q_g_sw": draw(st.sampled_from([0, 1e-9]))}
    p_rated = draw(logu(0.05, 10))
    eta = draw(st.floats(0.3, 0.95))
    return {"label": f"opt{i}", "kind": kind, "v_out": draw(st.floats(8, 20)), "p_rated": p_rated,
            "p_no_load": p_rated * (1 / eta - 1) * draw(st.floats(0, 0.9)), "eta_full": eta,
            "c_out": capacitor(draw), "c_iso": draw(logu(1e-13, 1e-10)), "v_iso": draw(logu(10, 1e4)),
            "cmti": draw(logu(1e9, 1e12)), "r_out": draw(st.sampled_from([0, 0.5, 5])),
            "t_start": draw(st.sampled_from([0, 1e-4])), "t_ramp": draw(st.sampled_from([0, 1e-3])),
            "v_in_rated": draw(st.sampled_from([None, 12.0]))}


@st.composite
def designs(draw, max_options=3, *, kinds=None, topologies=None, startup_cycles=STARTUP_CYCLES, f_cp_min=1e3,
            max_periods=math.inf, bootstrap_three_phase=True):
    """A design-file dict; ``kinds``/``topologies`` restrict the draw, ``startup_cycles`` its choices,
    ``f_cp_min`` the lowest pump clock drawn, ``max_periods`` the switching periods per three-phase
    fundamental (50 Hz output is drawn only while f_sw/50 stays within it); ``bootstrap_three_phase``
    False draws no bootstrap option for a three-phase leg, "linear" only straight-line diode ones."""
    uvlo_on = draw(st.floats(4, 12))
    n = draw(st.integers(1, max_options))
    bridge = draw(bridges(topologies, startup_cycles, max_periods))
    if bridge["topology"] != "three_phase" or bootstrap_three_phase is True:
        junction = True
    else:
        junction = False if bootstrap_three_phase == "linear" else None
    return {
        "format": "explorer-design", "version": 1, "title": "fuzz (generated)",
        "bridge": bridge,
        "gate": {"q_g": draw(logu(1e-10, 1e-6)), "v_gs_max": 20.0, "v_gs_on_min": draw(st.floats(3, 10)),
                 "r_gs": draw(st.sampled_from([None, 10e3, 100e3]))},
        "driver": {"i_q": draw(logu(1e-7, 1e-2)), "q_ls": draw(st.sampled_from([0, 1e-9])), "uvlo_on": uvlo_on,
                   "uvlo_off": uvlo_on * draw(st.floats(0.7, 0.98)), "v_bs_max": 22.0,
                   "t_on_min": draw(st.sampled_from([0, 50e-9]))},
        "aux": {"v_dd": draw(st.floats(5, 18)), "c_dd": draw(logu(1e-7, 1e-3)), "v_dd_tol": 0.05},
        "options": [draw(options(i, kinds, f_cp_min, junction)) for i in range(n)],
    }


def nonfinite_paths(obj, path="result") -> list:
    """Paths of every NaN or infinity inside a result object (dataclasses, dicts, sequences, arrays).

    Walks the objects themselves, not ``to_dict()``, which would turn NaN into None.
    """
    bad: list = []
    stack = [(obj, path)]
    while stack:
        x, p = stack.pop()
        if dataclasses.is_dataclass(x) and not isinstance(x, type):
            stack.extend((getattr(x, f.name), f"{p}.{f.name}") for f in dataclasses.fields(x))
        elif isinstance(x, dict):
            stack.extend((v, f"{p}[{k!r}]") for k, v in x.items())
        elif isinstance(x, (list, tuple)):
            stack.extend((v, f"{p}[{i}]") for i, v in enumerate(x))
        elif isinstance(x, np.ndarray):
            if x.dtype.kind in "fc" and not np.all(np.isfinite(x)):
                bad.append(p)
        elif isinstance(x, (float, np.floating)) and not math.isfinite(x):
            bad.append(p)
    return bad
