# %% [markdown]
# # A 5 V aux rail: bootstrap or a 1:2 charge pump?
#
# **An invented scenario** (not a product or a reference design; the part values are plausible round
# numbers): a 12 V to 1.2 V point-of-load synchronous buck switching at 600 kHz. The only aux rail is
# 5 V ±5 %, and the high-side MOSFET needs 4.5 V between gate and source for its on-resistance; we
# ask for 0.3 V on top.
#
# **The question:** does a bootstrap from the 5 V rail keep the floating rail high enough, or does a
# 1:2 charge pump (about 10 V from 5 V) earn its extra parts?
#
# > **Caution.** Results are estimates to be confirmed by measurement on the real hardware. Bus
# > voltages in other designs can be lethal; isolation, creepage and clearance follow the applicable
# > safety standards (for example IEC 62368-1, IEC 61800-5-1, IEC 60664-1), local codes and licensed
# > practice.

# %%
import warnings

import explorer
from explorer import format_eng
from explorer.rules import CapacitorShare, DutyCovers, EfficiencyMin, RailMargin, StartupTime, TripProbability

# the models' validity notes are listed in each result's warnings (the tables below show them)
warnings.simplefilter("ignore", explorer.ModelValidityWarning)

# %% [markdown]
# ## The design
#
# Both candidates sit in one design file: a bootstrap with a small Schottky diode (low forward drop,
# but more junction capacitance and leakage than a silicon diode) and a 1:2 pump clocked at 2 MHz.

# %%
design = explorer.load_design({
    "format": "explorer-design", "version": 1,
    "title": "Invented scenario: 12 V to 1.2 V synchronous buck at 600 kHz, 5 V aux rail",
    "bridge": {"topology": "sync_buck", "v_bus": 12, "f_sw": "600k", "dead_time": "15n", "t_edge": "5n",
               "v_out": 1.2, "soft_start": "1m", "v_undershoot": 0.7},
    "gate": {"q_g": "12n", "v_gs_max": 12, "v_gs_on_min": 4.5},
    "driver": {"i_q": "60u", "q_ls": "0.3n", "uvlo_on": 3.8, "uvlo_off": 3.5, "v_bs_max": 14, "t_on_min": "40n"},
    "aux": {"v_dd": 5, "c_dd": "4.7u", "v_dd_tol": 0.05},
    "checks": {"v_margin": 0.3},
    "spread": {"q_g": 0.1, "v_f": 0.1},
    "options": [
        {"label": "bootstrap 100n Schottky", "kind": "bootstrap", "c": "100n", "esr": "10m", "c_tol": 0.1,
         "dielectric": "X7R", "v_rating": 16, "r": 1.0, "diode": {"v_f": 0.35, "r_d": 0.3},
         "c_j": "30p", "i_leak": "20u", "v_rrm": 30},
        {"label": "pump 1:2 from 5 V", "kind": "charge_pump", "ratio": "1:2", "f_cp": "2M",
         "c_fly": {"c": "100n", "esr": "10m", "dielectric": "X7R", "v_rating": 10},
         "c_out": {"c": "470n", "esr": "5m", "dielectric": "X7R", "v_rating": 16},
         "r_on": 1.5, "c_par": "3p", "alpha_bp": 0.001, "q_g_sw": "0.3n", "v_rating_sw": 30},
    ]})
print(design.title)
print(f"the rail must stay above max(UVLO-off, V_GS needed) + margin = "
      f"{format_eng(max(design.driver.uvlo_off, design.gate.v_gs_on_min) + design.checks.v_margin, 'V')}")

# %% [markdown]
# ## Side by side

# %%
result = explorer.evaluate(design)
result

# %% [markdown]
# ## Plots
#
# Interactive Bokeh plots of the same result. They are JavaScript: they draw when the notebook is trusted (a notebook received from someone else shows a short note in their place until you trust it, e.g. `jupyter trust lv_buck_5v_aux.ipynb`). `python -m explorer report DESIGN --out report.html` gives a file with every plot that needs neither a kernel nor trust. `setup_notebook()` stores BokehJS once, compressed; long waveforms are thinned to 1500 points per option keeping every stretch's highest and lowest sample, so the stored notebook stays small.

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
# ## Explore it interactively
#
# The same design in explorer's panels: change a field (numbers as engineers type them: `2.2u`, `200k`, `12V`; the unit, meaning and allowed range of each field show when the pointer rests on it), switch the topology, add, duplicate, relabel or remove an option, and the side-by-side table and the plots follow. The panels need a running kernel: run the notebook in JupyterLab and they come alive; a stored copy shows them as they were saved. A rejected entry is marked at its field with the reason, and the numbers on screen stay those of the last valid entry. *save design* writes the design file; *static summary* writes the table, the plots and the design into the output, readable without a kernel.

# %%
from explorer.panels import explore

panel = explore(design, plots=("startup", "steady", "duty"))
panel

# %% [markdown]
# ## Why the bootstrap falls short, and by how much
#
# The bootstrap charges to about V_DD − V_F minus the drop across its resistor, and the gate charge
# and leakage pull it down while the high side conducts. Here is its rail minimum against what the
# gate needs, and the same bootstrap with a 5.25 V aux rail (the top of its tolerance) and with a
# diode of half the forward drop:

# %%
boot = "bootstrap 100n Schottky"
need = max(design.driver.uvlo_off, design.gate.v_gs_on_min) + design.checks.v_margin
variants = {
    "as designed": design,
    "V_DD at +5 %": explorer.replace_field(design, "aux.v_dd", 5.25),
    "diode V_F halved": explorer.replace_field(design, "options[0].diode.v_f", 0.175),
}
for name, d in variants.items():
    r = explorer.evaluate(d)[boot]
    print(f"{name:18s} rail min {format_eng(r.v_rail.min, 'V'):>8s}  margin {r.v_rail.min - need:+.3f} V  "
          f"{'holds' if r.feasible else 'FAILS'}")

# %% [markdown]
# ## Verdict
#
# The bootstrap from 5 V does **not** hold this gate: its rail lands a little below the 4.8 V the
# MOSFET needs even at nominal values, and only the top of the aux tolerance or a diode with half the
# drop would rescue it, neither of which a design can count on. The **1:2 pump holds** with volts to
# spare (its rail sits near 10 V, below the 12 V gate rating), draws a similar overhead, and does not
# care about the duty. The pump is the choice; the cell below checks that these statements still
# match the numbers.

# %%
assert not result[boot].feasible and result["pump 1:2 from 5 V"].feasible
assert result["pump 1:2 from 5 V"].v_rail.max < design.gate.v_gs_max
print("verdict premises hold:", result.ranking()[0], "ranks first")

# %% [markdown]
# ## The design rules the chosen supply must keep meeting
#
# If a later part change (a different flying capacitor, a slower pump clock, a bigger MOSFET) breaks
# one of these, this cell raises `RuleViolation` naming the rule and its figures, and CI fails.

# %%
pump = "pump 1:2 from 5 V"
rules = [
    RailMargin(option=pump, margin=1.0, above="v_gs_on_min", name="gate drive 1 V above the 4.5 V needed"),
    CapacitorShare(option=pump, share=0.7),
    StartupTime(option=pump, t_max=design.bridge.soft_start / 10, name="rail up within a tenth of soft-start"),
    TripProbability(option=pump, p_max=1e-3, samples=20_000, seed=1),
    EfficiencyMin(option=pump, min=0.8),
    DutyCovers(option=pump, duty_min=0.0, duty_max=1.0),
]
explorer.assert_rules(design, rules, comparison=result)
