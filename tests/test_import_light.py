"""The core stays light: ``import explorer`` loads neither the widget nor the plotting library."""

import subprocess
import sys


def test_import_explorer_loads_no_panel_libraries():
    code = ("import sys, explorer; explorer.evaluate(explorer.DEMO); "
            "bad = [m for m in ('ipywidgets', 'bokeh', 'jupyter_bokeh', 'IPython', 'matplotlib') if m in sys.modules]; "
            "print(','.join(bad))")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == ""
