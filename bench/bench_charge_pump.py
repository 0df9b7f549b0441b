"""Speed of the charge-pump models (figures for docs/performance.md).

Run: python3 bench/bench_charge_pump.py
Prints the median of repeated runs:
  * evaluate_option (steady state + start-up + limits + stress) for each demo pump, budget 5 ms;
  * R_out over a 10^6-point f_cp × c_fly grid from the limits (exact coth form and the
    square-root form), budget 0.5 s;
  * the engine's exact R_out over 1000 clock frequencies (one batched call);
  * Monte Carlo of the rail minimum, 10^4 samples per pump (rail_min_batch through
    tolerance.monte_carlo, with 20 % Q_G and 30 % I_Q spreads added), budget 0.5 s.
BLAS threads are limited to one (set before numpy loads): on a shared, loaded machine
threaded BLAS on many tiny matrices is slower and erratic.
The demo design is a scenario of our own invention.
"""

from __future__ import annotations

import dataclasses
import os
import statistics
import sys
import time

import numpy as np

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
sys.path.insert(0, os.path.abspath(os.path.join(os.path.dirname(__file__), "..")))

from explorer import demo_design  # noqa: E402
from explorer.options.charge_pump import evaluate_option, r_out_engine, r_out_limits  # noqa: E402
from explorer.tolerance import monte_carlo  # noqa: E402


def median_time(fn, n: int) -> float:
    fn()
    ts = []
    for _ in range(n):
        t = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t)
    return statistics.median(ts)


def main() -> None:
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


if __name__ == "__main__":
    main()
