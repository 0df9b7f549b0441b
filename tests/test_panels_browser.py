"""The explorer in a real JupyterLab, driven by headless Chromium (Debian's) through Playwright.

JupyterLab runs on 127.0.0.1 with its own config, data, runtime, settings and workspace folders
under a temporary folder; the browser refuses every request that is not to 127.0.0.1 (none is
needed, and the test fails if one was tried). The test opens a notebook that shows the explorer,
runs all cells, types a new switching frequency into the design panel, and checks that the
side-by-side table and the start-up plot changed, and that the table shows what
``explorer.evaluate`` gives for the changed design.

A screenshot is kept as an artifact in ``build/test-artifacts/explorer-lab.png``; with
``EXPLORER_UPDATE_SCREENSHOT=1`` it also replaces ``docs/img/explorer.png`` (the README's).
"""

from __future__ import annotations

import json
import os
import pathlib
import shutil
import socket
import subprocess
import sys
import time
import urllib.request
import warnings

import nbformat
import pytest

import explorer
from browser import guard
from explorer.views.table import side_by_side_rows

ROOT = pathlib.Path(__file__).resolve().parents[1]
ARTIFACT = ROOT / "build" / "test-artifacts" / "explorer-lab.png"
README_IMAGE = ROOT / "docs" / "img" / "explorer.png"

CELLS = [
    "from explorer.views import plots\nplots.setup_notebook()",
    "import explorer\nfrom explorer.panels import explore\n\npanel = explore(explorer.demo_design())\npanel",
]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def lab(tmp_path_factory):
    """A JupyterLab server on 127.0.0.1 with its own folders; yields (base url, token, notebook folder)."""
    tmp = tmp_path_factory.mktemp("lab")
    work = tmp / "work"
    work.mkdir()
    nb = nbformat.v4.new_notebook()
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3 (ipykernel)", "language": "python"}
    nb.cells = [nbformat.v4.new_code_cell(c) for c in CELLS]
    nbformat.write(nb, work / "explorer.ipynb")
    settings = tmp / "settings" / "@jupyterlab" / "apputils-extension"
    settings.mkdir(parents=True)
    (settings / "notification.jupyterlab-settings").write_text(
        json.dumps({"fetchNews": "false", "checkForUpdates": False}), encoding="utf-8")
    env = dict(os.environ)
    for name in ("config", "data", "runtime", "ipython", "workspaces"):
        (tmp / name).mkdir()
    env.update(JUPYTER_CONFIG_DIR=str(tmp / "config"), JUPYTER_DATA_DIR=str(tmp / "data"),
               JUPYTER_RUNTIME_DIR=str(tmp / "runtime"), IPYTHONDIR=str(tmp / "ipython"),
               JUPYTERLAB_SETTINGS_DIR=str(tmp / "settings"), JUPYTERLAB_WORKSPACES_DIR=str(tmp / "workspaces"),
               PYTHONPATH=os.pathsep.join([str(ROOT), env.get("PYTHONPATH", "")]).rstrip(os.pathsep))
    port, token = _free_port(), "explorer-test-token"
    log = open(tmp / "lab.log", "wb")
    proc = subprocess.Popen([sys.executable, "-m", "jupyter", "lab", "--no-browser", "--ip=127.0.0.1",
                             f"--port={port}", f"--IdentityProvider.token={token}", "--allow-root",
                             f"--ServerApp.root_dir={work}", "--LabApp.news_url=", "--ServerApp.open_browser=False"],
                            cwd=work, env=env, stdout=log, stderr=subprocess.STDOUT)
    base = f"http://127.0.0.1:{port}"
    try:
        for _ in range(300):
            try:
                urllib.request.urlopen(f"{base}/api/status?token={token}", timeout=1).read()
                break
            except OSError:
                if proc.poll() is not None:
                    raise RuntimeError("JupyterLab did not start:\n" + (tmp / "lab.log").read_text(errors="replace"))
                time.sleep(0.1)
        else:
            raise RuntimeError("JupyterLab did not answer within 30 s")
        yield base, token, work
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            proc.kill()
        log.close()


def _table(page) -> list[list[str]]:
    rows = page.locator("table.explorer-side-by-side tr")
    return [[c.strip() for c in rows.nth(i).locator("th, td").all_inner_texts()] for i in range(rows.count())]


def _expected_rows(design) -> list[list[str]]:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", explorer.ExplorerWarning)
        c = explorer.evaluate(design)
    return [[q, *cells] for q, cells in side_by_side_rows(c)]


def test_explorer_in_jupyterlab(lab, browser):
    base, token, _ = lab
    page = browser.new_page(viewport={"width": 1600, "height": 3000})
    outside, errors = guard(page, ("http://127.0.0.1:", "ws://127.0.0.1:"))
    page.goto(f"{base}/lab/tree/explorer.ipynb?token={token}")
    page.locator(".jp-Notebook").wait_for(timeout=60_000)
    page.get_by_text("| Idle").first.wait_for(timeout=60_000)  # the kernel exists and is idle
    page.locator('.lm-MenuBar-itemLabel:text-is("Run")').click()
    page.locator('.lm-Menu-itemLabel:text-is("Run All Cells")').click()

    table = page.locator("table.explorer-side-by-side")
    table.wait_for(timeout=60_000)
    canvas = page.locator(".jp-OutputArea .bk-Canvas, .jp-OutputArea canvas").first
    page.wait_for_function("() => document.querySelectorAll('.jp-OutputArea .widget-tab').length > 0",
                           timeout=30_000)
    page.locator(".jp-OutputArea canvas").first.wait_for(timeout=30_000)
    time.sleep(0.5)  # let the first drawing settle
    before_rows = _table(page)
    assert before_rows[1:] == _expected_rows(explorer.demo_design())[0:], "table differs from evaluate"
    plot = page.locator(".jp-OutputArea .widget-tab").first
    before_plot = plot.screenshot()

    box = page.locator(".widget-text:has(label:text-is('f_sw [Hz]')) input").first
    box.fill("100k")
    box.press("Enter")
    page.wait_for_function(
        "() => { const t = document.querySelector('table.explorer-side-by-side'); "
        "return t && !t.innerText.includes('V_out \u2264 47.2 V'); }", timeout=30_000)
    page.get_by_text("up to date").first.wait_for(timeout=30_000)
    time.sleep(0.8)  # the plot redraws after its sources changed
    after_rows = _table(page)
    assert after_rows != before_rows
    assert after_rows[1:] == _expected_rows(explorer.replace_field(explorer.demo_design(), "bridge.f_sw", 100e3))
    assert plot.screenshot() != before_plot, "the plot did not change"

    ARTIFACT.parent.mkdir(parents=True, exist_ok=True)
    page.locator(".jp-OutputArea-output").last.screenshot(path=str(ARTIFACT))
    if os.environ.get("EXPLORER_UPDATE_SCREENSHOT") == "1":
        README_IMAGE.parent.mkdir(parents=True, exist_ok=True)
        shutil.copyfile(ARTIFACT, README_IMAGE)
    assert outside == [], f"requests outside 127.0.0.1 were tried: {outside[:5]}"
    assert errors == [], f"script errors on the page: {errors[:3]}"
    assert canvas.count() >= 1
