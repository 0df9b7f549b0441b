"""Benchmark of the comparison layer: evaluate, margin map, Monte Carlo, corners, sweeps.

Prints figures for docs/performance.md. Run: python bench/bench_compare.py
"""

import warnings

import numpy as np

import explorer
from _timing import median_s
from explorer.sweep import margin_map, sweep
from explorer.tolerance import monte_carlo, worst_case


def median_time(fn, n=21):
    return median_s(fn, n)


def main():
    warnings.simplefilter("ignore", explorer.ExplorerWarning)
    d = explorer.demo_design()
    explorer.evaluate(d)  # warm-up (imports)
    t = median_time(lambda: explorer.evaluate(d))
    print(f"evaluate(demo, {len(d.options)} options): median {t * 1e3:.2f} ms (target <= 20 ms)")
    for o in d.options:
        from explorer.options import model_for
        fn = model_for(o.kind)
        t = median_time(lambda: fn(d, o))
        print(f"  {o.label:24s} {t * 1e3:7.2f} ms")

    label = d.options[0].label
    f = np.geomspace(20e3, 2e6, 1000)
    u = np.linspace(0.01, 0.99, 1000)
    margin_map(d, label, f[:10], u[:10])
    t = median_time(lambda: margin_map(d, label, f, u), n=5)
    mm = margin_map(d, label, f, u)
    print(f"margin map {f.size}x{u.size} for {label!r}: {t:.3f} s = {f.size * u.size / t:.3g} points/s "
          f"(vectorised: {mm.vectorised}; target >= 1e6 points/s)")

    for o in d.options:
        t = median_time(lambda: monte_carlo(d, o.label, 10_000, seed=1), n=3)
        mc = monte_carlo(d, o.label, 10_000, seed=1)
        print(f"Monte Carlo 1e4 samples {o.label:24s} {t:.3f} s (vectorised: {mc.vectorised}; target <= 0.5 s)")

    t = median_time(lambda: worst_case(d, label), n=3)
    print(f"worst-case corner search ({label!r}): {t * 1e3:.1f} ms")
    t = median_time(lambda: sweep(d, {"bridge.f_sw": np.geomspace(50e3, 1e6, 10), "duty": np.linspace(0.1, 0.9, 10)}), n=1)
    print(f"general sweep 10x10 points, all {len(d.options)} options: {t:.2f} s")


if __name__ == "__main__":
    main()
