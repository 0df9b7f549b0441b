"""Blocking-voltage rating of the pump switches (optional ``v_rating_sw``).

The figure is Kirchhoff's voltage law (circuit-theory textbooks): while SW is
high, a switch that joins the flying capacitor to the other domain spans from a
ground-domain node at V_in to an SW-domain node at V_bus + V_out, and the
ground-return switch spans V_bus; V_bus + V_in bounds both for the three ratios
(V_out ≤ 2·V_in) and equals the first for the 1:2 doubler. The demo design is
a scenario of our own invention.
"""

import dataclasses

import pytest

from explorer import demo_design, replace_field
from explorer.options.charge_pump import evaluate_option


def with_rating(label, v_rating, derating=0.8):
    d = demo_design()
    opts = tuple(dataclasses.replace(o, v_rating_sw=v_rating) if o.label == label else o for o in d.options)
    return dataclasses.replace(d, options=opts, checks=dataclasses.replace(d.checks, switch_derating=derating))


def check_named(result, name):
    return [c for c in result.checks if c.name == name]


@pytest.mark.parametrize("label,v_in", [("pump 1:1", 12.0), ("pump 1:2 from 5 V", 5.5), ("pump 2:1 from 24 V", 24.0)])
def test_rating_checked_against_bus_plus_input(label, v_in):
    v_block = 48.0 + v_in  # demo bus 48 V
    # derated rating just above the blocking voltage: holds, no warning about it
    ok = evaluate_option(*_pair(with_rating(label, v_block / 0.8 * 1.01), label))
    (c,) = check_named(ok, "switch_v_block")
    assert c.value == pytest.approx(v_block, rel=1e-12)
    assert c.limit == pytest.approx(v_block * 1.01, rel=1e-12)
    assert c.ok and not any("block" in w for w in ok.warnings)
    # just below: a failed check, a plain warning and an infeasible verdict naming it
    bad = evaluate_option(*_pair(with_rating(label, v_block / 0.8 * 0.99), label))
    (c,) = check_named(bad, "switch_v_block")
    assert not c.ok and not bad.feasible
    assert any("V_bus + V_in" in w for w in bad.warnings)
    assert "block V_bus + V_in" in bad.verdict


def test_derating_is_applied():
    # a 60 V part on the 1:1 pump (60 V to block): passes at 100 % usable, fails at the default 80 %
    assert check_named(evaluate_option(*_pair(with_rating("pump 1:1", 60.0, 1.0), "pump 1:1")),
                       "switch_v_block")[0].ok
    assert not check_named(evaluate_option(*_pair(with_rating("pump 1:1", 60.0), "pump 1:1")),
                           "switch_v_block")[0].ok


def test_no_rating_no_check():
    d = demo_design()
    i = [o.label for o in d.options].index("pump 1:1")
    d = replace_field(d, f"options[{i}].v_rating_sw", None)
    r = evaluate_option(d, d.option("pump 1:1"))
    assert check_named(r, "switch_v_block") == []
    assert r.details.v_block_switch == pytest.approx(60.0, rel=1e-12)


def _pair(design, label):
    return design, design.option(label)
