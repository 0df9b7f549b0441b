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


def test_evaluate_and_the_cli_table_load_no_scipy():
    # scipy.optimize / scipy.special take longer to import than a whole evaluation of the demo;
    # only Monte Carlo (scipy.stats) and the junction diode's small arrays import scipy, when used.
    code = ("import sys, io, contextlib, explorer.__main__ as m; "
            "contextlib.redirect_stdout(io.StringIO()).__enter__(); m.main(['demo', '--evaluate']); "
            "sys.stderr.write(','.join(sorted(k for k in sys.modules if k.split('.')[0] == 'scipy')))")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    assert r.stderr.strip() == ""
