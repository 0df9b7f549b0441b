"""What a practitioner reads: every verdict, limit line and ranking sentence is true of the figures.

Each statement in words is checked against the numbers it summarises, and where it makes a claim
about another design (a frequency limit, "any f_sw") the claim is checked by evaluating that design
with the same models. The designs are variants of the built-in demo (an invented scenario).
"""

import json
import subprocess
import sys
import warnings

import pytest

import explorer
from explorer.design import replace_fields
from explorer.results import Check
from explorer.views.table import ROW_HELP, explain_text, ranking_lines, side_by_side_rows

pytestmark = pytest.mark.filterwarnings("ignore::explorer.ModelValidityWarning")  # edge designs on purpose

BASE = explorer.demo_design()


def _ev(changes):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", explorer.ExplorerWarning)
        return explorer.evaluate(replace_fields(BASE, changes) if changes else BASE)


def _row(c, name):
    return dict(c.rows())[name]


def _rail_ok(c, label):
    return next(x for x in c[label].checks if x.name == "rail_min").ok


def test_tightest_check_is_the_smallest_relative_margin_and_is_shown_both_ways():
    c = _ev({})
    for r in c.options:
        tight = min(r.checks, key=lambda x: x.margin / abs(x.limit))
        assert r.worst_margin is tight
        assert "smallest margin relative to its limit" in r.verdict
        assert tight.text in r.verdict
        assert explorer.format_eng(tight.margin, tight.unit) in r.verdict          # in volts
        assert f"{100 * tight.margin / abs(tight.limit):.3g} %" in r.verdict       # and relative
        d = r.to_dict()
        for chk in d["checks"]:
            assert chk["margin_rel"] == pytest.approx(chk["margin"] / abs(chk["limit"]), rel=1e-15)


def test_dv_dt_reads_in_volts_per_nanosecond():
    c = Check("cmti", 1e11, 2e10, "min", "V/s", "CMTI covers the switch-node dv/dt")
    assert c.margin_words() == "margin 80 V/ns = 400 % of the 20 V/ns limit"


def test_half_bridge_limit_speaks_of_its_duty_not_a_line_frequency():
    c = _ev({"bridge.topology": "half_bridge", "bridge.v_out": None})
    cell = _row(c, "limits in the leg's terms")[0]
    assert "line frequency" not in cell and "holds at its duty command of 50.0 %" in cell


def test_line_leg_limits_are_in_line_frequency_terms_and_true():
    c = _ev({"bridge.topology": "line_leg", "bridge.f_line": 50.0, "bridge.v_out": None})
    cells = _row(c, "limits in the leg's terms")
    assert cells[0] == "fails at f_line = 50 Hz" and not c.options[0].feasible
    for r, cell in zip(c.options[1:], cells[1:]):
        assert "f_sw \u2264" not in cell and "GHz" not in cell, cell
        assert "f_sw_max" not in r.duty.topology and r.duty.topology["f_line_max"] >= 50e3
        assert cell.startswith("any f_line below f_sw/2 = 100 kHz")
    # the claim "any f_line below f_sw/2": the same leg just below f_sw/2 still holds its rail
    fast = _ev({"bridge.topology": "line_leg", "bridge.f_line": 99e3, "bridge.v_out": None})
    for r in c.options[1:]:
        assert _rail_ok(fast, r.label), r.label


def test_no_hs_turn_on_means_any_frequency_and_it_is_true():
    changes = {"bridge.topology": "full_bridge", "bridge.duty": 1.0, "bridge.v_out": None}
    c = _ev(changes)
    cells = _row(c, "limits in the leg's terms")
    for r, cell in zip(c.options[1:], cells[1:]):
        assert r.feasible and cell == "any f_sw, any Q_G"
    c4 = _ev({**changes, "bridge.f_sw": 800e3, "gate.q_g": 400e-9})
    for r in c.options[1:]:
        assert _rail_ok(c4, r.label)


def test_fails_at_any_frequency_is_true_and_never_reads_zero_hertz():
    c = _ev({"driver.i_q": 0.2})  # the static load alone is too much for pump 1:1 and the 1 W module
    cells = dict(zip([r.label for r in c.options], _row(c, "limits in the leg's terms")))
    assert "0 Hz" not in " ".join(cells.values())
    for label in ("pump 1:1", "isolated 1 W"):
        assert cells[label] == "fails at any f_sw, fails even at Q_G = 0"
        assert not c[label].feasible
    slow = _ev({"driver.i_q": 0.2, "bridge.f_sw": 2e3, "gate.q_g": 1e-12})
    assert not _rail_ok(slow, "pump 1:1")
    assert not next(x for x in slow["isolated 1 W"].checks if x.name == "load_rating").ok


def test_when_no_option_holds_the_ranking_says_so_and_which_check_fails_first():
    c = _ev({"driver.uvlo_off": 11.5, "driver.uvlo_on": 11.9, "checks.v_margin": 1.0})
    assert not any(r.feasible for r in c.options)
    lines = ranking_lines(c)
    assert lines[0].startswith("ranking (no option holds; listed by") and "among" not in lines[0]
    assert len(lines) == 1 + len(c.options)
    for r, line in zip(c.options, lines[1:]):
        worst = min((x for x in r.checks if not x.ok), key=lambda x: x.margin / abs(x.limit))
        assert line.startswith(f"fails first [{r.label}]: {worst.text} (short by")
    assert _row(c, "HS duty that holds") == ["none holds"] * len(c.options)
    assert c.to_dict()["holds"] == [] and "no option holds" in c.to_dict()["rank_words"]


def test_some_hold_the_ranking_says_how_many():
    c = _ev({"bridge.topology": "line_leg", "bridge.f_line": 50.0, "bridge.v_out": None})
    assert c.rank_words.endswith("among the 4 options that hold; then the one that does not")
    assert c.ranking()[-1] == "bootstrap 220n"


def test_startup_cell_has_no_zero_cycles():
    cells = _row(_ev({}), "start-up to UVLO on")
    assert "cyc)" not in " ".join(cells)
    assert cells[0].endswith("(within the first period)") and cells[1].endswith("(16 pump cycles)")


def test_every_row_is_explained_in_the_cli_html_and_glossary(tmp_path):
    c = _ev({})
    names = [q for q, _ in c.rows()]
    assert set(names) | {q for q, _ in side_by_side_rows(c)} == set(ROW_HELP)
    text = explain_text()
    assert all(q in text and ROW_HELP[q] in text for q in names)
    html = c._repr_html_()
    import html as _h
    assert all(f"title='{_h.escape(ROW_HELP[q])}'" in html for q in names)
    from explorer.glossary import glossary_markdown
    md = glossary_markdown()
    assert all(f"| {q} | " in md for q in names)
    p = tmp_path / "demo.json"
    p.write_text(json.dumps(explorer.DEMO))
    r = subprocess.run([sys.executable, "-m", "explorer", "evaluate", str(p), "--explain"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 0 and all(ROW_HELP[q] in r.stdout for q in names)


def test_result_and_envelope_json_carry_the_caution(tmp_path):
    assert _ev({}).to_dict()["caution"] == explorer.CAUTION
    p = tmp_path / "demo.json"
    p.write_text(json.dumps(explorer.DEMO))
    base = [sys.executable, "-m", "explorer", "envelope", str(p), "--label", "bootstrap 220n", "--samples", "200",
            "--quiet"]
    r = subprocess.run(base + ["--json"], capture_output=True, text=True, timeout=120)
    env = json.loads(r.stdout)
    assert env["caution"] == explorer.CAUTION
    mc = env["options"][0]["monte_carlo"]
    r = subprocess.run(base, capture_output=True, text=True, timeout=120)
    assert f"P(margin lost) = {mc['p_margin']:.4g}" in r.stdout and "P(UVLO trip)" in r.stdout
    assert explorer.CAUTION in r.stdout
    assert env["options"][0]["worst_case"]["corner_text"] in r.stdout


def test_corner_in_words_gives_the_values():
    from explorer.tolerance import worst_case
    w = worst_case(BASE, "bootstrap 220n")
    assert w.corner == "k_c low, v_dd low, t high"
    k = float(w.factors.k_c)
    assert w.corner_text == (f"C_boot \u2212{100 * (1 - k):.3g} %, V_DD \u2212{100 * BASE.aux.v_dd_tol:.3g} %, "
                             f"{float(w.factors.t):g} \u00b0C")
