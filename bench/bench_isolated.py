"""Speed of the isolated-supply model.

Prints the median wall-clock time of ``evaluate_option`` on the demo design's
isolated option (an invented scenario), and, for scale, on the same option
under a three-phase leg whose analysis period is a whole 50 Hz fundamental
(4000 switching periods), plus the bare steady-state rail solver.

Run: ``python3 bench/bench_isolated.py [repeats]``
"""

from __future__ import annotations

import os
import sys

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))  # run from a checkout

from _timing import median_s  # noqa: E402

from explorer import demo_design, load_design  # noqa: E402
from explorer.options.isolated import evaluate_option, output_rail  # noqa: E402
from explorer.schedule import period_schedule  # noqa: E402


def median_time(fn, repeats: int, inner: int) -> float:
    """Median over ``repeats`` of the mean time of ``inner`` calls [s]."""
    return median_s(fn, repeats, inner=inner)


def main(repeats: int = 21) -> None:
    demo = demo_design()
    opt = next(o for o in demo.options if o.kind == "isolated")
    d3 = demo.to_dict()
    d3["bridge"].update({"topology": "three_phase", "m": 0.9, "f_o": 50.0, "v_out": None})
    d3 = load_design(d3)
    opt3 = next(o for o in d3.options if o.kind == "isolated")
    s3 = period_schedule(d3)

    cases = [
        ("evaluate_option, demo (sync buck, 1 period)", lambda: evaluate_option(demo, opt), 50),
        (f"evaluate_option, three-phase 50 Hz ({s3.n_cycles} periods)", lambda: evaluate_option(d3, opt3), 3),
        (f"output_rail only, three-phase ({len(s3)} intervals)",
         lambda: output_rail(s3.dt, s3.hs_on, s3.hs_turn_on, v_src=12.0, r_out=1.0, c_out=4.7e-6,
                             q_pulse=41e-9, i_q=1e-4, r_gs=1e5), 3),
    ]
    print(f"isolated supply model, median of {repeats} runs")
    for name, fn, inner in cases:
        t = median_time(fn, repeats, inner)
        print(f"  {name:<55s} {t * 1e3:10.3f} ms")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 21)
