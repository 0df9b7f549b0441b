"""Bad-input catalogue (docs/bad-input.md): every class of bad input, through the API and the CLI.

API: one :class:`explorer.DesignError` with the field path and the exact text the catalogue shows.
Command line: exit code 2, exactly one stderr line starting ``error: ``, no traceback. The CLI
cases run ``explorer.__main__.main`` in-process (an uncaught exception fails the test, which is
what a traceback would be) and a few representative ones in a subprocess as users run it.
The panel column is checked in tests/test_panels.py (typed into a field, and loaded from a file).
"""

from __future__ import annotations

import copy
import json
import pathlib
import subprocess
import sys

import pytest

from explorer import DEMO, DesignError, evaluate, load_design
from explorer.__main__ import main
from explorer.design import MAX_DEPTH, MAX_FILE_BYTES

DOC = pathlib.Path(__file__).parents[1] / "docs" / "bad-input.md"


def _with(path: str, value=None, *, delete: bool = False, base=None) -> dict:
    """A copy of the demo design with one key set (or deleted); ``path`` like 'options[1].f_cp'."""
    d = copy.deepcopy(base or DEMO)
    parts = path.replace("[", ".").replace("]", "").split(".")
    node = d
    for p in parts[:-1]:
        node = node[int(p)] if p.isdigit() else node[p]
    last = int(parts[-1]) if parts[-1].isdigit() else parts[-1]
    if delete:
        del node[last]
    else:
        node[last] = value
    return d


def _bridge(**kw) -> dict:
    d = copy.deepcopy(DEMO)
    d["bridge"].update(kw)
    return d


DEMO_TEXT = json.dumps(DEMO)

#: (class, source given to load_design, field path, exact error text)
CASES = [
    ("non-numeric", _with("bridge.f_sw", "fast"), "bridge.f_sw",
     "bridge.f_sw: expected a number such as 2.2e-6 or '2.2u' (suffixes f p n u/µ m k M G T) (got 'fast')"),
    ("unknown suffix", _with("bridge.f_sw", "200x"), "bridge.f_sw",
     "bridge.f_sw: unknown suffix 'x'; allowed: a prefix f p n u/µ m k M (or meg) G T, optionally followed by "
     "Hz (got '200x')"),
    ("wrong unit", _with("options[0].c", "220nV"), "options[0].c",
     "options[0].c: unit 'V' does not fit: this field takes a capacitance in F (got '220nV')"),
    ("wrong unit (plain number field)", _with("options[0].c_tol", "10V"), "options[0].c_tol",
     "options[0].c_tol: unit 'V' does not fit: this field takes a plain number (a fraction may be written "
     "with %) (got '10V')"),
    ("look-alike digits", _with("bridge.f_sw", "２００k"), "bridge.f_sw",
     "bridge.f_sw: expected a number such as 2.2e-6 or '2.2u' (suffixes f p n u/µ m k M G T) (got '２００k')"),
    ("negative", _with("gate.q_g", -40e-9), "gate.q_g",
     "gate.q_g: expected a number > 0 and ≤ 0.001 [C] (got -4e-08)"),
    ("zero", _with("options[0].c", 0), "options[0].c",
     "options[0].c: expected a number > 0 and ≤ 1 [F] (got 0)"),
    ("NaN (number)", _with("aux.v_dd", float("nan")), "aux.v_dd", "aux.v_dd: must be a finite number (got nan)"),
    ("NaN (JSON literal)", DEMO_TEXT.replace('"v_dd": 12', '"v_dd": NaN'), "",
     "NaN is not allowed in a design file (numbers must be finite)"),
    ("infinity (number)", _with("aux.v_dd", float("inf")), "aux.v_dd", "aux.v_dd: must be a finite number (got inf)"),
    ("infinity (JSON literal)", DEMO_TEXT.replace('"v_dd": 12', '"v_dd": Infinity'), "",
     "Infinity is not allowed in a design file (numbers must be finite)"),
    ("infinity (overflowing number)", DEMO_TEXT.replace('"v_dd": 12', '"v_dd": 1e400'), "aux.v_dd",
     "aux.v_dd: must be a finite number (got inf)"),
    ("infinity (overflowing text)", _with("aux.v_dd", "1e400"), "aux.v_dd",
     "aux.v_dd: must be a finite number (got '1e400')"),
    ("unknown key", _with("bridge.f_switch", 1e5), "bridge.f_switch",
     "bridge.f_switch: unknown key; allowed: topology, v_bus, f_sw, dead_time, t_edge, v_out, v_in, duty, "
     "mode, eta, ls_pulse, skip_cycles, m, f_o, third_harmonic, pwm, phi, f_line, soft_start, precharge, "
     "v_sw_low, v_undershoot, v_out_start, v_sw_hold, edge_shape, edge_rise, edge_fall, startup_cycles"),
    ("missing key", _with("bridge.v_bus", delete=True), "bridge.v_bus",
     "bridge.v_bus: missing; expected a number > 0 and ≤ 100000 [V]"),
    ("missing section", _with("gate", delete=True), "gate", "gate: missing section"),
    ("missing topology key", _bridge(topology="line_leg", v_out=None), "bridge.f_line",
     "bridge.f_line: required for topology 'line_leg'"),
    ("wrong type (list for a number)", _with("gate.q_g", [40e-9]), "gate.q_g",
     "gate.q_g: expected a number, not list (got [4e-08])"),
    ("wrong type (true/false for a number)", _with("gate.q_g", True), "gate.q_g",
     "gate.q_g: expected a number, not true/false (got True)"),
    ("wrong type (text for true/false)", _with("bridge.third_harmonic", "yes"), "bridge.third_harmonic",
     "bridge.third_harmonic: expected true or false (got 'yes')"),
    ("wrong type (version as text)", _with("version", "1"), "version", "version: expected a whole number (got '1')"),
    ("unknown choice", _with("options[0].kind", "flux_capacitor"), "options[0].kind",
     "options[0].kind: expected one of 'bootstrap', 'charge_pump', 'isolated' (got 'flux_capacitor')"),
    ("unknown dielectric", _with("options[0].dielectric", "X9Z"), "options[0].dielectric",
     "options[0].dielectric: unknown dielectric; use an EIA-198 class-2 code (e.g. X7R, X5R, X6S, Y5V), "
     "C0G/NP0 or 'ideal' (got 'X9Z')"),
    ("inconsistent thresholds (UVLO)", _with("driver.uvlo_off", 9.0), "driver.uvlo_off",
     "driver.uvlo_off: must be below uvlo_on = 8.5 V (UVLO hysteresis) (got 9.0)"),
    ("inconsistent thresholds (gate)", _with("gate.v_gs_on_min", 25), "gate.v_gs_on_min",
     "gate.v_gs_on_min: must be below v_gs_max = 20 V (got 25.0)"),
    ("inconsistent operating point (buck)", _with("bridge.v_out", 60), "bridge.v_out",
     "bridge.v_out: a buck's output must be below v_bus·eta = 48 V (got 60.0)"),
    ("duty out of range", _bridge(topology="full_bridge", duty=1.2, v_out=None), "bridge.duty",
     "bridge.duty: expected a number ≥ 0 and ≤ 1 (got 1.2)"),
    ("modulation index out of range", _bridge(topology="three_phase", m=1.5, f_o=50, v_out=None), "bridge.m",
     "bridge.m: expected a number ≥ 0 and ≤ 1.27324 (got 1.5)"),
    ("dead time too long", _with("bridge.dead_time", "3u"), "bridge.dead_time",
     "bridge.dead_time: two dead times must be shorter than the switching period 5e-06 s (got 3e-06)"),
    ("outside the models' range (f_sw)", _with("bridge.f_sw", "200M"), "bridge.f_sw",
     "bridge.f_sw: expected a number > 0 and ≤ 1e+08 [Hz] (got '200M')"),
    ("outside the models' range (pump clock)", _with("options[1].f_cp", "2G"), "options[1].f_cp",
     "options[1].f_cp: expected a number > 0 and ≤ 1e+09 [Hz] (got '2G')"),
    ("outside the models' range (f_sw/f_o)", _bridge(topology="three_phase", m=0.9, f_o=0.05, v_out=None,
                                                      f_sw="200k"), "bridge.f_o",
     "bridge.f_o: f_sw/f_o above 2e6 switching periods per fundamental; use f_o = 0 (standstill) for "
     "slower output (got 0.05)"),
    ("duplicate label", _with("options[1].label", "bootstrap 220n"), "options[1].label",
     "options[1].label: labels must be unique (got 'bootstrap 220n')"),
    ("duplicate key", DEMO_TEXT.replace('"v_bus": 48,', '"v_bus": 48, "v_bus": 480,'), "v_bus",
     "v_bus: written twice in the same object; keep one (a hand-edited file would otherwise silently use "
     "the last)"),
    ("missing format", _with("format", delete=True), "format", "format: missing; expected 'explorer-design'"),
    ("missing version", _with("version", delete=True), "version", "version: missing; expected a whole number 1 to 1"),
    ("temperature range reversed", _with("checks", {"t_min": 120, "t_max": 105, "t_amb": 110}), "checks.t_min",
     "checks.t_min: must not exceed t_max = 105 °C (got 120.0)"),
    ("temperature outside the range", _with("checks", {"t_amb": 130}), "checks.t_amb",
     "checks.t_amb: must lie within t_min..t_max = -40..105 °C (got 130.0)"),
    ("option kind a list", _with("options[0].kind", ["bootstrap"]), "options[0].kind",
     "options[0].kind: expected one of 'bootstrap', 'charge_pump', 'isolated' (got ['bootstrap'])"),
    ("option kind an object", _with("options[0].kind", {"name": "bootstrap"}), "options[0].kind",
     "options[0].kind: expected one of 'bootstrap', 'charge_pump', 'isolated' (got {'name': 'bootstrap'})"),
    ("missing option kind", _with("options[0].kind", delete=True), "options[0].kind",
     "options[0].kind: missing; expected one of 'bootstrap', 'charge_pump', 'isolated'"),
    ("wrong format", _with("format", "something-else"), "format",
     "format: expected 'explorer-design' (got 'something-else')"),
    ("newer version", _with("version", 2), "version",
     "version: this file was written by a newer explorer (format version 2); this explorer reads versions "
     "1 to 1: update explorer (got 2)"),
    ("truncated file", DEMO_TEXT[:500], "", "not valid JSON: Unterminated string starting at (line 1, column 500)"),
    ("not a JSON object", "[1, 2, 3]", "", "a design file must hold a JSON object"),
    ("deeply nested", '{"format": "explorer-design", "bridge": ' + "[" * 100_000 + "]" * 100_000 + "}", "",
     f"nested deeper than {MAX_DEPTH} levels; not a design file"),
    ("code in a number", _with("bridge.f_sw", "__import__('os').system('echo hi')"), "bridge.f_sw",
     "bridge.f_sw: expected a number such as 2.2e-6 or '2.2u' (suffixes f p n u/µ m k M G T) "
     "(got \"__import__('os').system('echo hi')\")"),
    ("number text too long", _with("bridge.f_sw", "1" * 100), "bridge.f_sw",
     "bridge.f_sw: number text is too long (64 characters at most) (got '11111111111111111111...')"),
    ("over-long label", _with("options[0].label", "x" * 201), "options[0].label",
     "options[0].label: expected non-empty text (200 characters at most) (got '" + "x" * 201 + "')"),
]


@pytest.mark.parametrize("name,source,path,text", CASES, ids=[c[0] for c in CASES])
def test_api_raises_one_design_error_with_the_field_path(name, source, path, text):
    with pytest.raises(DesignError) as e:
        load_design(source)
    assert e.value.path == path
    assert str(e.value) == text


def file_text(source) -> str | None:
    """The case as a file's text; None for a dict holding NaN/inf (as a file that is the JSON-literal case)."""
    if isinstance(source, str):
        return source
    try:
        return json.dumps(source, allow_nan=False)
    except ValueError:
        return None


#: The cases a user can write into a file (all but the in-memory NaN/inf numbers).
FILE_CASES = [c for c in CASES if file_text(c[1]) is not None]


@pytest.mark.parametrize("name,source,path,text", FILE_CASES, ids=[c[0] for c in FILE_CASES])
def test_cli_exit_2_one_error_line(name, source, path, text, tmp_path, capsys):
    f = tmp_path / "design.json"
    f.write_text(file_text(source), encoding="utf-8")
    code = main(["evaluate", str(f)])
    out = capsys.readouterr()
    assert code == 2
    lines = out.err.splitlines()
    assert lines == [f"error: {text}"]
    assert out.out == ""


def test_every_case_is_in_the_catalogue():
    """docs/bad-input.md shows the exact text of every case (kept current by this test)."""
    doc = DOC.read_text(encoding="utf-8")
    for name, _, _, text in CASES:
        shown = text if len(text) <= 160 else text[:160]
        assert f"| {name} |" in doc, name
        assert shown.replace("|", "\\|") in doc, name


def _cli(*args, stdin=None):
    return subprocess.run([sys.executable, "-m", "explorer", *args], capture_output=True, text=True,
                          input=stdin, timeout=120)


@pytest.mark.parametrize("name", ["non-numeric", "duplicate key", "deeply nested", "newer version"])
def test_cli_subprocess_no_traceback(name, tmp_path):
    _, source, _, text = next(c for c in CASES if c[0] == name)
    f = tmp_path / "d.json"
    f.write_text(source if isinstance(source, str) else json.dumps(source), encoding="utf-8")
    r = _cli("evaluate", str(f), "--json")
    assert r.returncode == 2
    assert r.stderr.splitlines() == [f"error: {text}"]
    assert "Traceback" not in r.stderr and r.stdout == ""


def test_oversized_file_refused_before_parsing(tmp_path):
    f = tmp_path / "big.json"
    f.write_text(DEMO_TEXT[:-1] + ', "title": "' + "x" * MAX_FILE_BYTES + '"}', encoding="utf-8")
    with pytest.raises(DesignError) as e:
        load_design(str(f))
    assert str(e.value).startswith(f"design file is {f.stat().st_size} bytes; the limit is {MAX_FILE_BYTES}")
    with pytest.raises(DesignError, match="design text is longer than"):
        load_design(f.read_text())
    r = _cli("evaluate", str(f))
    assert r.returncode == 2 and len(r.stderr.splitlines()) == 1 and r.stderr.startswith("error: design file is")


@pytest.mark.parametrize("blob", [b"\xff\xfe\x00garbage\x80", b""])
def test_binary_or_empty_file(blob, tmp_path):
    f = tmp_path / "d.json"
    f.write_bytes(blob)
    with pytest.raises(DesignError) as e:
        load_design(str(f))
    assert e.value.path == ""
    r = _cli("evaluate", str(f))
    assert r.returncode == 2 and len(r.stderr.splitlines()) == 1 and r.stderr.startswith("error: ")


def test_missing_file_and_directory(tmp_path):
    for src in (tmp_path / "nope.json", tmp_path):
        with pytest.raises(DesignError, match="cannot read design file"):
            load_design(str(src))
        assert main(["evaluate", str(src)]) == 2


def test_stdin_that_is_not_json(capsys):
    import io
    old = sys.stdin
    sys.stdin = io.StringIO("rm -rf /")
    try:
        assert main(["evaluate", "-"]) == 2
    finally:
        sys.stdin = old
    assert capsys.readouterr().err == "error: standard input does not hold a JSON object\n"


def test_bad_command_line_arguments(capsys):
    with pytest.raises(SystemExit) as e:
        main(["evaluate", "x.json", "--rank", "cheapest"])
    assert e.value.code == 2
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and err[0].startswith("error: argument --rank: invalid choice: 'cheapest'")


def test_code_like_text_is_never_executed(tmp_path):
    """Strings that look like code stay text: the title loads verbatim and nothing runs."""
    marker = tmp_path / "ran"
    title = f"__import__('pathlib').Path({str(marker)!r}).touch()"
    d = load_design(_with("title", title))
    assert d.title == title and not marker.exists()
    r = evaluate(d)
    assert r.title == title and not marker.exists()


def test_unicode_tricks_in_text_round_trip(tmp_path):
    """Right-to-left override, zero-width joiner and combining marks in labels are kept as text."""
    label = "boot\u202estrap\u200d 2\u0301"
    d = load_design(_with("options[0].label", label))
    assert d.options[0].label == label
    r = evaluate(d)
    assert r.options[0].label == label
    json.loads(r.to_json())


def test_older_version_file_loads():
    """A version-1 file as the first release wrote it (no checks/spread sections, only the required
    keys) loads with the documented defaults."""
    d = copy.deepcopy(DEMO)
    d.pop("checks", None)
    d.pop("spread", None)
    for k in ("mode", "soft_start", "precharge", "v_undershoot", "startup_cycles"):
        d["bridge"].pop(k)
    design = load_design(d)
    assert design.checks.v_margin == 0.5 and design.bridge.startup_cycles == 2000


def test_capacitor_rating_below_applied_voltage_is_a_failed_check_not_an_error():
    """Valid input; the option is infeasible with a verdict that names the capacitor check."""
    d = _with("options[0].v_rating", 6.3)  # bootstrap capacitor charged to about 11 V
    d["options"] = d["options"][:1]
    r = evaluate(load_design(d)).options[0]
    assert r.error is None and r.feasible is False
    check = next(c for c in r.checks if c.name.startswith("cap_voltage"))
    assert not check.ok and check.value > check.limit == pytest.approx(6.3 * 0.8)
    assert "bootstrap capacitor voltage within its derated rating" in r.verdict
    assert r.verdict.startswith("does not hold")


def test_pump_capacitor_rating_below_applied_voltage_is_a_failed_check():
    d = _with("options[3].c_out.v_rating", 6.3)  # 2:1 pump output near 12 V
    d["options"] = d["options"][3:4]
    r = evaluate(load_design(d)).options[0]
    assert r.error is None and r.feasible is False
    assert any(c.name.startswith("cap_voltage") and c.name.endswith("c_out") and not c.ok for c in r.checks)
    assert "c_out voltage stays within its derated rating" in r.verdict


@pytest.mark.parametrize("text", ["", "   \n"])
def test_empty_file_says_empty(text, tmp_path):
    f = tmp_path / "d.json"
    f.write_text(text, encoding="utf-8")
    with pytest.raises(DesignError) as e:
        load_design(str(f))
    assert str(e.value) == f"the design file is empty (got {str(f)!r})"
    with pytest.raises(DesignError) as e:
        load_design(text)
    assert str(e.value) == "the design text is empty; expected a file path or JSON text"
    assert main(["evaluate", str(f)]) == 2


# ---------------------------------------------------------------- API misuse (docs/bad-input.md "API")

def test_comparison_unknown_label_names_the_labels():
    r = evaluate(load_design(DEMO))
    with pytest.raises(KeyError) as e:
        r["no such label"]
    assert e.value.args[0] == ("no option labelled 'no such label'; labels: 'bootstrap 220n', 'pump 1:1', "
                               "'pump 1:2 from 5 V', 'pump 2:1 from 24 V', 'isolated 1 W'")


@pytest.mark.parametrize("duty", [1.2, -0.1, float("nan")])
def test_margin_map_duty_outside_0_1_is_an_error(duty):
    from explorer.sweep import margin_map
    with pytest.raises(DesignError) as e:
        margin_map(DEMO, "bootstrap 220n", [200e3], [0.5, duty])
    assert e.value.path == "duty" and "from 0 to 1" in e.value.problem


def test_margin_map_negative_f_sw_is_an_error():
    from explorer.sweep import margin_map
    with pytest.raises(DesignError) as e:
        margin_map(DEMO, "bootstrap 220n", [-200e3], [0.5])
    assert str(e.value) == "f_sw: expected a number > 0 and ≤ 1e+08 [Hz] (got -200000.0)"


def test_sweep_value_the_field_never_allows_is_an_error():
    from explorer.sweep import sweep
    with pytest.raises(DesignError) as e:
        sweep(DEMO, {"bridge.f_sw": [100e3, -200e3]}, figures=["rail_min"])
    assert str(e.value) == "axes[bridge.f_sw]: expected a number > 0 and ≤ 1e+08 [Hz] (got -200000.0)"
    with pytest.raises(DesignError) as e:
        sweep(DEMO, {"duty": [0.5, 1.5]}, figures=["rail_min"])
    assert str(e.value) == "axes[duty]: expected an HS duty share from 0 to 1 (got 1.5)"
    # a value allowed on its own but inconsistent with the rest stays a grid point with its reason
    s = sweep(DEMO, {"bridge.v_out": [12.0, 60.0]}, labels=["isolated 1 W"], figures=["rail_min"])
    assert list(s.invalid) == [(1,)] and "buck's output must be below" in s.invalid[(1,)]


def test_replace_fields_is_public():
    import explorer
    d = explorer.replace_fields(explorer.demo_design(), {"bridge.f_sw": "100kHz", "options[0].c": "470nF"})
    assert d.bridge.f_sw == 100e3 and d.options[0].c == 470e-9
    assert "replace_fields" in explorer.__all__


# ---------------------------------------------------------------- command-line flags named as typed

@pytest.mark.parametrize("args, line", [
    (["envelope", "{f}", "--label", "nope", "--quiet"], "error: --label: no option labelled 'nope'; labels: "
     "'bootstrap 220n', 'pump 1:1', 'pump 1:2 from 5 V', 'pump 2:1 from 24 V', 'isolated 1 W' (got 'nope')"),
    (["netlist", "{f}", "--label", "nope"], "error: --label: no option labelled 'nope'; labels: "
     "'bootstrap 220n', 'pump 1:1', 'pump 1:2 from 5 V', 'pump 2:1 from 24 V', 'isolated 1 W' (got 'nope')"),
    (["netlist", "{f}", "--label", "pump 1:1", "--cycles", "0"],
     "error: --cycles: expected a whole number of switching periods ≥ 1 (got 0)"),
    (["size", "{f}", "--label", "nope"], "error: --label: no option labelled 'nope'; labels: "
     "'bootstrap 220n', 'pump 1:1', 'pump 1:2 from 5 V', 'pump 2:1 from 24 V', 'isolated 1 W' (got 'nope')"),
    (["size", "{f}", "--headroom", "0.5"], "error: --headroom: expected a factor ≥ 1 (got 0.5)"),
    (["size", "{f}", "--headroom", "lots"], "error: --headroom: expected a number such as 2.2e-6 or '2.2u' "
     "(suffixes f p n u/µ m k M G T) (got 'lots')"),
    (["size", "{f}", "--i-max", "2V"], "error: --i-max: unit 'V' does not fit: this field takes a current in A "
     "(got '2V')"),
])
def test_cli_flag_named_as_typed(args, line, tmp_path, capsys):
    f = tmp_path / "d.json"
    f.write_text(DEMO_TEXT, encoding="utf-8")
    assert main([a.format(f=f) for a in args]) == 2
    out = capsys.readouterr()
    assert out.err.splitlines() == [line] and out.out == ""


@pytest.mark.parametrize("f", [0.0, -1e5, float("nan"), float("inf")])
def test_pump_and_isolated_maps_refuse_a_frequency_that_is_not_positive(f):
    # the models' own map functions (margin_map checks its axes before it calls them)
    from explorer.options.charge_pump import rail_min_map as pump_map
    from explorer.options.isolated import rail_min_map as iso_map
    d = load_design(DEMO)
    for fn, o in ((pump_map, d.options[1]), (iso_map, d.options[4])):
        with pytest.raises(DesignError, match=r"f_sw: expected frequencies > 0 Hz"):
            fn(d, o, [200e3, f], [0.5])
