"""Speed of the charge-pump models (figures for docs/performance.md).

Run: python3 bench/bench_charge_pump.py
Prints the median of repeated runs:
  * evaluate_option (steady state + start-up + limits + stress) for each demo pump, budget 5 ms;
  * R_out over a 10^6-point f_cp × c_fly grid from the limits (exact coth form and the
    square-root form), budget 0.5 s;
  * the engine's exact R_out over 1000 clock frequencies (one batched call);
  * Monte Carlo of the rail minimum, 10^4 samples per pump (rail_min_batch through
    tolerance.monte_carlo, with 20 % Q_G and 30 % I_Q spreads added), budget 0.5 s;
  * evaluate_option over a grid of extreme but legal pumps (each ratio; pump clock 1 kHz to
    50 MHz; C_fly and C_out each 1 nF, 1 uF or 1 mF; an I_Q of 1 uA so a 1 mF rail needs up to
    millions of pump cycles to reach UVLO), budget 10 ms each: the slowest and the median per
    clock, and the start-up cycles of the slowest. `--grid-only` prints only this part.
BLAS threads are limited to one (set before numpy loads): on a shared, loaded machine
threaded BLAS on many tiny matrices is slower and erratic.
The demo design is a scenario of our own invention.
"""

from __future__ import annotations

import dataclasses
import itertools
import os
import statistics
import sys
import time
import warnings

import numpy as np

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..")))

from _timing import median_s  # noqa: E402

from explorer import demo_design, replace_field  # noqa: E402
from explorer.errors import DesignError, ModelValidityWarning  # noqa: E402
from explorer.options.charge_pump import evaluate_option, r_out_engine, r_out_limits  # noqa: E402
from explorer.tolerance import monte_carlo  # noqa: E402


def median_time(fn, n: int) -> float:
    return median_s(fn, n)


GRID_F = (1e3, 1e4, 1e5, 1e6, 1e7, 5e7)
GRID_C = (1e-9, 1e-6, 1e-3)


def grid() -> None:
    """evaluate_option over extreme but legal pumps (module notes); one run each after a warm-up.

    Many of these designs lie outside the model's range (a pump clock far below the turn-on rate, phases of a
    few edge times) and the model warns so; the warnings are silenced here, where only the time counts.
    """
    warnings.simplefilter("ignore", ModelValidityWarning)
    base = replace_field(demo_design(), "driver.i_q", 1e-6)
    print("evaluate_option over the extreme grid (1 run each; budget 10 ms)")
    print(f"  {'f_cp':>8s} {'designs':>7s} {'median':>9s} {'slowest':>9s}  slowest design (ratio, C_fly, C_out, cycles)")
    worst_all = 0.0
    for f in GRID_F:
        ts, worst = [], (0.0, None)
        for idx, cf, co in itertools.product((1, 2, 3), GRID_C, GRID_C):
            d = replace_field(base, f"options[{idx}].f_cp", f)
            d = replace_field(d, f"options[{idx}].dead_time_cp", min(20e-9, 0.05 / f))
            d = replace_field(d, f"options[{idx}].c_fly.c", cf)
            d = replace_field(d, f"options[{idx}].c_out.c", co)
            for key in ("c_fly", "c_out"):  # ideal parts: no DC-bias derating at 1 mF
                d = replace_field(d, f"options[{idx}].{key}.dielectric", "ideal")
            o = d.options[idx]
            try:
                evaluate_option(d, o)
            except DesignError:
                continue
            t0 = time.perf_counter()
            r = evaluate_option(d, o)
            t = time.perf_counter() - t0
            ts.append(t)
            if t > worst[0]:
                worst = (t, (o.ratio, cf, co, r.startup.cycles_uvlo))
        worst_all = max(worst_all, worst[0])
        print(f"  {f:8.0e} {len(ts):7d} {statistics.median(ts) * 1e3:7.2f} ms {worst[0] * 1e3:7.2f} ms  {worst[1]}")
    print(f"  slowest over the grid: {worst_all * 1e3:.2f} ms (budget 10 ms)")


def main() -> None:
    if "--grid-only" in sys.argv:
        grid()
        return
    d = demo_design()
    print("charge pump benchmark (median of repeated runs)")
    for o in d.options:
        if o.kind != "charge_pump":
            continue
        t = median_time(lambda: evaluate_option(d, o), 50)
        print(f"  evaluate_option {o.label:<22s} {t * 1e3:7.2f} ms   (budget 5 ms)")
    f = np.logspace(3, 8, 1000)[:, None]
    c = np.logspace(-9, -5, 1000)[None, :]
    for method in ("exact", "sqrt"):
        t = median_time(lambda: r_out_limits(f, c, 1.0, ratio="2:1", method=method), 5)
        print(f"  R_out grid 1000 x 1000 ({method:<5s})          {t * 1e3:7.1f} ms   (budget 500 ms)")
    fs = np.logspace(3, 8, 1000)
    t = median_time(lambda: r_out_engine(fs, 220e-9, 1.0, ratio="2:1"), 5)
    print(f"  engine R_out, 1000 clocks (batched)       {t * 1e3:7.1f} ms")
    ds = dataclasses.replace(d, spread=dataclasses.replace(d.spread, q_g=0.2, i_q=0.3))
    for o in ds.options:
        if o.kind != "charge_pump":
            continue
        t = median_time(lambda: monte_carlo(ds, o.label, 10_000, seed=1), 5)
        print(f"  Monte Carlo 10^4 {o.label:<22s} {t * 1e3:7.1f} ms   (budget 500 ms)")
    grid()


if __name__ == "__main__":
    main()
