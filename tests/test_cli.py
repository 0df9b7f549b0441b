"""The command line: demo, evaluate, JSON contract, bad input (exit 2, one line, no traceback)."""

import json
import subprocess
import sys

import pytest

from explorer import DEMO


def run(*args, stdin=None):
    return subprocess.run([sys.executable, "-m", "explorer", *args], capture_output=True, text=True,
                          input=stdin, timeout=120)


def test_demo_prints_a_loadable_design(tmp_path):
    r = run("demo")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["format"] == "explorer-design" and "invented" in d["title"]
    p = tmp_path / "demo.json"
    p.write_text(r.stdout)
    r2 = run("evaluate", str(p), "--json")
    assert r2.returncode == 0, r2.stderr
    res = json.loads(r2.stdout)
    assert res["format"] == "explorer-result" and res["version"] == 1
    assert [o["label"] for o in res["options"]] == [o["label"] for o in DEMO["options"]]
    for o in res["options"]:
        for key in ("label", "kind", "feasible", "verdict", "warnings", "v_rail", "efficiency",
                    "p_delivered", "p_drawn", "startup", "duty", "r_out", "capacitors"):
            assert key in o, key


def test_text_table(tmp_path):
    p = tmp_path / "demo.json"
    p.write_text(json.dumps(DEMO))
    r = run("evaluate", str(p))
    assert r.returncode == 0, r.stderr
    assert "rail min / max" in r.stdout and "Caution" in r.stdout


@pytest.mark.parametrize("mutate, needle", [
    (lambda d: d["gate"].update(q_g="forty"), "error: gate.q_g: expected a number"),
    (lambda d: d["options"][1].update(c_fly=-1), "error: options[1].c_fly.c: expected a number > 0"),
    (lambda d: d.update(version=9), "error: version: this file was written by a newer explorer"),
    (lambda d: d["driver"].update(uvlo_off=99), "error: driver.uvlo_off: must be below uvlo_on"),
])
def test_bad_input_exit_2_one_line(tmp_path, mutate, needle):
    d = json.loads(json.dumps(DEMO))
    mutate(d)
    p = tmp_path / "bad.json"
    p.write_text(json.dumps(d))
    r = run("evaluate", str(p), "--json")
    assert r.returncode == 2
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(needle), r.stderr
    assert "Traceback" not in r.stderr


def test_missing_file_and_bad_json(tmp_path):
    r = run("evaluate", str(tmp_path / "nope.json"))
    assert r.returncode == 2 and r.stderr.startswith("error: cannot read design file")
    p = tmp_path / "trunc.json"
    p.write_text(json.dumps(DEMO)[:100])
    r = run("evaluate", str(p))
    assert r.returncode == 2 and r.stderr.startswith("error: not valid JSON")
    r = run("frobnicate")
    assert r.returncode == 2 and r.stderr.startswith("error:") and "Traceback" not in r.stderr


def test_stdin():
    r = run("evaluate", "-", "--json", stdin=json.dumps(DEMO))
    assert r.returncode == 0, r.stderr
    assert json.loads(r.stdout)["title"] == DEMO["title"]


def test_envelope_command(tmp_path):
    p = tmp_path / "demo.json"
    p.write_text(json.dumps(DEMO))
    r = run("envelope", str(p), "--samples", "300", "--seed", "2", "--json", "--quiet")
    assert r.returncode == 0, r.stderr
    assert r.stderr == ""  # quiet: no progress lines in CI logs
    out = json.loads(r.stdout)
    assert out["format"] == "explorer-envelope"
    assert [o["worst_case"]["label"] for o in out["options"]] == [o["label"] for o in DEMO["options"]]
    again = run("envelope", str(p), "--samples", "300", "--seed", "2", "--json", "--quiet")
    assert again.stdout == r.stdout  # same seed, same numbers
    noisy = run("envelope", str(p), "--samples", "50", "--label", "pump 1:1")
    assert "Monte Carlo pump 1:1: 50/50" in noisy.stderr


def test_envelope_strict_exit_code_and_bad_input(tmp_path):
    d = json.loads(json.dumps(DEMO))
    d["bridge"]["v_out"] = 47.5  # the bootstrap cannot refresh at 99 % duty
    p = tmp_path / "tight.json"
    p.write_text(json.dumps(d))
    r = run("envelope", str(p), "--samples", "100", "--label", "bootstrap 220n", "--quiet", "--strict")
    assert r.returncode == 1 and "FAILS" in r.stdout
    r = run("envelope", str(p), "--samples", "0")
    assert r.returncode == 2 and r.stderr.strip() == "error: --samples: expected a whole number from 1 to 10000000 (got 0)"
    r = run("envelope", str(p), "--label", "nope")
    assert r.returncode == 2 and r.stderr.startswith("error: --label: no option labelled 'nope'")


def test_demo_file_numbers_read_as_engineers_write_them():
    r = run("demo")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["bridge"]["f_sw"] == "200 kHz" and d["bridge"]["precharge"] == "5 µs"
    assert d["options"][0]["c"] == "220 nF" and d["options"][4]["cmti"] == "100 V/ns"
    assert "e-0" not in r.stdout and "9999" not in r.stdout


def test_size_command(tmp_path):
    p = tmp_path / "demo.json"
    p.write_text(json.dumps(DEMO))
    r = run("size", str(p), "--label", "bootstrap 220n", "--label", "pump 2:1 from 24 V", "--json",
            "--i-max", "2A")
    assert r.returncode == 0, r.stderr
    out = json.loads(r.stdout)
    assert out["format"] == "explorer-sizing" and "Caution" in out["caution"]
    boot, pump = out["options"]
    c, res = boot["values"]
    assert c["field"] == "options[0].c" and c["value"] >= 2 * c["minimum"] and c["margin"] >= 0
    # R ≥ (V_DD·(1 + tol) − V_F)/i_max − r_D − ESR (Ohm's law on the dead capacitor), on the E12 series
    assert res["value"] >= (12 * 1.05 - 0.55) / 2 - 0.5 - 0.01
    assert [v["quantity"] for v in pump["values"]] == ["flying capacitor C_fly", "pump clock f_cp"]
    text = run("size", str(p), "--label", "isolated 1 W")
    assert text.returncode == 0 and "module power rating" in text.stdout and "Caution" in text.stdout


def test_size_says_why_nothing_works(tmp_path):
    d = json.loads(json.dumps(DEMO))
    d["aux"]["v_dd"] = 9  # 9 V less 5 % less the 0.55 V diode: 8 V, below max(7.8, 8) + 0.5 = 8.5 V
    p = tmp_path / "low.json"
    p.write_text(json.dumps(d))
    r = run("size", str(p), "--label", "bootstrap 220n")
    assert r.returncode == 1
    assert "nothing works" in r.stdout and "worst-corner ceiling of the rail" in r.stdout
    assert "below the requirement" in r.stdout
