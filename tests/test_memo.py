"""The memory of sub-results between evaluations (explorer.memo) must not change any figure or warning.

These are consistency checks of a caching layer against the same computation done afresh (no outside
source: the memory adds no physics; the physics is checked in the other test files).
"""

import json
import warnings

import numpy as np
import pytest

import explorer
from explorer import ModelValidityWarning, demo_design, memo, replace_field
from explorer.options.charge_pump import EDGE_PHASES, r_out_engine


def _json(comp) -> str:
    return json.dumps(comp.to_dict(), sort_keys=True)


def _fresh(design) -> str:
    memo.clear()
    return _json(explorer.evaluate(design))


def test_remembered_results_equal_fresh_ones_to_the_last_bit():
    d = demo_design()
    fresh = _fresh(d)
    again = _json(explorer.evaluate(d))  # every option remembered
    assert again == fresh
    assert memo.stats()["option results"]["hits"] == len(d.options)


def test_a_changed_field_gives_the_fresh_result_of_the_changed_design():
    # a bridge change misses every option result but reuses the pumps' start-up and R_out; an option
    # change recomputes that option only. Each must equal a computation from an empty memory.
    d = demo_design()
    explorer.evaluate(d)
    for path, value in (("bridge.f_sw", 150e3), ("options[0].c", 330e-9), ("options[1].c_fly.c", 220e-9),
                        ("gate.q_g", 30e-9), ("driver.i_q", 2e-4)):
        d2 = replace_field(d, path, value)
        explorer.evaluate(d)  # the original is in memory
        warm = _json(explorer.evaluate(d2))
        assert warm == _fresh(d2), path
        assert warm != _fresh(d), path  # the change is seen (the memory did not hand back the old design)


def test_only_the_changed_option_is_evaluated_again():
    d = demo_design()
    memo.clear()
    explorer.evaluate(d)
    explorer.evaluate(replace_field(d, "options[0].c", 330e-9))
    st = memo.stats()["option results"]
    assert st["misses"] == len(d.options) + 1
    assert st["hits"] == len(d.options) - 1


def test_bridge_change_reuses_the_pump_startup_and_r_out():
    d = demo_design()
    memo.clear()
    explorer.evaluate(d)
    explorer.evaluate(replace_field(d, "bridge.f_sw", 150e3))
    n_pumps = sum(o.kind == "charge_pump" for o in d.options)
    st = memo.stats()
    assert st["_startup_transient"]["hits"] == n_pumps and st["_startup_transient"]["misses"] == n_pumps
    assert st["r_out_engine"]["hits"] == n_pumps


def test_warnings_are_given_again_on_a_remembered_result():
    # a pump phase shorter than EDGE_PHASES edge times: the pump model warns (its own validity rule,
    # explorer.options.charge_pump.pump_validity; tests/test_charge_pump_validity.py checks the rule)
    d0 = demo_design()
    d = replace_field(d0, "options[1].f_cp", 1.0 / (2.0 * EDGE_PHASES * d0.bridge.t_edge * 0.99))
    memo.clear()
    with warnings.catch_warnings():  # first evaluation under a filter that hides everything
        warnings.simplefilter("ignore")
        explorer.evaluate(d)
    for _ in range(2):
        with pytest.warns(ModelValidityWarning) as rec:
            explorer.evaluate(d)
        assert any("pump 1:1" in str(w.message) for w in rec)


def test_remembered_arrays_cannot_be_changed_by_a_caller():
    d = demo_design()
    comp = explorer.evaluate(d)
    for r in comp.options:
        if r.startup is not None and r.startup.v is not None and np.size(r.startup.v):
            with pytest.raises(ValueError):
                r.startup.v[0] = 0.0
        if r.v is not None and np.size(r.v):
            with pytest.raises(ValueError):
                r.v[0] = 0.0


def test_arrays_pass_through_without_being_stored():
    memo.clear()
    c = np.array([100e-9, 220e-9])
    r, _ = r_out_engine(500e3, c, 2.0, ratio="1:1")
    assert r.shape == (2,)
    assert memo.stats()["r_out_engine"]["stored"] == 0
    r0, _ = r_out_engine(500e3, 100e-9, 2.0, ratio="1:1")
    assert r0 == r[0] or abs(r0 - r[0]) <= 1e-12 * r0  # batched and single solves agree to round-off
    assert memo.stats()["r_out_engine"]["stored"] == 1


def test_int_and_float_arguments_are_different_keys():
    memo.clear()
    a = r_out_engine(500e3, 100e-9, 2.0, ratio="1:1")
    b = r_out_engine(500e3, 100e-9, 2, ratio="1:1")
    assert a == b
    assert memo.stats()["r_out_engine"]["stored"] == 2


def test_the_memory_is_bounded():
    memo.clear()
    for k in range(200):
        r_out_engine(500e3 + k, 100e-9, 2.0, ratio="1:1")
    st = memo.stats()["r_out_engine"]
    assert st["stored"] == r_out_engine.memory.maxsize < 200
