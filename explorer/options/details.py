"""Typed details of each built-in supply family: the figures a result carries beyond the shared parts.

One frozen dataclass per kind, placed on :attr:`explorer.results.OptionResult.details` and written
under the key ``"details"`` of the ``explorer-result`` JSON (SI units; None where a figure does not
apply, is unbounded or was not computed). Field names are stable: tests, the netlist export and the
panels read them as attributes.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..results import Details

__all__ = ["BootstrapDetails", "ChargePumpDetails", "IsolatedDetails"]


@dataclass(frozen=True, kw_only=True)
class BootstrapDetails(Details):
    """Bootstrap figures without a slot of their own in :class:`~explorer.results.OptionResult`.

    Attributes
    ----------
    c_eff : float [F]
        Effective bootstrap capacitance at the corner and its DC bias.
    required_rail : float [V]
        max(uvlo_off, v_gs_on_min) + v_margin.
    newton_passes_steady : int [-]
        Newton passes of the periodic steady-state solve.
    i_first_pulse : float [A]
        Current at the start of the first conducting interval of start-up (the inrush of a dead rail).
    startup_segments : int [-]
        Pieces the start-up trajectory was solved in.
    startup_v_max : float [V]
        Highest rail voltage during start-up.
    duty_max_uvlo_off : float or None [-]
        Highest HS duty at which the steady-state rail stays above UVLO-off (None: any duty).
    v_max_nominal : float or None [V]
        Steady-state rail maximum at nominal V_DD (None: the rail is never refreshed).
    v_max_ceiling : float [V]
        Rail ceiling: V_DD at its high tolerance less the lowest switch-node level and the diode drop
        at the quiescent current.
    diode_v_reverse : float [V]
        Reverse voltage across the diode, V_bus + V_DD at its high tolerance.
    diode_i_peak : float [A]
        Peak diode current (steady state or start-up, the larger).
    q_diode_per_period : float or None [C]
        Charge through the diode per analysis period (None: never refreshed).
    energy_switch_node : float or None [W]
        Power the switch node adds while it is below ground (None: never refreshed).
    v_min_model : float or None [V]
        The model's steady-state rail minimum when it falls below 0 V (the reported minimum then
        reads 0 V); None otherwise.
    p_junction_gross : float or None [W]
        Power the diode's junction capacitance would cost with every switch-node edge hard-switched
        (½·C_j·ΔV² per edge; ``losses["junction"]`` charges the hard edges only). None: never refreshed.
    t_refresh_at_limit : float or None [s]
        Time per period the switch node is low (LS pulse if given, dead times held low) at the
        highest feasible HS duty; a window of a few edge times is flagged (edges are steps in the model).
    hold_up_uvlo_off : float or None [s]
        Hold-up at 100 % duty down to UVLO-off (where the driver stops), from the same start as
        ``duty.hold_up`` (which counts down to the required rail); None: indefinitely.
    startup_v_sw_hold : float or None [V]
        Where the switch node rests while UVLO withholds the first high-side pulses of start-up
        (the topology's rule or ``bridge.v_sw_hold``).
    startup_sw_hold : str
        That assumption in plain words (also listed in the result's ``assumptions``).
    """

    c_eff: float
    required_rail: float
    newton_passes_steady: int
    i_first_pulse: float
    startup_segments: int
    startup_v_max: float
    duty_max_uvlo_off: float | None
    v_max_nominal: float | None
    v_max_ceiling: float
    diode_v_reverse: float
    diode_i_peak: float
    q_diode_per_period: float | None = None
    energy_switch_node: float | None = None
    v_min_model: float | None = None
    p_junction_gross: float | None = None
    hold_up_uvlo_off: float | None = None
    t_refresh_at_limit: float | None = None
    startup_v_sw_hold: float | None = None
    startup_sw_hold: str = ""


@dataclass(frozen=True, kw_only=True)
class ChargePumpDetails(Details):
    """Charge-pump figures without a slot of their own in :class:`~explorer.results.OptionResult`.

    Attributes
    ----------
    ratio : str
        Conversion ratio input:output ("1:1", "1:2", "2:1").
    m : float [-]
        Ideal conversion ratio V_out/V_in of the circuit.
    m_engine : float [-]
        Open-circuit ratio the switched-network engine finds.
    v_in : float [V]
        Pump input rail.
    v_ideal : float [V]
        m · v_in.
    c_fly_eff, c_out_eff : float [F]
        Effective flying and output capacitance at the corner and their DC bias.
    phase_duty : float [-]
        Share of the pump period each conducting phase takes.
    r_ssl, r_fsl : float [Ω]
        Slow- and fast-switching-limit output resistances.
    r_out_coth, r_out_sqrt : float [Ω]
        Output resistance from the coth blend and the square-root blend of the two limits.
    i_load_avg : float [A]
        Mean load current at the mean rail.
    i_load_const : float [A]
        Constant part of the load current (gate charge and quiescent, averaged).
    g_load : float [S]
        Conductance part of the load (the gate pull-down while the HS is on, averaged).
    p_i2r : float [W]
        i_load_avg² · R_out.
    p_load_engine : float [W]
        Load power in the engine's steady state.
    p_in_direct : float [W]
        V_in · mean input current, straight from the engine's phase integrals.
    energy_residual : float [W]
        p_in_direct less the input power by conservation of energy (a consistency figure).
    q_pulse : float [C]
        Charge of one gate pulse taken from C_out.
    pulse_dip, pulse_rise : float [V]
        Lowest and highest excursion of the gate-pulse train about the pump's own steady state.
    v_pump_min, v_pump_max : float [V]
        Extremes of the pump's steady state under the average load.
    v_block_switch : float [V]
        Voltage the domain-crossing switches block, V_bus + V_in.
    domain_crossing_worst : float [W]
        Domain-crossing power at the worst relative phase of the PWM and the pump clock.
    domain_crossing_gross : float [W]
        Domain-crossing power with every switch-node edge taken as hard-switched (½·C·ΔV² each).
    sw_high_fraction : float [-]
        Share of the analysis period the switch node is high.
    f_sw_max : float or None [Hz]
        Highest leg switching frequency the pump carries: f_sw, or f_line on a line-frequency leg
        (``DutyLimits.topology`` names it ``f_sw_max`` or ``f_line_max``); None: unbounded, 0: the
        static load alone already takes the rail below its requirement.
    q_g_max : float or None [C]
        Highest gate charge the pump carries (None: unbounded; 0: not even Q_G = 0 holds).
    switch_i_rms : tuple of float [A]
        RMS current of each pump switch.
    switch_i_peak : tuple of float [A]
        Peak current of each pump switch in steady state.
    startup_i_peak_switch : float [A]
        Peak switch current during start-up.
    tau_loop : float or None [s]
        Slowest time constant of the pump network (None: no decaying mode).
    pump_cycles_per_turn_on : float or None [-]
        Pump cycles between HS turn-ons (None: no turn-ons).
    pull_down_sag : float [V]
        Sag of the rail while the gate pull-down loads it over the longest HS on-time.
    treatment_async : str
        How the asynchronous PWM and pump clocks are combined, in words.
    """

    ratio: str
    m: float
    m_engine: float
    v_in: float
    v_ideal: float
    c_fly_eff: float
    c_out_eff: float
    phase_duty: float
    r_ssl: float
    r_fsl: float
    r_out_coth: float
    r_out_sqrt: float
    i_load_avg: float
    i_load_const: float
    g_load: float
    p_i2r: float
    p_load_engine: float
    p_in_direct: float
    energy_residual: float
    q_pulse: float
    pulse_dip: float
    pulse_rise: float
    v_pump_min: float
    v_pump_max: float
    v_block_switch: float
    domain_crossing_worst: float
    sw_high_fraction: float
    f_sw_max: float | None
    q_g_max: float | None
    switch_i_rms: tuple
    switch_i_peak: tuple
    startup_i_peak_switch: float
    tau_loop: float | None
    pump_cycles_per_turn_on: float | None
    pull_down_sag: float
    treatment_async: str
    domain_crossing_gross: float | None = None


@dataclass(frozen=True, kw_only=True)
class IsolatedDetails(Details):
    """Isolated-module figures without a slot of their own in :class:`~explorer.results.OptionResult`.

    Attributes
    ----------
    loss_k : float [1/W]
        Coefficient k of the loss model P_loss = P_0 + k·P².
    p_optimum : float [W]
        Output power of the module's best efficiency.
    eta_module : float [-]
        Module efficiency at this load.
    load_fraction : float [-]
        Load power over p_rated.
    p_in_module : float [W]
        Module input power.
    v_in, i_in : float [V], [A]
        Module input rail and its mean current.
    dv_dt : float [V/s]
        Switch-node slew rate V_bus/t_edge.
    i_cm_peak : float [A]
        Peak common-mode current C_iso · dv/dt.
    q_cm_edge : float [C]
        Common-mode charge per edge, C_iso · V_bus.
    p_cm : float [W]
        Power lost charging C_iso at the switch-node edges: ½·C_iso·ΔV² per hard-switched edge,
        none per edge the load current moves (zero-voltage).
    p_cm_gross : float [W]
        The same with every edge hard: C_iso·V²·f for a plain swing.
    v_barrier : float [V]
        Peak voltage across the isolation barrier.
    cmti_ratio : float [-]
        Driver CMTI over dv/dt.
    tau_out : float [s]
        Output time constant r_out · C_out.
    v_pre_pwm : float [V]
        Rail before the first HS pulse (the ramp's end level less r_out · I_Q).
    i_gate_pulse : float [A]
        Gate pulse current, (Q_G + Q_LS)/t_edge.
    gate_pulse_width : float [s]
        Width taken for the gate pulse (t_edge).
    corner : str
        Capacitance corner of the evaluation.
    insulation : str
        The statement that insulation is designed and verified to the safety standards.
    """

    loss_k: float
    p_optimum: float
    eta_module: float
    load_fraction: float
    p_in_module: float
    v_in: float
    i_in: float
    dv_dt: float
    i_cm_peak: float
    q_cm_edge: float
    p_cm: float
    v_barrier: float
    cmti_ratio: float
    tau_out: float
    v_pre_pwm: float
    i_gate_pulse: float
    gate_pulse_width: float
    corner: str
    insulation: str
    p_cm_gross: float | None = None
