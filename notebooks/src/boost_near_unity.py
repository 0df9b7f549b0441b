# %% [markdown]
# # A boost near unity ratio: how close can the input come to the output?
#
# **An invented scenario** (not a product or a reference design; part values are plausible round
# numbers): a synchronous boost from a 36 V to 47 V input to a 48 V bus at 250 kHz. In a boost the
# high-side switch is the rectifier, on for (1 − D)·T with D = 1 − V_in/V_out, so as the input rises
# toward the output the high side conducts nearly the whole period and the bootstrap's refresh time
# (the low-side on-time) shrinks toward nothing.
#
# **The question:** up to which input voltage does a bootstrap keep the rail, and when the input
# exceeds the output for a moment (the high side on continuously, pass-through), how long does it
# hold? Is a 1:1 pump worth it?
#
# > **Caution.** Bus voltages in these circuits can be lethal and stored charge persists after
# > power-off. Results are estimates to be confirmed by measurement. Isolation, creepage and
# > clearance follow the applicable safety standards (for example IEC 62368-1, IEC 61800-5-1,
# > IEC 60664-1), local codes and licensed practice.

# %%
import warnings

import explorer
from explorer import format_eng
from explorer.rules import DutyCovers, EfficiencyMin, HoldUp, RailMargin, StartupTime, TripProbability
from explorer.sweep import sweep

# the models' validity notes are listed in each result's warnings (the tables below show them)
warnings.simplefilter("ignore", explorer.ModelValidityWarning)

# %% [markdown]
# ## The design at its highest regular input, 44 V

# %%
def bootstrap(label, c):
    return {"label": label, "kind": "bootstrap", "c": c, "esr": "10m", "c_tol": 0.1, "dielectric": "X7R",
            "v_rating": 25, "r": 2.2, "diode": {"v_f": 0.5, "r_d": 0.5}, "c_j": "15p", "i_leak": "1u",
            "v_rrm": 100}


design = explorer.load_design({
    "format": "explorer-design", "version": 1,
    "title": "Invented scenario: 44 V to 48 V synchronous boost at 250 kHz (near unity ratio)",
    "bridge": {"topology": "sync_boost", "v_bus": 48, "v_in": 44, "f_sw": "250k", "dead_time": "30n",
               "t_edge": "10n", "soft_start": "2m", "v_undershoot": 0.8},
    "gate": {"q_g": "35n", "v_gs_max": 20, "v_gs_on_min": 8, "r_gs": "47k"},
    "driver": {"i_q": "100u", "q_ls": "1n", "uvlo_on": 8.5, "uvlo_off": 7.8, "v_bs_max": 20, "t_on_min": "100n"},
    "aux": {"v_dd": 12, "c_dd": "22u", "v_dd_tol": 0.05},
    "spread": {"q_g": 0.1, "v_f": 0.1},
    "options": [
        bootstrap("bootstrap 220n", "220n"),
        bootstrap("bootstrap 1u", "1u"),
        {"label": "pump 1:1", "kind": "charge_pump", "ratio": "1:1", "f_cp": "1M",
         "c_fly": {"c": "100n", "esr": "10m", "dielectric": "X7R", "v_rating": 25},
         "c_out": {"c": "1u", "esr": "5m", "dielectric": "X7R", "v_rating": 25},
         "r_on": 2.0, "c_par": "5p", "alpha_bp": 0.001, "q_g_sw": "0.5n", "v_rating_sw": 100},
    ]})
result = explorer.evaluate(design)
result

# %% [markdown]
# ## Plots
#
# Interactive Bokeh plots of the same result. They are JavaScript: they draw when the notebook is trusted (a notebook received from someone else shows a short note in their place until you trust it, e.g. `jupyter trust boost_near_unity.ipynb`). `python -m explorer report DESIGN --out report.html` gives a file with every plot that needs neither a kernel nor trust. `setup_notebook()` stores BokehJS once, compressed; long waveforms are thinned to 1500 points per option keeping every stretch's highest and lowest sample, so the stored notebook stays small.

# %%
from explorer.views import plots

plots.setup_notebook()
figures = plots.comparison_plots(result, max_points=1500, log_time=True)

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

panel = explore(design, plots=("steady", "duty"))
panel

# %% [markdown]
# ## Rail minimum as the input rises toward the output
#
# Each bootstrap's duty limit in the boost's own terms is the lowest step-up ratio V_out/V_in it
# supports; below it (input above 48 V / ratio) the low-side pulse is too short to refresh the
# capacitor.

# %%
v_in = [36.0, 40.0, 44.0, 46.0, 47.0, 47.4]
grid = sweep(design, {"bridge.v_in": v_in}, figures=["rail_min", "feasible"])
print("V_in    HS share  " + "".join(f"{lab:>16s}" for lab in grid.figures))
for i, v in enumerate(v_in):
    cells = "".join(f"{format_eng(f['rail_min'][i], 'V'):>15s}" + (" " if f["feasible"][i] else "!")
                    for f in grid.figures.values())
    print(f"{v:5.1f} V   {v / 48:6.1%}  {cells}")
print("(! marks a point where the option does not hold)\n")
for label in ("bootstrap 220n", "bootstrap 1u"):
    ratio = result[label].duty.topology["v_out_over_v_in_min"]
    print(f"{label:15s} holds down to V_out/V_in = {ratio:.4f}, i.e. V_in up to {format_eng(48 / ratio, 'V')}; "
          f"pass-through hold-up {format_eng(result[label].duty.hold_up, 's')}")

# %% [markdown]
# ## Verdict
#
# Both bootstraps hold across the regular input range and up to within about half a volt of the
# output: the limit comes from the low-side pulse shrinking to tens of nanoseconds beside 30 ns dead
# times, not from the capacitor, so **a larger capacitor does not move the ratio limit**; what it buys is
# pass-through hold-up, milliseconds for 220 nF and several times that for 1 µF. If the input can
# sit above the output for longer than that (a battery-backed bus, say), only the **1:1 pump**
# holds indefinitely; otherwise **bootstrap 1u** is the cheap, efficient choice. Start-up is slow
# for a bootstrap on a boost: while the driver withholds the high-side pulses the inductor holds the
# switch node at the input (44 V, above the aux rail), so the capacitor fills only during the
# soft-start's short low-side pulses, some hundreds of microseconds to UVLO-on (a low-side pre-charge
# pulse would shorten it). The cell below checks these statements against the numbers.

# %%
r220, r1u = result["bootstrap 220n"], result["bootstrap 1u"]
assert r220.feasible and r1u.feasible
assert abs(r220.duty.topology["v_out_over_v_in_min"] - r1u.duty.topology["v_out_over_v_in_min"]) < 0.005
assert 48 / r1u.duty.topology["v_out_over_v_in_min"] > 47.0
assert r1u.duty.hold_up > 3 * r220.duty.hold_up and result["pump 1:1"].duty.hold_up is None
assert r1u.details.startup_v_sw_hold == 44.0 and 100e-6 < r1u.startup.t_uvlo < 1e-3
print("verdict premises hold")

# %% [markdown]
# ## The design rules the chosen supply must keep meeting

# %%
choice = "bootstrap 1u"
rules = [
    RailMargin(option=choice, margin=1.0),
    DutyCovers(option=choice, name="covers the highest regular input (44 V)"),
    HoldUp(option=choice, t_min=5e-3, name="rides 5 ms of pass-through"),
    TripProbability(option=choice, p_max=1e-3, samples=20_000, seed=1),
    EfficiencyMin(option=choice, min=0.8),
    StartupTime(option=choice, t_max=1e-3),
]
explorer.assert_rules(design, rules, comparison=result)
