# %% [markdown]
# # A motor inverter at low speed and at standstill
#
# **An invented scenario** (not a product or a reference design; part values are plausible round
# numbers): a 48 V three-phase inverter for a motor, sine PWM at 20 kHz with third-harmonic injection,
# 150 nC of gate charge per high-side MOSFET and a 10 kΩ gate pull-down that draws current for the
# whole on-time. The drive must hold its rails while the motor turns slowly (5 Hz) and at standstill,
# when one leg can sit at its highest duty for as long as the rotor is held.
#
# **The question:** which bootstrap capacitor keeps the rail through low speed and standstill, how far
# can the modulation index go before the bootstrap gives up, and is a 1:1 charge pump needed?
#
# > **Caution.** Bus voltages in these circuits can be lethal and stored charge persists after
# > power-off. Results are estimates to be confirmed by measurement. Isolation, creepage and
# > clearance follow the applicable safety standards (for example IEC 62368-1, IEC 61800-5-1,
# > IEC 60664-1), local codes and licensed practice.

# %%
import warnings

import numpy as np

import explorer
from explorer import format_eng
from explorer.rules import CapacitorShare, ChecksHold, DutyCovers, HoldUp, RailMargin, StartupTime
from explorer.sweep import sweep

# the models' validity notes are listed in each result's warnings (the tables below show them)
warnings.simplefilter("ignore", explorer.ModelValidityWarning)

# %% [markdown]
# ## The design at 5 Hz, m = 1.0

# %%
def bootstrap(label, c):
    return {"label": label, "kind": "bootstrap", "c": c, "esr": "10m", "c_tol": 0.1, "dielectric": "X7R",
            "v_rating": 25, "r": 2.2, "diode": {"v_f": 0.5, "r_d": 0.5}, "c_j": "20p", "i_leak": "2u",
            "v_rrm": 100}


design = explorer.load_design({
    "format": "explorer-design", "version": 1,
    "title": "Invented scenario: 48 V three-phase motor inverter, 20 kHz, low speed",
    "bridge": {"topology": "three_phase", "v_bus": 48, "f_sw": "20k", "dead_time": "500n", "t_edge": "50n",
               "m": 1.0, "f_o": 5, "third_harmonic": True, "soft_start": "5m"},
    "gate": {"q_g": "150n", "v_gs_max": 20, "v_gs_on_min": 8, "r_gs": "10k"},
    "driver": {"i_q": "150u", "q_ls": "2n", "uvlo_on": 8.9, "uvlo_off": 8.2, "v_bs_max": 20, "t_on_min": "200n"},
    "aux": {"v_dd": 12, "c_dd": "47u", "v_dd_tol": 0.05},
    "spread": {"q_g": 0.1, "v_f": 0.1},
    "options": [
        bootstrap("bootstrap 1u", "1u"),
        bootstrap("bootstrap 4.7u", "4.7u"),
        {"label": "pump 1:1", "kind": "charge_pump", "ratio": "1:1", "f_cp": "200k",
         "c_fly": {"c": "470n", "esr": "10m", "dielectric": "X7R", "v_rating": 25},
         "c_out": {"c": "2.2u", "esr": "5m", "dielectric": "X7R", "v_rating": 25},
         "r_on": 2.0, "c_par": "10p", "alpha_bp": 0.001, "q_g_sw": "1n", "v_rating_sw": 100},
    ]})
result = explorer.evaluate(design)
result

# %% [markdown]
# ## Plots
#
# Interactive Bokeh plots of the same result. They are JavaScript: they draw when the notebook is trusted (a notebook received from someone else shows a short note in their place until you trust it, e.g. `jupyter trust three_phase_low_speed.ipynb`). `python -m explorer report DESIGN --out report.html` gives a file with every plot that needs neither a kernel nor trust. `setup_notebook()` stores BokehJS once, compressed; long waveforms are thinned to 1500 points per option keeping every stretch's highest and lowest sample, so the stored notebook stays small.

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
# ## Low speed, standstill and the modulation index
#
# The rail minimum of each option over the output frequency (0 Hz is standstill: the highest duty
# held for ever) and the modulation index, up to 2/√3 ≈ 1.155, the end of the linear range with
# third-harmonic injection, where the crest duty reaches 100 %. `nan` marks a grid point the design
# file rejects or where the rail is never refreshed (the high side on throughout).

# %%
f_o = [0.0, 5.0, 50.0]
m = [0.8, 1.0, 1.1, 1.15]
grid = sweep(design, {"bridge.f_o": f_o, "bridge.m": m}, figures=["rail_min", "feasible"])
need = max(design.driver.uvlo_off, design.gate.v_gs_on_min) + design.checks.v_margin
print(f"rail minimum [V]; the rail must stay above {format_eng(need, 'V')}")
for label, figs in grid.figures.items():
    print(f"\n{label}\n   f_o \\ m " + "".join(f"{x:>8.2f}" for x in m))
    for f, row, ok in zip(f_o, figs["rail_min"], figs["feasible"]):
        print(f"{format_eng(f, 'Hz'):>10s} " + "".join(f"{v:8.2f}" + ("" if k else "!") for v, k in zip(row, ok)))
print("\n(! marks a point where the option does not hold)")

# %% [markdown]
# The limits in the inverter's own terms (the highest modulation index each bootstrap holds, at this
# operating point and at standstill), and the hold-up each has once the duty clips to 100 %:

# %%
still = explorer.replace_field(design, "bridge.f_o", 0)
still_result = explorer.evaluate(still)
for label in ("bootstrap 1u", "bootstrap 4.7u"):
    here, st = result[label].duty, still_result[label].duty
    print(f"{label:15s} m_max {here.topology['m_max']:.3f} at 5 Hz, {st.topology['m_max']:.3f} at standstill; "
          f"hold-up at 100 % {format_eng(here.hold_up, 's')}")

# %% [markdown]
# ## Verdict
#
# At low speed the rail follows the slowly moving duty, so 5 Hz and standstill give the same rail
# minimum as long as every period keeps some low-side time: standstill is the case to design for,
# and **both bootstraps hold it up to m ≈ 1.13**. Beyond that the crest duty leaves no low-side time
# to refresh the capacitor and a bootstrap lives on its hold-up: at m = 1.15 and 50 Hz the crest
# passes quickly enough, at 5 Hz the rail sags below UVLO-off, and at standstill it is never refreshed
# at all (the high side stays on; the rail lasts only its hold-up). The
# larger capacitor buys hold-up, not a higher limit. If the drive must use the whole linear range
# at low speed, the **1:1 pump** is needed (it has no duty limit) at about four times the
# bootstrap's overhead; otherwise the controller caps m at 1.1 and **bootstrap 4.7u** is the
# choice. The cell below checks these statements against the numbers.

# %%
rail = grid.figures["bootstrap 4.7u"]["rail_min"]
assert np.allclose(rail[0][:-1], rail[1][:-1], atol=0.05)  # up to m = 1.1: standstill = 5 Hz within 50 mV
assert np.isnan(rail[0][-1]) and rail[1][-1] < need < rail[2][-1]  # m = 1.15: never refreshed, sags, rides
assert all(still_result[lab].duty.topology["m_max"] > 1.1 for lab in ("bootstrap 1u", "bootstrap 4.7u"))
assert not grid.figures["bootstrap 4.7u"]["feasible"][0][-1] and grid.figures["pump 1:1"]["feasible"][0][-1]
assert result["pump 1:1"].overhead > 3 * result["bootstrap 4.7u"].overhead
print("verdict premises hold")

# %% [markdown]
# ## The design rules the chosen supply must keep meeting
#
# Checked on the standstill design (the harder case): the rail keeps 1 V above UVLO-off at every
# tolerance corner, the feasible duty covers the crest duty of m = 1.1, and a 10 ms burst at 100 %
# duty does not trip UVLO.

# %%
choice = "bootstrap 4.7u"
crest_m11 = 0.5 * (1 + 1.1 * np.sqrt(3) / 2)   # crest duty with third harmonic: ½(1 + m·√3/2)
rules = [
    RailMargin(option=choice, margin=1.0),
    DutyCovers(option=choice, duty_min=0.05, duty_max=float(crest_m11)),
    HoldUp(option=choice, t_min=10e-3),
    CapacitorShare(option=choice, share=0.6),
    StartupTime(option=choice, t_max=still.bridge.soft_start / 10),
    ChecksHold(option=choice),
]
explorer.assert_rules(still, rules, comparison=still_result)
