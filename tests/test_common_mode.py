"""Common-mode functions against the capacitor laws of circuit theory.

Source for every check value here: the capacitor's constitutive relations
i = C·dv/dt and Q = C·V, and the energy Q·V = C·V² drawn from the source per
charge/discharge cycle (Alexander & Sadiku, *Fundamentals of Electric
Circuits*, 6th ed., 2017, §6.2; Erickson & Maksimović,
*Fundamentals of Power Electronics*, 3rd ed., 2020, ch. 4, switching loss).
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from explorer import common_mode as cm
from explorer import replace_field
from explorer.schedule import period_schedule


@pytest.fixture
def capacitor_laws():
    """Worked numbers from i = C·dv/dt, Q = C·V and P = C·V²·f (Alexander & Sadiku 2017, §6.2).

    10 pF at 50 V/ns: i = 10e-12 · 50e9 = 0.5 A.
    10 pF at 400 V:   Q = 4 nC per edge; at 100 kHz P = 10e-12 · 400² · 1e5 = 0.16 W.
    """
    return {"c": 10e-12, "dv_dt": 50e9, "i": 0.5, "v": 400.0, "f": 100e3, "q": 4e-9, "p": 0.16}


def test_cm_current_ten_pf_at_50_v_per_ns(capacitor_laws):
    # i = C·dv/dt (Alexander & Sadiku 2017, §6.2)
    k = capacitor_laws
    assert_allclose(cm.cm_current(k["c"], k["dv_dt"]), k["i"], rtol=1e-12)


def test_edge_charge_ten_pf_at_400_v(capacitor_laws):
    # Q = C·V (Alexander & Sadiku 2017, §6.2)
    k = capacitor_laws
    assert_allclose(cm.edge_charge(k["c"], k["v"]), k["q"], rtol=1e-12)


def test_cm_power_ten_pf_400_v_100_khz(capacitor_laws):
    # P = C·V²·f (Erickson & Maksimović 2020, ch. 4, switching loss)
    k = capacitor_laws
    assert_allclose(cm.cm_power(k["c"], k["v"], k["f"]), k["p"], rtol=1e-12)


def test_dv_dt_of_a_400_v_edge_in_8_ns(capacitor_laws):
    # dv/dt = ΔV/Δt for a linear edge: 400 V / 8 ns = 50 V/ns (definition of slope)
    assert_allclose(cm.edge_dv_dt(400.0, 8e-9), capacitor_laws["dv_dt"], rtol=1e-12)
    assert_allclose(cm.edge_dv_dt(-400.0, 8e-9), capacitor_laws["dv_dt"], rtol=1e-12)


def test_functions_broadcast():
    c = np.array([1e-12, 10e-12, 100e-12])[:, None]
    v = np.array([48.0, 400.0, 800.0])[None, :]
    assert cm.cm_power(c, v, 1e5).shape == (3, 3)
    assert cm.edge_charge(c, v).shape == (3, 3)
    assert cm.cm_current(c, cm.edge_dv_dt(v, 10e-9)).shape == (3, 3)
    # the (i, j) entry equals the scalar call (C·V²·f, same source)
    assert_allclose(cm.cm_power(c, v, 1e5)[1, 2], 10e-12 * 800.0 ** 2 * 1e5, rtol=1e-12)


def test_cmti_required_and_ratio():
    # the margin rule is a design choice (common practice, no source); the arithmetic is a product
    assert_allclose(cm.cmti_required(50e9, 2.0), 100e9, rtol=1e-12)
    assert_allclose(cm.cmti_ratio(100e9, 50e9), 2.0, rtol=1e-12)


def test_bus_power_equals_c_v2_f_for_a_full_swing(demo):
    # one rising edge 0 → V_bus per period: bus energy per period Q·V_bus = C·V_bus²
    # (Q = C·V, Alexander & Sadiku 2017, §6.2)
    d = replace_field(demo, "bridge.v_undershoot", 0.0)
    s = period_schedule(d)
    swings = cm.rising_edge_swings(s)
    assert_allclose(swings, [d.bridge.v_bus])
    p = cm.bus_power_per_edges(10e-12, d.bridge.v_bus, swings, s.period)
    assert_allclose(p, cm.cm_power(10e-12, d.bridge.v_bus, d.bridge.f_sw), rtol=1e-12)


def test_bus_power_counts_undershoot(demo):
    # the rise starts at −v_undershoot, so the bus supplies C·(V_bus + V_us) at V_bus (Q = C·ΔV)
    s = period_schedule(demo)
    v_us = demo.bridge.v_undershoot
    assert v_us > 0
    swings = cm.rising_edge_swings(s)
    assert_allclose(swings, [demo.bridge.v_bus + v_us])
    p = cm.bus_power_per_edges(10e-12, demo.bridge.v_bus, swings, s.period)
    assert_allclose(p, 10e-12 * demo.bridge.v_bus * (demo.bridge.v_bus + v_us) * demo.bridge.f_sw, rtol=1e-12)
