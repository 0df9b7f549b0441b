"""Numerical robustness: extreme but legal designs give finite answers in bounded time.

Regression tests for the failures the fuzz run found live here too, each next to the
design that showed it. The design values are invented test scenarios.
"""

import copy
import json
import warnings

import pytest

import explorer
from explorer import DEMO, ExplorerWarning, evaluate, load_design
from strategies import nonfinite_paths


def _evaluate_quietly(design):
    """evaluate() with the package's own warnings recorded, not raised (other warnings still fail)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("error")
        warnings.simplefilter("always", ExplorerWarning)
        result = evaluate(design)
    return result, [w for w in caught if issubclass(w.category, ExplorerWarning)]


def _isolated_only(**bridge):
    d = copy.deepcopy(DEMO)
    d["bridge"].update(bridge)
    d["options"] = [o for o in d["options"] if o["kind"] == "isolated"]
    return d


def test_isolated_with_no_hs_turn_on_reports_no_infinity():
    """Regression (fuzz run): a half bridge at duty 1 has no HS turn-on, so the isolated module's
    f_sw/Q_G limits are unbounded; they were reported as inf, which the result contract forbids
    (None where a figure is unbounded)."""
    d = _isolated_only(topology="half_bridge", duty=1.0, v_out=None)
    r, _ = _evaluate_quietly(d)
    res = r.options[0]
    assert res.duty.topology["f_sw_max"] is None and res.duty.topology["q_g_max"] is None
    assert nonfinite_paths(res) == []


@pytest.mark.parametrize("text", ["\uff12\uff10\uff10k", "\u0662\u0660\u0660k", "200\u00a0k"])
def test_look_alike_digits_are_refused(text):
    """Regression (hostile-input review): ``\\d`` matched digits of every script, so full-width
    '２００k' or Arabic-Indic '٢٠٠k' was read as 200 kHz although it is not what the format allows
    (ASCII numbers with an SI suffix)."""
    with pytest.raises(explorer.DesignError) as e:
        explorer.parse_eng(text, "bridge.f_sw")
    assert e.value.path == "bridge.f_sw"


# --------------------------------------------------------------------------- model-validity warnings

def test_edge_time_longer_than_an_interval_warns():
    d = copy.deepcopy(DEMO)
    d["bridge"]["t_edge"] = "2u"  # the demo buck's HS pulse is 1.25 µs
    with pytest.warns(explorer.ModelValidityWarning, match="edge time t_edge = 2e-06 s is longer than the shortest"):
        evaluate(d)


def test_dead_time_longer_than_a_pulse_warns():
    d = copy.deepcopy(DEMO)
    d["bridge"].update(v_out=0.5, dead_time="100n")   # HS pulse 52 ns at 200 kHz
    d["driver"]["t_on_min"] = 0
    with pytest.warns(explorer.ModelValidityWarning, match="dead time 1e-07 s is longer than the shortest high-side pulse"):
        evaluate(d)


def test_demo_gives_no_schedule_warning():
    from explorer.schedule import schedule_validity
    assert schedule_validity(explorer.demo_design()) == []


# --------------------------------------------------------------------------- extreme but legal designs

def _extreme(f_sw: float, c: float, topology: str = "sync_buck") -> dict:
    """The demo (an invented scenario) pushed to a corner of the legal range."""
    d = copy.deepcopy(DEMO)
    T = 1.0 / f_sw
    d["bridge"].update(f_sw=f_sw, dead_time=0.01 * T, t_edge=0.002 * T, soft_start=20 * T, precharge=0.1 * T,
                       startup_cycles=300)
    d["driver"]["t_on_min"] = 0
    if topology != "sync_buck":
        d["bridge"].update(topology=topology, v_out=None, mode="ccm")
        d["bridge"].update({"sync_boost": {"v_in": 24}, "half_bridge": {}, "full_bridge": {"duty": 0.97},
                            "three_phase": {"m": 1.1, "f_o": f_sw / 100, "third_harmonic": True},
                            "line_leg": {"f_line": min(50.0, f_sw / 10)}}[topology])
    for o in d["options"]:
        if o["kind"] == "bootstrap":
            o["c"] = c
            o["r"] = 1e3 if c > 1e-6 else 0.1   # tau from 1e-10 s to 1 s against T = 0.2 µs…1 ms
        elif o["kind"] == "charge_pump":
            o["c_fly"]["c"] = c
            o["c_out"]["c"] = c
            o["f_cp"] = f_sw
        else:
            o["c_out"]["c"] = c
    return d


@pytest.mark.slow
@pytest.mark.parametrize("f_sw", [1e3, 5e6])
@pytest.mark.parametrize("c", [1e-9, 1e-3])
@pytest.mark.parametrize("topology", ["sync_buck", "sync_boost", "half_bridge", "full_bridge", "three_phase",
                                      "line_leg"])
def test_extreme_designs_give_finite_answers(f_sw, c, topology):
    """1 kHz and 5 MHz switching, 1 nF and 1 mF capacitors, loop time constants 10⁶ and more apart
    from the switching period: every option evaluates (no exception), every figure finite."""
    r, _ = _evaluate_quietly(_extreme(f_sw, c, topology))
    for res in r.options:
        assert res.error is None, res.error
        assert nonfinite_paths(res) == [], (res.label, nonfinite_paths(res)[:5])
        if res.efficiency is not None:
            assert 0.0 < res.efficiency <= 1.0, (res.label, res.efficiency)
    json.loads(r.to_json())


@pytest.mark.slow
def test_line_leg_50hz_at_100khz_evaluates():
    """A line leg at 50 Hz with 100 kHz switching: finite answers (the time is measured in the
    report, docs/reliability.md; speed is not asserted in unit tests)."""
    d = copy.deepcopy(DEMO)
    d["bridge"].update(topology="line_leg", f_line=50.0, f_sw="100k", v_out=None, startup_cycles=20)
    r, _ = _evaluate_quietly(d)
    for res in r.options:
        assert res.error is None and nonfinite_paths(res) == [], res.label


@pytest.mark.parametrize("source", [("a", "tuple"), 42, None, b"{}", ["format"]])
def test_load_design_of_a_wrong_python_type_is_a_design_error(source):
    """Regression (found while replaying a fuzz example): load_design of a tuple raised a bare
    TypeError from os.path.getsize instead of the project's DesignError."""
    with pytest.raises(explorer.DesignError, match="expected a design: a file path, JSON text, a dict or a Design"):
        load_design(source)
