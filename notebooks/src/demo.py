# %% [markdown]
# # Floating supplies for the high-side driver: the demo design
#
# This notebook compares every floating-supply option of explorer's built-in demo design, a 48 V to 12 V synchronous buck at 200 kHz. **The design is a scenario of our own invention**, not a product or a reference design; its part values are plausible round numbers.
#
# > **Caution.** Bus voltages in these circuits can be lethal and stored charge persists after power-off. These results are estimates to be confirmed by measurement. Isolation ratings, creepage and clearance follow the applicable safety standards (for example IEC 62368-1, IEC 61800-5-1, IEC 60664-1), local codes and licensed practice.

# %%
import numpy as np
import explorer
from explorer import format_eng

design = explorer.demo_design()
print(design.title)
print([o.label for o in design.options])

# %% [markdown]
# ## Side by side
#
# One call evaluates every option: steady-state rail, efficiency, start-up, duty-cycle limits and capacitor stress, each checked with a margin. The table is plain HTML, so it shows even in an untrusted notebook.

# %%
result = explorer.evaluate(design)
result

# %%
for r in result.options:
    print(f"{r.label:20s} {'holds' if r.feasible else 'FAILS':6s} rail min {format_eng(r.v_rail.min, 'V'):>8s}  "
          f"efficiency {100 * r.efficiency:5.1f} %  losses {format_eng(r.overhead, 'W'):>8s}")

# %% [markdown]
# ## Plots
#
# Interactive Bokeh plots of the same result. They are JavaScript: they draw when the notebook is trusted (a notebook received from someone else shows a short note in their place until you trust it, e.g. `jupyter trust demo.ipynb`). `python -m explorer report DESIGN --out report.html` gives a file with every plot that needs neither a kernel nor trust. `setup_notebook()` stores BokehJS once, compressed; long waveforms are thinned to 1500 points per option keeping every stretch's highest and lowest sample, so the stored notebook stays small.

# %%
from explorer.views import plots

plots.setup_notebook()
figures = plots.comparison_plots(result, max_points=1500, log_time=True)

# %% [markdown]
# Start-up from a dead rail on a logarithmic time axis (start-up times differ by orders of magnitude), with the UVLO thresholds and the required rail:

# %%
figures["startup"]

# %% [markdown]
# The steady-state rail over the analysis period, with the required minimum:

# %%
figures["steady"]

# %% [markdown]
# The feasible high-side duty of each option, the operating point, and the same share in the topology's own terms on the upper axis:

# %%
figures["duty"]

# %% [markdown]
# Voltage stress of each part against its rating and its derated rating (the check's limit), margin in volts:

# %%
figures["stress"]

# %% [markdown]
# Where each option's overhead goes, by mechanism (the tick is the overhead itself):

# %%
figures["loss"]

# %% [markdown]
# ## Explore it interactively
#
# The same design in explorer's panels: change a field (numbers as engineers type them: `2.2u`, `200k`, `12V`; the unit, meaning and allowed range of each field show when the pointer rests on it), switch the topology, add, duplicate, relabel or remove an option, and the side-by-side table and the plots follow. The panels need a running kernel: run the notebook in JupyterLab and they come alive; a stored copy shows them as they were saved. A rejected entry is marked at its field with the reason, and the numbers on screen stay those of the last valid entry. *save design* writes the design file; *static summary* writes the table, the plots and the design into the output, readable without a kernel.

# %%
from explorer.panels import explore

panel = explore(design, plots=("startup", "duty"))
panel

# %% [markdown]
# ## The whole envelope: worst corner and Monte Carlo
#
# Spreads come from each capacitor's tolerance and EIA-198 temperature class, the aux-rail tolerance and the design's `spread` section. Here we add a ±10 % gate-charge spread and a ±10 % diode forward-voltage spread to the demo (invented values).

# %%
from explorer.tolerance import monte_carlo, worst_case

d = explorer.load_design(design.to_dict() | {"spread": {"q_g": 0.1, "v_f": 0.1}})
for o in d.options:
    w = worst_case(d, o.label)
    print(f"{o.label:20s} worst rail min {format_eng(w.rail_min, 'V'):>8s} (margin {w.margin:+.2f} V) at {w.corner_text}")

# %%
mc = monte_carlo(d, "bootstrap 220n", 10_000, seed=1)
print(f"P(margin lost) = {mc.p_margin:.4f}")
print(f"P(UVLO trip: rail < UVLO off) = {mc.p_trip:.4f}, 95 % interval {mc.ci[0]:.4f} .. {mc.ci[1]:.5f}")
print(f"lowest sampled rail minimum {format_eng(mc.rail_min.min(), 'V')}")

# %%
plots.monte_carlo_plot(mc)

# %% [markdown]
# ## Where does the bootstrap stop holding?
#
# The margin map is the rail minimum minus UVLO-off over switching frequency and high-side duty.

# %%
from explorer.sweep import margin_map

f = np.array([50e3, 100e3, 200e3, 500e3, 1e6])
u = np.array([0.5, 0.8, 0.9, 0.95, 0.98])
m = margin_map(design, "bootstrap 220n", f, u)
print('f_sw \\ duty ' + ''.join(f'{x:>8.2f}' for x in u))
for fi, row in zip(f, m.margin):
    print(f"{format_eng(fi, 'Hz'):>11s} " + ''.join(f'{x:8.2f}' for x in row))

# %% [markdown]
# The same map drawn (a finer grid), with the trip boundary (rail minimum = UVLO-off), the required rail and the design's own point:

# %%
plots.margin_map_plot(margin_map(design, "bootstrap 220n", np.geomspace(50e3, 1e6, 14), np.linspace(0.5, 1.0, 26)), design)

# %% [markdown]
# ## Sizing
#
# The smallest E12 bootstrap capacitor that still holds the margin at the worst corner if the buck must run at 92 % duty:

# %%
from explorer.sizing import size_capacitor

high = explorer.replace_field(d, "bridge.v_out", 0.92 * 48)
s = size_capacitor(high, "bootstrap 220n", series="E12")
print(s.note)
print(f"next lower value {format_eng(s.below, 'F')} leaves {s.margin_below:+.2f} V at the worst corner")
