# %% [markdown]
# # Your design: title here
#
# **Copy this notebook** (`cp notebooks/template.ipynb my_design.ipynb`), then replace the design
# below with your own and run all cells. The starting values are explorer's built-in demo design, **a
# scenario of our own invention**, not a product or a reference design.
#
# Write here the question this notebook answers, e.g. *"Does a 220 nF bootstrap hold our 48 V buck
# up to 92 % duty over temperature, or do we need a charge pump?"*
#
# > **Caution.** Bus voltages in these circuits can be lethal and stored charge persists after
# > power-off. Results are estimates to be confirmed by measurement. Isolation ratings, creepage and
# > clearance follow the applicable safety standards (for example IEC 62368-1, IEC 61800-5-1,
# > IEC 60664-1), local codes and licensed practice.

# %%
import warnings

import explorer
from explorer import format_eng
from explorer.rules import CapacitorShare, ChecksHold, DutyCovers, RailMargin, StartupTime, TripProbability
from explorer.tolerance import monte_carlo, worst_case

# the models' validity notes are listed in each result's warnings (the tables below show them)
warnings.simplefilter("ignore", explorer.ModelValidityWarning)

# %% [markdown]
# ## 1. The design
#
# Every key, its unit and allowed range is in `docs/glossary.md`; numbers may carry engineering
# suffixes (`"220n"`, `"200k"`). To keep the design in a file instead:
# `design = explorer.load_design("my_design.json")` (write one with `python -m explorer demo`).

# %%
design = explorer.load_design({
    "format": "explorer-design", "version": 1,
    "title": "My design (starting from the demo, an invented scenario)",
    "bridge": {"topology": "sync_buck", "v_bus": 48, "f_sw": "200k", "dead_time": "40n", "t_edge": "10n",
               "v_out": 12, "soft_start": "2m", "precharge": "5u", "v_undershoot": 1.0},
    "gate": {"q_g": "40n", "v_gs_max": 20, "v_gs_on_min": 8, "r_gs": "100k"},
    "driver": {"i_q": "100u", "q_ls": "1n", "uvlo_on": 8.5, "uvlo_off": 7.8, "v_bs_max": 20, "t_on_min": "100n"},
    "aux": {"v_dd": 12, "c_dd": "10u", "v_dd_tol": 0.05},
    "spread": {"q_g": 0.1, "v_f": 0.1},
    "options": [
        {"label": "bootstrap 220n", "kind": "bootstrap", "c": "220n", "esr": "10m", "c_tol": 0.1,
         "dielectric": "X7R", "v_rating": 25, "r": 2.2, "diode": {"v_f": 0.55, "r_d": 0.5}, "c_j": "15p",
         "i_leak": "1u", "v_rrm": 100},
        {"label": "pump 1:1", "kind": "charge_pump", "ratio": "1:1", "f_cp": "500k",
         "c_fly": {"c": "100n", "esr": "10m", "dielectric": "X7R", "v_rating": 25},
         "c_out": {"c": "1u", "esr": "5m", "dielectric": "X7R", "v_rating": 25},
         "r_on": 2.0, "c_par": "5p", "alpha_bp": 0.001, "q_g_sw": "0.5n", "v_rating_sw": 100},
    ]})

# %% [markdown]
# ## 2. Side by side

# %%
result = explorer.evaluate(design)
result

# %% [markdown]
# ## Plots
#
# Interactive Bokeh plots of the same result. They are JavaScript: they draw when the notebook is trusted (a notebook received from someone else shows a short note in their place until you trust it, e.g. `jupyter trust template.ipynb`). `python -m explorer report DESIGN --out report.html` gives a file with every plot that needs neither a kernel nor trust. `setup_notebook()` stores BokehJS once, compressed; long waveforms are thinned to 1500 points per option keeping every stretch's highest and lowest sample, so the stored notebook stays small.

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
# The same design in explorer's panels: change a field (numbers as engineers type them: `2.2u`, `200k`, `12V`; the unit, meaning and allowed range of each field show when the pointer rests on it), switch the topology, add, duplicate, relabel or remove an option, and the side-by-side table and the plots follow. The panels need a running kernel: run the notebook in JupyterLab and they come alive; a stored copy shows them as they were saved. A rejected entry is marked at its field with the reason, and the numbers on screen stay those of the last valid entry. *save design* writes the design file; *static summary* writes the table, the plots and the design into the output, readable without a kernel. Start from here when you replace the design above with your own.

# %%
from explorer.panels import explore

panel = explore(design)
panel

# %% [markdown]
# ## 3. The whole envelope: worst corner and Monte Carlo

# %%
for o in design.options:
    w = worst_case(design, o.label)
    mc = monte_carlo(design, o.label, 10_000, seed=1)
    print(f"{o.label:16s} worst corner rail min {format_eng(w.rail_min, 'V')} (margin {w.margin:+.2f} V); "
          f"P(margin lost) {mc.p_margin:.3g}; P(UVLO trip) {mc.p_trip:.3g}, 95 % interval up to {mc.ci[1]:.2g}")

# %% [markdown]
# ## 4. Verdict
#
# Write the answer to the question in plain words, and let a cell check its premises, so that the
# words cannot drift from the numbers when a part changes:

# %%
choice = result.ranking()[0]
assert result[choice].feasible
print(f"choice: {choice}: {result[choice].verdict}")

# %% [markdown]
# ## 5. The design rules it must keep meeting
#
# State your requirements; `assert_rules` raises `RuleViolation` naming any broken rule and its
# figures, so CI fails when a change breaks one. The same rules can live in a file for
# `python -m explorer check design.json rules.json` (`explorer.rules.save_rules(rules, "rules.json")`).
#
# Hand-off: `python -m explorer report design.json --rules rules.json --notebook this.ipynb --out
# report.html` writes one self-contained HTML file (opens offline) with the tables, plots, rules and
# the design file embedded.

# %%
rules = [
    RailMargin(option=choice, margin=1.0),
    CapacitorShare(option=choice, share=0.6),
    StartupTime(option=choice, t_max=1e-3),
    TripProbability(option=choice, p_max=1e-3, samples=10_000, seed=1),
    DutyCovers(option=choice),
    ChecksHold(option=choice),
]
explorer.assert_rules(design, rules, comparison=result)
