"""The hand-off report: self-contained, embeds the design, numbers equal a fresh evaluation, CLI."""

import json
import pathlib
import re
import subprocess
import sys

import pytest

import explorer
from explorer import DEMO, DesignError
from explorer.rules import CapacitorShare, RailMargin, StartupTime
from explorer.views.report import read_report, report_html, write_report

RULES = [RailMargin(option="bootstrap 220n", margin=1.0), CapacitorShare(option="bootstrap 220n", share=0.5),
         StartupTime(t_max=1e-3)]
NOTEBOOK = str(pathlib.Path(__file__).parent.parent / "notebooks" / "demo.ipynb")


@pytest.fixture(scope="module")
def page():
    return report_html(explorer.demo_design(), rules=RULES, notebook=NOTEBOOK, plots=False)


def test_embedded_design_reproduces_the_numbers(page):
    blocks = read_report(page)
    again = explorer.evaluate(explorer.load_design(blocks["design"]))
    assert blocks["result"] == json.loads(again.to_json())  # every figure of the explorer-result JSON
    assert explorer.load_design(blocks["design"]) == explorer.demo_design()
    # the table the reader sees is the table of the fresh evaluation
    assert explorer.views.comparison_html(again) in page


def test_rules_and_status_are_shown_and_embedded(page):
    blocks = read_report(page)
    assert explorer.load_rules(blocks["rules"]) == tuple(RULES)
    rep = explorer.check_rules(blocks["design"], blocks["rules"])
    assert blocks["rules-report"] == json.loads(json.dumps(rep.to_dict()))
    assert not rep.ok and "BROKEN" in page and "C_boot sees 13 V of its 25 V rating" in page


def test_cautions_and_verdicts(page):
    assert explorer.CAUTION.split(":")[1].strip()[:40] in page
    assert "IEC 62368-1" in page
    for r in explorer.evaluate(explorer.demo_design()).options:
        assert r.verdict.replace("<", "&lt;").replace(">", "&gt;") in page


def test_nothing_outside_is_referenced(page):
    # no attribute loads from a network address, and the policy forbids the browser to fetch anything
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:)?//""", page, re.I)
    assert "Content-Security-Policy" in page and "default-src 'none'" in page


def test_notebook_cells_without_their_scripts(page, tmp_path):
    nb = json.loads(pathlib.Path(NOTEBOOK).read_text(encoding="utf-8"))
    md = next(c for c in nb["cells"] if c["cell_type"] == "markdown")
    assert "Floating supplies for the high-side driver" in page and "".join(md["source"]).split("\n")[0][2:] in page
    # an output carrying a script or a remote image is shown as text, never as live HTML
    nb["cells"].append({"cell_type": "code", "source": "x", "metadata": {}, "execution_count": 1, "outputs": [
        {"output_type": "display_data", "metadata": {},
         "data": {"text/html": "<img src='http://example.invalid/x.png'><script>alert(1)</script>",
                  "text/plain": "plain fallback"}}]})
    html = report_html(explorer.demo_design(), notebook=nb, plots=False)
    assert "example.invalid" not in html and "alert(1)" not in html and "plain fallback" in html


def test_bad_notebook_and_unwritable_output(tmp_path):
    bad = tmp_path / "x.ipynb"
    bad.write_text("{not json")
    with pytest.raises(DesignError, match="notebook: not a Jupyter notebook"):
        report_html(DEMO, notebook=str(bad), plots=False)
    with pytest.raises(DesignError, match="notebook: not a Jupyter notebook \\(no list of cells\\)"):
        report_html(DEMO, notebook={"cells": 3}, plots=False)
    with pytest.raises(DesignError, match="--out: cannot write the report"):
        write_report(DEMO, tmp_path / "no" / "such" / "dir.html", plots=False)
    with pytest.raises(DesignError, match="not an explorer report"):
        read_report("<html></html>")


def run(*args):
    return subprocess.run([sys.executable, "-m", "explorer", *args], capture_output=True, text=True, timeout=300)


def test_cli_report(tmp_path):
    design = tmp_path / "d.json"
    design.write_text(json.dumps(DEMO))
    rules = tmp_path / "r.json"
    explorer.rules.save_rules(RULES, rules)
    out = tmp_path / "report.html"
    r = run("report", str(design), "--rules", str(rules), "--notebook", NOTEBOOK, "--no-plots", "--out", str(out))
    assert r.returncode == 0, r.stderr
    assert "design rules: 2 broken" in r.stderr  # C_boot share and the isolated start-up
    blocks = read_report(out)
    assert blocks["design"] == explorer.design_to_dict(explorer.load_design(DEMO))
    r = run("report", str(design), "--rules", str(tmp_path / "none.json"), "--no-plots", "--out", str(out))
    assert r.returncode == 2 and r.stderr.startswith("error: cannot read rule file")
