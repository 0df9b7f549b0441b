"""Charge-pump models against the ngspice circuit simulator (2:1 and 1:2, three clocks each).

Reference: ngspice 39 transient of netlists written from the model's own parameters
(tests/reference/charge_pump/, regenerate.py there). Agreement required: 1 %.
"""

import importlib.util
import json
import os

import numpy as np
import pytest
from numpy.testing import assert_allclose

from explorer.options.charge_pump import pump_durations, r_out_engine
from explorer.engines.startup import startup
from explorer.spice import run_transient

HERE = os.path.join(os.path.dirname(__file__), "reference", "charge_pump")
_spec = importlib.util.spec_from_file_location("cp_regenerate", os.path.join(HERE, "regenerate.py"))
regen = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(regen)

with open(os.path.join(HERE, "reference.json")) as fh:
    REFERENCE = json.load(fh)["cases"]
CASES = {c["name"]: c for c in regen.cases()}


def model_figures(case: dict) -> dict:
    if case["kind"] == "rout":
        r, _ = r_out_engine(case["f_cp"], case["c_fly"], case["r_on"], ratio=case["ratio"],
                            dead_time_cp=case["dead_time_cp"], esr_fly=case["esr_fly"])
        return {"r_out": r}
    d = pump_durations(case["f_cp"], case["dead_time_cp"])
    s = startup(regen.network(case), d, [case["v_in"], case["i_load"]], cycles=np.array(case["sample_cycles"]) - 1)
    return {"v_out_cycle_end": s.at_phase_ends(["v(out)"])[0][:, -1]}


def compare(case: dict, ng: dict) -> None:
    mod = model_figures(case)
    for key, value in mod.items():
        assert_allclose(value, ng[key], rtol=0.01, err_msg=f"{case['name']}: {key}")


def test_reference_cases_are_current():
    assert set(CASES) == set(REFERENCE)
    for name, case in CASES.items():
        assert REFERENCE[name]["case"] == json.loads(json.dumps(case))


@pytest.mark.parametrize("name", sorted(CASES))
def test_netlist_written_from_the_model_matches_the_stored_one(name):
    with open(os.path.join(HERE, name + ".cir")) as fh:
        assert regen.netlist(CASES[name]) == fh.read()


@pytest.mark.parametrize("name", sorted(CASES))
def test_model_against_stored_ngspice_numbers(name):
    # reference: ngspice 39 (stored run, tests/reference/charge_pump/reference.json), within 1 %
    compare(CASES[name], REFERENCE[name]["ngspice"])


@pytest.mark.ngspice
@pytest.mark.parametrize("name", sorted(CASES))
def test_model_against_fresh_ngspice_run(name, ngspice):
    # reference: ngspice transient of the netlist written now from the model's parameters, within 1 %
    case = CASES[name]
    res = run_transient(regen.netlist(case), regen.vectors(case))
    compare(case, regen.measure(case, res))
