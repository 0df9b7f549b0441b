"""The supply-model registry: a fourth family added at run time reaches every path through options/ alone.

The toy family is an invented one for this test: an ideal floating source ``v_set`` with a
reservoir capacitor that gives up the gate charge as a step at each HS turn-on, so its rail
minimum is ``v_set − (Q_G + Q_LS)/C`` (Q = C·V for a capacitor; any circuits textbook, e.g.
Alexander & Sadiku, *Fundamentals of Electric Circuits*, 6th ed., McGraw-Hill 2017, eq. 6.3).
What is checked is the plumbing: that the loader, evaluate, the corners, Monte Carlo, sweeps,
the margin map, sizing, the glossary and the netlist export all reach the family through the
registry, and say clearly where an optional path is missing.
"""

from __future__ import annotations

import copy
import dataclasses
from dataclasses import dataclass

import numpy as np
import pytest

import explorer
from explorer.capacitors import capacitance
from explorer.demo import DEMO
from explorer.design import Capacitor, spec_field
from explorer.errors import DesignError
from explorer.loads import charge_per_turn_on, required_rail
from explorer.options import NotSupported, SupplyModel, kinds, register, supply_model, unregister
from explorer.results import Check, OptionResult, RailStats, verdict_from

KIND = "toy_fixed_rail"
LABEL = "toy 14 V"


@dataclass(frozen=True, kw_only=True)
class ToyOption:
    """An ideal floating source with a reservoir capacitor (an invented family)."""

    label: str = spec_field("-", "label shown in the comparison", kind="text")
    kind: str = spec_field("-", "supply family", kind="choice", choices=(KIND,))
    v_set: float = spec_field("V", "source voltage", lo=0.0, lo_open=True, hi=100.0)
    c_res: Capacitor = spec_field("F", "reservoir capacitor", kind="capacitor")


def toy_rail_min(design, option) -> float:
    """v_set − (Q_G + Q_LS)/C_eff [V] (Q = C·V)."""
    c = float(capacitance(option.c_res.c, v_applied=option.v_set, v_rating=option.c_res.v_rating,
                          dc_bias=option.c_res.dc_bias))
    return option.v_set - charge_per_turn_on(design) / c


class ToyModel(SupplyModel):
    kind = KIND
    option_class = ToyOption
    capacitor_fields = ("c_res",)
    sized_capacitor = "c_res.c"

    def evaluate(self, design, option, *, corner="nominal"):
        lo = toy_rail_min(design, option)
        checks = (Check("rail_min", lo, required_rail(design), "min", "V", "rail stays above the requirement"),)
        ok, verdict = verdict_from(checks)
        return OptionResult(label=option.label, kind=option.kind, feasible=ok, verdict=verdict, warnings=(),
                            v_rail=RailStats(min=lo, max=option.v_set, mean=0.5 * (lo + option.v_set)),
                            efficiency=None, p_delivered=None, p_drawn=None, startup=None, duty=None,
                            r_out=0.0, capacitors=(), checks=checks)

    def netlist_settle_time(self, design, option, result, corner):
        return 0.0

    def netlist_lines(self, design, option, plan, corner):
        return ["* --- toy fixed rail", f"VFIX vb co DC {option.v_set}", "RCO co vs 1e-6"]


@pytest.fixture
def toy():
    register(ToyModel())
    try:
        yield
    finally:
        unregister(KIND)


def toy_design(**spread):
    d = copy.deepcopy(DEMO)
    d["options"] = d["options"][:1] + [{"label": LABEL, "kind": KIND, "v_set": 14.0,
                                         "c_res": {"c": "1u", "c_tol": 0.2, "dielectric": "ideal"}}]
    d["spread"] = dict(d.get("spread", {}), **spread)
    return d


def test_loader_evaluate_and_glossary_reach_the_new_family(toy):
    assert KIND in kinds()
    d = explorer.load_design(toy_design())
    opt = d.option(LABEL)
    assert isinstance(opt, ToyOption)
    r = explorer.evaluate(d)[LABEL]
    assert r.v_rail.min == pytest.approx(14.0 - charge_per_turn_on(d) / 1e-6, rel=1e-12)
    assert LABEL in explorer.evaluate(d).to_text()
    from explorer.glossary import glossary_markdown
    assert f'options[] kind "{KIND}"' in glossary_markdown()


def test_corners_and_monte_carlo_use_the_family_spreads(toy):
    from explorer.tolerance import monte_carlo, worst_case
    d = explorer.load_design(toy_design(q_g=0.1))
    w = worst_case(d, LABEL)
    # the rail minimum falls with less capacitance and more gate charge: the corner k_c low, q_g high
    assert "k_c low" in w.corner and "q_g high" in w.corner
    opt = d.option(LABEL)
    low = dataclasses.replace(d, gate=dataclasses.replace(d.gate, q_g=d.gate.q_g * 1.1))
    want = opt.v_set - charge_per_turn_on(low) / (opt.c_res.c * 0.8)
    assert w.rail_min == pytest.approx(want, rel=1e-12)
    mc = monte_carlo(d, LABEL, 20, seed=1)
    assert not mc.vectorised  # no batched path: Monte Carlo loops over evaluate
    assert np.all(mc.rail_min >= w.rail_min - 1e-12)
    with pytest.raises(NotSupported, match="no batched rail minimum"):
        supply_model(KIND).rail_min_batch(d, opt, None)


def test_sweep_margin_map_and_sizing_reach_the_new_family(toy):
    from explorer.sizing import size_capacitor
    from explorer.sweep import margin_map, sweep, temperature_fields
    d = explorer.load_design(toy_design())
    s = sweep(d, {"options[1].v_set": [12.0, 15.0]}, labels=[LABEL], figures=["rail_min"])
    q = charge_per_turn_on(d) / 1e-6
    np.testing.assert_allclose(s.figures[LABEL]["rail_min"], [12.0 - q, 15.0 - q], rtol=1e-12)
    assert temperature_fields(d, 80.0) == {"checks.t_amb": 80.0, "options[0].i_leak": pytest.approx(
        d.options[0].i_leak * d.spread.leak_per_100k ** 0.55)}
    m = margin_map(d, LABEL, [100e3, 200e3], [0.5])
    assert not m.vectorised  # no vectorised map: the general sweep
    np.testing.assert_allclose(m.rail_min, 14.0 - q, rtol=1e-12)
    res = size_capacitor(d, LABEL, lo=1e-9, hi=1e-5)
    assert res.field == "options[1].c_res.c" and res.margin >= 0 > res.margin_below


def test_netlist_export_uses_the_family_writer(toy):
    from explorer.netlist import export_netlist, netlist_probes
    d = explorer.load_design(toy_design())
    text = export_netlist(d, LABEL, n_cycles=5)
    assert "VFIX vb co DC 14.0" in text and text.splitlines()[0].endswith(f"({KIND})")
    assert netlist_probes(d, LABEL)["cap"] == "v(vb)-v(co)"


def test_netlist_of_a_family_without_a_writer_says_so(toy):
    class NoWriter(ToyModel):
        netlist_settle_time = SupplyModel.netlist_settle_time
        netlist_lines = SupplyModel.netlist_lines

    register(NoWriter())
    from explorer.netlist import export_netlist
    with pytest.raises(DesignError, match="no netlist writer"):
        export_netlist(explorer.load_design(toy_design()), LABEL, n_cycles=5)


def test_after_unregister_the_kind_is_refused():
    register(ToyModel())
    unregister(KIND)
    assert KIND not in kinds()
    with pytest.raises(DesignError, match=r"options\[1\]\.kind"):
        explorer.load_design(toy_design())
