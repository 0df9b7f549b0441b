"""The plots drawn in headless Chromium with every request not to 127.0.0.1 refused.

Pages are served from a local HTTP server on 127.0.0.1; the route handler aborts and records every
other request, so a page that needed the network would fail here. "Drawn" means each plot's picture
holds many strongly coloured pixels: axes, grid and text are grey, so only drawn glyphs (lines,
bars, the heat map) are coloured, and a plot that failed to render has none. The test keeps the
start-up picture as an artifact in build/test-artifacts/plots-startup.png; with
EXPLORER_UPDATE_SCREENSHOT=1 it also replaces the README's docs/img/plots-startup.png (so running
the suite never leaves the work tree modified).
"""

import functools
import os
import http.server
import pathlib
import threading

import numpy as np
import pytest

pytest.importorskip("bokeh")
pytest.importorskip("playwright")

import explorer  # noqa: E402
from browser import guard  # noqa: E402
from explorer.sweep import margin_map  # noqa: E402
from explorer.tolerance import monte_carlo  # noqa: E402
from explorer.views import plots  # noqa: E402
from explorer.views.report import write_report  # noqa: E402

ROOT = pathlib.Path(__file__).resolve().parent.parent
ARTIFACT = ROOT / "build" / "test-artifacts" / "plots-startup.png"
PICTURE = ROOT / "docs" / "img" / "plots-startup.png"


@pytest.fixture(scope="module")
def served(tmp_path_factory):
    """(folder, base URL) of a throw-away HTTP server on 127.0.0.1."""
    folder = tmp_path_factory.mktemp("pages")
    handler = functools.partial(http.server.SimpleHTTPRequestHandler, directory=str(folder))
    handler.log_message = lambda *a, **k: None
    server = http.server.ThreadingHTTPServer(("127.0.0.1", 0), handler)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    yield folder, f"http://127.0.0.1:{server.server_address[1]}"
    server.shutdown()
    server.server_close()


def _open(browser, url):
    page = browser.new_page(viewport={"width": 1000, "height": 900})
    outside, errors = guard(page, ("http://127.0.0.1:",), console_errors=True)
    page.goto(url)
    page.wait_for_load_state("load")
    return page, outside, errors


def _coloured(png: bytes) -> int:
    """Pixels whose channels differ by more than 60 (saturated colour, not grey/black/white)."""
    import io

    from PIL import Image
    im = np.asarray(Image.open(io.BytesIO(png)).convert("RGB")).astype(int).reshape(-1, 3)
    return int(np.count_nonzero(im.max(axis=1) - im.min(axis=1) > 60))


def _drawn(page, selector: str, n: int) -> list:
    """Wait for ``n`` elements ``selector`` with a Bokeh canvas each; their coloured-pixel counts."""
    page.wait_for_function(
        f"Array.from(document.querySelectorAll({selector!r})).filter(e => e.querySelector('.bk-Figure, .bk-Plot'))"
        f".length >= {n}", timeout=20_000)
    page.locator("canvas").first.wait_for(state="visible", timeout=20_000)
    page.wait_for_timeout(500)
    items = page.locator(selector)
    return [_coloured(items.nth(i).screenshot()) for i in range(items.count())]


@pytest.fixture(scope="module")
def demo():
    return explorer.evaluate(explorer.demo_design())


def test_standalone_page_draws_every_plot_offline(browser, served, demo):
    folder, base = served
    d = demo.design
    ps = plots.comparison_plots(demo)
    ps["margin map"] = plots.margin_map_plot(
        margin_map(d, "bootstrap 220n", np.geomspace(20e3, 1e6, 12), np.linspace(0.5, 1.0, 11)), d)
    ps["monte carlo"] = plots.monte_carlo_plot(monte_carlo(d, "bootstrap 220n", 1000, seed=2))
    text = plots.standalone_html(ps, title="demo plots", path=folder / "plots.html")
    assert text.count("Bokeh=") <= 1 and text.count("Copyright (c) Anaconda") == 1  # BokehJS inline once
    page, outside, errors = _open(browser, f"{base}/plots.html")
    colours = _drawn(page, ".plot", len(ps))
    assert outside == [] and errors == []
    assert len(colours) == len(ps) and all(c > 500 for c in colours), colours  # every plot is drawn
    page.close()


def test_readme_picture_is_made_here(browser, served, demo):
    folder, base = served
    p = plots.startup_plot(demo, log_time=True)
    plots.standalone_html({"start-up": p}, title="Start-up of the demo's five options", path=folder / "one.html")
    page, outside, errors = _open(browser, f"{base}/one.html")
    _drawn(page, ".plot", 1)
    png = page.locator(".plot").first.screenshot()
    assert outside == [] and errors == [] and _coloured(png) > 500
    ARTIFACT.parent.mkdir(parents=True, exist_ok=True)
    ARTIFACT.write_bytes(png)
    if os.environ.get("EXPLORER_UPDATE_SCREENSHOT") == "1":
        PICTURE.parent.mkdir(parents=True, exist_ok=True)
        PICTURE.write_bytes(png)
    page.close()


def test_notebook_outputs_draw_with_the_compressed_bokehjs(browser, served, demo):
    # what a trusted notebook shows: the setup cell's output, then plot outputs (thinned for storage)
    folder, base = served
    ps = plots.comparison_plots(demo, max_points=1500)
    cells = [plots.setup_html()] + [plots.notebook_html(p) for p in ps.values()]
    html = "<!DOCTYPE html><html><head><meta charset='utf-8'></head><body>" + "".join(
        f"<div class='output'>{c}</div>" for c in cells) + "</body></html>"
    (folder / "nb.html").write_text(html, encoding="utf-8")
    assert len(html.encode()) < 700_000  # BokehJS compressed plus five plots, far under a notebook's 1 MB
    page, outside, errors = _open(browser, f"{base}/nb.html")
    colours = _drawn(page, ".explorer-plot", len(ps))
    assert outside == [] and errors == []
    assert len(colours) == len(ps) and all(c > 500 for c in colours), colours
    assert "Interactive (Bokeh)" not in page.inner_text("body")  # each note was replaced by its drawing
    page.close()


def test_notebook_output_without_javascript_says_what_to_do(demo):
    out = plots.notebook_html(plots.steady_plot(demo))
    note = out.split("<script", 1)[0]
    assert "trusted" in note and "python -m explorer report" in note


def test_report_draws_its_plots_offline(browser, served):
    folder, base = served
    write_report(explorer.demo_design(), folder / "report.html")
    page, outside, errors = _open(browser, f"{base}/report.html")
    colours = _drawn(page, ".plot", 5)
    assert outside == [] and errors == []
    assert len(colours) == 5 and all(c > 500 for c in colours), colours
    page.close()


_TOOLTIPS = """() => { const out = []; const walk = (n) => { if (!n) return; if (n.shadowRoot) walk(n.shadowRoot);
  for (const c of n.children || []) { if ((c.className || '').toString().includes('tooltip') && c.innerText.trim())
  out.push(c.innerText); walk(c); } }; walk(document.body); return out; }"""


def test_hover_shows_exact_values_with_units(browser, served, demo):
    folder, base = served
    plots.standalone_html({"stress": plots.stress_plot(demo)}, title="stress", path=folder / "hover.html")
    page, outside, errors = _open(browser, f"{base}/hover.html")
    _drawn(page, ".plot", 1)
    box = page.locator("canvas").first.bounding_box()
    tip = []
    for y in range(30, 200, 6):  # the top row is the first option's first capacitor
        page.mouse.move(box["x"] + 270, box["y"] + y)
        page.wait_for_timeout(40)
        tip = page.evaluate(_TOOLTIPS)
        if tip:
            break
    assert tip, "no tooltip over the first bar"
    text = tip[0]
    cap = demo.options[0].capacitors[0]
    margin = next(k for k in demo.options[0].checks if k.name == "cap_voltage_c_boot").margin
    six = lambda v: f"{float(f'{v:.6g}'):g}"  # noqa: E731  six significant digits, as the hover's JavaScript
    assert "C_boot" in text and f"{six(cap.v_max)} V" in text and f"{six(cap.v_rating)} V" in text
    assert f"{six(margin)} V" in text
    assert outside == [] and errors == []
    page.close()
