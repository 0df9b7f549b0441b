"""Benchmark of the comparison layer: evaluate, margin map, Monte Carlo, corners, sweeps.

Prints figures for docs/performance.md. Run: python bench/bench_compare.py
"""

import os
import warnings

import numpy as np

import explorer
from _timing import median_s
from explorer import memo
from explorer.sweep import margin_map, sweep
from explorer.tolerance import monte_carlo, worst_case


def median_time(fn, n=21):
    return median_s(fn, n)


def main():
    warnings.simplefilter("ignore", explorer.ExplorerWarning)
    d = explorer.demo_design()
    explorer.evaluate(d)  # warm-up (imports)

    def cold():  # from an empty memory (explorer.memo): every figure computed
        memo.clear()
        explorer.evaluate(d)
    t = median_time(cold)
    print(f"evaluate(demo, {len(d.options)} options) from an empty memory: median {t * 1e3:.2f} ms "
          f"(targets <= 20 ms; issue 16: <= 5 ms)")
    f_new = iter(np.linspace(150e3, 250e3, 10_000))

    def new_f_sw():  # a design not seen before; the pumps' start-up and R_out are remembered
        explorer.evaluate(explorer.replace_field(d, "bridge.f_sw", float(next(f_new))))
    t = median_time(new_f_sw)
    print(f"evaluate(demo with a new f_sw each time), memory in use: median {t * 1e3:.2f} ms")
    c_new = iter(np.linspace(200e-9, 300e-9, 10_000))

    def new_c_boot():  # one option changed; the other four results are remembered
        explorer.evaluate(explorer.replace_field(d, "options[0].c", float(next(c_new))))
    t = median_time(new_c_boot)
    print(f"evaluate(demo with a new C_boot each time), memory in use: median {t * 1e3:.2f} ms")
    t = median_time(lambda: explorer.evaluate(d))
    print(f"evaluate(demo) again, every option remembered: median {t * 1e3:.3f} ms")
    for o in d.options:
        from explorer.options import model_for
        fn = model_for(o.kind)

        def one():
            memo.clear()
            fn(d, o)
        t = median_time(one)
        print(f"  {o.label:24s} {t * 1e3:7.2f} ms (empty memory)")

    label = d.options[0].label
    f = np.geomspace(20e3, 2e6, 1000)
    u = np.linspace(0.01, 0.99, 1000)
    for o in d.options:  # every option's map, 1000 x 1000 (the pumps' and the isolated module's since 2026-12-04)
        margin_map(d, o.label, f[:10], u[:10])
        t = median_time(lambda: margin_map(d, o.label, f, u), n=3)
        mm = margin_map(d, o.label, f, u)
        print(f"margin map {f.size}x{u.size} for {o.label!r}: {t:.3f} s = {f.size * u.size / t:.3g} points/s "
              f"(vectorised: {mm.vectorised}; target >= 1e6 points/s)")

    for o in d.options:
        t = median_time(lambda: monte_carlo(d, o.label, 10_000, seed=1), n=3)
        mc = monte_carlo(d, o.label, 10_000, seed=1)
        print(f"Monte Carlo 1e4 samples {o.label:24s} {t:.3f} s (vectorised: {mc.vectorised}; target <= 0.5 s)")

    t = median_time(lambda: worst_case(d, label), n=3)
    print(f"worst-case corner search ({label!r}): {t * 1e3:.1f} ms")
    memo.clear()
    t = median_time(lambda: sweep(d, {"bridge.f_sw": np.geomspace(50e3, 1e6, 10), "duty": np.linspace(0.1, 0.9, 10)}), n=1)
    print(f"general sweep 10x10 points (f_sw x duty), all {len(d.options)} options: {t:.2f} s = {100 / t:.0f} points/s "
          f"(issue 16: >= 1e4 points/s)")
    axes = {"bridge.f_sw": np.geomspace(50e3, 1e6, 20), "duty": np.linspace(0.1, 0.9, 20)}
    for w in sorted({1, os.cpu_count() or 1}):
        memo.clear()
        t = median_time(lambda: sweep(d, axes, workers=w), n=1)
        print(f"general sweep 20x20 points (f_sw x duty), workers={w}, from an empty memory: {t:.2f} s = "
              f"{400 / t:.0f} points/s")
    for n in (10, 100, 200):  # factorised: each option over its own axes only (sweep's notes)
        axes = {"options[0].c": np.geomspace(100e-9, 1e-6, n), "options[1].c_fly.c": np.geomspace(47e-9, 470e-9, n)}

        def run():
            memo.clear()
            sweep(d, axes)
        t = median_time(run, n=1)
        print(f"general sweep {n}x{n} points (C_boot x one pump's C_fly), all {len(d.options)} options, from an "
              f"empty memory: {t:.2f} s = {n * n / t:.0f} points/s")
    memo.clear()
    t = median_time(lambda: sweep(d, {"options[0].c": np.geomspace(100e-9, 1e-6, 10),
                                      "options[1].c_fly.c": np.geomspace(47e-9, 470e-9, 10)}, factorise=False), n=1)
    print(f"the 10x10 of them evaluated point by point (factorise=False, memory in use): {t:.2f} s = "
          f"{100 / t:.0f} points/s")


if __name__ == "__main__":
    main()
