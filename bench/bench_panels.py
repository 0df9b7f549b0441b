"""Benchmark of the widget panels, kernel side: a control change to new plot data.

Prints figures for docs/performance.md. Run: python bench/bench_panels.py

What is timed is what a notebook kernel does after the browser sends a changed value: the
widget's callback (form, validation by load_design, hand-off to the worker thread), the
evaluation on the worker, and the update of the side-by-side table and of every plot's sources
(Plot.update). The browser's drawing is not included. The slow case is a three-phase leg at a
low output frequency (an invented scenario), where the callback must still return at once.
"""

import os
import statistics
import time
import warnings

import explorer
import explorer.panels as panels
from explorer.panels import runner, widgets


def _timed_show(panel):
    """Wrap ComparisonPanel.show to record its duration (table + plot sources)."""
    spent = []
    show = panel.comparison.show

    def timed(c):
        t = time.perf_counter()
        show(c)
        spent.append(time.perf_counter() - t)
    panel.comparison.show = timed
    return spent


def change_to_plot_data(panel, path, values, repeat=31):
    """Median times [s]: callback return, whole change → plot data, evaluation, show."""
    w = panel.control(path)
    spent = _timed_show(panel)
    cb, total, ev = [], [], []
    for i in range(repeat):
        t0 = time.perf_counter()
        w.value = values[i % len(values)]
        t1 = time.perf_counter()
        panel.wait()
        t2 = time.perf_counter()
        cb.append(t1 - t0)
        total.append(t2 - t0)
        ev.append(panel.evaluator.last_seconds)
    return (statistics.median(cb), statistics.median(total), statistics.median(ev), statistics.median(spent))


def three_phase():
    d = explorer.demo_design().to_dict()
    d["title"] = "Three-phase leg at 1 Hz (invented scenario)"
    d["bridge"] |= {"topology": "three_phase", "f_sw": "20k", "m": 0.9, "f_o": 1.0}
    d["options"] = [d["options"][0] | {"c": "10u"}]
    return d


def main():
    warnings.simplefilter("ignore", explorer.ExplorerWarning)
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores (other work slows every figure)")
    print(f"plots: {'yes' if widgets.plots_module() is not None else 'no (Bokeh missing)'}; "
          f"waveforms thinned to {widgets.PLOT_POINTS} points")
    p = panels.explore(explorer.DEMO).wait()
    # every typed value is new (no option result in explorer.memo yet), as when an engineer types
    cb, total, ev, show = change_to_plot_data(p, "bridge.f_sw", [f"{200 + k}k" for k in range(1, 32)])
    print(f"demo, f_sw typed: callback {cb * 1e3:.1f} ms; change -> new plot data {total * 1e3:.1f} ms "
          f"(target <= 50 ms): evaluate {ev * 1e3:.1f} ms, table + plot sources {show * 1e3:.1f} ms, "
          f"panel's own share {(total - ev) * 1e3:.1f} ms")
    cb, total, ev, show = change_to_plot_data(p, "options[0].c", [f"{221 + k}n" for k in range(31)])
    print(f"demo, C_boot typed: callback {cb * 1e3:.1f} ms; change -> new plot data {total * 1e3:.1f} ms "
          f"(evaluate {ev * 1e3:.1f} ms, show {show * 1e3:.1f} ms; the other four options remembered)")
    cb, total, ev, show = change_to_plot_data(p, "bridge.f_sw", ["210k", "200k"])
    print(f"demo, f_sw typed back and forth between two values (both remembered): change -> new plot data "
          f"{total * 1e3:.1f} ms (evaluate {ev * 1e3:.1f} ms)")
    # the slow case: the callback returns at once, a burst costs the running evaluation plus one
    slow = panels.explore(three_phase()).wait()
    first = slow.evaluator.last_seconds
    w = slow.control("bridge.m")
    evaluated, shown = [], []
    plain = runner.evaluate
    runner.evaluate = lambda d, **kw: (evaluated.append(d.bridge.m), plain(d, **kw))[1]
    show = slow.comparison.show
    slow.comparison.show = lambda c: (shown.append(c.design.bridge.m), show(c))
    t0 = time.perf_counter()
    cbs = []
    for v in ("0.91", "0.92", "0.93", "0.94", "0.95"):
        t = time.perf_counter()
        w.value = v
        cbs.append(time.perf_counter() - t)
        time.sleep(0.05)
    slow.wait(600)
    t_all = time.perf_counter() - t0
    runner.evaluate = plain
    print(f"three-phase 20 kHz at f_o = 1 Hz (one bootstrap, one evaluation {first:.2f} s): five changes "
          f"50 ms apart: callbacks at most {max(cbs) * 1e3:.1f} ms each; evaluated m = {evaluated}, shown "
          f"m = {shown}; all done after {t_all:.2f} s")


if __name__ == "__main__":
    main()
