"""Switched-capacitor charge pumps 1:1, 1:2 and 2:1 as three circuit descriptions.

Each ratio is one flying capacitor C_fly, four switches of on-resistance
R_on, the output capacitor C_out (the floating rail, V_B − V_S) and the input
rail V_in, described for the engine :mod:`explorer.engines.network` and run by it. The
pump clock has four phases: φ1 (charge, duration D·T), a dead time, φ2
(transfer, D·T) and a dead time, with D = ½ − t_dead,cp·f_cp.

=====  =========================================  ==========================================
ratio  φ1                                         φ2
=====  =========================================  ==========================================
1:1    C_fly across V_in                          C_fly across C_out
1:2    C_fly across V_in                          C_fly stacked on V_in, into C_out
2:1    C_fly in series with C_out across V_in     C_fly in parallel with C_out
=====  =========================================  ==========================================

Reference frame. The networks are analysed with the rail's return (S) and the
input's return as one node, as in the textbook circuits. For 1:1 this is exact:
the flying capacitor is disconnected from one domain before it joins the other,
so no loop runs through the switch node. For 1:2 and 2:1 a phase joins V_in and
C_out in one loop, so the model assumes that loop does not see the switch node's
motion (for instance V_in is provided in the SW domain during that phase); the
motion of the flying capacitor between the ground and SW domains is accounted
for separately as the domain-crossing loss and the switches' blocking voltage
V_bus + V_in.

Output impedance (Seeman & Sanders, "Analysis and optimization of
switched-capacitor DC–DC converters", IEEE Trans. Power Electronics 23(2),
841–851, 2008, doi:10.1109/TPEL.2007.915182): with the charge multipliers a_c
(flying capacitors) and a_r (switches),

    R_SSL = Σ a_c,i² / (C_i·f_cp)                (slow-switching limit, eq. 8)
    R_FSL = Σ R_i·a_r,i² / D_i                  (fast-switching limit, eq. 10;
                                                  2·Σ R_i·a_r,i² at 50 % phases)

and their usual combination R_out ≈ √(R_SSL² + R_FSL²). For one flying
capacitor the exponential charge transfer gives the exact result (derived in
:func:`r_out_exact`) R_out = R_SSL·coth(R_SSL/R_FSL), used here as the fast
path for sweeps; the engine's exact R_out (output held by an ideal source, the
paper's definition) equals it.

Real load and the asynchronous PWM. The rail's load is the average current
I = I_Q + (n_on·(Q_G + Q_LS) + n_off·Q_LS)/T_a + (V/R_GS)·t_on/T_a over the bridge
schedule (:mod:`explorer.loads`), plus the pulses drawn from C_out: the set pulse
Q_G + Q_LS at each HS turn-on and the level shifter's reset pulse Q_LS at each
turn-off, at the instants the schedule gives them. The PWM and the pump clock
are not synchronised, so the rail is split by superposition (the network is
linear): (1) the pump's periodic steady state under the average load, from the
engine; (2) the zero-mean pulse train (each pulse at its instant, their mean as
a steady current) through the pump's averaged output model (R_out with C_out),
whose periodic response has the closed-form extremes of
:func:`pulse_schedule_extremes` (:func:`pulse_train_extremes` for equal pulses
at equal spacing). Worst-case phase: the pulse dip is placed at the
pump ripple's minimum and its peak at the pump ripple's maximum, so
V_min = min(pump) + y_min and V_max = max(pump) + y_max, meant as a bound over
every relative phase of the two clocks. It is one to within a few % of the pulse
dip Q/C_out while the pump runs a few cycles between turn-ons (ngspice, 2.5 cycles:
within 0.03·Q/C_out at every phase tried); with fewer, a pulse landing just before
a transfer phase takes the rail lower than the averaged pump predicts, which
:func:`pump_validity` flags.

Model validity. :func:`pump_validity` states where these assumptions stop holding (switch-node
edges or switch transitions that fill a pump phase, too few pump cycles between gate pulses for the
averaged pulse treatment, an R_GS load whose on/off pattern the averaging hides); each reason is
warned with :class:`~explorer.errors.ModelValidityWarning` and listed in ``OptionResult.warnings``.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from dataclasses import dataclass

import numpy as np
from ..roots import brentq

from .. import common_mode as cm
from ..capacitors import capacitance, parse_dielectric
from ..design import ChargePumpOption, Design
from ..engines.affine import affine_scan
from ..engines.elements import Cap, ISrc, Res, VSrc
from ..engines.network import Network
from ..engines.periodic import PeriodicSolution, periodic_steady_state
from ..engines.transient import MAX_STARTUP_CYCLES, StartupTransient
from ..errors import DesignError, ModelValidityWarning
from ..loads import charge_per_turn_off, charge_per_turn_on, load_power, required_rail
from ..memo import memoised
from ..results import (CapacitorStress, Check, DutyLimits, OptionResult, RailStats, Startup, cap_voltage_check,
                       rail_max_v_bs_check, rail_max_v_gs_check, rail_min_check, startup_uvlo_check, verdict_from)
from ..schedule import longest_run, map_periods, period_schedule
from ..topology import analysis_frequency, frequency_limit_key
from .details import ChargePumpDetails
from .base import SupplyModel

__all__ = ["PumpCircuit", "CIRCUITS", "pump_network", "pump_durations", "phase_duty", "r_ssl", "r_fsl",
           "r_out_exact", "r_out_sqrt", "r_out_limits", "r_out_engine", "rail_from_r_out",
           "pulse_train_extremes", "pulse_schedule_extremes", "pump_validity", "pull_down_sag", "longest_on_time", "evaluate_option",
           "rail_min_batch", "rail_min_map"]

PHI1, DEAD1, PHI2, DEAD2 = 0, 1, 2, 3


@dataclass(frozen=True)
class PumpCircuit:
    """One conversion ratio as a circuit description for :mod:`explorer.engines.network`.

    Attributes
    ----------
    ratio : str
        ``"1:1"``, ``"1:2"`` or ``"2:1"`` (input:output).
    m : float
        Ideal conversion ratio V_out/V_in [-].
    switches : tuple of (name, node a, node b, phase)
        The four switches; nodes ``in`` (V_in), ``t``/``b`` (flying capacitor
        top/bottom), ``out`` (rail), ``0`` (return).
    a_c, a_r : tuple of float
        Seeman–Sanders charge multipliers of the flying capacitor and the
        switches (charge per cycle / output charge per cycle).
    v_fly : float
        Ideal flying-capacitor voltage per volt of V_in [-] (for DC bias).
    """

    ratio: str
    m: float
    switches: tuple
    a_c: tuple
    a_r: tuple
    v_fly: float


#: The three ratios. The 2:1 and 1:2 multipliers are the published ones (Seeman &
#: Sanders 2008, doi:10.1109/TPEL.2007.915182: series-parallel 2:1 and the doubler);
#: 1:1 follows by the same charge-flow rule; tests recover all of them from the engine.
CIRCUITS = {
    "1:1": PumpCircuit("1:1", 1.0, (("s1", "in", "t", PHI1), ("s2", "b", "0", PHI1),
                                    ("s3", "t", "out", PHI2), ("s4", "b", "0", PHI2)),
                       a_c=(1.0,), a_r=(1.0, 1.0, 1.0, 1.0), v_fly=1.0),
    "1:2": PumpCircuit("1:2", 2.0, (("s1", "in", "t", PHI1), ("s2", "b", "0", PHI1),
                                    ("s3", "b", "in", PHI2), ("s4", "t", "out", PHI2)),
                       a_c=(1.0,), a_r=(1.0, 1.0, 1.0, 1.0), v_fly=1.0),
    "2:1": PumpCircuit("2:1", 0.5, (("s1", "in", "t", PHI1), ("s2", "b", "out", PHI1),
                                    ("s3", "t", "out", PHI2), ("s4", "b", "0", PHI2)),
                       a_c=(0.5,), a_r=(0.5, 0.5, 0.5, 0.5), v_fly=0.5),
}


def _circuit(ratio: str) -> PumpCircuit:
    try:
        return CIRCUITS[ratio]
    except KeyError:
        raise DesignError("ratio", f"expected one of {', '.join(map(repr, CIRCUITS))}", ratio) from None


def pump_network(ratio: str, *, c_fly: float, r_on: float, esr_fly: float = 0.0, output: str = "load",
                 c_out: float | None = None, esr_out: float = 0.0, r_load: float | None = None) -> Network:
    """The pump of one ratio as an engine network.

    Parameters
    ----------
    ratio : {"1:1", "1:2", "2:1"}
    c_fly : float [F]
        Flying capacitance (effective).
    r_on : float [Ω]
        On-resistance of each switch.
    esr_fly, esr_out : float [Ω]
        Capacitor ESRs.
    output : {"load", "source"}
        ``"load"``: C_out with a current-source load (input ``i_load``) and an
        optional resistive load ``r_load``; ``"source"``: the output held by
        an ideal source (input ``v_out``), the definition of R_out in
        Seeman & Sanders (2008).
    c_out : float [F]
        Output capacitance (effective), for ``output="load"``.

    The inputs are ``("v_in", "i_load")`` or ``("v_in", "v_out")``.
    """
    circ = _circuit(ratio)
    el = [VSrc("v_in", "in", "0", "v_in"), Cap("c_fly", "t", "b", c_fly, esr_fly)]
    el += [Res(name, a, b, r_on, (p,)) for name, a, b, p in circ.switches]
    if output == "source":
        el.append(VSrc("v_out", "out", "0", "v_out"))
        return Network(el, inputs=("v_in", "v_out"), n_phases=4)
    if output != "load":
        raise DesignError("output", "expected 'load' or 'source'", output)
    if c_out is None:
        raise DesignError("c_out", "needed for output='load'")
    el += [Cap("c_out", "out", "0", c_out, esr_out), ISrc("i_load", "out", "0", "i_load")]
    if r_load is not None:
        el.append(Res("r_load", "out", "0", r_load))
    return Network(el, inputs=("v_in", "i_load"), n_phases=4)


def pump_durations(f_cp, dead_time_cp=0.0) -> np.ndarray:
    """Phase durations [φ1, dead, φ2, dead] [s] (broadcasts: shape (..., 4)).

    Parameters
    ----------
    f_cp : float or array [Hz]
        Pump clock.
    dead_time_cp : float or array [s]
        Dead time between the phases (each of two per cycle).
    """
    if type(f_cp) in (float, int) and type(dead_time_cp) in (float, int):  # one clock: the same arithmetic
        half = 0.5 / f_cp - dead_time_cp
        return np.array([half, dead_time_cp, half, dead_time_cp], dtype=float)
    f = np.asarray(f_cp, dtype=float)
    td = np.asarray(dead_time_cp, dtype=float)
    half = 0.5 / f - td
    f, td, half = np.broadcast_arrays(f, td, half)
    return np.stack([half, td, half, td], axis=-1)


def phase_duty(f_cp, dead_time_cp=0.0):
    """Fraction of the pump period each switch conducts, D = ½ − t_dead,cp·f_cp [-]."""
    return 0.5 - np.asarray(dead_time_cp) * np.asarray(f_cp)


def r_ssl(c_fly, f_cp, *, ratio: str):
    """Slow-switching-limit output resistance R_SSL = Σ a_c² / (C_fly·f_cp) [Ω].

    Seeman & Sanders (2008), doi:10.1109/TPEL.2007.915182, eq. (8), with the
    charge multipliers of :data:`CIRCUITS`. For 2:1: 1/(4·C·f); for 1:2 and 1:1:
    1/(C·f).

    Parameters
    ----------
    c_fly : float or array [F]
    f_cp : float or array [Hz]
    """
    a2 = sum(a * a for a in _circuit(ratio).a_c)
    return a2 / (np.asarray(c_fly) * np.asarray(f_cp))


def r_fsl(r_on, *, ratio: str, duty=0.5, esr_fly=0.0):
    """Fast-switching-limit output resistance R_FSL = Σ R·a_r² / D [Ω].

    Seeman & Sanders (2008), doi:10.1109/TPEL.2007.915182, eq. (10) with every
    switch conducting a fraction ``duty`` of the period (D = ½: 2·Σ R·a_r²;
    2:1: 2·R_on, 1:2: 8·R_on). The flying capacitor's ESR conducts a_c in both
    phases and adds 2·ESR·a_c²/D.

    Parameters
    ----------
    r_on : float or array [Ω]
    duty : float or array [-], 0 < D ≤ ½
    esr_fly : float or array [Ω]
    """
    c = _circuit(ratio)
    d = np.asarray(duty)
    return (np.asarray(r_on) * sum(a * a for a in c.a_r)
            + 2.0 * np.asarray(esr_fly) * sum(a * a for a in c.a_c)) / d


def r_out_exact(r_ssl_, r_fsl_):
    """Exact output resistance of a single-flying-capacitor pump: R_SSL·coth(R_SSL/R_FSL) [Ω].

    Derivation (two phases of equal length t = D/f_cp, loop resistance R_L and
    flying capacitance C in each, τ = R_L·C; output held at V_out as in Seeman &
    Sanders 2008). In phase j the flying capacitor relaxes exponentially toward
    the voltage E_j its loop imposes: v_end = E_j + (v_start − E_j)·k with
    k = e^{−t/τ}. The periodic solution of the two phases gives
    Δv = (E_1 − E_2)·(1 − k)/(1 + k) = (E_1 − E_2)·tanh(t/2τ). The charge per
    cycle is C·Δv, and E_1 − E_2 is proportional to M·V_in − V_out, so
    I_out = (M·V_in − V_out)/R_SSL·tanh(t/2τ). Since R_SSL/R_FSL = t/(2τ) for each
    of the three circuits (R_FSL = Σ R·a_r²/D with R_L = 2·R_on + ESR), this is
    R_out = R_SSL·coth(R_SSL/R_FSL). It tends to R_SSL at low f_cp and to R_FSL at
    high f_cp; :func:`r_out_sqrt` overestimates it by up to 8.8 % (at
    R_SSL/R_FSL ≈ 1.43).

    Parameters
    ----------
    r_ssl_, r_fsl_ : float or array [Ω]
        Broadcast together.
    """
    s = np.asarray(r_ssl_, dtype=float)
    r = np.asarray(r_fsl_, dtype=float)
    x = s / r
    small = x < 1e-4
    xs = np.where(small, 1.0, x)
    ratio = np.where(small, 1.0 + x * x / 3.0, xs / np.tanh(xs))  # x·coth x
    out = r * ratio
    return float(out) if out.ndim == 0 else out


def r_out_sqrt(r_ssl_, r_fsl_):
    """The usual combination √(R_SSL² + R_FSL²) [Ω] (Seeman & Sanders 2008, eq. 11)."""
    out = np.hypot(r_ssl_, r_fsl_)
    return float(out) if np.ndim(out) == 0 else out


def r_out_limits(f_cp, c_fly, r_on, *, ratio: str, dead_time_cp=0.0, esr_fly=0.0, method: str = "exact"):
    """R_out over arrays of pump clock and flying capacitance (the fast path for sweeps) [Ω].

    Parameters
    ----------
    f_cp : float or array [Hz]
    c_fly : float or array [F]
    r_on : float or array [Ω]
    ratio : {"1:1", "1:2", "2:1"}
    dead_time_cp : float or array [s]
    esr_fly : float or array [Ω]
    method : {"exact", "sqrt", "ssl", "fsl"}
        ``"exact"``: :func:`r_out_exact`; ``"sqrt"``: :func:`r_out_sqrt`; or one limit.

    Examples
    --------
    >>> round(r_out_limits(1e3, 1e-6, 1.0, ratio="2:1"), 6)  # deep SSL: 1/(4·C·f)
    250.0
    """
    s = r_ssl(c_fly, f_cp, ratio=ratio)
    r = r_fsl(r_on, ratio=ratio, duty=phase_duty(f_cp, dead_time_cp), esr_fly=esr_fly)
    if method == "exact":
        return r_out_exact(s, r)
    if method == "sqrt":
        return r_out_sqrt(s, r)
    if method == "ssl":
        return s
    if method == "fsl":
        return r
    raise DesignError("method", "expected 'exact', 'sqrt', 'ssl' or 'fsl'", method)


@memoised(maxsize=128)
def r_out_engine(f_cp, c_fly, r_on, *, ratio: str, dead_time_cp=0.0, esr_fly=0.0):
    """R_out from the engine: the output held by an ideal source, R_out = −∂V_out/∂I_out [Ω].

    With plain float arguments the result is remembered between evaluations (:mod:`explorer.memo`;
    it does not depend on the load).

    Batched over ``f_cp``, ``c_fly``, ``r_on``, ``esr_fly`` and ``dead_time_cp``
    (arrays that broadcast together; element values batch the engine's
    networks). Also returns the ideal ratio M = V_out/V_in
    at zero current found by the engine.

    Returns
    -------
    r_out : float or ndarray [Ω]
    m : float or ndarray [-]
    """
    def col(x):  # element values broadcast against the two input columns below
        return np.asarray(x, dtype=float)[..., None] if np.ndim(x) else x

    net = pump_network(ratio, c_fly=col(c_fly), r_on=col(r_on), esr_fly=col(esr_fly), output="source")
    d = pump_durations(f_cp, dead_time_cp)
    # two input columns at once: v_out = 1 (v_in = 0) and v_in = 1 (v_out = 0); a batch of clocks gets a
    # unit axis that the inputs broadcast over, so the phase maps are computed once for both
    u = np.array([[0.0, 1.0], [1.0, 0.0]])
    if d.ndim > 1:
        d = d[..., None, :]
        u = np.broadcast_to(u, d.shape[:-2] + (2, 2))
    sol = periodic_steady_state(net, d, u)
    i = sol.mean(["i(v_out)"])[..., 0]  # current into the output source
    r = -1.0 / i[..., 0]
    m = i[..., 1] * r
    return (float(r), float(m)) if np.ndim(r) == 0 else (r, m)


def rail_from_r_out(v_in, r_out, i_load, *, ratio: str, g_load=0.0):
    """Mean rail from the averaged model: V = (M·V_in − R_out·I) / (1 + R_out·G) [V].

    Parameters
    ----------
    v_in : float or array [V]
    r_out : float or array [Ω]
    i_load : float or array [A]
        Constant part of the load.
    g_load : float or array [S]
        Resistive part of the load (V/R_GS share: duty/R_GS).
    """
    m = _circuit(ratio).m
    if type(v_in) is float and type(r_out) is float and type(i_load) is float and type(g_load) is float:
        return (m * v_in - r_out * i_load) / (1.0 + r_out * g_load)  # scalars: the same arithmetic, no numpy
    return (m * np.asarray(v_in) - np.asarray(r_out) * np.asarray(i_load)) / (1.0 + np.asarray(r_out) * g_load)


def pulse_train_extremes(q, c_out, r_th, t_p):
    """Extremes of the rail's response to the zero-mean pulse train of the gate charge [V].

    The rail is modelled by its averaged Thevenin source (R_th) and C_out; the
    load is −q at each turn-on and +q/t_p between (zero mean). Between pulses
    y relaxes toward y_∞ = R_th·q/t_p with τ = R_th·C_out; each pulse steps it
    down by q/C_out. The periodic solution, with a = t_p/τ, is

        y_max = (q/C)·[1/a − 1/(e^a − 1)],   y_min = y_max − q/C,

    tending to ±q/(2C) (a sawtooth) for a → 0 and to (0, −q/C) for a → ∞
    (first-order RC circuit response, any circuit-theory textbook).

    Parameters
    ----------
    q : float or array [C]
    c_out : float or array [F]
    r_th : float or array [Ω]
    t_p : float or array [s]
        Interval between pulses.

    Returns
    -------
    y_min, y_max : float or array [V]
    """
    if (all(type(v) is float or np.ndim(v) == 0 for v in (q, c_out, r_th, t_p))
            and float(r_th) * float(c_out) > 0.0):
        # scalars (the load-limit searches call this many times): the same arithmetic without numpy
        qc = float(q) / float(c_out)
        a = float(t_p) / (float(r_th) * float(c_out))
        frac = 0.5 - a / 12.0 if a < 1e-6 else 1.0 / a - 1.0 / math.expm1(min(a, 700.0))
        return qc * frac - qc, qc * frac
    q = np.asarray(q, float)
    a = np.asarray(t_p, float) / (np.asarray(r_th, float) * np.asarray(c_out, float))
    small = a < 1e-6
    aa = np.where(small, 1.0, a)
    frac = np.where(small, 0.5 - a / 12.0, 1.0 / aa - 1.0 / np.expm1(np.minimum(aa, 700.0)))
    y_max = q / c_out * frac
    y_min = y_max - q / c_out
    if np.ndim(y_max) == 0:
        return float(y_min), float(y_max)
    return y_min, y_max


def pulse_schedule_extremes(t_k, q_k, c_out, r_th, t_a):
    """Extremes of the rail's response to a periodic train of charge pulses at given instants [V].

    The generalisation of :func:`pulse_train_extremes` to pulses of their own
    charge at their own instants: ``q_k`` [C] drawn from C_out at ``t_k`` [s] in
    each period ``t_a`` (the HS turn-ons with Q_G + Q_LS and the turn-offs with
    the level shifter's reset Q_LS, as the schedule places them), plus their
    mean Q/t_a as a constant current (zero mean), through the averaged source
    R_th and C_out (τ = R_th·C_out, a = t_a/τ). Superposing the periodic
    response of one pulse train (first-order RC response, any circuit-theory
    textbook; :func:`pulse_train_extremes` is its equal-pulse case),

        y(t_i⁺) = Q/(C·a) − W_i / (C·(1 − e^{−a})),   W_i = Σ_k q_k·e^{−age_ik/τ},

    with age_ik = (t_i − t_k) mod t_a, and y(t_i⁻) = y(t_i⁺) + q_i/C. Between
    pulses y relaxes monotonically toward R_th·Q/t_a, so the minimum is just
    after a pulse and the maximum just before one. W is the periodic solution
    of W_i = e^{−(t_i − t_{i−1})/τ}·W_{i−1} + q_i, found with one prefix
    composition of those affine maps (:func:`explorer.engines.affine.affine_scan`,
    O(m) for m pulses). For a < 1e-6 the first-order sawtooth
    y(t_i⁺) = Σ_k (q_k/C)·(age_ik/t_a − ½) is used (the two terms above cancel).

    Parameters
    ----------
    t_k : array (m,) or (..., m) [s]
        Pulse instants within the period, ascending, in [0, t_a] (leading dimensions: one train per
        member of a batch). A pulse of zero charge changes nothing (it only adds a point on the
        monotone relaxation between two others), so trains of a batch may be padded with them.
    q_k : array (..., m) [C]
        Charge of each pulse (leading dimensions: samples).
    c_out, r_th : float or array (...) [F], [Ω]
    t_a : float or array (...) [s]
        Period of the train.

    Returns
    -------
    y_min, y_max : float or array (...) [V]
    """
    if (type(q_k) is tuple and len(q_k) <= _SCALAR_PULSES and type(c_out) is float and type(r_th) is float
            and type(t_a) is float and all([type(v) is float for v in q_k])):
        return _pulse_schedule_scalar(t_k, q_k, c_out, r_th, t_a)
    t = np.asarray(t_k, dtype=float)
    q = np.asarray(q_k, dtype=float)
    c = np.asarray(c_out, dtype=float)[..., None]
    tau = np.asarray(r_th, dtype=float)[..., None] * c
    if t.size == 0:
        z = np.zeros(np.broadcast_shapes(q.shape[:-1], c.shape[:-1]))
        return (0.0, 0.0) if z.ndim == 0 else (z, z)
    t_a = np.asarray(t_a, dtype=float)[..., None]  # (..., 1): one period per train of a batch
    q_tot = q.sum(axis=-1, keepdims=True)
    a = t_a / tau
    gap = np.diff(t, prepend=t[..., -1:] - t_a)  # the gap before each pulse, the first one's across the period
    e = np.exp(-gap / tau)
    A, B = affine_scan(*np.broadcast_arrays(e, q))
    w_last = B[..., -1:] / -np.expm1(-a)  # the fixed point after the last pulse (A[..., -1] = e^{-a})
    s_plus = A * w_last + B  # W_i/(1 − e^{−a}) just after each pulse
    y_plus = (q_tot / a - s_plus) / c
    small = a < 1e-6
    if np.any(small):  # the sawtooth: Σ_k q_k·(age_ik/t_a − ½), from cumulative sums over the ordered pulses
        later = q_tot - np.cumsum(q, axis=-1)  # Σ_{k>i} q_k
        saw = (t * q_tot - np.sum(q * t, axis=-1, keepdims=True) + t_a * later) / t_a - 0.5 * q_tot
        y_plus = np.where(small, saw / c, y_plus)
    y_min = np.min(y_plus, axis=-1)
    y_max = np.max(y_plus + q / c, axis=-1)
    if np.ndim(y_min) == 0:
        return float(y_min), float(y_max)
    return y_min, y_max


#: Pulses per period up to which :func:`pulse_schedule_extremes` runs on plain floats (the load-limit
#: searches call it many times for one or two pulses per switching period).
_SCALAR_PULSES = 16


def _pulse_schedule_scalar(t_k, q_k, c: float, r: float, t_a: float) -> tuple[float, float]:
    """:func:`pulse_schedule_extremes` for a few pulses and plain floats: the same recurrence, in order."""
    m = len(t_k)
    if m == 0:
        return 0.0, 0.0
    tau = r * c
    a = t_a / tau
    exp = math.exp
    e = [exp((t_k[-1] - t_a - t_k[0]) / tau)] + [exp((t_k[i - 1] - t_k[i]) / tau) for i in range(1, m)]
    b = 0.0
    q_tot = 0.0
    for ei, qi in zip(e, q_k):
        b = ei * b + qi
        q_tot += qi
    lo = hi = None
    if a < 1e-6:  # the sawtooth (module function's notes)
        later = q_tot
        qt = sum(qk * tk for qk, tk in zip(q_k, t_k))
        for tk, qk in zip(t_k, q_k):
            later -= qk
            y = ((tk * q_tot - qt + t_a * later) / t_a - 0.5 * q_tot) / c
            y_pre = y + qk / c
            lo = y if lo is None or y < lo else lo
            hi = y_pre if hi is None or y_pre > hi else hi
        return lo, hi
    w = b / -math.expm1(-a)  # the fixed point just after the last pulse
    base = q_tot / a
    for ei, qk in zip(e, q_k):
        w = ei * w + qk
        y = (base - w) / c
        y_pre = y + qk / c
        lo = y if lo is None or y < lo else lo
        hi = y_pre if hi is None or y_pre > hi else hi
    return lo, hi


# --------------------------------------------------------------------------- model validity

#: Common practice, no source: an event the model treats as instantaneous (a switch-node edge: the domain
#: crossing, the gate-charge pulse) should last at most a tenth of the pump phase it falls in.
EDGE_PHASES = 10.0
#: Common practice, no source: the switches' transitions, which the pump dead time allows for, should take at
#: most a quarter of a conducting phase for switches modelled as R_on or open.
DEAD_SHARE = 0.25
#: Common practice, no source: a loop time constant below a tenth of the switch transitions is not resolved
#: (the same rule the bootstrap model applies to its charging loop against the edge time).
TAU_TRANSITION_RATIO = 0.1
#: Pump cycles between HS turn-ons below which the averaged treatment of the gate-charge pulses stops holding.
#: Common practice, no source (averaged models need the disturbance slower than the switching). Where the demo
#: pumps were compared with the exact periodic solution of pump and pulse train at every relative phase, the
#: model's worst-phase minimum held to a few % of Q/C_out at 2.5 cycles per turn-on and was optimistic by over
#: 20 % at one cycle and about 40 % at half a cycle (pulse just before a transfer phase); ngspice confirms both
#: sides (tests/test_charge_pump_validity.py).
PULSE_CYCLES_MIN = 2.0
#: Common practice, no source: the droop the averaged R_GS current hides may be at most a tenth of the rail
#: ripple the model reports.
RGS_RIPPLE_SHARE = 0.1


def longest_on_time(schedule) -> float:
    """Longest unbroken high-side on-time of a schedule [s] (wrapping round for a periodic one; 0 if never on).

    Parameters
    ----------
    schedule : explorer.schedule.Schedule
    """
    on = np.asarray(schedule.hs_on, bool)
    if on.size and on.all() and schedule.periodic:
        return math.inf
    return longest_run(schedule.dt, on, periodic=schedule.periodic)


def pump_validity(design: Design, option: ChargePumpOption, *, tau_loop: float, r_th: float, c_out: float,
                  v_mean: float, ripple: float, schedule=None, sag: float | None = None) -> list[str]:
    """Plain-words reasons why a pump design leaves the range the model assumes (empty: none).

    The model (module notes) rests on these assumptions; each check flags where one stops holding:

    * **Switch-node edges are instants inside a pump phase.** The domain crossing (``c_par`` swung
      through V_bus) and the gate-charge pulse drawn from C_out are events of one edge time
      ``t_edge``; the per-phase state equations contain neither. A conducting pump phase
      t_c = 1/(2·f_cp) − t_dead,cp shorter than :data:`EDGE_PHASES` edge times is flagged (unless
      the edge outlasts an interval of the schedule, which
      :func:`explorer.schedule.schedule_validity` already flags for every model).
    * **Pump switches are R_on or open, switching instantly.** The switches' own transitions are not
      given; the dead time is what a design allows for them, so a dead time above
      :data:`DEAD_SHARE` of t_c is flagged, and so is a charge-transfer loop whose time constant
      (the fastest mode of the pump's network, τ = 1/max|λ|) is below
      :data:`TAU_TRANSITION_RATIO` of the dead time: its peak and RMS currents are then set by the
      transitions, not by R_on (no dead time given: the switches are taken as ideal, no check).
    * **The gate-charge pulses meet an averaged pump.** Between HS turn-ons (every
      t_p = t_a/n_on) the pump's recovery is its output resistance with C_out, spread evenly over
      time; with fewer than :data:`PULSE_CYCLES_MIN` pump cycles per t_p the recovery comes in a few
      discrete transfers at fixed phases of the pulse train and the worst-phase rail minimum can be
      lower than shown.
    * **The R_GS share of the load is averaged.** The pull-down draws V/R_GS only while the HS is
      on; the model spreads it over t_a. Over the longest HS on-time t_on,max the rail sags by about
      ΔV = (V/R_GS)·(1 − d_on)·min(R_th, t_on,max/C_out) more than that average (first-order RC
      response to the zero-mean part of the on/off current: quasi-static R·I for long on-times,
      charge I·t/C for short ones); flagged above :data:`RGS_RIPPLE_SHARE` of the reported ripple.

    Not flagged, because the model does not depend on it: the frequency relation of the pump clock
    and the PWM. The rail extremes take the worst relative phase (module notes), a bound for a
    fixed phase (synchronised or harmonically related clocks) as for a drifting one; the
    domain-crossing loss is the average over a drifting phase, with its worst case (a fixed phase
    at the worst point) in ``details.domain_crossing_worst``. Edges longer than an interval of the
    schedule are flagged for every model by :func:`explorer.schedule.schedule_validity`.

    Parameters
    ----------
    design : Design
    option : ChargePumpOption
    tau_loop : float [s]
        Time constant of the pump network's fastest mode over its phases.
    r_th : float [Ω]
        Thevenin resistance of the rail (R_out, in parallel with the averaged R_GS resistor).
    c_out : float [F]
        Effective output capacitance.
    v_mean : float [V]
        Mean rail voltage.
    ripple : float [V]
        Rail ripple the model reports (maximum − minimum).
    schedule : explorer.schedule.Schedule, optional
        The design's period schedule (computed if not given).
    sag : float, optional [V]
        :func:`pull_down_sag` of these values, when already at hand (computed if not given).

    Returns
    -------
    list of str
        One plain-words line per assumption that does not hold.
    """
    from ..units import format_eng

    def f(x, unit):
        return format_eng(x, unit)

    sched = schedule if schedule is not None else period_schedule(design)
    b = design.bridge
    out = []
    t_c = 0.5 / option.f_cp - option.dead_time_cp  # one conducting phase
    live = sched.dt[sched.dt > 0]
    edge_flagged = bool(live.size) and b.t_edge > float(live.min())  # already said for every model
    if t_c < EDGE_PHASES * b.t_edge and not edge_flagged:
        out.append(f"the pump's conducting phase ({f(t_c, 's')}) is shorter than {EDGE_PHASES:g} switch-node edge "
                   f"times (t_edge = {f(b.t_edge, 's')}): the model treats the domain crossing and the gate-charge "
                   "pulse as instants inside a pump phase, so its rail, current and crossing-loss figures are not "
                   "reliable at this pump clock")
    t_d = option.dead_time_cp
    if t_d > DEAD_SHARE * t_c:
        out.append(f"the pump's dead time ({f(t_d, 's')}) is more than {DEAD_SHARE:g} of its conducting phase "
                   f"({f(t_c, 's')}): the switch transitions it allows for, which the model treats as instant "
                   "(each switch at r_on or open), fill much of each phase, so R_out, the losses and the currents "
                   "are not reliable")
    if t_d > 0.0 and tau_loop < TAU_TRANSITION_RATIO * t_d:
        out.append(f"the pump's fastest charge-transfer loop has a time constant of {f(tau_loop, 's')}, below "
                   f"{TAU_TRANSITION_RATIO:g} of its dead time ({f(t_d, 's')}, the allowance for its switch "
                   "transitions): the loop settles while a switch is still turning on, so the peak and RMS currents "
                   "are set by the transitions and not resolved by the model")
    n_on = int(np.count_nonzero(sched.hs_turn_on))
    if n_on > 0:
        q_pulse = charge_per_turn_on(design)
        t_p = sched.period / n_on
        cycles = option.f_cp * t_p
        if cycles < PULSE_CYCLES_MIN:
            out.append(f"the pump runs only {cycles:.3g} cycles between high-side turn-ons (f_cp = "
                       f"{f(option.f_cp, 'Hz')}, a turn-on every {f(t_p, 's')}): the model spreads the pump's "
                       f"recovery from each gate-charge pulse evenly, which needs at least {PULSE_CYCLES_MIN:g}; "
                       "the rail minimum can be lower than shown by a sizable part of the pulse dip "
                       f"Q/C_out = {f(q_pulse / c_out, 'V')}")
    if sag is None:
        sag = pull_down_sag(design, sched, v_mean=v_mean, r_th=r_th, c_out=c_out)
    if sag > RGS_RIPPLE_SHARE * ripple:
        out.append(f"the gate pull-down R_GS draws V/R_GS = {f(v_mean / design.gate.r_gs, 'A')} only while the "
                   f"high side is on, which the model averages over the period: over the longest on-time "
                   f"({f(longest_on_time(sched), 's')}) the rail sags about {f(sag, 'V')} more than shown, over "
                   f"{RGS_RIPPLE_SHARE:g} of the ripple the model reports ({f(ripple, 'V')})")
    return out


def pull_down_sag(design: Design, schedule, *, v_mean: float, r_th: float, c_out: float) -> float:
    """Extra sag of the rail the averaged R_GS load hides [V] (0 without R_GS or without an on/off pattern).

    The pull-down draws I = V/R_GS only while the HS is on (a share d_on of the period); the
    model spreads it evenly. The zero-mean rest, (1 − d_on)·I during an on-time, drives the rail's
    averaged source (R_th with C_out) down by at most

        ΔV = I·(1 − d_on)·min(R_th, t_on,max/C_out)

    (first-order RC circuit driven by a current step, any circuit-theory textbook: the quasi-static
    R·I for on-times far above R_th·C_out, the charge I·t/C_out for far shorter ones).

    Parameters
    ----------
    design : Design
    schedule : explorer.schedule.Schedule
    v_mean : float [V]
        Mean rail.
    r_th : float [Ω]
        Thevenin resistance of the rail.
    c_out : float [F]
        Effective output capacitance.
    """
    r_gs = design.gate.r_gs
    if r_gs is None or v_mean <= 0.0:
        return 0.0
    d_on = float(schedule.dt[schedule.hs_on].sum()) / schedule.period
    if not 0.0 < d_on < 1.0:
        return 0.0
    return (v_mean / r_gs) * (1.0 - d_on) * min(r_th, longest_on_time(schedule) / c_out)


# --------------------------------------------------------------------------- the option model

@dataclass(frozen=True)
class _Pump:
    """The resolved pump of one option (effective values; v_in, c_fly, c_out may be arrays of samples)."""

    circ: PumpCircuit
    v_in: float
    f_cp: float
    durations: np.ndarray
    c_fly: float
    c_out: float
    esr_fly: float
    esr_out: float
    r_on: float


def resolve_pump(design: Design, opt: ChargePumpOption, corner: str, *, k_c=None, k_out=None, k_v=None) -> _Pump:
    """Effective pump values; ``k_c``, ``k_out``, ``k_v`` (arrays) scale C_fly, C_out and V_in per sample.

    With factors the arithmetic is that of :func:`explorer.tolerance.apply_factors`
    followed by the nominal corner (c·k, then × the DC-bias factor; V_in·k_v).
    ``k_out`` None: C_out takes ``k_c`` as well.
    """
    circ = _circuit(opt.ratio)
    v_in = opt.v_in if opt.v_in is not None else design.aux.v_dd
    if k_v is not None:
        v_in = v_in * k_v

    def ceff(cap, v, name, k):
        c = capacitance(cap.c if k is None else cap.c * k, c_tol=cap.c_tol,
                        dielectric=parse_dielectric(cap.dielectric, name), v_applied=v, v_rating=cap.v_rating,
                        dc_bias=cap.dc_bias, corner=corner)
        return float(c) if np.ndim(c) == 0 else np.asarray(c, dtype=float)

    return _Pump(circ=circ, v_in=v_in, f_cp=opt.f_cp, durations=pump_durations(opt.f_cp, opt.dead_time_cp),
                 c_fly=ceff(opt.c_fly, circ.v_fly * v_in, "c_fly.dielectric", k_c),
                 c_out=ceff(opt.c_out, circ.m * v_in, "c_out.dielectric", k_c if k_out is None else k_out),
                 esr_fly=opt.c_fly.esr, esr_out=opt.c_out.esr, r_on=opt.r_on)


SWITCHES = ("i(s1)", "i(s2)", "i(s3)", "i(s4)")


@dataclass(frozen=True)
class _Load:
    """The rail's load over the bridge schedule (q_pulse and i0 may be arrays of samples).

    t_a [s] analysis period; n_on HS turn-ons in it; q_pulse [C] charge per turn-on;
    i0 [A] constant part of the average load; g_load [S] the R_GS share (duty/R_GS);
    r_eq [Ω] its equivalent resistor (None without R_GS).
    """

    t_a: float
    n_on: int
    q_pulse: float | np.ndarray
    i0: float | np.ndarray
    g_load: float
    r_eq: float | None
    n_off: int = 0
    q_off: float = 0.0
    t_pulse: tuple = ()
    on_pulse: tuple = ()

    def pulse_charges(self, q_on=None):
        """Charge of each pulse [C]: ``q_on`` (default q_pulse; an array of samples gives (..., m)) at the
        turn-ons, q_off at the turn-offs."""
        q_on = self.q_pulse if q_on is None else q_on
        if type(q_on) is float:
            return tuple([q_on if on else self.q_off for on in self.on_pulse])
        return np.where(np.array(self.on_pulse, dtype=bool), np.asarray(q_on, dtype=float)[..., None], self.q_off)


def _average_load(design: Design, i_q, q_on, q_off, n_on, n_off, t_on, t_a):
    """The load's averaged terms over the analysis period: (i0 [A], g_load [S]).

    i0 = I_Q + (n_on·Q_on + n_off·Q_off)/t_a, the pulses' charge as a mean current; g_load =
    (t_on/t_a)/R_GS, R_GS loading the rail only while the HS is on (0 without R_GS or HS on-time).
    Plain numbers, or arrays over a grid of designs (:func:`rail_min_map`).
    """
    i0 = i_q + (n_on * q_on + n_off * q_off) / t_a
    r_gs = design.gate.r_gs
    # a share so small that its resistor 1/g overflows (an HS on-time of 1e-309 of the period) is none
    if np.ndim(t_on) == 0:
        g = (t_on / t_a) / r_gs if (r_gs is not None and t_on > 0) else 0.0
        return i0, (g if g > 0 and math.isfinite(1.0 / g) else 0.0)
    if r_gs is None:
        return i0, np.zeros(np.shape(t_on))
    g = np.where(t_on > 0, (t_on / t_a) / r_gs, 0.0)
    return i0, np.where(g > 1.0 / np.finfo(float).max, g, 0.0)


def _rail_load(design: Design, sched, *, k_q=None, k_i=None) -> _Load:
    """Average load and pulse charge; ``k_q``, ``k_i`` scale Q_G and I_Q per sample (as apply_factors)."""
    t_a = sched.period
    on, turn_off = sched.hs_turn_on, sched.hs_turn_off
    n_on = int(np.count_nonzero(on))
    q_g = design.gate.q_g if k_q is None else design.gate.q_g * k_q
    i_q = design.driver.i_q if k_i is None else design.driver.i_q * k_i
    q_pulse = q_g + design.driver.q_ls if k_q is not None else charge_per_turn_on(design)
    t_on = float(sched.dt[sched.hs_on].sum())
    n_off = int(np.count_nonzero(turn_off))
    q_off = charge_per_turn_off(design)  # the level shifter's reset pulse at each turn-off
    i0, g_load = _average_load(design, i_q, q_pulse, q_off, n_on, n_off, t_on, t_a)
    # the pulses where the schedule places them: set pulse (Q_G + Q_LS) at each turn-on, reset pulse at each
    # turn-off (left out when Q_LS = 0)
    off = turn_off if q_off > 0 else np.zeros_like(on)
    t0 = sched.t_start
    idx = np.flatnonzero(on | off)
    if type(q_pulse) is not float:
        q_pulse = np.asarray(q_pulse, dtype=float)
    return _Load(t_a=t_a, n_on=n_on, q_pulse=q_pulse, i0=i0, g_load=g_load,
                 r_eq=1.0 / g_load if g_load > 0 else None, n_off=n_off, q_off=float(q_off),
                 t_pulse=tuple(float(x) for x in t0[idx]), on_pulse=tuple(bool(x) for x in on[idx]))


#: R_GS share resistors above this many times R_on are left out of the pump's network (:func:`_load_resistor`).
R_LOAD_OPEN = 1e12


def _load_resistor(pump: _Pump, r_eq):
    """The R_GS share as the network's load resistor, or None where it is above :data:`R_LOAD_OPEN`·R_on.

    Such a resistor (an HS on-time share of, say, 1e-15 of the period) carries less than 1e-12 of the
    current a switch carries at the same voltage, so it moves no figure beyond rounding, and in the
    nodal analysis it would make the phase systems singular to working precision (a condition number
    above 1e13). The other uses of the share (R_th, the load's power) keep it; they are well conditioned.
    """
    if r_eq is None:
        return None
    return r_eq if np.all(_in_network(pump, r_eq)) else None


def _in_network(pump: _Pump, r_eq):
    """Whether an R_GS share resistor is part of the pump's network (at most :data:`R_LOAD_OPEN`·R_on)."""
    return np.asarray(r_eq) <= R_LOAD_OPEN * float(np.min(pump.r_on))


def _r_th(r_out, r_eq):
    """The averaged source seen by the pulse train: R_out, in parallel with the R_GS share's R_eq where
    there is one (None: none) [Ω]."""
    return r_out if r_eq is None else r_out * r_eq / (r_out + r_eq)


def _steady(pump: _Pump, option: ChargePumpOption, load: _Load):
    """Engine R_out and the periodic steady state under the average load (batched over array values).

    Returns (r_out [Ω], m_engine [-], network, PeriodicSolution).
    """
    circ = pump.circ
    r_out, m_engine = r_out_engine(pump.f_cp, pump.c_fly, pump.r_on, ratio=circ.ratio,
                                   dead_time_cp=option.dead_time_cp, esr_fly=pump.esr_fly)
    net = pump_network(circ.ratio, c_fly=pump.c_fly, r_on=pump.r_on, esr_fly=pump.esr_fly, output="load",
                       c_out=pump.c_out, esr_out=pump.esr_out, r_load=_load_resistor(pump, load.r_eq))
    if type(pump.v_in) is float and type(load.i0) is float:
        u = np.array([pump.v_in, load.i0])
    else:
        u = np.stack(np.broadcast_arrays(np.asarray(pump.v_in, dtype=float), np.asarray(load.i0, dtype=float)),
                     axis=-1)
    return r_out, m_engine, net, periodic_steady_state(net, pump.durations, u)


def _rail_bounds(sol, pump: _Pump, load: _Load, r_out, pump_extrema=None) -> dict:
    """Rail extremes: the pump's steady-state waveform plus the gate-charge pulse train.

    The pump's extremes are exact (:meth:`explorer.engines.periodic.PeriodicSolution.extrema`:
    the zeros of the closed-form derivative in each phase, not samples).

    Worst-case relative phase of the two clocks (module notes):
    V_min = min(pump) + y_min, V_max = max(pump) + y_max [V]. Works on scalars
    and on arrays of samples alike. ``pump_extrema``: the pump's (min, max) of v(out) when
    already at hand.
    """
    lo, hi = (a[..., 0] for a in sol.extrema(["v(out)"])) if pump_extrema is None else pump_extrema
    if load.t_pulse:
        r_th = _r_th(r_out, load.r_eq)
        y_min, y_max = pulse_schedule_extremes(load.t_pulse, load.pulse_charges(), pump.c_out, r_th, load.t_a)
    else:
        y_min = y_max = 0.0
    out = {"v_pump_min": lo, "v_pump_max": hi, "y_min": y_min, "y_max": y_max,
           "v_min": lo + y_min, "v_max": hi + y_max}
    if np.ndim(lo) == 0:
        out = {k: float(v) for k, v in out.items()}
    return out


@dataclass(frozen=True)
class _PumpSteady:
    """The pump's periodic steady state under the average load, and the figures read from it.

    Voltages [V], currents [A]; ``t_w``/``v_out_w`` the plotted waveform; ``x_lo``/``x_hi`` the exact
    extremes of x(c_fly), x(c_out) and v(out); ``ends`` the probes at the phase ends (switches,
    i(c_fly), i(c_out), v(b)); ``i_peak_ss`` the peak of each switch and capacitor current.
    """

    r_out: float
    m_engine: float
    net: Network
    sol: PeriodicSolution
    t_w: np.ndarray
    v_out_w: np.ndarray
    x_lo: np.ndarray
    x_hi: np.ndarray
    v_mean: float
    i_in: float
    i_sw_rms: np.ndarray
    i_fly_rms: float
    i_out_rms: float
    v_rms: float
    ends: np.ndarray
    i_peak_ss: np.ndarray


def _steady_figures(pump: _Pump, option: ChargePumpOption, load: _Load) -> _PumpSteady:
    """Steady state: output impedance (exact, from the engine) and the periodic orbit under the average load."""
    r_out, m_engine, net, sol = _steady(pump, option, load)
    t_w, y = sol.samples(["v(out)"], n=32)
    x_lo, x_hi = sol.extrema(["x(c_fly)", "x(c_out)", "v(out)"])  # one batch; v(out) for the rail bounds
    mean = sol.mean(["v(out)", "i(v_in)"])
    rms = sol.rms(list(SWITCHES) + ["i(c_fly)", "i(c_out)", "v(out)"])
    starts = sol.at_phase_starts(list(SWITCHES) + ["i(c_fly)", "i(c_out)"])
    ends = sol.at_phase_ends(list(SWITCHES) + ["i(c_fly)", "i(c_out)", "v(b)"])
    i_peak_ss = np.maximum(np.abs(starts).max(axis=1), np.abs(ends[:6]).max(axis=1))
    # y[0] is the plotted waveform; extremes are exact (PeriodicSolution.extrema)
    return _PumpSteady(r_out=r_out, m_engine=m_engine, net=net, sol=sol, t_w=t_w, v_out_w=y[0], x_lo=x_lo,
                       x_hi=x_hi, v_mean=float(mean[0]), i_in=-float(mean[1]), i_sw_rms=rms[:4],
                       i_fly_rms=float(rms[4]), i_out_rms=float(rms[5]), v_rms=float(rms[6]), ends=ends,
                       i_peak_ss=i_peak_ss)


@dataclass(frozen=True)
class _PumpPower:
    """Power and losses [W] of one pump (``d_high`` the share of time the switch node is high [-])."""

    p_delivered: float
    p_load_engine: float
    p_in_direct: float
    p_in: float
    p_cross: float
    p_cross_worst: float
    p_cross_gross: float
    edges: object
    p_drawn_aux: float
    p_drawn: float
    d_high: float
    losses: dict
    collapsed: bool
    efficiency: float | None


def _power(design: Design, option: ChargePumpOption, pump: _Pump, sched, load: _Load, ss: _PumpSteady) -> _PumpPower:
    """Power drawn and delivered, losses by mechanism, efficiency (None when the rail collapses)."""
    v_in, g_load, t_a = pump.v_in, load.g_load, load.t_a
    p_delivered = float(load_power(design, sched, ss.v_mean))
    p_load_engine = load.i0 * ss.v_mean + (ss.v_rms ** 2 * g_load)
    p_sw = float(np.sum(ss.i_sw_rms ** 2) * pump.r_on)
    p_esr = ss.i_fly_rms ** 2 * pump.esr_fly + ss.i_out_rms ** 2 * pump.esr_out
    # Input power by conservation of energy over the periodic orbit (Tellegen: source power = load +
    # dissipation), a sum of positive terms. The direct V_in·mean(i_in) equals it in exact arithmetic
    # but is a small difference of phase integrals when the load is tiny (it came out 1.6e-6 below the
    # delivered power for a 0.1 µA load); it is kept in ``details`` with the residual between the two.
    p_in_direct = v_in * ss.i_in
    p_in = p_load_engine + p_sw + p_esr
    v_b_phase = ss.ends[6]
    v_bp = float(abs(v_b_phase[PHI1] - v_b_phase[PHI2]))
    p_bp = option.alpha_bp * pump.c_fly * v_bp ** 2 * pump.f_cp
    v_g = option.v_g_sw if option.v_g_sw is not None else v_in
    n_switches = len(pump.circ.switches)
    p_gate = n_switches * option.q_g_sw * v_g * pump.f_cp
    d_high = float(sched.dt[sched.sw_high].sum() / t_a)
    p_rail_domain = float(pump.durations[PHI2] * pump.f_cp)
    v_bus = design.bridge.v_bus
    # the pump's own switches move c_par across the domains (hard, ½·C·V² each way while SW is high);
    # the switch-node edges swing it while c_fly sits in the SW domain, by edge type (½·C·ΔV² per hard
    # edge, none per edge the load current moves; common_mode.capacitive_edge_power)
    edges = cm.capacitive_edge_power(option.c_par, sched)
    p_clock = 0.5 * option.c_par * v_bus ** 2 * 2.0 * pump.f_cp * d_high
    p_cross = p_clock + edges.dissipated * p_rail_domain
    p_cross_gross = p_clock + edges.gross * p_rail_domain
    p_cross_worst = option.c_par * v_bus ** 2 * pump.f_cp + edges.dissipated
    p_drawn_aux = p_in + p_bp + p_gate
    p_drawn = p_drawn_aux + p_cross
    losses = {"conduction_switches": p_sw, "conduction_esr": p_esr, "bottom_plate": p_bp,
              "pump_gate_drive": p_gate, "domain_crossing": p_cross}
    collapsed = ss.v_mean <= 0.0
    efficiency = p_delivered / p_drawn if (p_drawn > 0 and not collapsed) else None
    return _PumpPower(p_delivered=p_delivered, p_load_engine=p_load_engine, p_in_direct=p_in_direct, p_in=p_in,
                      p_cross=p_cross, p_cross_worst=p_cross_worst, p_cross_gross=p_cross_gross, edges=edges,
                      p_drawn_aux=p_drawn_aux, p_drawn=p_drawn,
                      d_high=d_high, losses=losses, collapsed=collapsed, efficiency=efficiency)


def _capacitor_stress(design: Design, option: ChargePumpOption, pump: _Pump, load: _Load, ss: _PumpSteady,
                      rail: dict, st: dict) -> tuple[tuple, list]:
    """Stress of C_fly and C_out over the steady state and the start-up, and their voltage checks."""
    checks, caps = [], []
    y_min, y_max = rail["y_min"], rail["y_max"]
    for name, xw, i_rms, i_pk, cap, c_eff, extra_rip in (
            ("c_fly", 0, ss.i_fly_rms, float(ss.i_peak_ss[4]), option.c_fly, pump.c_fly, 0.0),
            ("c_out", 1, ss.i_out_rms, float(ss.i_peak_ss[5]), option.c_out, pump.c_out, y_max - y_min)):
        v_hi = max(float(ss.x_hi[xw]) + (y_max if name == "c_out" else 0.0), st["x_max"][name])
        ripple = float(ss.x_hi[xw] - ss.x_lo[xw]) + extra_rip
        i_pk = max(i_pk, st["i_cap_peak"][name])
        if name == "c_out" and load.n_on > 0:
            # the gate pulse, taken as a rectangle of width t_edge (estimate)
            t_e = design.bridge.t_edge
            f_p = load.n_on / load.t_a
            q_pulse = load.q_pulse
            i_rms = math.sqrt(i_rms ** 2 + max(q_pulse ** 2 * f_p / t_e - (q_pulse * f_p) ** 2, 0.0))
            i_pk = max(i_pk, q_pulse / t_e)
        caps.append(CapacitorStress(name=name, c_eff=c_eff, v_max=v_hi, v_rating=cap.v_rating,
                                    ripple=ripple, i_rms=i_rms, i_peak=i_pk))
        cap_check = cap_voltage_check(design, name, v_hi, cap.v_rating, f"{name} voltage stays within its derated rating")
        if cap_check is not None:
            checks.append(cap_check)
    return tuple(caps), checks


def _switch_block(design: Design, option: ChargePumpOption, v_in: float) -> tuple[float, list, list]:
    """The domain-crossing switches block V_bus + V_in (the module notes): (V_block [V], checks, warnings)."""
    v_block = design.bridge.v_bus + v_in
    checks, warn = [], []
    if option.v_rating_sw is not None:
        lim_sw = option.v_rating_sw * design.checks.switch_derating
        checks.append(Check("switch_v_block", v_block, lim_sw, "max", "V",
                            "pump switches block V_bus + V_in within their derated rating"))
        if v_block > lim_sw:
            warn.append(f"the pump switches must block V_bus + V_in = {v_block:g} V, above "
                        f"{design.checks.switch_derating:g} \u00d7 their {option.v_rating_sw:g} V rating "
                        f"= {lim_sw:g} V")
    return v_block, checks, warn


def _duty_limits(design: Design, pump: _Pump, load: _Load, ss: _PumpSteady, rail: dict) -> tuple[DutyLimits, dict]:
    """Duty and load limits: any HS duty while the rail holds; the highest f_sw and Q_G (and those limits)."""
    req = required_rail(design)
    lim = _load_limits(design, pump, ss.r_out, rail["v_pump_min"], ss.v_mean, load, req, net=ss.net)
    feasible_duty = rail["v_min"] >= req
    duty = DutyLimits(min=0.0 if feasible_duty else None, max=1.0 if feasible_duty else None, hold_up=None,
                      t_ls_min=None,
                      topology={frequency_limit_key(design.bridge): lim["f_sw_max"], "q_g_max": lim["q_g_max"],
                                "note": "a pump needs no refresh: any HS duty 0..100 % while the load holds"})
    return duty, lim


def _rail_checks(design: Design, v_min: float, v_max: float, v_final: float) -> tuple[Check, list]:
    """The checks every kind shares: (rail minimum, [rail maximum vs V_BS and V_GS, start-up to UVLO])."""
    first = rail_min_check(design, v_min, "rail minimum stays above max(UVLO off, V_GS needed) + margin")
    return first, [rail_max_v_bs_check(design, v_max, "rail stays below the driver's V_BS absolute maximum"),
                   rail_max_v_gs_check(design, v_max, "rail stays below the gate's V_GS rating"),
                   startup_uvlo_check(design, v_final, "the pump alone brings the rail up to the UVLO rising "
                                      "threshold (highest rail during start-up)")]


def _ratio_warnings(design: Design, pump: _Pump, collapsed: bool) -> list:
    """Warnings of a rail that collapses or whose ideal ratio exceeds the gate's or the driver's rating."""
    circ, v_in = pump.circ, pump.v_in
    v_ideal = circ.m * v_in
    warn = []
    if collapsed:
        warn.append("the pump cannot carry the gate-drive load: its mean rail would fall below 0 V "
                    "(the driver would stay in UVLO); efficiency is not defined")
    if v_ideal > design.gate.v_gs_max:
        warn.append(f"ratio {circ.ratio} from {v_in:g} V gives about {v_ideal:g} V, above the gate's "
                    f"V_GS rating of {design.gate.v_gs_max:g} V")
    if v_ideal > design.driver.v_bs_max:
        warn.append(f"ratio {circ.ratio} from {v_in:g} V gives about {v_ideal:g} V, above the driver's "
                    f"V_BS maximum of {design.driver.v_bs_max:g} V")
    return warn


def _validity(design: Design, option: ChargePumpOption, pump: _Pump, load: _Load, ss: _PumpSteady, sched,
              ripple: float) -> tuple[list, float, float, float]:
    """Where the model's assumptions stop holding (:func:`pump_validity`), each warned once per evaluation.

    Returns (messages, slowest loop time constant τ_loop [s], Thévenin resistance of the rail [Ω],
    :func:`pull_down_sag` [V]).
    """
    lam = ss.net.modes[0] if ss.net.modes is not None else np.zeros(1)
    rate = float(np.max(-lam, initial=0.0))
    tau_loop = 1.0 / rate if rate > 0.0 else math.inf
    r_out, r_eq = ss.r_out, load.r_eq
    r_th = _r_th(r_out, r_eq)
    sag = pull_down_sag(design, sched, v_mean=ss.v_mean, r_th=r_th, c_out=pump.c_out)
    msgs = pump_validity(design, option, tau_loop=tau_loop, r_th=r_th, c_out=pump.c_out, v_mean=ss.v_mean,
                         ripple=ripple, schedule=sched, sag=sag)
    for msg in msgs:
        warnings.warn(f"{option.label}: {msg}", ModelValidityWarning, stacklevel=3)
    return list(msgs), tau_loop, r_th, sag


def _details(design: Design, option: ChargePumpOption, pump: _Pump, load: _Load, sched, ss: _PumpSteady,
             power: _PumpPower, rail: dict, st: dict, lim: dict, v_block: float, tau_loop: float,
             sag: float) -> ChargePumpDetails:
    """The pump's own figures (:class:`~explorer.options.details.ChargePumpDetails`)."""
    circ, v_in = pump.circ, pump.v_in
    i0, g_load, v_mean = load.i0, load.g_load, ss.v_mean
    duty_cp = float(phase_duty(pump.f_cp, option.dead_time_cp))
    rs = float(r_ssl(pump.c_fly, pump.f_cp, ratio=circ.ratio))
    rf = float(r_fsl(pump.r_on, ratio=circ.ratio, duty=duty_cp, esr_fly=pump.esr_fly))
    return ChargePumpDetails(
        ratio=circ.ratio, m=circ.m, m_engine=ss.m_engine, v_in=v_in, v_ideal=circ.m * v_in,
        c_fly_eff=pump.c_fly, c_out_eff=pump.c_out, phase_duty=duty_cp,
        r_ssl=rs, r_fsl=rf, r_out_coth=r_out_exact(rs, rf), r_out_sqrt=r_out_sqrt(rs, rf),
        i_load_avg=i0 + v_mean * g_load, i_load_const=i0, g_load=g_load,
        p_i2r=(i0 + v_mean * g_load) ** 2 * ss.r_out,
        p_load_engine=power.p_load_engine, p_in_direct=power.p_in_direct,
        energy_residual=power.p_in_direct - power.p_in,
        q_pulse=load.q_pulse, pulse_dip=-rail["y_min"], pulse_rise=rail["y_max"],
        v_pump_min=rail["v_pump_min"], v_pump_max=rail["v_pump_max"],
        v_block_switch=v_block,
        domain_crossing_worst=power.p_cross_worst, domain_crossing_gross=power.p_cross_gross,
        sw_high_fraction=power.d_high,
        f_sw_max=lim["f_sw_max"], q_g_max=lim["q_g_max"],
        switch_i_rms=tuple(float(v) for v in ss.i_sw_rms), switch_i_peak=tuple(float(v) for v in ss.i_peak_ss[:4]),
        startup_i_peak_switch=st["i_peak"],
        tau_loop=tau_loop, pump_cycles_per_turn_on=(pump.f_cp * load.t_a / load.n_on) if load.n_on else None,
        pull_down_sag=sag,
        treatment_async="superposition: pump steady state under the average load plus the gate-charge "
                        "pulse train through R_out and C_out, extremes aligned (worst-case phase)")


def evaluate_option(design: Design, option: ChargePumpOption, *, corner: str = "nominal") -> OptionResult:
    """Evaluate one charge-pump option of a design.

    Parameters
    ----------
    design : Design
    option : ChargePumpOption
    corner : {"nominal", "min", "max"}
        Capacitance corner (tolerance and temperature class, EIA-198 envelope).

    Returns
    -------
    OptionResult
        Rail statistics (worst-case relative phase of the PWM and the pump
        clock, see the module notes), efficiency and losses, R_out (exact,
        from the engine), start-up by pump cycles, duty limits 0–100 % with the
        highest f_sw and Q_G in ``details`` and ``duty.topology``, capacitor
        stress and checks.

    Notes
    -----
    One step per part of the result: the steady state (:func:`_steady_figures`), the rail with the
    gate-charge pulse train (:func:`_rail_bounds`), power (:func:`_power`), start-up (:func:`_startup`),
    stress (:func:`_capacitor_stress`, :func:`_switch_block`), duty limits (:func:`_duty_limits`), the
    shared checks, the model's validity and the details.
    """
    if not isinstance(option, ChargePumpOption):
        raise DesignError("option", "expected a charge_pump option", type(option).__name__)
    pump = resolve_pump(design, option, corner)
    sched = period_schedule(design)
    load = _rail_load(design, sched)
    ss = _steady_figures(pump, option, load)
    rail = _rail_bounds(ss.sol, pump, load, ss.r_out, pump_extrema=(ss.x_lo[2], ss.x_hi[2]))
    v_min, v_max = rail["v_min"], rail["v_max"]
    power = _power(design, option, pump, sched, load, ss)
    # start-up from 0 V by pump cycles (HS pulses withheld, only I_Q drawn)
    st = _startup(pump, pump.v_in, design, from_aux=option.v_in is None)
    caps, cap_checks = _capacitor_stress(design, option, pump, load, ss, rail, st)
    v_block, sw_checks, warn = _switch_block(design, option, pump.v_in)
    duty, lim = _duty_limits(design, pump, load, ss, rail)
    first, shared = _rail_checks(design, v_min, v_max, st["v_final"])
    i_checks = _switch_current(option, ss, st)
    if design.driver.cmti is not None:  # the driver's level shifter sees the switch-node edge
        i_checks.append(cm.cmti_check(design, design.driver.cmti, "the driver's level shifter"))
    checks = [first] + cap_checks + sw_checks + i_checks + shared
    warn += _ratio_warnings(design, pump, power.collapsed)
    warn += flattering_defaults(option)
    msgs, tau_loop, _, sag = _validity(design, option, pump, load, ss, sched, v_max - v_min)
    warn += msgs
    feasible, verdict = verdict_from(checks, warn)
    details = _details(design, option, pump, load, sched, ss, power, rail, st, lim, v_block, tau_loop, sag)
    return OptionResult(
        label=option.label, kind="charge_pump", feasible=feasible, verdict=verdict, warnings=tuple(warn),
        v_rail=RailStats(min=v_min, max=v_max, mean=ss.v_mean), efficiency=power.efficiency,
        p_delivered=power.p_delivered, p_drawn=power.p_drawn, startup=st["startup"], duty=duty, r_out=ss.r_out,
        capacitors=caps, p_drawn_aux=power.p_drawn_aux, p_drawn_bus=power.p_cross, losses=power.losses,
        checks=tuple(checks), details=details,
        assumptions=(input_reference(option.ratio),
                     cm.edge_words("domain-crossing capacitance c_par (while c_fly is in the switch-node domain)",
                                   power.edges)), t=ss.t_w, v=ss.v_out_w)


def input_reference(ratio: str) -> str:
    """Where the pump's input rail is taken to be referenced, in words (the module notes)."""
    if ratio == "1:1":
        return ("pump input: the flying capacitor charges from the ground-referenced input and is disconnected "
                "from one domain before it joins the other, so no loop runs through the switch node (exact)")
    return (f"pump input ({ratio}): a phase joins the input rail and the output in one loop, so the model takes "
            "the input rail as referred to the switch node during that phase (provided in the SW domain, e.g. "
            "a floating input); a ground-referenced input would see the switch-node motion in that loop")


def flattering_defaults(option: ChargePumpOption) -> list[str]:
    """Warnings for the defaults that make a pump look better than any real one (zero parasitics)."""
    out = []
    if option.q_g_sw == 0.0:
        out.append("q_g_sw = 0: the pump switches' own gate drive is taken as free; a real switch needs gate "
                   "charge at every pump edge (its loss n\u00b7Q_G\u00b7V\u00b7f_cp is left out)")
    if option.c_par == 0.0:
        out.append("c_par = 0: no parasitic capacitance is swung through the bus at the domain crossings; any real "
                   "flying capacitor and its switches have some, and its loss grows with V_bus\u00b2")
    if option.alpha_bp == 0.0:
        out.append("alpha_bp = 0: no bottom-plate parasitic on the flying capacitor (its loss is left out)")
    return out


def _switch_current(option: ChargePumpOption, ss, st: dict) -> list:
    """The pump switches' peak current (start-up inrush and steady peak) against their rating, if given."""
    if option.i_rating_sw is None:
        return []
    i_pk = max(float(np.max(ss.i_peak_ss[:4])), float(st["i_peak"]))
    return [Check("switch_i_peak", i_pk, option.i_rating_sw, "max", "A",
                  "pump switches' peak current (start-up inrush, steady peak) within their rating")]


def _startup(pump: _Pump, v_in: float, design: Design, from_aux: bool) -> dict:
    """Start-up from dead capacitors, by pump cycles, to the UVLO rising threshold.

    Before the rail reaches UVLO the HS pulses are withheld, so only the
    driver's quiescent current loads the rail (the R_GS share needs the HS on,
    so the start-up network has no resistive load). The cycles are not stepped:
    :class:`explorer.engines.transient.StartupTransient` finds the first cycle whose exact
    in-cycle maximum of the rail (ESR steps included) reaches UVLO-on, and the
    instant within it, from the closed form x_k = x_ss + Φ^k·(x₀ − x_ss), in a
    number of batched evaluations that grows with log N, not N. The stress
    figures (capacitor voltages, switch and capacitor currents) are the extremes
    over the whole start-up transient, its settling included.

    The transient depends on the pump, V_in, I_Q and UVLO-on only, not on the bridge, so
    :func:`_startup_transient` is remembered between evaluations (:mod:`explorer.memo`): a sweep or a
    panel change of f_sw, duty or the gate reuses it.
    """
    d = pump.durations
    core = _startup_transient(pump.circ.ratio, float(pump.c_fly), float(pump.r_on), float(pump.esr_fly),
                              float(pump.c_out), float(pump.esr_out), tuple(float(x) for x in d), float(v_in),
                              float(design.driver.i_q), float(design.driver.uvlo_on))
    v_dd_dip = None
    if from_aux:  # the first cycle's charge taken from C_DD before the aux regulator responds
        v_dd_dip = float(max(core["q_first"], 0.0) / design.aux.c_dd)
    stp = dataclasses.replace(core["startup"], v_dd_dip=v_dd_dip)
    return {"startup": stp, "x_max": dict(core["x_max"]), "i_peak": core["i_peak"],
            "i_cap_peak": dict(core["i_cap_peak"]), "v_final": core["v_final"]}


@memoised(maxsize=64)
def _startup_transient(ratio: str, c_fly: float, r_on: float, esr_fly: float, c_out: float, esr_out: float,
                       durations: tuple, v_in: float, i_q: float, uvlo_on: float) -> dict:
    """The start-up transient of :func:`_startup` (a pure function of plain values, so remembered)."""
    net = pump_network(ratio, c_fly=c_fly, r_on=r_on, esr_fly=esr_fly, output="load", c_out=c_out,
                       esr_out=esr_out)
    u = np.array([v_in, i_q])
    d = np.array(durations)
    T = float(d.sum())
    tr = StartupTransient(net, d, u)
    k_cross, t_cross = tr.first_reach("v(out)", uvlo_on)
    names = ["x(c_fly)", "x(c_out)"] + list(SWITCHES) + ["i(c_fly)", "i(c_out)", "v(out)"]
    lo, hi = tr.extrema(names)
    mag = np.maximum(hi, -lo)
    x_max = {"c_fly": float(mag[0]), "c_out": float(hi[1])}
    i_peak = float(mag[2:6].max())
    i_cap = {"c_fly": float(mag[6]), "c_out": float(mag[7])}
    # the waveform: up to twice the crossing, or over five of the slowest time constants
    n_keep = 2 * k_cross if k_cross is not None else math.ceil(5.0 * tr.settling_cycles)
    n_keep = int(min(max(n_keep, 200), MAX_STARTUP_CYCLES))
    step = max(1, n_keep // 2000)
    kk = np.arange(0, n_keep, step)
    # v(out) at the end of each kept cycle: the last phase's probe row on the next cycle's start state
    # (the closed form of the recurrence, from the decomposition already at hand)
    k_last = net.probe_rows(["v(out)"])[-1, 0, :]
    v_tr = tr.states(kk + 1) @ k_last[:net.n_x] + k_last[net.n_x:] @ u
    q_first = -float(tr.cycles([0]).integral(["i(v_in)"])[0, 0])
    stp = Startup(t_uvlo=t_cross, cycles_uvlo=None if k_cross is None else k_cross + 1, i_peak=i_peak,
                  v_dd_dip=None, t=(kk + 1) * T, v=v_tr)
    return {"startup": stp, "x_max": x_max, "i_peak": i_peak, "i_cap_peak": i_cap, "v_final": float(hi[8]),
            "q_first": q_first}


def _load_limits(design: Design, pump: _Pump, r_out: float, v_pump_min: float, v_mean: float, load: _Load,
                 req: float, net: Network | None = None) -> dict:
    """Highest leg frequency and highest Q_G at which the rail minimum stays at the requirement.

    The frequency is f_sw, or f_line on a leg that switches at line frequency (the analysis
    frequency, scaled). Each is None where any value holds (no HS turn-on, or unbounded) and 0 where
    none does (the static load alone, or Q_G = 0, already takes the rail below the requirement).

    Found first on the averaged model (:func:`rail_from_r_out`) with the pump ripple below the mean
    scaled with the load current (it is proportional to it in the linear network) and the exact
    pulse-train dip of the schedule's pulses (:func:`pulse_schedule_extremes`). The schedule's shape
    (duty, pulse instants as shares of the period) is kept as f_sw scales. That model can be
    optimistic (on random designs Q_G,max came out up to 10 % above the Q_G at which the evaluation's
    rail meets the requirement), so with the pump's network (``net``) each limit is then checked on
    the rail the evaluation itself computes (:func:`_exact_rail_min`) and, where it does not hold,
    lowered onto it (:func:`_holding_limits`): a limit is never optimistic.
    """
    n_on, t_a, g_load = load.n_on, load.t_a, load.g_load
    i_tot = load.i0 + v_mean * g_load
    ripple_per_amp = (v_mean - v_pump_min) / i_tot if i_tot > 0 else 0.0
    r_th = _r_th(r_out, load.r_eq)
    i_q = design.driver.i_q
    q_off_all = load.n_off * load.q_off
    v_in, ratio, c_out, t_pulse = pump.v_in, pump.circ.ratio, pump.c_out, load.t_pulse

    def v_min(q, scale):
        """Rail minimum with charge q per turn-on and the bridge frequency scaled by `scale`."""
        ia = i_q + (n_on * q + q_off_all) * scale / t_a
        vm = float(rail_from_r_out(v_in, r_out, ia, ratio=ratio, g_load=g_load))
        it = ia + vm * g_load
        charges = load.pulse_charges(float(q))
        if scale == 0:  # pulses far apart: each one a full step of its own charge on C_out
            dip = max(max(charges, default=0.0), 0.0) / c_out
        else:
            dip = -pulse_schedule_extremes(tuple([t / scale for t in t_pulse]), charges, c_out, r_th, t_a / scale)[0]
        return vm - ripple_per_amp * it - dip

    def solve(fn):
        f_lo = fn(0.0)
        if f_lo < 0:
            return 0.0
        hi = 1.0
        while (f_hi := fn(hi)) >= 0:
            hi *= 4.0
            if hi > 1e12:
                return None
        known = {0.0: f_lo, hi: f_hi}  # Brent's method starts from the bracket's ends: their values are at hand
        return brentq(lambda x: known.pop(x) if x in known else fn(x), 0.0, hi, xtol=1e-9 * hi, rtol=1e-10)

    if n_on == 0:  # no HS turn-on: the gate charge never loads the rail
        return ({"f_sw_max": None, "q_g_max": None} if v_min(load.q_pulse, 0.0) >= req
                else {"f_sw_max": 0.0, "q_g_max": 0.0})
    s = solve(lambda sc: v_min(load.q_pulse, sc) - req)
    qm = solve(lambda x: v_min(design.driver.q_ls + x * design.gate.q_g, 1.0) - req)
    if net is not None:
        q_ls, q_g = design.driver.q_ls, design.gate.q_g
        basis = periodic_steady_state(net, pump.durations, np.eye(2))  # the orbits of v_in = 1 and i_load = 1

        def exact(points):  # the evaluation's rail at scale x (kind "f") or charge multiplier x ("q")
            scale = np.array([x if k == "f" else 1.0 for k, x in points])
            q = np.array([float(load.q_pulse) if k == "f" else q_ls + x * q_g for k, x in points])
            return _exact_rail_min(pump, load, basis, r_th, q, scale, i_q, q_off_all)

        s, qm = _holding_limits(exact, {"f": s, "q": qm}, req)
    f_sw_max = None if s is None else s * analysis_frequency(design.bridge)
    q_g_max = None if qm is None else qm * design.gate.q_g
    return {"f_sw_max": f_sw_max, "q_g_max": q_g_max}


def _exact_rail_min(pump: _Pump, load: _Load, basis: PeriodicSolution, r_th: float, q_on, scale, i_q: float,
                    q_off_all: float) -> np.ndarray:
    """The rail minimum :func:`evaluate_option` computes, for charges ``q_on`` per turn-on and the bridge
    frequency scaled by ``scale`` (> 0; arrays of one shape, the schedule's shape kept) [V].

    The pump's periodic orbit under the load current at that charge and frequency, on the design's
    own network (the R_GS share does not change), plus the pulse-train dip of the pulses at their
    scaled instants (:func:`_rail_bounds`). The network is linear, so each orbit is the sum of the
    ``basis`` orbits (v_in = 1, i_load = 1: a batch of two) weighted by its inputs (superposition);
    only the exact extrema are computed per point.
    """
    q_on = np.asarray(q_on, dtype=float)
    scale = np.asarray(scale, dtype=float)
    ia = i_q + (load.n_on * q_on + q_off_all) * scale / load.t_a
    u = np.stack([np.full(ia.shape, float(pump.v_in)), ia], axis=-1)
    z0 = np.einsum("nk,kpz->npz", u.reshape(-1, 2), basis.z0).reshape(ia.shape + basis.z0.shape[1:])
    sol = PeriodicSolution(net=basis.net, durations=np.broadcast_to(basis.durations[0], z0.shape[:-1]), z0=z0,
                           E=basis.E, S=basis.S)
    lo = sol.extrema(["v(out)"])[0][..., 0]
    if not load.t_pulse:
        return lo
    t_k = np.asarray(load.t_pulse, dtype=float) / scale[..., None]
    y_min, _ = pulse_schedule_extremes(t_k, load.pulse_charges(q_on), pump.c_out, r_th, load.t_a / scale)
    return lo + y_min


#: Points per grid of :func:`_holding_limits`.
_LIMIT_GRID = 32


def _holding_limits(exact, limits: dict, req: float) -> tuple:
    """Each limit moved onto the largest value at which the exact rail holds ``req``.

    ``limits`` maps a kind to its value x from the averaged model (None: unbounded, 0: none; both kept);
    ``exact(points)`` gives the rail at a list of (kind, value) points in one batched solve. The exact
    rail is first evaluated at x and at x·(1 + 1/32). Where x fails, a grid from 0 to x and then a
    grid inside its last holding cell follow; where x holds and the other fails, a grid between the
    two; where both hold (the averaged model pessimistic by over 3 %) the larger is kept. Each grid has
    :data:`_LIMIT_GRID` points, all kinds in one solve per stage, at most three solves; the limit is
    the last point that holds (within 1/1024 of x below the crossing), 0 where none does.
    """
    out = dict(limits)
    todo = [k for k, x in limits.items() if x is not None and x > 0]
    cells, stages = {}, {}
    if todo:
        up = 1.0 + 1.0 / _LIMIT_GRID
        rails = exact([(k, x) for k in todo for x in (limits[k], limits[k] * up)]).reshape(len(todo), 2)
        for k, (at, above) in zip(todo, rails):
            if not at >= req:  # optimistic: down from x
                cells[k], stages[k] = (0.0, limits[k]), 2
            elif not above >= req:  # the crossing lies between x and x·(1 + 1/32)
                cells[k], stages[k] = (limits[k], limits[k] * up), 1
            else:
                out[k] = limits[k] * up
    steps = np.arange(1, _LIMIT_GRID + 1) / _LIMIT_GRID
    for stage in range(2):
        todo = [k for k in cells if stages[k] > stage]
        if not todo:
            break
        grids = {k: cells[k][0] + (cells[k][1] - cells[k][0]) * steps for k in todo}
        rails = exact([(k, x) for k in todo for x in grids[k]]).reshape(len(todo), _LIMIT_GRID)
        for k, v in zip(todo, rails):
            g, holds = grids[k], v >= req
            n = _LIMIT_GRID if holds.all() else int(np.argmin(holds))
            out[k] = cells[k][0] if n == 0 else float(g[n - 1])
            cells[k] = (out[k], float(g[min(n, _LIMIT_GRID - 1)]) if n < _LIMIT_GRID else cells[k][1])
    return tuple(out.values())


def rail_min_batch(design: Design, option: ChargePumpOption, factors) -> np.ndarray:
    """Steady-state rail minimum for many spread samples in one batched engine solve [V].

    ``factors`` is an :class:`explorer.tolerance.Factors` of equal-length
    arrays. Sample ``i`` is what :func:`evaluate_option` gives for the design
    perturbed by :func:`explorer.tolerance.apply_factors` with ``factors.at(i)``:
    C_fly × k_c and C_out × k_out with the DC-bias factor at the sample's V_in, V_in ×
    v_dd, gate charge × q_g and quiescent current × i_q (v_f and temperature do
    not enter a pump). The samples are one batch of networks of the same
    topology (arrays of element values, see :mod:`explorer.engines.network`), solved at
    once: R_out, the periodic steady state and the rail extremes.
    """
    if not isinstance(option, ChargePumpOption):
        raise DesignError("option", "expected a charge_pump option", type(option).__name__)
    k_c = np.atleast_1d(np.asarray(factors.k_c, dtype=float))
    n = k_c.size

    def col(x):
        return np.broadcast_to(np.asarray(x, dtype=float), (n,))

    pump = resolve_pump(design, option, "nominal", k_c=k_c, k_out=col(factors.k_out), k_v=col(factors.v_dd))
    load = _rail_load(design, period_schedule(design), k_q=col(factors.q_g), k_i=col(factors.i_q))
    r_out, _, _, sol = _steady(pump, option, load)
    return np.asarray(_rail_bounds(sol, pump, load, r_out)["v_min"], dtype=float).reshape(n)


#: Design points per engine call in :func:`rail_min_map`.
_MAP_BLOCK = 8192


def rail_min_map(design: Design, option: ChargePumpOption, f_sw, duty, *, corner: str = "nominal") -> np.ndarray:
    """Steady-state rail minimum over a grid of switching frequency × HS duty [V].

    Each point is one switching period with the HS on for ``duty``·T, laid out by the schedule's slot
    rules (:func:`explorer.schedule.slot_layout`, as the bootstrap's map: dead times, an HS pulse
    shorter than ``t_on_min`` not given, a whole-period HS on-time, light load), held for ever (the
    standstill case of a three-phase leg). What a point's :func:`evaluate_option` computes for that
    period, for all points at once: the load's mean current and R_GS share
    (:func:`_average_load`), the pump's periodic steady state (:func:`_orbit_minima`: one network per
    distinct R_GS share, every point's load current in one batch), and the exact pulse-train dip of
    the turn-on and turn-off pulses at their instants (:func:`pulse_schedule_extremes`, one train per
    point). R_out does not depend on the bridge and is solved once.

    Parameters
    ----------
    f_sw : array_like [Hz]
    duty : array_like [-]
        HS on-time share of the period, 0…1; broadcasts with ``f_sw``.

    Returns
    -------
    ndarray [V], shape of ``broadcast(f_sw, duty)``

    Examples
    --------
    >>> from explorer import demo_design
    >>> d = demo_design()
    >>> rail_min_map(d, d.options[1], [100e3, 200e3], [[0.5], [0.9]]).shape
    (2, 2)
    """
    if not isinstance(option, ChargePumpOption):
        raise DesignError("option", "expected a charge_pump option", type(option).__name__)
    b, drv = design.bridge, design.driver
    pump = resolve_pump(design, option, corner)
    r_out, _ = r_out_engine(pump.f_cp, pump.c_fly, pump.r_on, ratio=pump.circ.ratio,
                            dead_time_cp=option.dead_time_cp, esr_fly=pump.esr_fly)
    shape = np.broadcast(f_sw, duty).shape
    dt, on, turn_on, turn_off = map_periods(b, drv, np.broadcast_to(np.asarray(f_sw, dtype=float), shape).ravel(),
                                            np.broadcast_to(np.asarray(duty, dtype=float), shape).ravel())
    t_a = dt.sum(axis=-1)
    q_on, q_off = charge_per_turn_on(design), charge_per_turn_off(design)
    i0, g = _average_load(design, drv.i_q, q_on, q_off, turn_on.sum(axis=-1), turn_off.sum(axis=-1),
                          np.where(on, dt, 0.0).sum(axis=-1), t_a)
    loaded = g > 0
    r_eq = 1.0 / np.where(loaded, g, 1.0)  # the R_GS share as a resistor where there is one
    lo = _orbit_minima(pump, r_eq, loaded & _in_network(pump, r_eq), i0)
    r_th = np.where(loaded, _r_th(r_out, r_eq), r_out)
    t_k = np.concatenate([np.zeros((t_a.size, 1)), np.cumsum(dt[:, :-1], axis=-1)], axis=-1)
    q_k = np.where(turn_on, q_on, np.where(turn_off, q_off, 0.0))  # zero-charge pulses change nothing
    y_min = np.empty(t_a.size)
    for a in range(0, t_a.size, _MAP_BLOCK):
        j = slice(a, a + _MAP_BLOCK)
        y_min[j] = pulse_schedule_extremes(t_k[j], q_k[j], pump.c_out, r_th[j], t_a[j])[0]
    return (lo + y_min).reshape(shape)


def _orbit_min(pump: _Pump, net: Network, u: np.ndarray) -> np.ndarray:
    """Exact minimum of v(out) over the pump's periodic orbit for a batch of inputs ``u`` (..., 2) [V]."""
    return periodic_steady_state(net, pump.durations, u).extrema(["v(out)"])[0][..., 0]


def _orbit_minima(pump: _Pump, r_eq: np.ndarray, loaded: np.ndarray, i0: np.ndarray) -> np.ndarray:
    """Minimum of v(out) over the pump's periodic orbit at each point [V]: load current ``i0`` [A], plus a
    resistor ``r_eq`` [Ω] where ``loaded``.

    The network depends on the point only through ``r_eq``, so there is one network per distinct value
    (a grid over f_sw × duty has about one per duty) and the points that share it are one batch of
    inputs (``u`` of shape (networks, points, 2), short groups padded with repeats); the points without
    a resistor share one network without it.
    """
    circ = pump.circ

    def net(r_load):
        return pump_network(circ.ratio, c_fly=pump.c_fly, r_on=pump.r_on, esr_fly=pump.esr_fly, output="load",
                            c_out=pump.c_out, esr_out=pump.esr_out, r_load=r_load)

    v_in = float(pump.v_in)
    lo = np.empty(i0.size)
    free = np.flatnonzero(~loaded)
    if free.size:
        n0 = net(None)
        for a in range(0, free.size, _MAP_BLOCK):
            k = free[a:a + _MAP_BLOCK]
            lo[k] = _orbit_min(pump, n0, np.stack([np.full(k.size, v_in), i0[k]], axis=-1))
    idx = np.flatnonzero(loaded)
    if idx.size:
        values, group = np.unique(r_eq[idx], return_inverse=True)
        order = np.argsort(group, kind="stable")
        idx, group = idx[order], group[order]
        counts = np.bincount(group, minlength=values.size)
        starts = np.concatenate([[0], np.cumsum(counts)])
        pos = np.arange(idx.size) - starts[group]
        g0 = 0
        while g0 < values.size:  # groups of networks with at most _MAP_BLOCK padded points each
            g1 = g0 + 1
            while g1 < values.size and (g1 + 1 - g0) * counts[g0:g1 + 1].max() <= _MAP_BLOCK:
                g1 += 1
            sel = slice(starts[g0], starts[g1])
            width = int(counts[g0:g1].max())
            cur = np.repeat(i0[idx[starts[g0:g1]]][:, None], width, axis=1)  # padding: the group's first point
            cur[group[sel] - g0, pos[sel]] = i0[idx[sel]]
            u = np.stack([np.full(cur.shape, v_in), cur], axis=-1)
            lo[idx[sel]] = _orbit_min(pump, net(values[g0:g1, None]), u)[group[sel] - g0, pos[sel]]
            g0 = g1
    return lo


# --------------------------------------------------------------------------- the family's model

class ChargePumpModel(SupplyModel):
    """The charge-pump family for the registry (:mod:`explorer.options.base`)."""

    kind = "charge_pump"
    option_class = ChargePumpOption
    capacitor_fields = ("c_fly", "c_out")
    sized_capacitor = "c_fly.c"
    netlist_probes = {"cap": "v(vb)-v(c_out_esr)", "fly": "v(t)-v(c_fly_esr)"}
    netlist_notes = ("* (the model's pump rail extremes are a bound over every relative phase of the PWM and "
                     "the pump clock; this circuit runs one phase)",)

    evaluate = staticmethod(evaluate_option)
    rail_min_batch = staticmethod(rail_min_batch)
    rail_min_map = staticmethod(rail_min_map)

    def apply_factors(self, design, option, factors):
        """Each capacitor at its own factor (``k_c`` for C_fly, ``k_out`` for C_out); own input rail × ``v_dd``."""
        option = super().apply_factors(design, option, factors)
        return dataclasses.replace(option, v_in=None if option.v_in is None else option.v_in * factors.v_dd)

    def netlist_clock(self, design, option):
        return pump_durations(option.f_cp, option.dead_time_cp)

    def netlist_settle_time(self, design, option, result, corner):
        from ..netlist import SETTLE_TAU
        return SETTLE_TAU * float(result.r_out) * result.details.c_out_eff

    def netlist_lines(self, design, option, plan, corner):
        from ..netlist import pump_lines
        return pump_lines(design, option, plan)


MODEL = ChargePumpModel()
