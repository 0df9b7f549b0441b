# %% [markdown]
# # An H-bridge at 100 % command
#
# **An invented scenario** (not a product or a reference design; part values are plausible round
# numbers): a 24 V H-bridge drives a DC motor at 20 kHz. At full command one leg's high side stays on
# continuously, so nothing refreshes its bootstrap capacitor, and the gate pull-down, the driver's
# quiescent current and the diode leakage drain it.
#
# **The question:** how long can the bridge sit at 100 % command on a bootstrap before the driver
# drops out on UVLO, and what does a 1:1 charge pump cost to make full command possible indefinitely?
#
# > **Caution.** Results are estimates to be confirmed by measurement. Bus voltages in other designs
# > can be lethal; isolation, creepage and clearance follow the applicable safety standards (for
# > example IEC 62368-1, IEC 61800-5-1, IEC 60664-1), local codes and licensed practice.

# %%
import warnings

import explorer
from explorer import format_eng
from explorer.rules import CapacitorShare, ChecksHold, DutyCovers, EfficiencyMin, HoldUp, StartupTime

# the models' validity notes are listed in each result's warnings (the tables below show them)
warnings.simplefilter("ignore", explorer.ModelValidityWarning)

# %% [markdown]
# ## The design at 100 % command

# %%
design = explorer.load_design({
    "format": "explorer-design", "version": 1,
    "title": "Invented scenario: 24 V H-bridge leg for a DC motor at 20 kHz, 100 % command",
    "bridge": {"topology": "full_bridge", "v_bus": 24, "duty": 1.0, "f_sw": "20k", "dead_time": "300n",
               "t_edge": "30n", "soft_start": "5m"},
    "gate": {"q_g": "60n", "v_gs_max": 20, "v_gs_on_min": 8, "r_gs": "100k"},
    "driver": {"i_q": "120u", "q_ls": "1n", "uvlo_on": 8.5, "uvlo_off": 7.8, "v_bs_max": 20, "t_on_min": "200n"},
    "aux": {"v_dd": 12, "c_dd": "47u", "v_dd_tol": 0.05},
    "spread": {"q_g": 0.1, "i_q": 0.2, "v_f": 0.1},
    "options": [
        {"label": "bootstrap 2.2u", "kind": "bootstrap", "c": "2.2u", "esr": "10m", "c_tol": 0.1,
         "dielectric": "X7R", "v_rating": 25, "r": 2.2, "diode": {"v_f": 0.5, "r_d": 0.5}, "i_leak": "1u",
         "v_rrm": 60},
        {"label": "pump 1:1", "kind": "charge_pump", "ratio": "1:1", "f_cp": "250k",
         "c_fly": {"c": "220n", "esr": "10m", "dielectric": "X7R", "v_rating": 25},
         "c_out": {"c": "1u", "esr": "5m", "dielectric": "X7R", "v_rating": 25},
         "r_on": 2.0, "c_par": "5p", "alpha_bp": 0.001, "q_g_sw": "0.5n", "v_rating_sw": 60},
    ]})
result = explorer.evaluate(design)
result

# %% [markdown]
# ## Plots
#
# Interactive Bokeh plots of the same result. They are JavaScript: they draw when the notebook is trusted (a notebook received from someone else shows a short note in their place until you trust it, e.g. `jupyter trust hbridge_full_command.ipynb`). `python -m explorer report DESIGN --out report.html` gives a file with every plot that needs neither a kernel nor trust. `setup_notebook()` stores BokehJS once, compressed; long waveforms are thinned to 1500 points per option keeping every stretch's highest and lowest sample, so the stored notebook stays small.

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
# ## How long a bootstrap lasts at full command
#
# The hold-up figure is the time the rail stays above the requirement once the high side stays on,
# starting from the rail the bridge had while it still switched. Here it is after running at 95 %
# and at 50 % command, against the standing load that drains the capacitor:

# %%
boot = "bootstrap 2.2u"
for command in (0.95, 0.5):
    r = explorer.evaluate(explorer.replace_field(design, "bridge.duty", command))[boot]
    print(f"from {command:.0%} command: rail {format_eng(r.v_rail.min, 'V')} .. {format_eng(r.v_rail.max, 'V')}, "
          f"hold-up at 100 % {format_eng(r.duty.hold_up, 's')}, highest command that still refreshes "
          f"{r.duty.topology['duty_command_max']:.1%}")
standing = design.driver.i_q + design.options[0].i_leak + 12 / design.gate.r_gs
print(f"standing drain with the high side on: about {format_eng(standing, 'A')} "
      f"(quiescent + leakage + V/R_GS at 12 V)")

# %% [markdown]
# ## Verdict
#
# At 100 % command the bootstrap rail **is never refreshed**: with the high side on and no low-side pulse,
# a 2.2 µF capacitor lasts a few tens of milliseconds on a standing drain of about a quarter of a
# milliampere, so full command is a transient the bootstrap survives only briefly, and the bridge
# must drop the command below about 99 % (the highest that still refreshes) well within that time.
# The **1:1 pump holds at full command indefinitely**, at a few milliwatts of overhead; its
# efficiency looks poor only because the load it feeds is tiny. For a motor that must hold full
# command (stall, full speed), the pump is the choice. The cell below checks these statements
# against the numbers.

# %%
assert not result[boot].feasible and result["pump 1:1"].feasible
assert result[boot].v_rail is None and 10e-3 < result[boot].duty.hold_up < 100e-3  # lasts tens of ms
assert result["pump 1:1"].duty.max == 1.0 and result["pump 1:1"].duty.hold_up is None
assert result["pump 1:1"].overhead < 10e-3
running = explorer.evaluate(explorer.replace_field(design, "bridge.duty", 0.95))[boot]
assert 10e-3 < running.duty.hold_up < 100e-3 and 0.98 < running.duty.topology["duty_command_max"] < 1.0
assert 0.2e-3 < standing < 0.3e-3
print("verdict premises hold")

# %% [markdown]
# ## The design rules the chosen supply must keep meeting

# %%
pump = "pump 1:1"
rules = [
    DutyCovers(option=pump, duty_min=0.0, duty_max=1.0, name="any command from 0 to 100 %"),
    HoldUp(option=pump, t_min=1.0, name="holds full command for at least 1 s"),
    CapacitorShare(option=pump, share=0.6),
    StartupTime(option=pump, t_max=design.bridge.soft_start / 10),
    ChecksHold(option=pump),
]
explorer.assert_rules(design, rules, comparison=result)
