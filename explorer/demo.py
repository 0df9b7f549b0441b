"""The built-in demo design.

A scenario of our own invention, not a product or a reference design: a
48 V → 12 V synchronous buck at 200 kHz whose high-side gate needs 40 nC,
fed from a 12 V aux rail, with five floating-supply options side by side.
Part values are plausible round numbers chosen for the demo; the DC-bias
curve is illustrative (from memory of typical class-2 behaviour), not
data of any part.
"""

from __future__ import annotations

from .design import Design, load_design

__all__ = ["DEMO", "demo_design"]

_X7R_BIAS = [[0.0, 1.0], [0.25, 0.9], [0.5, 0.7], [1.0, 0.45]]

#: The demo design as a design-file dict (engineering strings, as a user would write it).
DEMO: dict = {
    "format": "explorer-design",
    "version": 1,
    "title": "Demo (invented scenario): 48 V to 12 V synchronous buck, 200 kHz",
    "bridge": {"topology": "sync_buck", "v_bus": 48, "f_sw": "200k", "dead_time": "40n",
               "t_edge": "10n", "v_out": 12, "mode": "ccm", "soft_start": "2m",
               "precharge": "5u", "v_undershoot": 1.0, "startup_cycles": 2000},
    "gate": {"q_g": "40n", "v_gs_max": 20, "v_gs_on_min": 8, "r_gs": "100k"},
    "driver": {"i_q": "100u", "q_ls": "1n", "uvlo_on": 8.5, "uvlo_off": 7.8, "v_bs_max": 20,
               "t_on_min": "100n"},
    "aux": {"v_dd": 12, "c_dd": "10u", "v_dd_tol": 0.05},
    "options": [
        {"label": "bootstrap 220n", "kind": "bootstrap", "c": "220n", "esr": "10m", "c_tol": 0.1,
         "dielectric": "X7R", "v_rating": 25, "dc_bias": _X7R_BIAS, "r": 2.2,
         "diode": {"v_f": 0.55, "r_d": 0.5}, "q_rr": "0", "c_j": "15p", "i_leak": "1u", "v_rrm": 100},
        {"label": "pump 1:1", "kind": "charge_pump", "ratio": "1:1", "f_cp": "500k",
         "c_fly": {"c": "100n", "esr": "10m", "dielectric": "X7R", "v_rating": 25},
         "c_out": {"c": "1u", "esr": "5m", "dielectric": "X7R", "v_rating": 25},
         "r_on": 2.0, "c_par": "5p", "alpha_bp": 0.001, "q_g_sw": "0.5n", "v_rating_sw": 100},
        {"label": "pump 1:2 from 5 V", "kind": "charge_pump", "ratio": "1:2", "v_in": 5.5, "f_cp": "500k",
         "c_fly": {"c": "220n", "esr": "10m", "dielectric": "X7R", "v_rating": 16},
         "c_out": {"c": "1u", "esr": "5m", "dielectric": "X7R", "v_rating": 25},
         "r_on": 1.0, "c_par": "5p", "alpha_bp": 0.001, "q_g_sw": "0.5n", "v_rating_sw": 100},
        {"label": "pump 2:1 from 24 V", "kind": "charge_pump", "ratio": "2:1", "v_in": 24, "f_cp": "500k",
         "c_fly": {"c": "220n", "esr": "10m", "dielectric": "X7R", "v_rating": 25},
         "c_out": {"c": "1u", "esr": "5m", "dielectric": "X7R", "v_rating": 25},
         "r_on": 1.0, "c_par": "5p", "alpha_bp": 0.001, "q_g_sw": "0.5n", "v_rating_sw": 100},
        {"label": "isolated 1 W", "kind": "isolated", "v_out": 12, "p_rated": 1.0, "p_no_load": 0.08,
         "eta_full": 0.8, "r_out": 1.0, "c_out": {"c": "4.7u", "esr": "5m", "dielectric": "X7R", "v_rating": 25},
         "c_iso": "10p", "v_iso": 1000, "cmti": "100G", "t_start": "1m", "t_ramp": "0.5m"},
    ],
}


def demo_design() -> Design:
    """The demo design (an invented scenario), validated."""
    return load_design(DEMO)
