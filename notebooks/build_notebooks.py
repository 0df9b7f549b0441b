"""Write and execute the demo notebooks, so that they are stored with their outputs.

Run after any change that moves a figure (nbval in `make test` fails until you do):

    .venv/bin/python notebooks/build_notebooks.py

The notebooks use only the public API. Their outputs are what a colleague reads and what nbval
re-checks in CI.
"""

from __future__ import annotations

import pathlib
import sys

import nbformat
from nbconvert.preprocessors import ExecutePreprocessor

HERE = pathlib.Path(__file__).parent

CAUTION_MD = (
    "> **Caution.** Bus voltages in these circuits can be lethal and stored charge persists after "
    "power-off. These results are estimates to be confirmed by measurement. Isolation ratings, creepage "
    "and clearance follow the applicable safety standards (for example IEC 62368-1, IEC 61800-5-1, "
    "IEC 60664-1), local codes and licensed practice.")

DEMO = [
    ("md", "# Floating supplies for the high-side driver: the demo design\n\n"
           "This notebook compares every floating-supply option of explorer's built-in demo design, "
           "a 48 V to 12 V synchronous buck at 200 kHz. **The design is a scenario of our own invention**, "
           "not a product or a reference design; its part values are plausible round numbers.\n\n" + CAUTION_MD),
    ("code", "import numpy as np\nimport explorer\nfrom explorer import format_eng\n\n"
             "design = explorer.demo_design()\nprint(design.title)\nprint([o.label for o in design.options])"),
    ("md", "## Side by side\n\nOne call evaluates every option: steady-state rail, efficiency, start-up, "
           "duty-cycle limits and capacitor stress, each checked with a margin. The table is plain HTML, "
           "so it shows even in an untrusted notebook."),
    ("code", "result = explorer.evaluate(design)\nresult"),
    ("code", "for r in result.options:\n"
             "    print(f\"{r.label:20s} {'holds' if r.feasible else 'FAILS':6s} rail min {format_eng(r.v_rail.min, 'V'):>8s}  \"\n"
             "          f\"efficiency {100 * r.efficiency:5.1f} %  overhead {format_eng(r.overhead, 'W'):>8s}\")"),
    ("md", "## The whole envelope: worst corner and Monte Carlo\n\n"
           "Spreads come from each capacitor's tolerance and EIA-198 temperature class, the aux-rail "
           "tolerance and the design's `spread` section. Here we add a ±10 % gate-charge spread and a "
           "±10 % diode forward-voltage spread to the demo (invented values)."),
    ("code", "from explorer.tolerance import monte_carlo, worst_case\n\n"
             "d = explorer.load_design(design.to_dict() | {\"spread\": {\"q_g\": 0.1, \"v_f\": 0.1}})\n"
             "for o in d.options:\n"
             "    w = worst_case(d, o.label)\n"
             "    print(f\"{o.label:20s} worst rail min {format_eng(w.rail_min, 'V'):>8s} (margin {w.margin:+.2f} V) at {w.corner}\")"),
    ("code", "mc = monte_carlo(d, \"bootstrap 220n\", 10_000, seed=1)\n"
             "print(f\"P(rail < UVLO off) = {mc.p_trip:.4f}, 95 % interval {mc.ci[0]:.4f} .. {mc.ci[1]:.5f}\")\n"
             "print(f\"lowest sampled rail minimum {format_eng(mc.rail_min.min(), 'V')}\")"),
    ("md", "## Where does the bootstrap stop holding?\n\n"
           "The margin map is the rail minimum minus UVLO-off over switching frequency and high-side duty."),
    ("code", "from explorer.sweep import margin_map\n\n"
             "f = np.array([50e3, 100e3, 200e3, 500e3, 1e6])\nu = np.array([0.5, 0.8, 0.9, 0.95, 0.98])\n"
             "m = margin_map(design, \"bootstrap 220n\", f, u)\n"
             "print('f_sw \\\\ duty ' + ''.join(f'{x:>8.2f}' for x in u))\n"
             "for fi, row in zip(f, m.margin):\n"
             "    print(f\"{format_eng(fi, 'Hz'):>11s} \" + ''.join(f'{x:8.2f}' for x in row))"),
    ("md", "## Sizing\n\nThe smallest E12 bootstrap capacitor that still holds the margin at the worst corner "
           "if the buck must run at 92 % duty:"),
    ("code", "from explorer.sizing import size_capacitor\n\n"
             "high = explorer.replace_field(d, \"bridge.v_out\", 0.92 * 48)\n"
             "s = size_capacitor(high, \"bootstrap 220n\", series=\"E12\")\n"
             "print(s.note)\n"
             "print(f\"next lower value {format_eng(s.below, 'F')} leaves {s.margin_below:+.2f} V at the worst corner\")"),
]


def build(cells, path: pathlib.Path) -> None:
    nb = nbformat.v4.new_notebook()
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    for kind, src in cells:
        nb.cells.append(nbformat.v4.new_markdown_cell(src) if kind == "md" else nbformat.v4.new_code_cell(src))
    ExecutePreprocessor(timeout=600, kernel_name="python3").preprocess(nb, {"metadata": {"path": str(HERE)}})
    for i, c in enumerate(nb.cells):  # stable ids keep diffs small
        c["id"] = f"cell-{i:02d}"
    nbformat.write(nb, path)
    print(f"wrote {path}", file=sys.stderr)


if __name__ == "__main__":
    build(DEMO, HERE / "demo.ipynb")
