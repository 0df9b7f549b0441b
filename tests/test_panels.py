"""The widget panels driven without a browser: set control values, compare with a direct evaluate.

What the panels show must be exactly what the public API computes for the same design (the panels
hold no physics), so every check here compares the panel's table, result and plot sources with
``explorer.evaluate`` of a design built independently with ``explorer.replace_field(s)``. Bad
input is compared with the DesignError text ``load_design`` gives for the same entry
(docs/bad-input.md).
"""

from __future__ import annotations

import copy
import html
import json
import threading
import time
import warnings

import numpy as np
import pytest

import explorer
import explorer.panels as panels
from explorer import DEMO, DesignError, evaluate, load_design, replace_field, replace_fields
from explorer.panels import form as form_mod
from explorer.panels import runner, widgets
from explorer.views.table import side_by_side_html

from test_bad_input import CASES, file_text  # the catalogue's cases (tests/ is on sys.path)


@pytest.fixture(autouse=True)
def _raise():
    """No swallowed callback errors in these tests (except where a test turns it off on purpose)."""
    with panels.raise_errors():
        yield


@pytest.fixture
def ex():
    return panels.explore(explorer.demo_design()).wait()


@pytest.fixture(scope="module")
def shared():
    """One explorer for the bad-input cases (a rejected entry leaves it as it was; each case restores
    the field it typed into)."""
    with panels.raise_errors():
        return panels.explore(explorer.demo_design()).wait()


def option_colors(c):
    return widgets.option_colors([r.label for r in c.options])


def _same(panel, design):
    """The panel shows exactly what evaluate gives for ``design``: design, JSON, table, plot sources."""
    with warnings.catch_warnings(record=True):  # model-validity warnings: the panel lists them too
        warnings.simplefilter("always")
        direct = evaluate(design)
    assert panel.design == design
    assert panel.result.to_json() == direct.to_json()
    assert panel.comparison.table.value == side_by_side_html(direct, option_colors(direct))
    mod = widgets.plots_module()
    if mod is not None:
        fresh = mod.comparison_plots(direct, max_points=widgets.PLOT_POINTS)
        assert list(panel.comparison.plots) == list(fresh)
        for name, p in fresh.items():
            shown = panel.comparison.plots[name].sources
            assert list(shown) == list(p.sources), name
            for key, src in p.sources.items():
                assert json.dumps(dict(shown[key].data), default=repr, sort_keys=True) == \
                    json.dumps(dict(src.data), default=repr, sort_keys=True), (name, key)


# ---------------------------------------------------------------- the field layer

def test_topology_fields_come_from_the_topology_table():
    from explorer.topology import TOPOLOGY
    for name, topo in TOPOLOGY.items():
        shown = form_mod.bridge_fields(name)
        assert set(topo.required) <= set(shown)
        assert topo.duty_field.split(".")[1] in shown
    assert "v_out" in form_mod.bridge_fields("sync_buck") and "v_out" not in form_mod.bridge_fields("three_phase")
    assert {"m", "f_o", "third_harmonic"} <= set(form_mod.bridge_fields("three_phase"))
    assert "f_line" in form_mod.bridge_fields("line_leg") and "f_line" not in form_mod.bridge_fields("half_bridge")


def test_fields_carry_unit_meaning_and_range_from_the_specs():
    f = {x.path: x for x in form_mod.section_fields("bridge", "sync_buck")}["bridge.f_sw"]
    assert f.unit == "Hz" and "switching frequency" in f.tooltip and "\u2264 1e+08 [Hz]" in f.tooltip
    o = {x.path: x for x in form_mod.option_fields(DEMO["options"][1], 1)}
    assert o["options[1].c_fly.c"].unit == "F" and o["options[1].ratio"].spec.choices == ("1:1", "1:2", "2:1")


def test_form_round_trips_the_design_and_keeps_typed_text():
    f = panels.DesignForm(DEMO)
    assert f.build() == load_design(DEMO)
    f.set("bridge.f_sw", "2.2u")  # parses, but 2.2 µHz is out of nothing; it is a valid number > 0
    assert f.build().bridge.f_sw == 2.2e-6
    f.set("bridge.f_sw", "fast")
    with pytest.raises(DesignError) as e:
        f.build()
    assert e.value.path == "bridge.f_sw"
    assert f.get("bridge.f_sw") == "fast"  # nothing typed is lost


# ---------------------------------------------------------------- controls vs a direct evaluate

def test_engineering_entry_in_the_design_panel_matches_evaluate(ex):
    ex.control("bridge.f_sw").value = "250k"
    ex.control("aux.v_dd").value = "12V"
    ex.control("gate.q_g").value = "45nC"
    ex.wait()
    _same(ex, replace_fields(explorer.demo_design(), {"bridge.f_sw": 250e3, "aux.v_dd": 12, "gate.q_g": 45e-9}))


def test_slider_writes_the_field_and_the_result_follows(ex):
    c = ex.design_panel.control("bridge.f_sw")
    c.slider.value = 300e3
    ex.wait()
    assert ex.control("bridge.f_sw").value == "300 kHz"
    _same(ex, replace_field(explorer.demo_design(), "bridge.f_sw", 300e3))
    d = ex.design_panel.control("bridge.v_out")  # the buck's duty-like variable has a slider too
    assert d.slider is not None


def test_option_editor_add_duplicate_relabel_remove(ex):
    ed = ex.option_editor
    ed.card_buttons(0)["duplicate"].click()
    ex.control("options[1].label").value = "bootstrap 470n"
    ex.control("options[1].c").value = "470n"
    ex.control("options[2].c_fly.c").value = "220nF"
    ex.wait()
    d = explorer.demo_design().to_dict()
    twin = copy.deepcopy(d["options"][0]) | {"label": "bootstrap 470n", "c": 470e-9}
    d["options"].insert(1, twin)
    d["options"][2]["c_fly"]["c"] = 220e-9
    _same(ex, load_design(d))
    ed.kind.value = "isolated"
    ed.add.click()
    ed.card_buttons(0)["remove"].click()
    ex.wait()
    labels = [r.label for r in ex.result.options]
    assert labels == ["bootstrap 470n", "pump 1:1", "pump 1:2 from 5 V", "pump 2:1 from 24 V", "isolated 1 W",
                      "isolated 1 W (2)"]
    d["options"].pop(0)
    d["options"].append(copy.deepcopy(d["options"][-1]) | {"label": "isolated 1 W (2)"})
    _same(ex, load_design(d))


def test_pump_ratio_chooser(ex):
    ex.control("options[1].ratio").value = "1:2"
    ex.wait()
    _same(ex, replace_field(explorer.demo_design(), "options[1].ratio", "1:2"))


def test_topology_chooser_shows_only_its_fields(ex):
    ex.design_panel.topology.value = "three_phase"
    ex.wait()
    assert ex.error is not None and ex.error.path == "bridge.m"  # required by the new topology, not typed yet
    with pytest.raises(KeyError):
        ex.control("bridge.v_out")
    ex.control("bridge.m").value = "0.9"
    ex.control("bridge.f_o").value = "50Hz"
    ex.wait()
    assert ex.error is None
    _same(ex, replace_fields(explorer.demo_design(), {"bridge.topology": "three_phase", "bridge.m": 0.9,
                                                      "bridge.f_o": 50.0}))
    ex.design_panel.topology.value = "sync_buck"  # back: v_out as it was; m and f_o kept (a buck ignores them)
    ex.wait()
    assert ex.control("bridge.v_out").value == "12 V"
    _same(ex, replace_fields(explorer.demo_design(), {"bridge.m": 0.9, "bridge.f_o": 50.0}))


# ---------------------------------------------------------------- bad input

def test_invalid_entry_shows_the_error_inline_and_keeps_the_last_result(ex):
    ex.control("bridge.f_sw").value = "250k"
    ex.wait()
    before = ex.result
    table = ex.comparison.table.value
    ex.control("options[0].c").value = "220nV"
    ex.wait()
    expected = "options[0].c: unit 'V' does not fit: this field takes a capacitance in F (got '220nV')"
    assert str(ex.error) == expected
    card = ex.option_editor.cards[0]
    assert "explorer-bad" in card.controls["options[0].c"].widget._dom_classes
    assert html.escape(expected) in card.error.value
    assert ex.result is before and ex.comparison.table.value == table  # last valid result stays
    assert ex.control("options[0].c").value == "220nV"  # nothing typed is lost
    ex.control("options[0].c").value = "220n"
    ex.wait()
    assert ex.error is None and "explorer-bad" not in card.controls["options[0].c"].widget._dom_classes
    _same(ex, replace_field(explorer.demo_design(), "bridge.f_sw", 250e3))


def test_cross_field_error_is_shown_at_the_field_it_names(ex):
    ex.control("driver.uvlo_off").value = "9"
    ex.wait()
    assert str(ex.error) == "driver.uvlo_off: must be below uvlo_on = 8.5 V (UVLO hysteresis) (got 9.0)"
    assert "explorer-bad" in ex.design_panel.control("driver.uvlo_off").widget._dom_classes


#: Catalogue cases a user can type into one field of the demo's panel: (class, path, text typed).
TYPED = [("non-numeric", "bridge.f_sw", "fast"), ("unknown suffix", "bridge.f_sw", "200x"),
         ("wrong unit", "options[0].c", "220nV"), ("wrong unit (plain number field)", "options[0].c_tol", "10V"),
         ("look-alike digits", "bridge.f_sw", "\uff12\uff10\uff10k"), ("negative", "gate.q_g", "-40n"),
         ("zero", "options[0].c", "0"), ("infinity (overflowing text)", "aux.v_dd", "1e400"),
         ("unknown dielectric", "options[0].dielectric", "X9Z"),
         ("inconsistent thresholds (UVLO)", "driver.uvlo_off", "9"),
         ("inconsistent thresholds (gate)", "gate.v_gs_on_min", "25"),
         ("inconsistent operating point (buck)", "bridge.v_out", "60"),
         ("dead time too long", "bridge.dead_time", "3u"),
         ("outside the models' range (f_sw)", "bridge.f_sw", "200M"),
         ("outside the models' range (pump clock)", "options[1].f_cp", "2G"),
         ("duplicate label", "options[1].label", "bootstrap 220n"),
         ("code in a number", "bridge.f_sw", "__import__('os').system('echo hi')"),
         ("over-long label", "options[0].label", "x" * 201)]


@pytest.mark.parametrize("name,path,typed", TYPED, ids=[t[0] for t in TYPED])
def test_catalogue_case_typed_into_its_field(shared, name, path, typed):
    """docs/bad-input.md, panel column "typed": the field's error line shows the catalogue's text
    for what was typed (the value shown in it is the text as typed), the last result stays."""
    ex = shared
    before = ex.result
    old = ex.control(path).value
    ex.control(path).value = typed
    ex.wait()
    with pytest.raises(DesignError) as direct:
        replace_field(explorer.demo_design(), path, typed)
    assert str(ex.error) == str(direct.value) and ex.error.path == path
    text = next(c[3] for c in CASES if c[0] == name)
    problem = text.split(" (got ")[0]
    assert str(ex.error).startswith(problem), (str(ex.error), text)
    assert ex.result is before
    ex.control(path).value = old
    ex.wait()
    assert ex.error is None and ex.result is before  # back to the valid design: nothing re-evaluated


@pytest.mark.parametrize("typed", ["nan", "inf", "-inf", "Infinity"])
def test_non_finite_text_is_refused_as_non_numeric(shared, typed):
    """docs/bad-input.md rows NaN/infinity (number): a float cannot be typed; the text is refused."""
    ex = shared
    before = ex.result
    ex.control("aux.v_dd").value = typed
    ex.wait()
    assert str(ex.error) == (f"aux.v_dd: expected a number such as 2.2e-6 or '2.2u' (suffixes f p n u/\u00b5 m k M G T) "
                             f"(got {typed!r})")
    assert ex.result is before
    ex.control("aux.v_dd").value = "12 V"
    ex.wait()
    assert ex.error is None


@pytest.mark.parametrize("case", [c for c in CASES if file_text(c[1]) is not None], ids=lambda c: c[0])
def test_catalogue_case_loaded_from_a_file(shared, case, tmp_path):
    """docs/bad-input.md, panel column "load": the status line shows the exact text load_design
    gives (the catalogue's, which tests/test_bad_input.py checks); the design on screen stays."""
    name, source, _, _ = case
    f = tmp_path / "d.json"
    f.write_text(file_text(source), encoding="utf-8")
    ex = shared
    before = ex.result
    ex.path.value = str(f)
    ex.load_button.click()
    ex.wait()
    with pytest.raises(DesignError) as direct:
        load_design(str(f))
    assert html.escape(f"not loaded: {direct.value}; the design on screen is unchanged") in ex.status.value
    assert ex.result is before and ex.design == explorer.demo_design()


# ---------------------------------------------------------------- load, save, summary

def test_save_and_load_buttons(ex, tmp_path):
    f = tmp_path / "mine.json"
    ex.control("bridge.f_sw").value = "150kHz"
    ex.path.value = str(f)
    ex.save_button.click()
    assert load_design(str(f)) == ex.design == replace_field(explorer.demo_design(), "bridge.f_sw", 150e3)
    saved = f.read_text(encoding="utf-8")
    ex.control("bridge.f_sw").value = "nonsense"
    ex.save_button.click()
    assert "not saved" in ex.status.value and f.read_text(encoding="utf-8") == saved  # file untouched
    other = panels.explore(explorer.demo_design())
    other.path.value = str(f)
    other.load_button.click()
    other.wait()
    assert other.control("bridge.f_sw").value == "150 kHz"
    _same(other, load_design(str(f)))


def test_static_summary_embeds_the_design_and_the_table(ex):
    text = ex.summary(plots=False)._repr_html_()
    assert side_by_side_html(ex.result, option_colors(ex.result)) in text
    pre = text.split("<pre class='explorer-design'>")[1].split("</pre>")[0]
    assert load_design(json.loads(html.unescape(pre))) == ex.design
    ex.summary_button.click()
    assert len(ex.output.outputs) == 1 and "text/html" in ex.output.outputs[0]["data"]


# ---------------------------------------------------------------- cautions

def test_cautions_for_high_voltage_and_isolated_options():
    assert "Isolated option shown" in panels.explore(DEMO, background=False).caution.value
    low = copy.deepcopy(DEMO)
    low["options"] = low["options"][:2]
    quiet = panels.explore(low, background=False)
    assert quiet.caution.value == ""
    quiet.control("bridge.v_bus").value = "400"
    quiet.control("bridge.v_out").value = "100"
    assert "High voltage: the bus is 400 V, above 60 V DC" in quiet.caution.value
    assert "local codes and licensed practice" in quiet.caution.value
    assert panels.ELV_DC_LIMIT == 60.0


# ---------------------------------------------------------------- errors and responsiveness

def test_raise_switch(monkeypatch):
    ex = panels.explore(explorer.demo_design(), background=False)
    bg = panels.explore(DEMO)

    def broken(*a, **k):
        raise RuntimeError("table broke")
    monkeypatch.setattr(widgets, "side_by_side_html", broken)
    with pytest.raises(RuntimeError, match="table broke"):
        ex.control("bridge.f_sw").value = "210k"
    with panels.raise_errors(False):
        ex.control("bridge.f_sw").value = "220k"
        assert "internal error, please report it: RuntimeError: table broke" in ex.status.value
        assert "Traceback" not in ex.status.value
    bg.control("bridge.f_sw").value = "230k"
    with pytest.raises(RuntimeError, match="table broke"):  # the worker thread's error, re-raised by wait()
        bg.wait()


def test_latest_change_wins_and_stale_results_are_dropped(monkeypatch):
    """Three designs submitted while the first is still evaluating: the second is never evaluated
    (coalesced), and only the first and the newest are delivered, in order."""
    release = threading.Event()
    started = []

    def slow(design, rank="overhead"):
        started.append(design.bridge.f_sw)
        if len(started) == 1:
            release.wait(10)
        return evaluate(design, rank=rank)
    monkeypatch.setattr(runner, "evaluate", slow)
    delivered = []
    ev = runner.Evaluator(lambda gen, r, err, w, s: delivered.append((gen, r.design.bridge.f_sw)))
    d = explorer.demo_design()
    ev.submit(replace_field(d, "bridge.f_sw", 100e3))
    while not started:
        time.sleep(0.001)
    ev.submit(replace_field(d, "bridge.f_sw", 110e3))
    ev.submit(replace_field(d, "bridge.f_sw", 120e3))
    assert ev.busy
    release.set()
    ev.wait()
    assert started == [100e3, 120e3]
    assert delivered == [(3, 120e3)]  # the first finished after newer ones came: dropped as stale
    assert not ev.busy


def test_busy_indicator_while_evaluating(monkeypatch):
    release = threading.Event()

    def slow(design, rank="overhead"):
        release.wait(10)
        return evaluate(design, rank=rank)
    ex = panels.explore(DEMO)
    monkeypatch.setattr(runner, "evaluate", slow)
    ex.control("bridge.f_sw").value = "210k"
    assert ex.busy and "computing" in ex.status.value
    release.set()
    ex.wait()
    assert "up to date" in ex.status.value and ex.result.design.bridge.f_sw == 210e3


def test_panels_usable_alone():
    f = panels.DesignForm(DEMO)
    seen = []
    dp = panels.DesignPanel(f, lambda p, v: seen.append(p))
    dp.control("bridge.f_sw").widget.value = "150k"
    assert seen == ["bridge.f_sw"] and f.build().bridge.f_sw == 150e3
    oe = panels.OptionEditor(f, lambda p, v: seen.append(p))
    oe.card_buttons(0)["remove"].click()
    assert seen[-1] == "options" and len(f.options) == 4
    cp = panels.ComparisonPanel(evaluate(f.build()))
    assert cp.comparison.design == f.build() and "<table" in cp.table.value


def test_margin_map_and_monte_carlo_on_request(ex):
    from explorer.sweep import margin_map
    from explorer.tolerance import monte_carlo
    a = ex.analysis
    a.option.value = "bootstrap 220n"
    a.map_button.click()
    a.wait()
    d = ex.design
    f = d.bridge.f_sw * np.geomspace(0.1, 10.0, a.MAP_POINTS)
    u = np.linspace(0.05, 0.98, a.MAP_POINTS)
    direct = margin_map(d, "bootstrap 220n", f, u)
    np.testing.assert_array_equal(a.result.margin, direct.margin)
    mod = widgets.plots_module()
    if mod is not None:
        fresh = mod.margin_map_plot(direct, d)
        for key, src in fresh.sources.items():
            assert json.dumps(dict(a.plot.sources[key].data), default=repr, sort_keys=True) == \
                json.dumps(dict(src.data), default=repr, sort_keys=True), key
    a.option.value = "pump 1:1"
    a.mc_button.click()
    a.wait()
    with warnings.catch_warnings(record=True):
        warnings.simplefilter("always")
        mc = monte_carlo(d, "pump 1:1", a.MC_SAMPLES, seed=1)
    np.testing.assert_array_equal(a.result.rail_min, mc.rail_min)
    assert a.progress.bar.value == a.MC_SAMPLES and "P(trip)" in a.message.value
    ex.option_editor.card_buttons(1)["remove"].click()  # the chooser follows the options
    ex.wait()
    assert "pump 1:1" not in a.option.options


def test_explore_takes_a_file_json_text_a_dict_or_a_design(tmp_path):
    f = tmp_path / "d.json"
    explorer.save_design(explorer.demo_design(), f, readable=True)
    for source in (str(f), json.dumps(DEMO), DEMO, explorer.demo_design()):
        p = panels.explore(source, background=False, plots=False)
        assert p.design == explorer.demo_design() and p.comparison.plots == {}
    with pytest.raises(DesignError):  # a bad starting design is the cell's error, not a panel's
        panels.explore({"format": "explorer-design"})
