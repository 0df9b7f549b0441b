"""The hand-off report in headless Chromium with every outside request blocked."""

import json
import pathlib

import pytest

import explorer
from browser import guard
from explorer.rules import CapacitorShare, RailMargin
from explorer.views.report import write_report

NOTEBOOK = pathlib.Path(__file__).parent.parent / "notebooks" / "lv_buck_5v_aux.ipynb"
RULES = [RailMargin(option="bootstrap 220n", margin=1.0), CapacitorShare(option="bootstrap 220n", share=0.5)]


def _open(browser, path):
    """Load the file with every request other than the file itself refused and recorded."""
    page = browser.new_page(viewport={"width": 1280, "height": 900})
    url = path.as_uri()
    outside, errors = guard(page, lambda u: u == url)
    page.goto(url)
    page.wait_for_load_state("load")
    return page, outside, errors


def test_report_opens_offline_and_embeds_the_design(browser, tmp_path):
    path = tmp_path / "report.html"
    write_report(explorer.demo_design(), path, rules=RULES, notebook=str(NOTEBOOK), plots=False)
    page, outside, errors = _open(browser, path)
    assert outside == [] and errors == []
    # what the reader sees: the caution, the verdicts, the broken rule with its figures
    body = page.inner_text("body")
    assert "Caution: bus voltages in these circuits can be lethal" in body
    assert "C_boot sees 13 V of its 25 V rating" in body and "BROKEN" in body
    # the embedded design, read by the browser, evaluates to the numbers the report embeds and shows
    design = page.evaluate("JSON.parse(document.getElementById('explorer-design').textContent)")
    shown = page.evaluate("JSON.parse(document.getElementById('explorer-result').textContent)")
    fresh = explorer.evaluate(explorer.load_design(design))
    assert shown == json.loads(fresh.to_json())
    cell = page.inner_text("table >> nth=1")
    for r in fresh.options:
        assert r.label in cell
    page.close()
