"""The plots (explorer.views.plots): each plot's sources hold the result's own arrays and figures.

No pixels here: the data a figure draws is compared with the result it was made from, on the demo
(an invented scenario) and on two of its variants from tests/reference/golden/make_golden.py (a
three-phase leg and a line-frequency leg). The browser test is tests/test_plots_browser.py.
"""

import dataclasses
import importlib.util
import pathlib
import subprocess
import sys
import warnings

import numpy as np
import pytest

pytest.importorskip("bokeh")

import explorer  # noqa: E402
from explorer.design import replace_fields  # noqa: E402
from explorer.topology import operating_share  # noqa: E402
from explorer.views import plots  # noqa: E402

_GOLDEN = pathlib.Path(__file__).resolve().parent / "reference" / "golden" / "make_golden.py"
_spec = importlib.util.spec_from_file_location("make_golden", _GOLDEN)
make_golden = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(make_golden)

NAMES = ("demo", "three_phase", "line_leg")


@pytest.fixture(scope="module")
def comparisons():
    out = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", explorer.ModelValidityWarning)
        for name in NAMES:
            out[name] = explorer.evaluate(make_golden.designs()[name])
    return out


def _rows(src, key="label"):
    return list(src.data[key])


# --------------------------------------------------------------------------- start-up and steady state

@pytest.mark.parametrize("name", NAMES)
def test_startup_sources_are_the_startup_waveforms(comparisons, name):
    c = comparisons[name]
    p = plots.startup_plot(c)
    lines = p.sources["lines"].data
    with_wave = [r for r in c.options if r.startup is not None and r.startup.t.size]
    assert list(lines["label"]) == [r.label for r in with_wave]
    for r, xs, ys in zip(with_wave, lines["xs"], lines["ys"]):
        np.testing.assert_array_equal(xs, r.startup.t)
        np.testing.assert_array_equal(ys, r.startup.v)
    lv = p.sources["levels"].data
    d = c.design
    assert dict(zip(lv["name"], lv["y"])) == {"UVLO on": d.driver.uvlo_on, "UVLO off": d.driver.uvlo_off,
                                              "required rail": explorer.loads.required_rail(d)}
    hit = {lab: t for lab, t in zip(p.sources["uvlo"].data["label"], p.sources["uvlo"].data["t"])}
    assert hit == {r.label: r.startup.t_uvlo for r in c.options if r.startup and r.startup.t_uvlo is not None}


def test_startup_log_time_leaves_out_t0_only(comparisons):
    c = comparisons["demo"]
    p = plots.startup_plot(c, log_time=True)
    assert p.figure.x_scale.__class__.__name__ == "LogScale"
    for r, xs, ys in zip(c.options, p.sources["lines"].data["xs"], p.sources["lines"].data["ys"]):
        k = r.startup.t > 0
        np.testing.assert_array_equal(xs, r.startup.t[k])
        np.testing.assert_array_equal(ys, r.startup.v[k])


@pytest.mark.parametrize("name", NAMES)
def test_steady_sources_are_the_rail_waveforms(comparisons, name):
    c = comparisons[name]
    p = plots.steady_plot(c)
    lines = p.sources["lines"].data
    with_wave = [r for r in c.options if r.t.size]
    assert list(lines["label"]) == [r.label for r in with_wave]
    for r, xs, ys in zip(with_wave, lines["xs"], lines["ys"]):
        np.testing.assert_array_equal(xs, r.t)
        np.testing.assert_array_equal(ys, r.v)
    assert explorer.loads.required_rail(c.design) in list(p.sources["levels"].data["y"])


def test_thin_keeps_every_bucket_extreme():
    t = np.linspace(0.0, 1.0, 10_001)
    v = np.sin(40 * np.pi * t) + 0.01 * np.cos(977 * t)
    tt, vv = plots.thin(t, v, 400)
    assert tt.size <= 402 and tt[0] == t[0] and tt[-1] == t[-1]
    assert np.all(np.diff(tt) > 0)
    assert vv.max() == v.max() and vv.min() == v.min()  # the peaks survive
    same = plots.thin(t, v, None)
    assert same[0] is not None and np.array_equal(same[0], t)


# --------------------------------------------------------------------------- colours, units, update

def test_colors_stable_per_label_across_plots(comparisons):
    c = comparisons["demo"]
    colors = plots.option_colors([r.label for r in c.options])
    assert len(set(colors.values())) == len(colors)  # five options, five colours
    assert list(colors.values()) == list(plots.PALETTE[:len(colors)])
    for p in plots.comparison_plots(c).values():
        for src in p.sources.values():
            if "label" in src.data and "color" in src.data:
                for lab, col in zip(src.data["label"], src.data["color"]):
                    assert colors[lab] == col


def test_units_with_prefixes_in_axis_labels(comparisons):
    ps = plots.comparison_plots(comparisons["demo"])
    assert ps["startup"].figure.xaxis[0].axis_label == "time [ms]"  # 10 ms of start-up
    assert ps["steady"].figure.xaxis[0].axis_label == "time [\u00b5s]"  # one 5 µs period
    for p in ps.values():
        for ax in (*p.figure.xaxis, *p.figure.yaxis):
            if ax.axis_label is not None and ax.visible:
                assert ax.axis_label.endswith("]") and "[" in ax.axis_label, ax.axis_label


def test_update_after_changed_design_keeps_sources(comparisons):
    c = comparisons["demo"]
    ps = plots.comparison_plots(c)
    before = {k: {n: s for n, s in p.sources.items()} for k, p in ps.items()}
    d2 = replace_fields(c.design, {"options[0].c": 470e-9, "bridge.f_sw": 100e3})
    c2 = explorer.evaluate(d2)
    for k, p in ps.items():
        p.update(c2)
        for n, s in p.sources.items():
            assert s is before[k][n]  # the same objects, new data
    np.testing.assert_array_equal(ps["steady"].sources["lines"].data["xs"][0], c2.options[0].t)
    np.testing.assert_array_equal(ps["startup"].sources["lines"].data["ys"][0], c2.options[0].startup.v)
    assert ps["steady"].figure.xaxis[0].axis_label == "time [\u00b5s]"
    assert "10 \u00b5s" in ps["steady"].figure.title.text  # 100 kHz: a 10 µs period


def test_update_after_removing_and_adding_options(comparisons):
    c = comparisons["demo"]
    ps = plots.comparison_plots(c)
    fewer = dataclasses.replace(c.design, options=c.design.options[1:3])
    c_fewer = explorer.evaluate(fewer)
    for p in ps.values():
        p.update(c_fewer)
    labels = [o.label for o in fewer.options]
    assert _rows(ps["steady"].sources["lines"]) == labels
    assert list(ps["steady"].sources["lines"].data["color"]) == list(plots.PALETTE[:2])
    renamed = dataclasses.replace(fewer.options[0], label="pump renamed")
    more = dataclasses.replace(c.design, options=(*c.design.options, renamed))
    c_more = explorer.evaluate(more)
    for p in ps.values():
        p.update(c_more)
    assert _rows(ps["startup"].sources["lines"]) == [o.label for o in more.options]


def test_import_explorer_still_loads_no_bokeh():
    code = ("import sys, explorer, explorer.views; explorer.evaluate(explorer.DEMO); "
            "print('bokeh' in sys.modules)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == "False"


def test_operating_share_inverts_the_duty_setting(comparisons):
    # the sweep's duty alias sets duty_field = duty_setting(share): the share read back is the same
    for name, c in comparisons.items():
        b = c.design.bridge
        h = operating_share(b)
        from explorer.sweep import duty_field
        path, value = duty_field(c.design, h)
        now = getattr(b, path.split(".", 1)[1])
        assert value == pytest.approx(0.5 if now is None else now, rel=1e-12)  # None: a 50 % command
    assert operating_share(comparisons["demo"].design.bridge) == pytest.approx(12 / 48)  # buck: D = V_out/V_bus
