"""What explorer knows about each bridge topology, in one table.

One :class:`Topology` per name in :data:`TOPOLOGY`: the bridge keys it requires and its own
consistency checks, its operating HS duty (:attr:`Topology.nominal_duty`), its slot layout per
switching period (:attr:`Topology.slots`: HS and LS slot times and the switch-node level in each dead
time), whether the duty ramps in soft-start, the design field the sweep alias ``"duty"`` sets
(:attr:`Topology.duty_field`, :attr:`Topology.duty_setting`), and the duty limit in its own terms
(:attr:`Topology.duty_limit`, the keys of ``DutyLimits.topology``, worded by
:mod:`explorer.views.table`). Everything else asks this
table instead of testing the topology's name: the design loader, :mod:`explorer.schedule`, the sweep,
the option models, the netlist export.

The conventions and their sources are those of :mod:`explorer.schedule` (volt-second balance of the
buck and the boost, sine PWM of a three-phase leg).

This module imports neither :mod:`explorer.design` nor :mod:`explorer.schedule` (they import it);
functions take a ``Bridge``.
"""

from __future__ import annotations

from dataclasses import dataclass
from types import SimpleNamespace
from typing import Callable

import numpy as np

from .errors import DesignError

__all__ = ["Topology", "TOPOLOGY", "topology_of", "hold_level", "analysis_frequency", "analysis_period", "light_load",
           "frequency_limit_key", "QUASI_STATIC_PERIODS", "periods_per_fundamental", "is_standstill", "modulation", "peak_span",
           "operating_share", "frequency_field"]


#: Above this many switching periods per fundamental a three-phase leg is analysed as standstill.
#: The rail then follows the slowly varying duty quasi-statically, and holding the highest duty for
#: ever (standstill) bounds the fundamental's minimum from below, so the answer stays on the safe
#: side while the work stays bounded (a 100 kHz leg at 5 Hz and below).
QUASI_STATIC_PERIODS = 20_000


@dataclass(frozen=True)
class Topology:
    """One bridge topology (see the module notes).

    Attributes
    ----------
    name : str
        The design-file value of ``bridge.topology``.
    required : tuple of str
        Bridge keys that must not be null for it.
    nominal_duty : callable(bridge) -> float
        HS duty command of the operating point, before dead time [-] (three_phase: the highest over
        the fundamental).
    slots : callable(bridge, k, ramp, T) -> (t_hs, t_ls, lvl_a, lvl_b)
        Per switching period k (ndarray of int) with soft-start factor ``ramp`` and period T [s]: raw
        HS and LS slot times [s] and the SW level [V] in the dead time after HS turn-off (a) and
        before HS turn-on (b).
    duty_field : str
        The design field the sweep alias ``"duty"`` sets.
    duty_setting : callable(bridge, h, f) -> float
        Value of :attr:`duty_field` that makes the HS on-time share of the period equal ``h`` [-] at
        the leg's own switching frequency ``f`` [Hz] (:func:`analysis_frequency`: f_sw, or f_line for a
        leg that switches at line frequency).
    duty_limit : callable(bridge, h_max, T, passes) -> dict, or None
        The highest feasible HS share ``h_max`` [-] (None: none feasible) in the topology's own terms,
        the keys of ``DutyLimits.topology`` (``passes``: the operating point holds). None: the terms
        need a search of the supply model (three_phase: the highest m and the lowest f_o).
    line_frequency : bool
        The leg switches once per line period: its analysis period is 1/f_line, not 1/f_sw.
    fundamental : bool
        The analysis covers a whole fundamental of f_o (many switching periods).
    soft_start : bool
        The duty command ramps from 0 over ``soft_start`` (False: the leg keeps its duty).
    light_load : bool
        The topology has a pulse-skipping light-load mode (``mode = "light_load"``).
    check : callable(bridge, path) or None
        Its own consistency checks (raise :class:`~explorer.errors.DesignError`).
    hold : callable(bridge, lvl_b) -> (ndarray, str)
        Where the switch node rests while the driver withholds the HS pulse of a period (start-up in
        UVLO): the level [V] per period (``lvl_b`` is the dead-time level before HS turn-on) and the
        assumption in plain words. ``bridge.v_sw_hold`` overrides it.
    """

    name: str
    required: tuple
    nominal_duty: Callable
    slots: Callable
    duty_field: str
    duty_setting: Callable
    duty_limit: Callable | None
    line_frequency: bool = False
    fundamental: bool = False
    soft_start: bool = True
    light_load: bool = False
    check: Callable | None = None
    hold: Callable | None = None


# --------------------------------------------------------------------------- three-phase helpers

def modulation(bridge, theta: np.ndarray, ramp) -> np.ndarray:
    """Reference of phase a, duty d = ½(1 + u) before clipping [-], by ``bridge.pwm``.

    * ``sine``: m·ramp·(sin θ [+ sin 3θ / 6 with third-harmonic injection]).
    * The carrier-based schemes add a zero-sequence u₀ to the three sine references
      u_k = m·ramp·sin(θ − 2πk/3) (Hava, Kerkman & Lipo, IEEE Trans. Power Electronics 14(1), 1999,
      doi:10.1109/63.737592; Holmes & Lipo 2003, ch. 6): ``svpwm`` u₀ = −(max + min)/2 (space
      vector); ``dpwm60`` the phase of largest magnitude clamped to its rail, u₀ = sign(u)·1 − u of
      that phase (60° clamps around each peak); ``dpwm120_top`` u₀ = 1 − max (each phase's HS on for
      120°); ``dpwm120_bottom`` u₀ = −1 − min (each phase's LS on for 120°).
    """
    scheme = getattr(bridge, "pwm", "sine")
    theta = np.asarray(theta, dtype=float)
    if scheme == "sine":
        u = np.sin(theta)
        if bridge.third_harmonic:
            u = u + np.sin(3 * theta) / 6.0
        return bridge.m * ramp * u
    ph = bridge.m * np.asarray(ramp, dtype=float) * np.stack(
        [np.sin(theta - 2 * np.pi * k / 3) for k in range(3)])
    hi, lo = ph.max(axis=0), ph.min(axis=0)
    if scheme == "svpwm":
        u0 = -(hi + lo) / 2.0
    elif scheme == "dpwm60":
        big = np.where(hi >= -lo, hi, lo)
        u0 = np.sign(big) - big
    elif scheme == "dpwm120_top":
        u0 = 1.0 - hi
    else:  # dpwm120_bottom
        u0 = -1.0 - lo
    return ph[0] + u0


def periods_per_fundamental(f_sw: float, f_o: float | None) -> int:
    """Switching periods analysed per fundamental: round(f_sw/f_o), or 1 for standstill.

    Standstill is f_o = 0 and any f_o below f_sw / :data:`QUASI_STATIC_PERIODS`.
    """
    if not f_o or f_sw / f_o > QUASI_STATIC_PERIODS:
        return 1
    return max(1, int(round(f_sw / f_o)))


def is_standstill(bridge) -> bool:
    """A three-phase leg analysed as standstill (f_o = 0, or quasi-static, see QUASI_STATIC_PERIODS)."""
    return not bridge.f_o or bridge.f_sw / bridge.f_o > QUASI_STATIC_PERIODS


def _crest_angle(bridge) -> float:
    """Angle of the highest duty of the reference [rad] (inside the clamp of a discontinuous scheme)."""
    scheme = getattr(bridge, "pwm", "sine")
    if scheme == "svpwm" or (scheme == "sine" and bridge.third_harmonic):
        return np.pi / 3
    return np.pi / 2


def peak_span(bridge) -> tuple[float, float]:
    """Angles [rad] between which phase a's duty is highest, falling monotonically outside (to ±π/2 away).

    Sine: the crest π/2; third harmonic and space vector: π/3 … 2π/3 (their two maxima); dpwm60 the
    60° clamp π/3 … 2π/3; dpwm120_top the 120° clamp π/6 … 5π/6; dpwm120_bottom's highest duty is
    its sine-like top, at π/2 … π/2.
    """
    scheme = getattr(bridge, "pwm", "sine")
    if scheme in ("svpwm", "dpwm60") or (scheme == "sine" and bridge.third_harmonic):
        return np.pi / 3, 2 * np.pi / 3
    if scheme == "dpwm120_top":
        return np.pi / 6, 5 * np.pi / 6
    return np.pi / 2, np.pi / 2


# --------------------------------------------------------------------------- the topologies

def _levels(bridge, k, low: bool):
    return (-bridge.v_undershoot if low else bridge.v_bus) * np.ones(k.shape)


def _buck_duty(b):
    return b.v_out / (b.eta * b.v_bus)


def _buck_slots(b, k, ramp, T):
    t_hs = _buck_duty(b) * ramp * T
    t_ls = T - t_hs - 2 * b.dead_time
    lvl = _levels(b, k, True)
    return t_hs, t_ls, lvl, lvl


def _buck_check(b, path):
    period = 1.0 / b.f_sw
    if b.v_out_start >= b.v_bus:
        raise DesignError(f"{path}.v_out_start", f"a pre-biased output must be below v_bus = {b.v_bus:g} V",
                          b.v_out_start)
    if b.v_out >= b.v_bus * b.eta:
        raise DesignError(f"{path}.v_out", f"a buck's output must be below v_bus\u00b7eta = "
                          f"{b.v_bus * b.eta:g} V", b.v_out)
    if b.mode == "light_load" and b.ls_pulse is None:
        raise DesignError(f"{path}.ls_pulse", "required in light_load mode (low-side on-time)")
    if b.mode == "light_load":
        t_ls = period * (1.0 - b.v_out / (b.eta * b.v_bus)) - 2 * b.dead_time
        if b.ls_pulse >= t_ls:
            raise DesignError(f"{path}.ls_pulse", f"must be shorter than the low-side slot "
                              f"(1 \u2212 D)\u00b7T \u2212 2\u00b7t_dead = {max(t_ls, 0.0):.4g} s", b.ls_pulse)


def _boost_duty(b):
    return b.eta * b.v_in / b.v_bus  # HS (rectifier) share 1 − D


def _boost_slots(b, k, ramp, T):
    d_main = (1.0 - _boost_duty(b)) * ramp
    t_ls = d_main * T
    t_hs = T - t_ls - 2 * b.dead_time
    lvl = _levels(b, k, False)
    return t_hs, t_ls, lvl, lvl


def _boost_check(b, path):
    if b.v_in * b.eta >= b.v_bus:
        raise DesignError(f"{path}.v_in", f"a boost's input must be below v_bus/eta = "
                          f"{b.v_bus / b.eta:g} V", b.v_in)


def _half_duty(b):
    return 0.5 if b.duty is None else b.duty


def _half_slots(b, k, ramp, T):
    d = _half_duty(b) * np.ones(k.shape)
    td = b.dead_time
    return d * T - td, (1 - d) * T - td, _levels(b, k, True), _levels(b, k, False)


def _line_slots(b, k, ramp, T):
    d = _half_duty(b) * np.ones(k.shape)
    td = b.dead_time
    lvl = b.v_sw_low * np.ones(k.shape)
    return d * T - td, (1 - d) * T - td, lvl, lvl


def _line_check(b, path):
    if b.f_line * 2 > b.f_sw:
        raise DesignError(f"{path}.f_line", f"must be below half the switching frequency "
                          f"({b.f_sw / 2:g} Hz)", b.f_line)


def _full_slots(b, k, ramp, T):
    d = b.duty * ramp
    td = b.dead_time
    lvl = _levels(b, k, True)
    return d * T - td, (1 - d) * T - td, lvl, lvl


def _three_phase_duty(b):
    u = modulation(b, np.array([_crest_angle(b)]), 1.0)
    return float(np.clip(0.5 * (1 + u[0]), 0.0, 1.0))


def _three_phase_slots(b, k, ramp, T):
    ones = np.ones(k.shape)
    n = periods_per_fundamental(b.f_sw, b.f_o)
    if not is_standstill(b):
        theta = 2 * np.pi * k / n
    else:  # standstill: the angle of the highest duty
        theta = _crest_angle(b) * ones
    d = np.clip(0.5 * (1 + modulation(b, theta, ramp)), 0.0, 1.0)
    i_pos = np.sin(theta - b.phi) >= 0
    lvl = np.where(i_pos, -b.v_undershoot, b.v_bus)
    td = b.dead_time
    return d * T - td, (1 - d) * T - td, lvl, lvl


def _crest_reference(b, m: float) -> float:
    """The reference u of phase a at the crest angle (:func:`_crest_angle`) for modulation index ``m``."""
    like = SimpleNamespace(m=m, pwm=getattr(b, "pwm", "sine"), third_harmonic=b.third_harmonic)
    return float(modulation(like, np.array([_crest_angle(b)]), 1.0)[0])


def _three_phase_setting(b, h, f):
    """The modulation index m that puts the HS on-time share of the standstill crest period at ``h``.

    The crest period's HS is on d·T − t_dead with d = ½(1 + u), u the reference at the crest angle
    (:func:`_three_phase_slots`), so d = h + t_dead·f, as for a full-bridge leg. u is affine in m at
    the crest for the continuous schemes: m for sine PWM, m·√3/2 with third-harmonic injection and
    for space-vector PWM (their crest at 60°; Holmes & Lipo 2003, ch. 6), 1.5·m − 1 for dpwm120_bottom;
    so m = (2·d − 1 − u(0))/(u(1) − u(0)). The clamped schemes (dpwm60, dpwm120_top) hold the crest
    at the rail for any m > 0: no m moves that period, and m = 2·d − 1 is kept as their setting.
    """
    u0, u1 = _crest_reference(b, 0.0), _crest_reference(b, 1.0)
    target = 2.0 * (h + b.dead_time * f) - 1.0
    if getattr(b, "pwm", "sine") in ("dpwm60", "dpwm120_top"):
        return target
    return (target - u0) / (u1 - u0)


def _three_phase_check(b, path):
    if b.f_o and b.f_o * 2 > b.f_sw:
        raise DesignError(f"{path}.f_o", f"must be below half the switching frequency "
                          f"({b.f_sw / 2:g} Hz)", b.f_o)
    if b.f_o and b.f_sw / b.f_o > 2_000_000:
        raise DesignError(f"{path}.f_o", "f_sw/f_o above 2e6 switching periods per fundamental; "
                          "use f_o = 0 (standstill) for slower output", b.f_o)


# --------------------------------------------------------------------------- where SW rests in UVLO

def _hold_buck(b, lvl_b):
    """Buck: no HS pulse has put current in the inductor, so SW rests at the output through it."""
    words = ("sync_buck: while UVLO withholds the HS pulses no current flows in the inductor and the "
             f"switch node rests at the output's starting level v_out_start = {b.v_out_start:g} V "
             "(0 V: a discharged output; above it, a pre-biased one), so the bootstrap charges toward "
             "V_DD − V_F − v_out_start there and fully only while the low side conducts")
    return b.v_out_start * np.ones(lvl_b.shape), words


def _hold_boost(b, lvl_b):
    """Boost: the inductor (and the HS body diode) hold SW at the input or above while the HS is off."""
    words = ("sync_boost: while UVLO withholds the HS (rectifier) pulses the inductor holds the switch "
             f"node at the input v_in = {b.v_in:g} V or above it (the HS body diode conducts at the "
             "output), so the bootstrap charges only while the low-side main switch is on")
    return b.v_in * np.ones(lvl_b.shape), words


def _hold_line(b, lvl_b):
    """Line leg: the HS body diode carries the line current in the half period the HS would conduct."""
    words = ("line_leg: while UVLO withholds the HS the line current flows through its body diode in "
             f"that half line period, holding the switch node at the bus ({b.v_bus:g} V), so the "
             "bootstrap charges only in the low-side half period")
    return b.v_bus * np.ones(lvl_b.shape), words


def _hold_current(b, lvl_b):
    """Half/full bridge, three-phase leg: the load current holds SW where it holds it in the dead time."""
    words = (f"{b.topology}: while UVLO withholds an HS pulse both switches are off and the load "
             "current holds the switch node where it holds it in the dead time before HS turn-on "
             "(the low-side body diode: low; the HS body diode or a resonant current: at the bus)")
    return np.asarray(lvl_b, dtype=float) * 1.0, words


def hold_level(bridge, lvl_b):
    """Switch-node level while an HS pulse is withheld in start-up, per period [V], and its words.

    The topology's rule (:attr:`Topology.hold`), or ``bridge.v_sw_hold`` where the design gives it.
    """
    lvl_b = np.asarray(lvl_b, dtype=float)
    if getattr(bridge, "v_sw_hold", None) is not None:
        return (bridge.v_sw_hold * np.ones(lvl_b.shape),
                f"design value: while UVLO withholds the HS pulses the switch node rests at "
                f"v_sw_hold = {bridge.v_sw_hold:g} V")
    rule = TOPOLOGY[bridge.topology].hold or _hold_current
    return rule(bridge, lvl_b)


def _bridge_duty_limit(b, h_max, T, passes):
    """Highest duty command: the HS share plus the dead time that delays turn-on."""
    return {"duty_command_max": None if h_max is None else min(1.0, h_max + b.dead_time / T)}


def _boost_duty_limit(b, h_max, T, passes):
    """Lowest V_out/V_in: η/(1 − D) with the rectifier share h = 1 − D − 2·t_dead/T."""
    if h_max is None:
        return {"v_out_over_v_in_min": None}
    return {"v_out_over_v_in_min": max(1.0, b.eta / (h_max + 2 * b.dead_time / T))}

#: The topologies by name, in the order the design file lists them.
TOPOLOGY = {t.name: t for t in (
    Topology("sync_buck", ("v_out",), _buck_duty, _buck_slots, "bridge.v_out",
             lambda b, h, f: h * b.eta * b.v_bus,
             lambda b, h, T, ok: {"v_out_max": None if h is None else h * b.eta * b.v_bus}, light_load=True, check=_buck_check,
             hold=_hold_buck),
    Topology("sync_boost", ("v_in",), _boost_duty, _boost_slots, "bridge.v_in",
             lambda b, h, f: (h + 2 * b.dead_time * f) * b.v_bus / b.eta, _boost_duty_limit,
             check=_boost_check, hold=_hold_boost),
    Topology("half_bridge", (), _half_duty, _half_slots, "bridge.duty",
             lambda b, h, f: h + b.dead_time * f,
             lambda b, h, T, ok: {"passes": ok, **_bridge_duty_limit(b, h, T, ok)}, soft_start=False),
    Topology("full_bridge", ("duty",), lambda b: b.duty, _full_slots, "bridge.duty",
             lambda b, h, f: h + b.dead_time * f, _bridge_duty_limit),
    Topology("three_phase", ("m", "f_o"), _three_phase_duty, _three_phase_slots, "bridge.m",
             _three_phase_setting, None, fundamental=True, check=_three_phase_check),
    Topology("line_leg", ("f_line",), _half_duty, _line_slots, "bridge.duty",
             lambda b, h, f: h + b.dead_time * f,
             lambda b, h, T, ok: {"passes": ok, "f_line": b.f_line}, line_frequency=True, soft_start=False,
             check=_line_check, hold=_hold_line),
)}


def topology_of(bridge) -> Topology:
    """The table entry of a bridge's topology."""
    return TOPOLOGY[bridge.topology]


def analysis_frequency(bridge) -> float:
    """The leg's own switching frequency [Hz]: f_sw, or f_line for a leg that switches at line frequency."""
    return bridge.f_line if TOPOLOGY[bridge.topology].line_frequency else bridge.f_sw


def frequency_field(bridge) -> str:
    """The design-file path of the leg's own switching frequency (:func:`analysis_frequency`):
    ``"bridge.f_line"`` for a leg that switches at line frequency, ``"bridge.f_sw"`` otherwise."""
    return "bridge.f_line" if TOPOLOGY[bridge.topology].line_frequency else "bridge.f_sw"


def analysis_period(bridge) -> float:
    """The leg's own switching period [s]: ``1/analysis_frequency(bridge)``."""
    return 1.0 / analysis_frequency(bridge)


def frequency_limit_key(bridge) -> str:
    """Key of ``DutyLimits.topology`` for the highest leg frequency a supply carries, in the leg's terms.

    ``"f_line_max"`` for a leg that switches at line frequency (its HS turns on once per line period),
    ``"f_sw_max"`` otherwise. The value is the analysis frequency (:func:`analysis_frequency`) scaled
    until the rail meets its requirement: None where any frequency holds, 0 where none does.
    """
    return "f_line_max" if TOPOLOGY[bridge.topology].line_frequency else "f_sw_max"


def light_load(bridge) -> bool:
    """The leg runs in a pulse-skipping light-load mode (a buck with ``mode = "light_load"``)."""
    return TOPOLOGY[bridge.topology].light_load and bridge.mode == "light_load"


def operating_share(bridge, f_sw: float | None = None) -> float:
    """HS on-time share of the period at the bridge's operating point [-].

    The inverse of :attr:`Topology.duty_setting` (linear in the share for every topology) at the
    current value of :attr:`Topology.duty_field`, so it is the coordinate of the design on the
    sweep's ``"duty"`` axis (the margin map's duty axis; for three_phase the HS share of the
    standstill crest period, :func:`_three_phase_setting`).
    """
    topo = TOPOLOGY[bridge.topology]
    f = analysis_frequency(bridge) if f_sw is None else f_sw
    s0, s1 = topo.duty_setting(bridge, 0.0, f), topo.duty_setting(bridge, 1.0, f)
    x = getattr(bridge, topo.duty_field.split(".", 1)[1])
    if x is None:  # a half bridge or line leg without a duty: its nominal command
        x = topo.nominal_duty(bridge)
    return float((x - s0) / (s1 - s0))
