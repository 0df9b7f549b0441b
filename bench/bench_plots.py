"""Benchmark of the plots: building the demo's comparison plots, updating them, and static output.

Prints figures for docs/performance.md. Run: python bench/bench_plots.py

Timed (kernel side, no browser): ``comparison_plots`` of the demo (five figures and their sources
from an evaluated Comparison; the evaluation itself is not included), ``Plot.update`` of all five
with a new result, the same with waveforms thinned to 1,500 points (what the stored notebooks use),
``standalone_html`` of the five, and the sizes of what a page or a notebook carries.
"""

import statistics
import time

import explorer
from explorer.design import replace_fields
from explorer.views import plots

from _timing import median_s


def main():
    c = explorer.evaluate(explorer.demo_design())
    c2 = explorer.evaluate(replace_fields(c.design, {"options[0].c": 470e-9}))

    t_build = median_s(lambda: plots.comparison_plots(c), repeat=15)
    t_build_thin = median_s(lambda: plots.comparison_plots(c, max_points=1500), repeat=15)
    ps = plots.comparison_plots(c)
    flip = [c2, c]
    k = [0]

    def update():
        nxt = flip[k[0] % 2]
        k[0] += 1
        for p in ps.values():
            p.update(nxt)
    t_update = median_s(update, repeat=21)
    each = {}
    for name, p in ps.items():
        state = [0]

        def one(p=p, state=state):
            state[0] += 1
            p.update(flip[state[0] % 2])
        each[name] = statistics.median(_times(one, 11))
    t_html = median_s(lambda: plots.standalone_html(ps, title="demo"), repeat=5)
    page = plots.standalone_html(ps, title="demo")
    nb = plots.setup_html()
    outs = [plots.notebook_html(p) for p in plots.comparison_plots(c, max_points=1500).values()]
    print(f"comparison_plots(demo), five plots:            {1e3 * t_build:7.1f} ms")
    print(f"comparison_plots(demo, max_points=1500):        {1e3 * t_build_thin:7.1f} ms")
    print(f"update of all five with a new result:           {1e3 * t_update:7.1f} ms")
    for name, t in each.items():
        print(f"  update {name:8s}                              {1e3 * t:7.2f} ms")
    print(f"standalone_html of the five:                    {1e3 * t_html:7.1f} ms, {len(page) / 1e6:.2f} MB")
    print(f"notebook: setup_html (BokehJS gzip+base64)      {len(nb) / 1e3:7.0f} kB")
    print(f"notebook: five thinned plot outputs             {sum(len(o) for o in outs) / 1e3:7.0f} kB "
          f"({', '.join(f'{len(o) / 1e3:.0f}' for o in outs)})")


def _times(fn, n):
    out = []
    fn()
    for _ in range(n):
        t = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t)
    return out


if __name__ == "__main__":
    main()
