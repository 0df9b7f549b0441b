"""Design file: loading, validation with field paths, exact round trip."""

import copy
import json

import pytest

from explorer import DEMO, DesignError, demo_design, design_to_dict, load_design, replace_field, save_design
from explorer.design import MAX_FILE_BYTES, Bridge, specs


def _mut(path, value):
    """The demo dict with one field set (path like 'bridge.v_out' or 'options[1].c_fly')."""
    d = copy.deepcopy(DEMO)
    node = d
    parts = path.replace("]", "").replace("[", ".").split(".")
    for p in parts[:-1]:
        node = node[int(p)] if p.isdigit() else node[p]
    last = parts[-1]
    if value is _DELETE:
        del node[last]
    else:
        node[int(last) if last.isdigit() else last] = value
    return d


_DELETE = object()


def test_demo_round_trip_exact(tmp_path):
    d = demo_design()
    p = tmp_path / "demo.json"
    save_design(d, p)
    again = load_design(p)
    assert again == d
    assert design_to_dict(again) == design_to_dict(d)
    # and the JSON text itself is stable
    save_design(again, tmp_path / "demo2.json")
    assert (tmp_path / "demo.json").read_text() == (tmp_path / "demo2.json").read_text()


def test_engineering_strings_equal_numbers():
    d1 = load_design(_mut("gate.q_g", "40n"))
    d2 = load_design(_mut("gate.q_g", 40e-9))
    assert d1 == d2


def test_capacitor_as_number_or_object():
    d = load_design(_mut("options[1].c_fly", "100n"))
    assert d.options[1].c_fly.c == pytest.approx(100e-9)
    assert d.options[1].c_fly.dielectric == "X7R"


@pytest.mark.parametrize("path, value, needle", [
    ("options[1].c_fly", "abc", "options[1].c_fly"),            # non-numeric
    ("gate.q_g", "40x", "gate.q_g: unknown suffix"),             # unknown suffix
    ("gate.q_g", -40e-9, "gate.q_g"),                            # negative
    ("bridge.f_sw", 0, "bridge.f_sw: expected a number > 0"),    # zero
    ("aux.v_dd", "nan", "aux.v_dd"),                             # NaN text
    ("bridge.v_bus", True, "bridge.v_bus: expected a number, not true/false"),  # wrong type
    ("bridge.v_bus", [48], "bridge.v_bus"),                      # wrong type
    ("bridge.topology", "buck", "bridge.topology: expected one of"),
    ("bridge.bogus", 1, "bridge.bogus: unknown key"),            # unknown key
    ("options[0].diode.v_f", _DELETE, "options[0].diode"),       # diode without a model
    ("gate.q_g", _DELETE, "gate.q_g: missing"),                  # missing key
    ("driver.uvlo_off", 9.0, "driver.uvlo_off: must be below uvlo_on"),  # inconsistent thresholds
    ("bridge.v_out", 60, "bridge.v_out: a buck's output must be below"),
    ("options[0].dielectric", "X9Q", "options[0].dielectric: unknown dielectric"),
    ("options[4].eta_full", 1.2, "options[4].eta_full"),
    ("options[4].p_no_load", 0.5, "options[4].p_no_load: must be below the full-load loss"),
    ("options[2].ratio", "3:1", "options[2].ratio: expected one of"),
    ("options[1].label", "bootstrap 220n", "options[1].label: labels must be unique"),
    ("options[3].kind", "flux", "options[3].kind"),
    ("options[0].dc_bias", [[0.5, 0.7], [0.2, 0.9]], "options[0].dc_bias[1]: points must be sorted"),
    ("bridge.dead_time", "3u", "bridge.dead_time: two dead times must be shorter"),
    ("bridge.startup_cycles", 2.5, "bridge.startup_cycles: expected a whole number"),
    ("gate.v_gs_on_min", 25, "gate.v_gs_on_min: must be below v_gs_max"),
    ("title", 5, "title"),
])
def test_bad_input_names_the_field(path, value, needle):
    with pytest.raises(DesignError) as e:
        load_design(_mut(path, value))
    assert needle in str(e.value)


@pytest.mark.parametrize("bridge, needle", [
    ({"topology": "half_bridge", "duty": 1.5}, "bridge.duty: expected a number \u2265 0 and \u2264 1"),
    ({"topology": "full_bridge"}, "bridge.duty: required for topology 'full_bridge'"),
    ({"topology": "three_phase", "m": 1.4, "f_o": 50}, "bridge.m"),     # beyond 4/π (six-step limit)
    ({"topology": "three_phase", "m": 0.9}, "bridge.f_o: required"),
    ({"topology": "three_phase", "m": 0.9, "f_o": 150e3}, "bridge.f_o: must be below half"),
    ({"topology": "sync_boost", "v_in": 60}, "bridge.v_in: a boost's input must be below"),
    ({"topology": "line_leg"}, "bridge.f_line: required"),
    ({"topology": "sync_buck", "mode": "light_load"}, "bridge.ls_pulse: required"),
])
def test_topology_consistency(bridge, needle):
    d = copy.deepcopy(DEMO)
    d["bridge"] = {k: v for k, v in d["bridge"].items() if k not in ("v_out", "mode")} | bridge
    if bridge["topology"] == "sync_buck":
        d["bridge"]["v_out"] = 12
    with pytest.raises(DesignError) as e:
        load_design(d)
    assert needle in str(e.value)


def test_newer_version_refused():
    d = copy.deepcopy(DEMO)
    d["version"] = 2
    with pytest.raises(DesignError, match="newer explorer"):
        load_design(d)


def test_wrong_format_refused():
    d = copy.deepcopy(DEMO)
    d["format"] = "something-else"
    with pytest.raises(DesignError, match="format: expected 'explorer-design'"):
        load_design(d)


def test_json_nan_and_infinity_refused():
    text = json.dumps(DEMO).replace('"v_bus": 48', '"v_bus": NaN')
    with pytest.raises(DesignError, match="NaN is not allowed"):
        load_design(text)
    text = json.dumps(DEMO).replace('"v_bus": 48', '"v_bus": Infinity')
    with pytest.raises(DesignError, match="Infinity is not allowed"):
        load_design(text)


def test_truncated_and_oversized_and_nested(tmp_path):
    text = json.dumps(DEMO)
    with pytest.raises(DesignError, match="not valid JSON"):
        load_design(text[: len(text) // 2])
    big = tmp_path / "big.json"
    big.write_text(" " * (MAX_FILE_BYTES + 1))
    with pytest.raises(DesignError, match="the limit is"):
        load_design(big)
    deep = "[" * 100000 + "]" * 100000
    with pytest.raises(DesignError):
        load_design("{" + f'"title": {deep}' + "}")
    d = copy.deepcopy(DEMO)
    d["title"] = [[[[[[[[[["x"]]]]]]]]]]
    with pytest.raises(DesignError, match="nested deeper"):
        load_design(d)


def test_code_in_a_file_is_never_run(tmp_path):
    marker = tmp_path / "ran"
    d = _mut("gate.q_g", f"__import__('pathlib').Path({str(marker)!r}).touch()")
    with pytest.raises(DesignError, match="gate.q_g"):
        load_design(d)
    assert not marker.exists()


def test_missing_file():
    with pytest.raises(DesignError, match="cannot read design file"):
        load_design("/nonexistent/design.json")


def test_replace_field_revalidates():
    d = demo_design()
    d2 = replace_field(d, "options[0].c", "470n")
    assert d2.options[0].c == pytest.approx(470e-9)
    assert d.options[0].c == pytest.approx(220e-9)  # the original is untouched
    with pytest.raises(DesignError, match="options\\[0\\].c"):
        replace_field(d, "options[0].c", -1)
    with pytest.raises(DesignError, match="no such field"):
        replace_field(d, "bridge.nothing", 1)


def test_every_field_has_a_documented_spec():
    # every field of every section says its unit and meaning (the glossary is built from these)
    from explorer import design as m
    for cls in (m.Bridge, m.Gate, m.Driver, m.Aux, m.Checks, m.Capacitor, m.LinearDiode,
                m.JunctionDiode, m.BootstrapOption, m.ChargePumpOption, m.IsolatedOption):
        for name, spec in specs(cls).items():
            assert spec.unit and spec.doc, (cls.__name__, name)
    assert set(specs(Bridge)) >= {"topology", "v_bus", "f_sw", "dead_time", "t_edge", "v_out", "v_in",
                                  "duty", "mode", "m", "f_o", "third_harmonic", "f_line", "soft_start",
                                  "precharge"}


def test_glossary_is_current():
    from pathlib import Path

    from explorer.glossary import glossary_markdown
    text = (Path(__file__).parent.parent / "docs" / "glossary.md").read_text()
    assert text.strip() == glossary_markdown().strip(), "run: python -m explorer.glossary > docs/glossary.md"
