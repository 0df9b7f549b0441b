"""The notebook progress bar, driven without a browser."""

from explorer import DEMO, load_design
from explorer.panels import ProgressBar
from explorer.tolerance import monte_carlo


def test_progress_bar_follows_a_long_run():
    bar = ProgressBar("Monte Carlo")
    seen = []
    mc = monte_carlo(load_design(DEMO), "pump 1:1", 200, seed=1,
                     progress=lambda d, t: (seen.append((d, t)), bar(d, t)))
    assert mc.n == 200 and seen[-1] == (200, 200)
    assert bar.bar.value == bar.bar.max == 200
    assert bar.label.value == "200/200" and bar.bar.bar_style == "success"
    bar(3, 10)
    assert (bar.bar.value, bar.bar.max, bar.bar.bar_style) == (3, 10, "")
