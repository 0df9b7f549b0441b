"""The design description: frozen dataclasses and the ``explorer-design`` JSON file.

A design is one bridge leg (topology and operating point), its high-side gate
load and driver, the ground-referenced aux rail, a few checking margins, and a
list of labelled floating-supply options to compare. Every field carries a
:class:`Spec` in its dataclass metadata (unit, meaning, allowed range,
default); loading, saving, the glossary in the docs and the panels' controls
are all driven from those specs, so a field is described in exactly one place.

Loading validates everything and raises one :class:`~explorer.errors.DesignError`
naming the field path (``options[1].c_fly``), the value and what is allowed.
The file is parsed with :func:`json.loads` only; nothing in it is executed.
"""

from __future__ import annotations

import dataclasses
import json
import math
import os
from dataclasses import dataclass, field
from typing import Any, Union

from .capacitors import parse_dielectric
from .errors import DesignError
from .topology import TOPOLOGY, analysis_period
from .units import format_exact, parse_eng

__all__ = [
    "FORMAT", "VERSION", "MAX_FILE_BYTES", "TOPOLOGIES", "Spec", "Capacitor", "LinearDiode",
    "JunctionDiode", "Bridge", "Gate", "Driver", "Aux", "Checks", "Spread", "BootstrapOption",
    "ChargePumpOption", "IsolatedOption", "Design", "load_design", "save_design", "design_to_dict",
    "replace_field", "replace_fields", "specs", "read_bounded", "spec_at", "check_value", "spec_field",
]

FORMAT = "explorer-design"
VERSION = 1
#: Design files larger than this are refused before parsing [bytes].
MAX_FILE_BYTES = 2_000_000
#: Deepest JSON nesting accepted (a design needs 4).
MAX_DEPTH = 8

#: Topology names, in the order of the topology table (:data:`explorer.topology.TOPOLOGY`).
TOPOLOGIES = tuple(TOPOLOGY)

_REQUIRED = object()


@dataclass(frozen=True)
class Spec:
    """How one design field is written, checked and documented.

    ``kind`` is one of ``real``, ``int``, ``bool``, ``choice``, ``text``,
    ``curve``, ``capacitor``, ``diode``. ``lo``/``hi`` bound reals and ints
    (``lo_open`` excludes the bound itself).
    """

    unit: str
    doc: str
    kind: str = "real"
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    choices: tuple = ()
    nullable: bool = False
    default: Any = _REQUIRED

    @property
    def required(self) -> bool:
        return self.default is _REQUIRED

    def allowed(self) -> str:
        """Plain words for the allowed values."""
        if self.kind == "choice":
            return "one of " + ", ".join(repr(c) for c in self.choices)
        if self.kind == "bool":
            return "true or false"
        if self.kind == "text":
            return "text"
        parts = []
        if self.lo is not None:
            parts.append(("> " if self.lo_open else "\u2265 ") + f"{self.lo:g}")
        if self.hi is not None:
            parts.append(("< " if self.hi_open else "\u2264 ") + f"{self.hi:g}")
        what = "a whole number" if self.kind == "int" else "a number"
        rng = f" {' and '.join(parts)}" if parts else ""
        unit = f" [{self.unit}]" if self.unit and self.unit != "-" else ""
        return f"{what}{rng}{unit}"


def _f(unit: str, doc: str, default: Any = _REQUIRED, **kw) -> Any:
    """A dataclass field with its :class:`Spec`."""
    spec = Spec(unit, doc, default=default, **kw)
    if default is _REQUIRED:
        return field(metadata={"spec": spec})
    return field(default=default, metadata={"spec": spec})


#: Public name of :func:`_f` for the option classes of families defined outside this module
#: (``spec_field(unit, doc, default, lo=..., kind=...)``; see DEVELOPERS.md).
spec_field = _f


POS = dict(lo=0.0, lo_open=True)
NONNEG = dict(lo=0.0)
FRACTION = dict(lo=0.0, hi=1.0)


def specs(cls) -> dict[str, Spec]:
    """Field name → :class:`Spec` of a design dataclass."""
    return {f.name: f.metadata["spec"] for f in dataclasses.fields(cls) if "spec" in f.metadata}


# --------------------------------------------------------------------------- parts

@dataclass(frozen=True, kw_only=True)
class Capacitor:
    """A capacitor as written in a design (nominal value and its derating data)."""

    c: float = _f("F", "nominal capacitance", **POS)
    esr: float = _f("\u03a9", "equivalent series resistance", 0.0, **NONNEG)
    c_tol: float = _f("-", "symmetric tolerance (0.1 = \u00b110 %)", 0.1, lo=0.0, hi=0.9)
    dielectric: str = _f("-", "temperature class: EIA-198 code (X7R, X5R, ...), C0G or ideal", "X7R",
                         kind="text")
    v_rating: float | None = _f("V", "rated voltage", None, nullable=True, **POS)
    dc_bias: tuple | None = _f("-", "DC-bias curve: [[V/V_rating, remaining fraction], ...]", None,
                               kind="curve", nullable=True)

    def _check(self, path: str) -> None:
        parse_dielectric(self.dielectric, f"{path}.dielectric")


@dataclass(frozen=True, kw_only=True)
class LinearDiode:
    """Straight-line diode: v = v_f + r_d·i while conducting."""

    v_f: float = _f("V", "forward voltage at the knee", **NONNEG, hi=5.0)
    r_d: float = _f("\u03a9", "forward slope resistance", 0.0, **NONNEG)


@dataclass(frozen=True, kw_only=True)
class JunctionDiode:
    """Exponential junction with series resistance: i = i_s·(exp(v_j/(n·V_T)) − 1), v = v_j + r_s·i."""

    i_s: float = _f("A", "saturation current", lo=0.0, lo_open=True, hi=1e-3)
    n: float = _f("-", "emission coefficient", 1.0, lo=0.5, hi=4.0)
    r_s: float = _f("\u03a9", "series resistance", 0.0, **NONNEG)


Diode = Union[LinearDiode, JunctionDiode]


# --------------------------------------------------------------------------- sections

@dataclass(frozen=True, kw_only=True)
class Bridge:
    """One bridge leg: topology and operating point.

    The switch node (SW) of the leg is what the floating rail rides on. Which
    of the topology keys are needed depends on ``topology``.
    """

    topology: str = _f("-", "bridge topology", kind="choice", choices=TOPOLOGIES)
    v_bus: float = _f("V", "bus voltage (the boost's output)", lo=0.0, lo_open=True, hi=1e5)
    f_sw: float = _f("Hz", "switching frequency", lo=0.0, lo_open=True, hi=1e8)
    dead_time: float = _f("s", "dead time at each edge", **NONNEG)
    t_edge: float = _f("s", "switch-node rise/fall time", **POS)
    v_out: float | None = _f("V", "output voltage (sync_buck)", None, nullable=True, **POS)
    v_in: float | None = _f("V", "input voltage (sync_boost)", None, nullable=True, **POS)
    duty: float | None = _f("-", "high-side duty command (half_bridge, full_bridge)", None,
                            nullable=True, **FRACTION)
    mode: str = _f("-", "sync_buck conduction mode", "ccm", kind="choice", choices=("ccm", "light_load"))
    eta: float = _f("-", "converter efficiency used to loss-correct the duty (1 = ideal)", 1.0,
                    lo=0.0, lo_open=True, hi=1.0)
    ls_pulse: float | None = _f("s", "low-side on-time per pulse in light load (sync_buck)", None,
                                nullable=True, **POS)
    skip_cycles: int = _f("-", "skipped switching periods after each pulse in light load", 0,
                          kind="int", lo=0, hi=100000)
    m: float | None = _f("-", "modulation index (three_phase); above 1 (2/\u221a3 with third "
                         "harmonic) is over-modulation", None, nullable=True, lo=0.0, hi=4 / math.pi)
    f_o: float | None = _f("Hz", "output (fundamental) frequency, 0 = standstill (three_phase)", None,
                           nullable=True, **NONNEG)
    third_harmonic: bool = _f("-", "add 1/6 third-harmonic injection (three_phase)", False, kind="bool")
    pwm: str = _f("-", "three_phase modulation: 'sine' (with third_harmonic if set), 'svpwm' (space vector: "
                  "min-max zero sequence), 'dpwm60' (each phase clamped to a rail for 60\u00b0 around its positive "
                  "and its negative peak), 'dpwm120_top' (HS clamped on for 120\u00b0, the bootstrap's hold-up "
                  "case), 'dpwm120_bottom' (LS clamped on for 120\u00b0)", "sine", kind="choice",
                  choices=("sine", "svpwm", "dpwm60", "dpwm120_top", "dpwm120_bottom"))
    phi: float = _f("rad", "load-current lag behind the leg voltage (three_phase)", 0.0,
                    lo=-math.pi, hi=math.pi)
    f_line: float | None = _f("Hz", "line frequency (line_leg)", None, nullable=True, **POS)
    soft_start: float = _f("s", "soft-start ramp time (0 = none)", 0.0, **NONNEG)
    precharge: float = _f("s", "low-side pre-charge pulse before the first high-side pulse", 0.0, **NONNEG)
    v_sw_low: float = _f("V", "switch-node level while the low side conducts", 0.0, lo=-100.0, hi=100.0)
    v_undershoot: float = _f("V", "depth of the switch node below ground while the low-side body "
                             "diode conducts in dead time", 0.0, lo=0.0, hi=100.0)
    v_out_start: float = _f("V", "output voltage at start-up (sync_buck; above 0 = a pre-biased output): where "
                            "the switch node rests while UVLO withholds the high-side pulses", 0.0, lo=0.0,
                            hi=1e5)
    v_sw_hold: float | None = _f("V", "switch-node level while UVLO withholds the high-side pulses in start-up "
                                 "(null = the topology's rule: buck v_out_start, boost v_in, line leg v_bus, "
                                 "others the dead-time level before HS turn-on)", None, nullable=True,
                                 lo=-100.0, hi=1e5)
    edge_shape: str = _f("-", "shape of a switch-node edge for its peak dv/dt: 'linear' (V/t_edge) or "
                         "'raised_cosine' (V/2\u00b7(1 \u2212 cos \u03c0t/t_edge), peak \u03c0/2\u00b7V/t_edge)", "linear",
                         kind="choice", choices=("linear", "raised_cosine"))
    edge_rise: str = _f("-", "how the switch node's rising edges are driven, for the capacitive energy: 'auto' = "
                        "from the schedule (an edge into a switch's on-time is hard-switched, ½C·ΔV²; "
                        "one into a dead time is moved by the load current, zero-voltage, ~0), 'hard' or 'soft'",
                        "auto", kind="choice", choices=("auto", "hard", "soft"))
    edge_fall: str = _f("-", "how the switch node's falling edges are driven (as edge_rise)", "auto",
                        kind="choice", choices=("auto", "hard", "soft"))
    startup_cycles: int = _f("-", "switching periods analysed in start-up (line periods for line_leg)",
                             2000, kind="int", lo=1, hi=1_000_000)

    @property
    def period(self) -> float:
        """The leg's own switching period [s]: 1/f_sw, or 1/f_line for a line-frequency leg."""
        return analysis_period(self)

    def _check(self, path: str) -> None:
        t = self.topology
        period = 1.0 / self.f_sw
        if 2 * self.dead_time >= period:
            raise DesignError(f"{path}.dead_time", f"two dead times must be shorter than the switching "
                              f"period {period:.4g} s", self.dead_time)
        topo = TOPOLOGY[t]
        for k in topo.required:
            if getattr(self, k) is None:
                raise DesignError(f"{path}.{k}", f"required for topology {t!r}")
        if topo.check is not None:
            topo.check(self, path)


@dataclass(frozen=True, kw_only=True)
class Gate:
    """The high-side switch's gate as a load."""

    q_g: float = _f("C", "total gate charge at the drive voltage", lo=0.0, lo_open=True, hi=1e-3)
    v_gs_max: float = _f("V", "gate-source voltage rating", **POS)
    v_gs_on_min: float = _f("V", "gate-source voltage needed for the target on-resistance", **POS)
    r_gs: float | None = _f("\u03a9", "gate-source pull-down resistor (null = none)", None,
                            nullable=True, **POS)

    def _check(self, path: str) -> None:
        if self.v_gs_on_min >= self.v_gs_max:
            raise DesignError(f"{path}.v_gs_on_min", f"must be below v_gs_max = {self.v_gs_max:g} V",
                              self.v_gs_on_min)


@dataclass(frozen=True, kw_only=True)
class Driver:
    """The high-side driver's floating side."""

    i_q: float = _f("A", "quiescent current of the floating side", **NONNEG, hi=1.0)
    q_ls: float = _f("C", "level-shift charge per transition", 0.0, **NONNEG, hi=1e-3)
    uvlo_on: float = _f("V", "UVLO rising threshold", **POS)
    uvlo_off: float = _f("V", "UVLO falling threshold", **POS)
    v_bs_max: float = _f("V", "absolute maximum of V_B \u2212 V_S", **POS)
    t_on_min: float = _f("s", "minimum high-side pulse width", 0.0, **NONNEG)
    cmti: float | None = _f("V/s", "common-mode transient immunity of the driver's level shifter (the bootstrap's "
                            "and the pumps' driver; an isolated option gives its own); null = not checked", None,
                            nullable=True, **POS)
    t_on_min_ls: float = _f("s", "minimum low-side pulse width: a shorter low-side pulse is not given (the low "
                            "side stays off and the switch node stays where the load current holds it in the "
                            "dead time)", 0.0, **NONNEG)

    def _check(self, path: str) -> None:
        if self.uvlo_off >= self.uvlo_on:
            raise DesignError(f"{path}.uvlo_off", f"must be below uvlo_on = {self.uvlo_on:g} V "
                              "(UVLO hysteresis)", self.uvlo_off)
        if self.uvlo_on >= self.v_bs_max:
            raise DesignError(f"{path}.uvlo_on", f"must be below v_bs_max = {self.v_bs_max:g} V",
                              self.uvlo_on)


@dataclass(frozen=True, kw_only=True)
class Aux:
    """The ground-referenced aux rail that feeds the floating supply."""

    v_dd: float = _f("V", "aux rail voltage", lo=0.0, lo_open=True, hi=1000.0)
    c_dd: float = _f("F", "aux rail decoupling capacitance", **POS)
    v_dd_tol: float = _f("-", "aux rail tolerance (0.05 = \u00b15 %)", 0.0, lo=0.0, hi=0.5)


@dataclass(frozen=True, kw_only=True)
class Checks:
    """Margins and the temperature envelope the options are checked against."""

    v_margin: float = _f("V", "margin above max(uvlo_off, v_gs_on_min) the rail must keep", 0.5,
                         lo=0.0, hi=100.0)
    cap_derating: float = _f("-", "fraction of a capacitor's rating usable", 0.8, lo=0.0, lo_open=True, hi=1.0)
    diode_derating: float = _f("-", "fraction of a diode's V_RRM usable", 0.8, lo=0.0, lo_open=True, hi=1.0)
    switch_derating: float = _f("-", "fraction of a pump switch's blocking-voltage rating usable", 0.8, lo=0.0,
                                lo_open=True, hi=1.0)
    cmti_margin: float = _f("-", "required ratio of driver CMTI to the edge dv/dt", 2.0, lo=1.0, hi=100.0)
    t_amb: float = _f("\u00b0C", "nominal temperature", 25.0, lo=-273.0, hi=300.0)
    t_min: float = _f("\u00b0C", "lowest temperature of the envelope", -40.0, lo=-273.0, hi=300.0)
    t_max: float = _f("\u00b0C", "highest temperature of the envelope", 105.0, lo=-273.0, hi=300.0)

    def _check(self, path: str) -> None:
        if self.t_min > self.t_max:
            raise DesignError(f"{path}.t_min", f"must not exceed t_max = {self.t_max:g} \u00b0C", self.t_min)
        if not self.t_min <= self.t_amb <= self.t_max:
            raise DesignError(f"{path}.t_amb", f"must lie within t_min..t_max = {self.t_min:g}..{self.t_max:g} \u00b0C",
                              self.t_amb)


@dataclass(frozen=True, kw_only=True)
class Spread:
    """Part-to-part and supply spreads used by the tolerance corners and Monte Carlo.

    Capacitors spread by their own ``c_tol`` and temperature class; the aux rail
    by ``aux.v_dd_tol``. A relative spread ``x`` means the value lies within
    ±x of nominal (uniform) or that x is three standard deviations (gaussian).
    """

    q_g: float = _f("-", "relative spread of the gate charge", 0.0, lo=0.0, hi=0.9)
    i_q: float = _f("-", "relative spread of the driver quiescent current", 0.0, lo=0.0, hi=0.9)
    v_f: float = _f("-", "relative spread of the bootstrap diode forward voltage / saturation current",
                    0.0, lo=0.0, hi=0.9)
    leak_per_100k: float = _f("-", "growth of diode leakage per 100 K rise above t_amb (default 100 is a "
                              "typical value from memory; give your part's figure)", 100.0, lo=1.0, hi=1e6)
    distribution: str = _f("-", "how values spread within their tolerance", "uniform", kind="choice",
                           choices=("uniform", "gaussian"))


# --------------------------------------------------------------------------- options

@dataclass(frozen=True, kw_only=True)
class BootstrapOption:
    """Bootstrap supply: V_DD → R → diode → C between V_B and V_S."""

    label: str = _f("-", "label shown in the comparison", kind="text")
    kind: str = _f("-", "supply family", kind="choice", choices=("bootstrap",))
    c: float = _f("F", "bootstrap capacitance (nominal)", **POS, hi=1.0)
    esr: float = _f("\u03a9", "capacitor ESR", 0.0, **NONNEG)
    c_tol: float = _f("-", "capacitance tolerance (0.1 = \u00b110 %)", 0.1, lo=0.0, hi=0.9)
    dielectric: str = _f("-", "temperature class (EIA-198 code, C0G, ideal)", "X7R", kind="text")
    v_rating: float | None = _f("V", "capacitor voltage rating", None, nullable=True, **POS)
    dc_bias: tuple | None = _f("-", "DC-bias curve [[V/V_rating, fraction], ...]", None, kind="curve",
                               nullable=True)
    r: float = _f("\u03a9", "series (inrush-limiting) resistor", 0.0, **NONNEG)
    diode: Diode = _f("-", "diode: {v_f, r_d} straight line or {i_s, n, r_s} exponential", kind="diode")
    q_rr: float = _f("C", "diode reverse-recovery charge, swept out at each switch-node rise that reverse-biases the diode", 0.0, **NONNEG)
    c_j: float = _f("F", "diode junction capacitance", 0.0, **NONNEG)
    i_leak: float = _f("A", "diode reverse leakage while reverse-biased (one value, taken at the bus voltage)", 0.0, **NONNEG)
    v_rrm: float | None = _f("V", "diode repetitive reverse voltage rating", None, nullable=True, **POS)
    v_clamp: float | None = _f("V", "clamp (Zener) across the bootstrap capacitor: the rail does not charge above "
                               "it, e.g. after a negative switch-node excursion in the dead time (null = none)",
                               None, nullable=True, **POS)

    @property
    def capacitor(self) -> Capacitor:
        """The bootstrap capacitor as a :class:`Capacitor`."""
        return Capacitor(c=self.c, esr=self.esr, c_tol=self.c_tol, dielectric=self.dielectric,
                         v_rating=self.v_rating, dc_bias=self.dc_bias)

    def _check(self, path: str) -> None:
        parse_dielectric(self.dielectric, f"{path}.dielectric")


@dataclass(frozen=True, kw_only=True)
class ChargePumpOption:
    """Switched-capacitor charge pump (1:1, 1:2 doubler, 2:1 divider) with its own clock."""

    label: str = _f("-", "label shown in the comparison", kind="text")
    kind: str = _f("-", "supply family", kind="choice", choices=("charge_pump",))
    ratio: str = _f("-", "conversion ratio input:output", kind="choice", choices=("1:1", "1:2", "2:1"))
    f_cp: float = _f("Hz", "pump clock frequency", **POS, hi=1e9)
    c_fly: Capacitor = _f("F", "flying capacitor (a number or {c, esr, c_tol, dielectric, v_rating, dc_bias})",
                          kind="capacitor")
    c_out: Capacitor = _f("F", "output capacitor (a number or an object as c_fly)", kind="capacitor")
    r_on: float = _f("\u03a9", "on-resistance of each pump switch", **POS)
    v_in: float | None = _f("V", "pump input rail (null = the aux rail)", None, nullable=True, **POS)
    dead_time_cp: float = _f("s", "pump dead time between phases", 0.0, **NONNEG)
    c_par: float = _f("F", "parasitic capacitance swung with the switch node at each domain crossing",
                      0.0, **NONNEG)
    alpha_bp: float = _f("-", "bottom-plate parasitic as a fraction of c_fly", 0.0, lo=0.0, hi=1.0)
    q_g_sw: float = _f("C", "gate charge of one pump switch", 0.0, **NONNEG)
    v_g_sw: float | None = _f("V", "gate-drive voltage of the pump switches (null = v_in)", None,
                              nullable=True, **POS)
    v_rating_sw: float | None = _f("V", "blocking-voltage rating of the pump switches (null = not checked)", None,
                                   nullable=True, **POS)
    i_rating_sw: float | None = _f("A", "peak-current rating of the pump switches, checked against the start-up "
                                   "inrush and the steady peak (null = not checked)", None, nullable=True, **POS)

    def _check(self, path: str) -> None:
        if 2 * self.dead_time_cp >= 1.0 / self.f_cp:
            raise DesignError(f"{path}.dead_time_cp", f"two pump dead times must be shorter than the pump "
                              f"period {1 / self.f_cp:.4g} s", self.dead_time_cp)


@dataclass(frozen=True, kw_only=True)
class IsolatedOption:
    """Small isolated DC-DC module per floating rail."""

    label: str = _f("-", "label shown in the comparison", kind="text")
    kind: str = _f("-", "supply family", kind="choice", choices=("isolated",))
    v_out: float = _f("V", "module output voltage (no load)", **POS, hi=1000.0)
    p_rated: float = _f("W", "rated output power", **POS)
    p_no_load: float = _f("W", "input power at no load", **NONNEG)
    eta_full: float = _f("-", "efficiency at rated power", lo=0.0, lo_open=True, hi=1.0, hi_open=True)
    c_out: Capacitor = _f("F", "output capacitor (a number or {c, esr, c_tol, dielectric, v_rating, dc_bias})",
                          kind="capacitor")
    c_iso: float = _f("F", "input-output isolation capacitance", **NONNEG)
    v_iso: float = _f("V", "rated isolation working voltage", **POS)
    cmti: float = _f("V/s", "driver common-mode transient immunity", **POS)
    v_in: float | None = _f("V", "module input rail (null = the aux rail)", None, nullable=True, **POS)
    v_in_rated: float | None = _f("V", "input voltage at which v_out is specified, for a module without "
                                  "output regulation (its output follows its input in proportion); null = "
                                  "a regulated module", None, nullable=True, **POS)
    r_out: float = _f("\u03a9", "module output resistance", 0.0, **NONNEG)
    t_start: float = _f("s", "start-up delay", 0.0, **NONNEG)
    t_ramp: float = _f("s", "output ramp time", 0.0, **NONNEG)

    def _check(self, path: str) -> None:
        loss_full = self.p_rated * (1.0 / self.eta_full - 1.0)
        if loss_full <= self.p_no_load:
            raise DesignError(f"{path}.p_no_load", f"must be below the full-load loss "
                              f"p_rated\u00b7(1/eta_full \u2212 1) = {loss_full:.4g} W", self.p_no_load)


#: The built-in option classes (for type hints); which kinds a design may use, and their classes,
#: the supply-model registry says (:mod:`explorer.options`), so a new family needs no edit here.
Option = Union[BootstrapOption, ChargePumpOption, IsolatedOption]


@dataclass(frozen=True)
class Design:
    """A whole design: one bridge leg, its gate load and driver, the aux rail and the options."""

    title: str
    bridge: Bridge
    gate: Gate
    driver: Driver
    aux: Aux
    options: tuple
    checks: Checks = field(default_factory=Checks)
    spread: Spread = field(default_factory=Spread)

    def option(self, label: str) -> Option:
        """The option with this label."""
        for o in self.options:
            if o.label == label:
                return o
        raise DesignError("options", f"no option labelled {label!r}; labels: "
                          + ", ".join(o.label for o in self.options), label)

    def to_dict(self) -> dict:
        """The design as a JSON-ready dict in the ``explorer-design`` format."""
        return design_to_dict(self)


# --------------------------------------------------------------------------- parsing

def _depth(x, limit: int, d: int = 0) -> int:
    if d > limit:
        return d
    if isinstance(x, dict):
        return max([_depth(v, limit, d + 1) for v in x.values()] or [d + 1])
    if isinstance(x, list):
        return max([_depth(v, limit, d + 1) for v in x] or [d + 1])
    return d


def _parse_value(spec: Spec, raw: Any, path: str) -> Any:
    if raw is None:
        if spec.nullable:
            return None
        raise DesignError(path, f"must not be null; expected {spec.allowed()}")
    k = spec.kind
    if k == "text":
        if not isinstance(raw, str) or not raw.strip() or len(raw) > 200:
            raise DesignError(path, "expected non-empty text (200 characters at most)", raw)
        return raw
    if k == "choice":
        if raw not in spec.choices:
            raise DesignError(path, f"expected {spec.allowed()}", raw)
        return raw
    if k == "bool":
        if not isinstance(raw, bool):
            raise DesignError(path, "expected true or false", raw)
        return raw
    if k == "curve":
        return _parse_curve(raw, path)
    if k == "capacitor":
        if isinstance(raw, dict):
            return _build(Capacitor, raw, path)
        return _build(Capacitor, {"c": raw}, path)
    if k == "diode":
        if not isinstance(raw, dict):
            raise DesignError(path, "expected an object {v_f, r_d} or {i_s, n, r_s}", raw)
        if "v_f" in raw:
            return _build(LinearDiode, raw, path)
        if "i_s" in raw:
            return _build(JunctionDiode, raw, path)
        raise DesignError(path, "diode needs either v_f (straight line) or i_s (exponential)", raw)
    x = parse_eng(raw, path, spec.unit)
    if k == "int":
        if x != int(x):
            raise DesignError(path, f"expected {spec.allowed()}", raw)
        x = int(x)
    _check_range(spec, x, raw, path)
    return x


def _check_range(spec: Spec, x: float, raw: Any, path: str) -> None:
    bad = False
    if spec.lo is not None:
        bad |= x <= spec.lo if spec.lo_open else x < spec.lo
    if spec.hi is not None:
        bad |= x >= spec.hi if spec.hi_open else x > spec.hi
    if bad:
        raise DesignError(path, f"expected {spec.allowed()}", raw)


def _parse_curve(raw: Any, path: str) -> tuple:
    if not isinstance(raw, list) or not 1 <= len(raw) <= 100:
        raise DesignError(path, "expected a list of 1 to 100 [V/V_rating, fraction] points", raw)
    pts = []
    for i, p in enumerate(raw):
        pp = f"{path}[{i}]"
        if not isinstance(p, list) or len(p) != 2:
            raise DesignError(pp, "expected a pair [V/V_rating, remaining fraction]", p)
        x = parse_eng(p[0], pp, "-")
        f = parse_eng(p[1], pp, "-")
        if x < 0 or not 0 < f <= 1:
            raise DesignError(pp, "expected V/V_rating \u2265 0 and a fraction in (0, 1]", p)
        if pts and x <= pts[-1][0]:
            raise DesignError(pp, "points must be sorted by increasing V/V_rating", p)
        pts.append((x, f))
    return tuple(pts)


def _build(cls, data: Any, path: str):
    if not isinstance(data, dict):
        raise DesignError(path, f"expected an object with keys {', '.join(specs(cls))}",
                          data if not isinstance(data, (list, dict)) else type(data).__name__)
    sp = specs(cls)
    for key in data:
        if key not in sp:
            raise DesignError(f"{path}.{key}" if path else key,
                              f"unknown key; allowed: {', '.join(sp)}")
    kw = {}
    for name, spec in sp.items():
        p = f"{path}.{name}" if path else name
        if name in data:
            kw[name] = _parse_value(spec, data[name], p)
        elif spec.required:
            raise DesignError(p, f"missing; expected {spec.allowed()}")
    obj = cls(**kw)
    check = getattr(obj, "_check", None)
    if check is not None:
        check(path)
    return obj


def build_tagged(data: Any, classes: dict, tag: str, path: str, what: str):
    """Build the object whose class the key ``tag`` picks from ``classes`` (an option's kind, a rule's kind)."""
    if not isinstance(data, dict):
        raise DesignError(path, f"expected an object with {what}", data)
    if tag not in data:
        raise DesignError(f"{path}.{tag}", f"missing; expected one of {', '.join(map(repr, classes))}")
    kind = data[tag]
    if not isinstance(kind, str) or kind not in classes:  # a list or object is refused, not hashed
        raise DesignError(f"{path}.{tag}", f"expected one of {', '.join(map(repr, classes))}", kind)
    return _build(classes[kind], data, path)


_TOP_KEYS = ("format", "version", "title", "bridge", "gate", "driver", "aux", "options", "checks", "spread")


def _design_from_dict(data: Any) -> Design:
    if not isinstance(data, dict):
        raise DesignError("", "a design file must hold a JSON object")
    if _depth(data, MAX_DEPTH) > MAX_DEPTH:
        raise DesignError("", f"nested deeper than {MAX_DEPTH} levels; not a design file")
    for key in data:
        if key not in _TOP_KEYS:
            raise DesignError(str(key), f"unknown key; allowed: {', '.join(_TOP_KEYS)}")
    if "format" not in data:
        raise DesignError("format", f"missing; expected {FORMAT!r}")
    if data["format"] != FORMAT:
        raise DesignError("format", f"expected {FORMAT!r}", data["format"])
    if "version" not in data:
        raise DesignError("version", f"missing; expected a whole number 1 to {VERSION}")
    ver = data["version"]
    if isinstance(ver, bool) or not isinstance(ver, int):
        raise DesignError("version", "expected a whole number", ver)
    if ver > VERSION:
        raise DesignError("version", f"this file was written by a newer explorer (format version {ver}); "
                          f"this explorer reads versions 1 to {VERSION}: update explorer", ver)
    if ver < 1:
        raise DesignError("version", f"expected 1 to {VERSION}", ver)
    title = data.get("title", "untitled design")
    if not isinstance(title, str) or len(title) > 200:
        raise DesignError("title", "expected text of 200 characters at most", title)
    sections = {}
    for key, cls in (("bridge", Bridge), ("gate", Gate), ("driver", Driver), ("aux", Aux)):
        if key not in data:
            raise DesignError(key, "missing section")
        sections[key] = _build(cls, data[key], key)
    checks = _build(Checks, data.get("checks", {}), "checks")
    spread = _build(Spread, data.get("spread", {}), "spread")
    opts_raw = data.get("options")
    if not isinstance(opts_raw, list) or not 1 <= len(opts_raw) <= 50:
        raise DesignError("options", "expected a list of 1 to 50 supply options",
                          opts_raw if not isinstance(opts_raw, (list, dict)) else f"{len(opts_raw)} items")
    from .options import option_classes  # the registry (imported here: it imports this module)
    options = []
    labels = set()
    for i, o in enumerate(opts_raw):
        p = f"options[{i}]"
        opt = build_tagged(o, option_classes, "kind", p, "label and kind")
        if opt.label in labels:
            raise DesignError(f"{p}.label", "labels must be unique", opt.label)
        labels.add(opt.label)
        options.append(opt)
    return Design(title, sections["bridge"], sections["gate"], sections["driver"], sections["aux"],
                  tuple(options), checks, spread)


def load_design(source: Union[str, os.PathLike, dict, Design]) -> Design:
    """Load and validate a design.

    Parameters
    ----------
    source : path, JSON text, dict or Design
        A path to an ``explorer-design`` JSON file, the JSON text itself, an
        already-parsed dict, or a :class:`Design` (returned unchanged).

    Raises
    ------
    DesignError
        Naming the field path, the value and what is allowed.

    Examples
    --------
    >>> from explorer import demo_design, load_design
    >>> load_design(demo_design().to_dict()).bridge.topology
    'sync_buck'
    """
    if isinstance(source, Design):
        return source
    if isinstance(source, dict):
        return _design_from_dict(source)
    if not isinstance(source, (str, os.PathLike)):
        raise DesignError("", "expected a design: a file path, JSON text, a dict or a Design, not "
                          f"{type(source).__name__}")
    if isinstance(source, str) and not source.strip():
        raise DesignError("", "the design text is empty; expected a file path or JSON text")
    if isinstance(source, str) and source.lstrip().startswith(("{", "[")):
        text = source
    else:
        try:
            size = os.path.getsize(source)
        except OSError as e:
            raise DesignError("", f"cannot read design file: {e.strerror}", str(source)) from None
        if size > MAX_FILE_BYTES:
            raise DesignError("", f"design file is {size} bytes; the limit is {MAX_FILE_BYTES}", str(source))
        try:
            with open(source, encoding="utf-8") as fh:
                text = fh.read()
        except (OSError, UnicodeDecodeError) as e:
            raise DesignError("", f"cannot read design file: {e}", str(source)) from None
        if not text.strip():
            raise DesignError("", "the design file is empty", str(source))
    if len(text) > MAX_FILE_BYTES:
        raise DesignError("", f"design text is longer than {MAX_FILE_BYTES} characters")
    try:
        data = json.loads(text, parse_constant=_reject_constant, object_pairs_hook=_unique_keys)
    except json.JSONDecodeError as e:
        raise DesignError("", f"not valid JSON: {e.msg} (line {e.lineno}, column {e.colno})") from None
    except RecursionError:
        raise DesignError("", f"nested deeper than {MAX_DEPTH} levels; not a design file") from None
    return _design_from_dict(data)


def read_bounded(source, *, limit: int, field: str, what: str) -> str:
    """The text of a UTF-8 file no larger than ``limit`` bytes; a DesignError on ``field`` otherwise."""
    try:
        size = os.path.getsize(source)
        if size > limit:
            raise DesignError(field, f"{what} is {size} bytes; the limit is {limit}", str(source))
        with open(source, encoding="utf-8") as fh:
            return fh.read()
    except (OSError, UnicodeDecodeError) as e:
        raise DesignError(field, f"cannot read {what}: {getattr(e, 'strerror', None) or e}", str(source)) from None


def _unique_keys(pairs: list) -> dict:
    """JSON object hook: a key written twice is refused (json.loads would silently keep the last)."""
    out: dict = {}
    for key, value in pairs:
        if key in out:
            raise DesignError(str(key), "written twice in the same object; keep one (a hand-edited file "
                              "would otherwise silently use the last)")
        out[key] = value
    return out


def _reject_constant(name: str):
    raise DesignError("", f"{name} is not allowed in a design file (numbers must be finite)")


def _dump(obj, readable: bool = False) -> Any:
    if dataclasses.is_dataclass(obj):
        out = {}
        for f in dataclasses.fields(obj):
            v = getattr(obj, f.name)
            spec = f.metadata.get("spec")
            if (readable and spec is not None and spec.kind == "real" and spec.unit not in ("-", "rad")
                    and isinstance(v, float)):
                out[f.name] = format_exact(v, spec.unit)
            else:
                out[f.name] = _dump(v, readable)
        return out
    if isinstance(obj, tuple):
        return [_dump(x, readable) for x in obj]
    return obj


def design_to_dict(design: Design, *, readable: bool = False) -> dict:
    """Plain dict of a design (all fields); ``load_design`` of it gives back an equal design.

    Numbers are SI floats; with ``readable=True`` every number that has a unit is written as
    engineering text with its unit, as engineers read it (``"40 ns"``, ``"220 nF"``,
    ``"100 V/ns"``), which loads back to exactly the same value.
    """
    d = {"format": FORMAT, "version": VERSION, "title": design.title}
    for key in ("bridge", "gate", "driver", "aux"):
        d[key] = _dump(getattr(design, key), readable)
    d["options"] = [_dump(o, readable) for o in design.options]
    d["checks"] = _dump(design.checks, readable)
    d["spread"] = _dump(design.spread, readable)
    return d


def save_design(design: Design, path: Union[str, os.PathLike], *, readable: bool = False) -> None:
    """Write a design file. Written to a temporary file first, so a failed save never truncates the old one.

    ``readable=True`` writes numbers as engineering text with units (see :func:`design_to_dict`).
    """
    text = json.dumps(design_to_dict(design, readable=readable), indent=2, ensure_ascii=False, allow_nan=False)
    tmp = f"{os.fspath(path)}.tmp"
    with open(tmp, "w", encoding="utf-8") as fh:
        fh.write(text + "\n")
    os.replace(tmp, path)


def replace_field(design: Design, path: str, value: Any) -> Design:
    """A copy of ``design`` with one field changed and the whole design re-validated.

    ``path`` uses the design-file notation: ``"bridge.f_sw"``, ``"options[0].c"``,
    ``"options[1].c_fly.c"``. ``value`` may be a number or an engineering string.

    Raises
    ------
    DesignError
        If the path does not exist or the new design is invalid.
    """
    return replace_fields(design, {path: value})


def replace_fields(design: Design, changes: dict) -> Design:
    """A copy of ``design`` with several fields changed at once, validated once at the end."""
    d = design_to_dict(design)
    for path, value in changes.items():
        node = d
        parts = split_path(path)
        for p in parts[:-1]:
            try:
                node = node[p]
            except (KeyError, IndexError, TypeError):
                raise DesignError(path, "no such field") from None
            if isinstance(node, (int, float)) and not isinstance(node, bool):
                raise DesignError(path, "no such field")
        last = parts[-1]
        if not isinstance(node, (dict, list)) or (isinstance(node, dict) and last not in node):
            raise DesignError(path, "no such field")
        try:
            node[last] = value
        except (IndexError, TypeError):
            raise DesignError(path, "no such field") from None
    return _design_from_dict(d)


def split_path(path: str) -> list:
    """The parts of a design-file path: ``"options[2].c_fly.c"`` -> ``["options", 2, "c_fly", "c"]``."""
    parts: list = []
    for piece in path.split("."):
        while "[" in piece:
            name, rest = piece.split("[", 1)
            if name:
                parts.append(name)
            idx, piece = rest.split("]", 1)
            try:
                parts.append(int(idx))
            except ValueError:
                raise DesignError(path, "index must be a whole number") from None
        if piece:
            parts.append(piece)
    if not parts:
        raise DesignError(path, "empty field path")
    return parts


def spec_at(design: Design, path: str) -> Spec:
    """The :class:`Spec` of the field at a design-file path (``"bridge.f_sw"``, ``"options[2].c_fly.c"``).

    A path that ends on a capacitor (``"options[2].c_fly"``) means its capacitance.

    Raises
    ------
    DesignError
        If the path names no field of this design.
    """
    obj: Any = design
    spec: Spec | None = None
    for part in split_path(path):
        if isinstance(part, int):
            if obj is design.options and 0 <= part < len(design.options):
                obj, spec = design.options[part], None
                continue
            raise DesignError(path, "no such field")
        if obj is design and part == "options":
            obj = design.options
            continue
        if not dataclasses.is_dataclass(obj) or part not in {f.name for f in dataclasses.fields(obj)}:
            raise DesignError(path, "no such field")
        f = next(f for f in dataclasses.fields(obj) if f.name == part)
        spec = f.metadata.get("spec")
        obj = getattr(obj, part)
    if isinstance(obj, Capacitor):
        spec = specs(Capacitor)["c"]
    if spec is None:
        raise DesignError(path, "no such field")
    return spec


def check_value(spec: Spec, value: Any, path: str) -> Any:
    """``value`` parsed and range-checked against ``spec`` on its own (no cross-field checks).

    Raises
    ------
    DesignError
        Naming ``path``, the value and what the field allows.
    """
    if spec.kind == "capacitor" and not isinstance(value, dict):
        spec = specs(Capacitor)["c"]
    return _parse_value(spec, value, path)
