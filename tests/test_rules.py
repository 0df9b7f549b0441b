"""Design rules: measured figures, broken rules named with their figures, rule files, ``check`` exit codes."""

import json
import pathlib
import subprocess
import sys

import pytest

import explorer
from explorer import DEMO, DesignError, RuleViolation, assert_rules, check_rules, load_rules
from explorer.rules import (CapacitorShare, ChecksHold, DutyCovers, EfficiencyMin, HoldUp, RailMargin,
                            StartupTime, TripProbability, rules_to_dict, save_rules)
from explorer.schedule import nominal_duty
from explorer.tolerance import worst_case

BOOT = "bootstrap 220n"


@pytest.fixture(scope="module")
def demo():
    return explorer.demo_design()


@pytest.fixture(scope="module")
def comparison(demo):
    return explorer.evaluate(demo)


def test_every_rule_kind_measures_the_public_figures(demo, comparison):
    r = comparison[BOOT]
    w = worst_case(demo, BOOT)
    rules = [RailMargin(option=BOOT, margin=1.0), RailMargin(option=BOOT, margin=1.0, at="nominal",
                                                                 above="v_gs_on_min"),
             CapacitorShare(option=BOOT, share=0.6), StartupTime(option=BOOT, t_max=1e-3),
             EfficiencyMin(option=BOOT, min=0.5), DutyCovers(option=BOOT), HoldUp(option=BOOT, t_min=1e-3),
             ChecksHold(option=BOOT)]
    rep = check_rules(demo, rules, comparison=comparison)
    got = {(o.rule.rule, o.rule.at if isinstance(o.rule, RailMargin) else ""): o.check for o in rep.outcomes}
    assert got[("rail_margin", "every_corner")].value == w.rail_min - demo.driver.uvlo_off
    assert got[("rail_margin", "nominal")].value == r.v_rail.min - demo.gate.v_gs_on_min
    cap = r.capacitors[0]
    assert got[("capacitor_share", "")].value == cap.v_max / cap.v_rating
    assert got[("startup_time", "")].value == r.startup.t_uvlo
    assert got[("efficiency", "")].value == r.efficiency
    d_op = nominal_duty(demo.bridge)
    assert got[("duty_covers", "")].value == min(d_op - r.duty.min, r.duty.max - d_op)
    assert got[("hold_up", "")].value == r.duty.hold_up
    assert got[("checks_hold", "")].value == 0.0
    assert rep.ok and len(rep.outcomes) == len(rules)


def test_the_worst_corner_is_lower_than_nominal(demo, comparison):
    # the corner rule must be stricter than the nominal one: the worst corner includes nominal's factors
    # bounded on both sides, so its rail minimum cannot lie above the nominal one
    rep = check_rules(demo, [RailMargin(option=BOOT, margin=0.0),
                             RailMargin(option=BOOT, margin=0.0, at="nominal")], comparison=comparison)
    corner, nominal = (o.check.value for o in rep.outcomes)
    assert corner < nominal


def test_a_broken_rule_raises_naming_rule_option_and_figures(demo, comparison):
    rules = [CapacitorShare(option=BOOT, share=0.5, name="C_boot at half its rating"),
             StartupTime(option=BOOT, t_max=1e-3)]
    with pytest.raises(RuleViolation) as exc:
        assert_rules(demo, rules, comparison=comparison)
    assert isinstance(exc.value, AssertionError)
    msg = str(exc.value)
    cap = comparison[BOOT].capacitors[0]
    assert "1 of 2 design rules broken" in msg
    assert "'C_boot at half its rating' (capacitor_share) on 'bootstrap 220n': BROKEN" in msg
    assert f"({100 * cap.v_max / cap.v_rating:.1f} %)" in msg and "allowed \u2264 50 %" in msg
    assert "13 V" in msg and "25 V" in msg  # the figures: V_max and the rating
    assert "startup_time" not in msg  # a rule that holds is not reported as broken
    assert exc.value.report.broken[0].rule is rules[0]


def test_a_rule_for_every_option_reports_each(demo, comparison):
    rep = check_rules(demo, [StartupTime(t_max=1e-3)], comparison=comparison)
    assert [o.option for o in rep.outcomes] == [o.label for o in demo.options]
    broken = [o.option for o in rep.broken]
    # the isolated module's own start-up delay plus ramp (1 ms + 0.5 ms in the demo) exceeds 1 ms
    assert broken == ["isolated 1 W"]
    assert comparison["isolated 1 W"].startup.t_uvlo > 1e-3


def test_trip_probability_upper_end_with_no_trip_is_the_clopper_pearson_bound(demo):
    # Clopper & Pearson (1934): with k = 0 trips in n samples the upper limit solves (1 - p)^n = α/2,
    # so p = 1 - (α/2)^(1/n) exactly
    n = 2000
    rule = TripProbability(option=BOOT, p_max=1e-2, samples=n, seed=3)
    o = check_rules(demo, [rule]).outcomes[0]
    assert o.check.value == pytest.approx(1 - 0.025 ** (1 / n), rel=1e-9)
    assert o.ok and f"0 of {n} samples trip" in o.check.text
    tight = TripProbability(option=BOOT, p_max=1e-4, samples=n, seed=3)
    assert not check_rules(demo, [tight]).ok  # 2000 samples cannot show 1e-4 with 95 % confidence
    assert check_rules(demo, [TripProbability(option=BOOT, p_max=1e-4, samples=n, seed=3,
                                              statistic="estimate")]).ok


def test_a_part_change_that_breaks_the_design_breaks_the_rule(demo):
    rules = [RailMargin(option=BOOT, margin=1.0)]
    assert_rules(demo, rules)
    small = explorer.replace_field(demo, "options[0].c", "10n")  # 22 times smaller C_boot
    with pytest.raises(RuleViolation, match=r"rail_margin.*BROKEN: rail minimum .* at the worst corner"):
        assert_rules(small, rules)


def test_duty_covers_fails_beyond_the_buck_limit(demo, comparison):
    v_max = comparison[BOOT].duty.topology["v_out_max"]
    high = explorer.replace_field(demo, "bridge.v_out", min(0.99 * 48, v_max + 0.3))
    o = check_rules(high, [DutyCovers(option=BOOT)]).outcomes[0]
    assert not o.ok and o.check.value < 0 and "feasible HS duty" in o.check.text


def test_rule_file_round_trip(tmp_path, demo):
    rules = [RailMargin(option=BOOT, margin=1.5, name="x"), TripProbability(p_max=1e-3, samples=500),
             DutyCovers(duty_min=0.1, duty_max=0.8), ChecksHold()]
    p = tmp_path / "r.json"
    save_rules(rules, p, title="demo rules")
    assert load_rules(p) == tuple(rules)
    assert load_rules(json.dumps(rules_to_dict(rules))) == tuple(rules)
    text = json.loads(p.read_text())
    assert text["format"] == "explorer-rules" and text["version"] == 1


def _file(*rules, **top):
    return {"format": "explorer-rules", "version": 1, "rules": list(rules), **top}


@pytest.mark.parametrize("data, message", [
    (_file({"rule": "rail_gap"}), "rules[0].rule: expected one of 'rail_margin', 'capacitor_share'"),
    (_file({"rule": "startup_time", "t_max": "-1m"}), "rules[0].t_max: expected a number > 0 [s] (got '-1m')"),
    (_file({"rule": "startup_time"}), "rules[0].t_max: missing; expected a number > 0 [s]"),
    (_file({"rule": "efficiency", "min": 0.5, "max": 1}), "rules[0].max: unknown key; allowed: rule, option, min, name"),
    (_file({"rule": "capacitor_share", "share": 1.5}), "rules[0].share: expected a number > 0 and \u2264 1 (got 1.5)"),
    (_file({"rule": "trip_probability", "p_max": 0.1, "samples": 2.5}),
     "rules[0].samples: expected a whole number \u2265 1 and \u2264 1e+07 (got 2.5)"),
    (_file({"rule": "duty_covers", "duty_min": 0.9, "duty_max": 0.5}), "rules[0].duty_min: must not exceed duty_max"),
    (_file({"rule": "rail_margin", "at": "somewhere"}), "rules[0].at: expected one of 'every_corner', 'nominal'"),
    ({"format": "explorer-design", "version": 1, "rules": []}, "format: expected 'explorer-rules'"),
    ({"format": "explorer-rules", "version": 2, "rules": [{"rule": "checks_hold"}]}, "version: this rule file was written by a newer"),
    ({"format": "explorer-rules", "version": 1, "rules": []}, "rules: expected a list of 1 to 500 rules"),
    ({"format": "explorer-rules", "version": 1, "rules": [], "extra": 1}, "extra: unknown key"),
])
def test_bad_rule_file_names_field_value_and_allowed(data, message):
    with pytest.raises(DesignError) as exc:
        load_rules(data)
    assert str(exc.value).startswith(message), str(exc.value)
    # docs/bad-input.md shows the exact text
    doc = (pathlib.Path(__file__).parents[1] / "docs" / "bad-input.md").read_text(encoding="utf-8")
    assert f"| {exc.value} |" in doc, f"add to docs/bad-input.md: {exc.value}"


def test_rule_naming_a_missing_option_or_capacitor(demo, comparison):
    with pytest.raises(DesignError, match=r"rules\[1\]\.option: no option with this label in the design; labels: "
                                          r"bootstrap 220n, .* \(got 'bootstrap 1u'\)"):
        check_rules(demo, [ChecksHold(), ChecksHold(option="bootstrap 1u")], comparison=comparison)
    with pytest.raises(DesignError, match=r"rules\[0\]\.capacitor: option 'pump 1:1' has no capacitor of that "
                                          r"name; names: c_fly, c_out"):
        check_rules(demo, [CapacitorShare(option="pump 1:1", capacitor="C_boot")], comparison=comparison)
    unrated = explorer.replace_field(demo, "options[0].v_rating", None)
    with pytest.raises(DesignError, match="capacitor C_boot of option 'bootstrap 220n' has no v_rating"):
        check_rules(unrated, [CapacitorShare(option=BOOT)])
    with pytest.raises(DesignError, match="comparison: is the evaluation of another design"):
        check_rules(unrated, [ChecksHold()], comparison=comparison)


def test_report_views(demo, comparison):
    rep = check_rules(demo, [StartupTime(t_max=1e-3)], comparison=comparison)
    text = rep.to_text()
    assert text.splitlines()[0].endswith("1 of 5 design rules BROKEN")
    html = rep._repr_html_()
    assert "<table>" in html and "BROKEN" in html and "<script" not in html
    d = rep.to_dict()
    assert d["ok"] is False and d["outcomes"][4]["option"] == "isolated 1 W" and not d["outcomes"][4]["ok"]
    json.dumps(d, allow_nan=False)


# --------------------------------------------------------------------------- command line

def run(*args):
    return subprocess.run([sys.executable, "-m", "explorer", *args], capture_output=True, text=True, timeout=120)


@pytest.fixture()
def files(tmp_path):
    design = tmp_path / "design.json"
    design.write_text(json.dumps(DEMO))

    def rules(*rs):
        p = tmp_path / "rules.json"
        p.write_text(json.dumps(_file(*rs)))
        return str(p)
    return str(design), rules


def test_cli_check_exit_0_when_every_rule_holds(files):
    design, rules = files
    r = run("check", design, rules({"rule": "rail_margin", "option": BOOT, "margin": 1},
                                   {"rule": "startup_time", "option": BOOT, "t_max": "1m"}))
    assert r.returncode == 0, r.stderr
    assert "all 2 design rules hold" in r.stdout


def test_cli_check_exit_1_on_a_broken_rule(files):
    design, rules = files
    r = run("check", design, rules({"rule": "capacitor_share", "option": BOOT, "share": 0.5}), "--json")
    assert r.returncode == 1, r.stderr
    out = json.loads(r.stdout)
    assert out["ok"] is False and out["outcomes"][0]["rule"] == "capacitor_share"
    assert out["outcomes"][0]["value"] > 0.5
    r = run("check", design, rules({"rule": "capacitor_share", "option": BOOT, "share": 0.5}))
    assert r.returncode == 1 and "BROKEN: C_boot sees 13 V of its 25 V rating" in r.stdout


@pytest.mark.parametrize("bad, needle", [
    ({"rule": "startup_time", "t_max": "soon"}, "error: rules[0].t_max: expected a number"),
    ({"rule": "checks_hold", "option": "no such"}, "error: rules[0].option: no option with this label"),
])
def test_cli_check_exit_2_on_bad_rules(files, bad, needle):
    design, rules = files
    r = run("check", design, rules(bad))
    assert r.returncode == 2 and r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(needle), r.stderr


def test_cli_check_exit_2_on_a_missing_rule_file_or_a_bad_design(files, tmp_path):
    design, rules = files
    r = run("check", design, str(tmp_path / "none.json"))
    assert r.returncode == 2 and r.stderr.startswith("error: cannot read rule file")
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({**DEMO, "gate": {**DEMO["gate"], "q_g": "forty"}}))
    r = run("check", str(bad), rules({"rule": "checks_hold"}))
    assert r.returncode == 2 and r.stderr.startswith("error: gate.q_g")
