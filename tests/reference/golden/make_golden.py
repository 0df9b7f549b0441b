"""Regenerate the stored explorer-result JSON of the golden designs.

Run from the repository root: ``.venv/bin/python tests/reference/golden/make_golden.py [DIR]``.
Only a change that moves figures on purpose regenerates these files, and its commit message says
which fields moved and why. With ``DIR`` the copies go there instead (the base of a restructuring on
this machine, compared to the last bit by ``EXPLORER_GOLDEN=DIR pytest tests/test_golden.py``).

The designs are scenarios of our own invention: the built-in demo and variants of it on the other
topologies (derived with ``replace_fields``), chosen to cover every schedule kind.
"""

from __future__ import annotations

import json
import pathlib
import sys
import warnings

import explorer
from explorer.design import replace_fields

HERE = pathlib.Path(__file__).resolve().parent

#: name -> changes applied to the demo design (an invented scenario).
VARIANTS = {
    "demo": {},
    "buck_light_load": {"bridge.mode": "light_load", "bridge.ls_pulse": 200e-9, "bridge.skip_cycles": 3},
    "boost": {"bridge.topology": "sync_boost", "bridge.v_in": 36.0, "bridge.v_out": None},
    "half_bridge": {"bridge.topology": "half_bridge", "bridge.v_out": None},
    "full_bridge_95": {"bridge.topology": "full_bridge", "bridge.duty": 0.95, "bridge.v_out": None},
    "three_phase": {"bridge.topology": "three_phase", "bridge.m": 0.9, "bridge.f_o": 200.0,
                    "bridge.f_sw": 20e3, "bridge.v_out": None},
    "line_leg": {"bridge.topology": "line_leg", "bridge.f_line": 50.0, "bridge.v_out": None},
}


def designs() -> dict:
    base = explorer.demo_design()
    return {name: replace_fields(base, ch) if ch else base for name, ch in VARIANTS.items()}


def result_json(design) -> str:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", explorer.ModelValidityWarning)
        return json.dumps(explorer.evaluate(design).to_dict(), allow_nan=False, indent=1, sort_keys=True)


if __name__ == "__main__":
    out = pathlib.Path(sys.argv[1]) if len(sys.argv) > 1 else HERE
    out.mkdir(parents=True, exist_ok=True)
    for name, d in designs().items():
        (out / f"{name}.json").write_text(result_json(d) + "\n")
        print("wrote", out / f"{name}.json")
