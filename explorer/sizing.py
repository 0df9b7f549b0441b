"""Inverse sizing: the part values that keep the margin at the worst corner.

Every answer is checked by re-evaluating the design: the chosen value holds
at the worst corner (:func:`~explorer.tolerance.worst_case`) and, for the
capacitor searches, the next lower preferred value does not.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from .design import (BootstrapOption, ChargePumpOption, Design, LinearDiode, load_design, replace_field,
                     replace_fields)
from .errors import DesignError, ModelValidityWarning
from .loads import load_power, required_rail
from .options import SupplyModel, kinds, supply_model
from .options.charge_pump import CIRCUITS, PULSE_CYCLES_MIN
from .options.isolated import module_output
from .preferred import next_preferred, preferred_values
from .schedule import period_schedule
from .tolerance import worst_case
from .units import format_eng

__all__ = ["SizingResult", "size_capacitor", "size_bootstrap_resistor", "size_pump_frequency",
           "size_isolated_rating", "HEADROOM", "SizedValue", "Recommendation", "recommend"]


@dataclass(frozen=True)
class SizingResult:
    """Outcome of a sizing search.

    Attributes
    ----------
    label : str
    field : str
        Design-file path of the sized value.
    value : float or None
        The chosen value (None when no value in the search range holds).
    margin : float or None [V]
        Worst-corner rail margin with that value.
    below : float or None
        The next lower candidate, and ``margin_below`` its worst-corner margin (< 0).
    design : Design or None
        The design with the chosen value.
    note : str
        Plain-words summary.
    """

    label: str
    field: str
    value: float | None
    margin: float | None
    below: float | None
    margin_below: float | None
    design: Design | None
    note: str

    def to_dict(self) -> dict:
        return {k: getattr(self, k) for k in ("label", "field", "value", "margin", "below", "margin_below", "note")}


def _index(design: Design, label: str) -> int:
    for i, o in enumerate(design.options):
        if o.label == label:
            return i
    raise DesignError("label", "no such option", label)


def _model(opt):
    """The option's supply model (a DesignError if its module is not built in this version)."""
    model = supply_model(opt.kind)
    if model is None:
        raise DesignError(f"options[{opt.label}].kind", "the model of this option kind is not available", opt.kind)
    return model


def _require(design: Design, i: int, kind: str, what: str):
    """The i-th option, which this family-specific search needs to be of ``kind``."""
    opt = design.options[i]
    if opt.kind != kind:
        raise DesignError(f"options[{i}].kind", f"{what} sizing applies to {kind} options", opt.kind)
    return opt


def _margin(design: Design, label: str) -> float:
    """Worst-corner margin of a candidate; its model-validity warnings are held back (see :func:`_validity`)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelValidityWarning)
        return worst_case(design, label).margin


def _validity(design: Design, label: str) -> str:
    """The chosen design's model-validity reasons, warned once and returned for the note ('' if none).

    A search visits many candidates, so their warnings are held back; the answer's own are what
    the user must see.
    """
    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always", ModelValidityWarning)
        _model(design.option(label)).evaluate(design, design.option(label))
    reasons = list(dict.fromkeys(str(w.message) for w in rec if issubclass(w.category, ModelValidityWarning)))
    for r in reasons:
        warnings.warn(r, ModelValidityWarning, stacklevel=3)
    return "; model validity: " + "; ".join(reasons) if reasons else ""


def size_capacitor(design, label: str, *, series: str = "E12", lo: float = 1e-9, hi: float = 1e-3) -> SizingResult:
    """Smallest preferred C_boot (bootstrap) or C_fly (charge pump) that holds at the worst corner.

    Bisection over the ascending preferred values in [lo, hi]; the rail
    minimum rises with capacitance (a monotonicity the model tests check).
    """
    d = load_design(design)
    i = _index(d, label)
    opt = d.options[i]
    field = _model(opt).sized_capacitor
    if field is None:
        sizable = [k for k in kinds() if (supply_model(k) or SupplyModel()).sized_capacitor is not None]
        raise DesignError(f"options[{i}].kind", f"capacitor sizing applies to {' and '.join(sizable)} options",
                          opt.kind)
    path = f"options[{i}].{field}"
    cands = preferred_values(lo, hi, series)
    margins: dict[int, float] = {}

    def m(k):
        if k not in margins:
            margins[k] = _margin(replace_field(d, path, cands[k]), label)
        return margins[k]

    if m(len(cands) - 1) < 0:
        return SizingResult(label, path, None, None, cands[-1], margins[len(cands) - 1], None,
                            f"no {series} value up to {hi:g} F keeps the margin at the worst corner")
    a, b = -1, len(cands) - 1  # m(a) < 0 (or below range), m(b) >= 0
    while b - a > 1:
        c = (a + b) // 2
        if m(c) >= 0:
            b = c
        else:
            a = c
    below = cands[a] if a >= 0 else None
    chosen = replace_field(d, path, cands[b])
    return SizingResult(label, path, cands[b], m(b), below, m(a) if a >= 0 else None, chosen,
                        f"smallest {series} value holding the worst corner: {cands[b]:.3g} F"
                        + _validity(chosen, label))


def size_bootstrap_resistor(design, label: str, i_max: float, *, series: str = "E24") -> SizingResult:
    """Series resistor that limits the first-pulse inrush to ``i_max`` and still refreshes.

    The inrush peak of a dead bootstrap rail is (V_DD − V_F)/(R + r_D + ESR)
    (a capacitor at 0 V is a short; Ohm's law), so R ≥ (V_DD·(1 + tol) − V_F)/i_max − r_D − ESR,
    rounded up to a preferred value; the result then must hold at the worst corner.
    """
    d = load_design(design)
    i = _index(d, label)
    opt = _require(d, i, "bootstrap", "resistor")
    if not (isinstance(i_max, (int, float)) and math.isfinite(i_max) and i_max > 0):
        raise DesignError("i_max", "expected a current > 0 [A]", i_max)
    v_dd = d.aux.v_dd * (1 + d.aux.v_dd_tol)
    v_f = opt.diode.v_f if isinstance(opt.diode, LinearDiode) else 0.0
    r_d = opt.diode.r_d if isinstance(opt.diode, LinearDiode) else opt.diode.r_s
    r_need = max(0.0, (v_dd - v_f) / i_max - r_d - opt.esr)
    r = next_preferred(max(r_need, 0.01), series) if r_need > 0 else 0.0
    path = f"options[{i}].r"
    dd = replace_field(d, path, r)
    margin = _margin(dd, label)
    ok = margin >= 0
    return SizingResult(label, path, r if ok else None, margin, None, None, dd if ok else None,
                        f"R = {r:.3g} \u03a9 limits the inrush to {i_max:.3g} A" +
                        ("" if ok else "; but the rail then no longer holds at the worst corner")
                        + (_validity(dd, label) if ok else ""))


def size_pump_frequency(design, label: str, *, f_lo: float = 1e3, f_hi: float = 50e6, rel: float = 1e-3) -> SizingResult:
    """Lowest pump clock f_cp whose rail holds the margin at the worst corner (bisection in log f).

    The search starts no lower than the model's own validity floor: at least
    :data:`explorer.options.charge_pump.PULSE_CYCLES_MIN` pump cycles between
    high-side turn-ons (below it the averaged pump can show a rail minimum
    higher than the real one), and the note says when that floor is the answer.
    """
    d = load_design(design)
    i = _index(d, label)
    opt = _require(d, i, "charge_pump", "frequency")
    path = f"options[{i}].f_cp"

    def m(f):
        return _margin(replace_field(d, path, f), label)

    f_hi = min(f_hi, 0.49 / max(opt.dead_time_cp, 1e-300))
    sched = period_schedule(d)
    n_on = int(np.count_nonzero(sched.hs_turn_on))
    f_floor = PULSE_CYCLES_MIN * n_on / sched.period * (1 + 1e-9) if n_on else 0.0  # just inside the floor
    floor_binds = f_floor > f_lo
    f_lo = max(f_lo, f_floor)
    if f_lo >= f_hi or m(f_hi) < 0:
        return SizingResult(label, path, None, None, None, None, None,
                            f"no pump clock from {f_lo:.4g} to {f_hi:.4g} Hz holds the worst corner")
    a, b = f_lo, f_hi
    if m(a) >= 0:
        chosen = replace_field(d, path, a)
        why = (f"the model's validity floor ({PULSE_CYCLES_MIN:g} pump cycles per high-side turn-on, "
               f"{a:.4g} Hz) already holds the worst corner" if floor_binds else f"already holds at {a:g} Hz")
        return SizingResult(label, path, a, m(a), None, None, chosen, why + _validity(chosen, label))
    while b / a > 1 + rel:
        c = math.sqrt(a * b)
        if m(c) >= 0:
            b = c
        else:
            a = c
    chosen = replace_field(d, path, b)
    return SizingResult(label, path, b, m(b), a, m(a), chosen,
                        f"lowest pump clock holding the worst corner: {b:.4g} Hz" + _validity(chosen, label))


def size_isolated_rating(design, label: str, *, headroom: float = 2.0, series: str = "E6") -> SizingResult:
    """Module power rating with headroom over the real gate load, rounded up to a preferred value.

    The headroom factor (default 2, common practice, no source) covers Q_G
    spread, temperature and ageing. The resized module is taken from the same
    family: its no-load input power scales with the rating and its full-load
    efficiency stays (an assumption to replace with the chosen part's figures).
    """
    d = load_design(design)
    i = _index(d, label)
    opt = _require(d, i, "isolated", "rating")
    if not (isinstance(headroom, (int, float)) and headroom >= 1):
        raise DesignError("headroom", "expected a factor >= 1", headroom)
    p_load = float(load_power(d, period_schedule(d), module_output(d, opt)))
    p = next_preferred(p_load * headroom, series)
    path = f"options[{i}].p_rated"
    dd = replace_fields(d, {path: p, f"options[{i}].p_no_load": opt.p_no_load * p / opt.p_rated})
    r = _model(opt).evaluate(dd, dd.options[i])
    return SizingResult(label, path, p, r.v_rail.min - d.driver.uvlo_off, None, None, dd,
                        f"gate load {p_load:.3g} W \u00d7 {headroom:g} headroom \u2192 {p:.3g} W module")



# --------------------------------------------------------------------------- recommendation

#: Default headroom factor over the bare minimum of each sized value (common practice, no source).
HEADROOM = 2.0


@dataclass(frozen=True)
class SizedValue:
    """One sized part value: the bare minimum, the recommendation with headroom, and why.

    Attributes
    ----------
    quantity : str
        Plain words (``"bootstrap capacitor C_boot"``).
    field : str
        Design-file path of the value.
    unit : str
    minimum : float or None
        The smallest value that holds the worst corner (None: none in the search range does).
    value : float or None
        The recommendation: at least ``headroom`` × minimum, on the preferred series.
    margin : float or None [V]
        Worst-corner rail margin with the recommended value.
    note : str
        Plain words: how the value was found, or why nothing can work.
    """

    quantity: str
    field: str
    unit: str
    minimum: float | None
    value: float | None
    margin: float | None
    note: str

    def to_dict(self) -> dict:
        return {k: getattr(self, k) for k in ("quantity", "field", "unit", "minimum", "value", "margin", "note")}


@dataclass(frozen=True)
class Recommendation:
    """Sized values for one option (see :func:`recommend`)."""

    label: str
    kind: str
    series: str
    headroom: float
    values: tuple
    design: Design | None

    @property
    def ok(self) -> bool:
        """Every sized value has a recommendation that holds the worst corner."""
        return all(v.value is not None and (v.margin is None or v.margin >= 0) for v in self.values)

    def to_dict(self) -> dict:
        return {"label": self.label, "kind": self.kind, "series": self.series, "headroom": self.headroom,
                "ok": self.ok, "values": [v.to_dict() for v in self.values]}

    def to_text(self) -> str:
        out = [f"{self.label} ({self.kind}): sized for the worst tolerance corner, {self.series} values, "
               f"headroom \u00d7{self.headroom:g} over the bare minimum"]
        for v in self.values:
            if v.value is None:
                out.append(f"  {v.quantity}: nothing works \u2014 {v.note}")
                continue
            mn = "" if v.minimum is None else f" (bare minimum {format_eng(v.minimum, v.unit)})"
            mg = "" if v.margin is None else f", worst-corner rail margin {v.margin:+.3g} V"
            out.append(f"  {v.quantity}: {format_eng(v.value, v.unit)}{mn}{mg}; {v.note}")
        return "\n".join(out)


def _ceiling(design: Design, opt) -> tuple[float, str]:
    """Highest rail the option can reach at the worst corner whatever its sized value [V], and how.

    Bootstrap: the charge target V_DD·(1 − tol) − V_F·(1 + spread) − V_SW,low (an upper bound; a
    junction diode's drop is left out). Pump: the ideal ratio times its input at the low corner.
    Isolated: the module's open-circuit output at its low input (a regulated module: v_out).
    """
    v_dd_lo = design.aux.v_dd * (1 - design.aux.v_dd_tol)
    if isinstance(opt, BootstrapOption):
        v_f = opt.diode.v_f * (1 + design.spread.v_f) if isinstance(opt.diode, LinearDiode) else 0.0
        return (v_dd_lo - v_f - design.bridge.v_sw_low,
                "aux rail at its low corner less the diode drop" + ("" if v_f else " (junction drop left out)"))
    if isinstance(opt, ChargePumpOption):
        v_in = (opt.v_in if opt.v_in is not None else design.aux.v_dd) * (1 - design.aux.v_dd_tol)
        return CIRCUITS[opt.ratio].m * v_in, f"ideal {opt.ratio} output of its input at the low corner"
    v = module_output(design, opt)
    if opt.v_in_rated is not None:
        v *= 1 - design.aux.v_dd_tol
    return v, "module output at its low input"


def _nothing_works(design: Design, opt, what: str, fallback: str) -> str:
    """Why no value of ``what`` can hold: the ceiling below the requirement, or ``fallback``."""
    ceiling, how = _ceiling(design, opt)
    need = required_rail(design)
    if ceiling < need:
        return (f"the worst-corner ceiling of the rail ({how}) is {ceiling:.3g} V, below the requirement "
                f"max(uvlo_off, v_gs_on_min) + v_margin = {need:.3g} V; no {what} can fix that")
    return fallback


def _with_headroom(d: Design, label: str, path: str, minimum: float, headroom: float, series: str,
                   cap: float | None = None) -> tuple[float, float, Design]:
    """The preferred value ≥ headroom × minimum (clipped to ``cap``), its margin and its design."""
    v = next_preferred(minimum * headroom, series)
    if cap is not None and v > cap:
        v = next_preferred(cap, series, down=True)
        v = max(v, minimum)
    dd = replace_field(d, path, v)
    return v, _margin(dd, label), dd


def recommend(design, label: str, *, series: str = "E12", headroom: float = HEADROOM,
              i_max: float | None = None) -> Recommendation:
    """Size every part value of one option that sizing covers, with headroom, in plain words.

    Bootstrap: C_boot (smallest preferred value holding the worst corner, then ×headroom) and R_boot
    (from the inrush limit ``i_max`` when given; else the present inrush is stated). Charge pump:
    C_fly, then the pump clock f_cp with that C_fly. Isolated: the module power rating.

    Parameters
    ----------
    design : Design or anything load_design accepts
    label : str
        The option to size.
    series : {"E6", "E12", "E24"}
        IEC 60063 series for the values.
    headroom : float
        Factor ≥ 1 over each bare minimum (default 2, common practice, no source).
    i_max : float, optional
        Inrush limit of the bootstrap's first pulse [A].

    Raises
    ------
    DesignError
        For an unknown label, series or a headroom below 1.
    """
    d = load_design(design)
    i = _index(d, label)
    opt = d.options[i]
    preferred_values(1.0, 1.0, series)  # validates the series name
    if isinstance(headroom, bool) or not isinstance(headroom, (int, float)) or not (
            math.isfinite(headroom) and headroom >= 1):
        raise DesignError("headroom", "expected a factor \u2265 1", headroom)
    out = []
    cur = d
    if isinstance(opt, (BootstrapOption, ChargePumpOption)):
        boot = isinstance(opt, BootstrapOption)
        qty = "bootstrap capacitor C_boot" if boot else "flying capacitor C_fly"
        s = size_capacitor(cur, label, series=series)
        if s.value is None:
            out.append(SizedValue(qty, s.field, "F", None, None, None, _nothing_works(
                cur, opt, "capacitor", f"even {format_eng(s.below, 'F')} leaves a worst-corner margin of "
                f"{s.margin_below:+.3g} V (the {'refresh window is too short or the hold-up too long' if boot else 'pump cannot carry the load'} "
                "at this operating point)")))
        else:
            v, mg, cur = _with_headroom(cur, label, s.field, s.value, headroom, series)
            note = (f"the next lower {series} value {format_eng(s.below, 'F')} fails the worst corner"
                    if s.below else "the smallest value searched already holds")
            if boot and d.aux.c_dd < 10 * v:
                note += (f"; aux decoupling c_dd = {d.aux.c_dd:.3g} F is below 10\u00d7C_boot "
                         "(common practice, no source): the aux rail dips while C_boot fills")
            out.append(SizedValue(qty, s.field, "F", s.value, v, mg, note))
        if boot:
            out.append(_size_r(cur, label, i, i_max, series))
        else:
            out.append(_size_f(cur, label, headroom, series))
    else:
        s = size_isolated_rating(cur, label, headroom=headroom, series=series)
        note = s.note
        if s.margin is not None and s.margin < 0 or (s.design is not None and
                                                    _ceiling(s.design, s.design.options[i])[0] < required_rail(d)):
            out.append(SizedValue("module power rating", s.field, "W", None, None, None, _nothing_works(
                d, opt, "power rating", "the module's rail does not hold the worst corner at any rating")))
        else:
            p_load = float(load_power(d, period_schedule(d), module_output(d, opt)))
            out.append(SizedValue("module power rating", s.field, "W", p_load, s.value, _margin(s.design, label),
                                  f"{series} rating at least {headroom:g}\u00d7 the gate load; no-load input "
                                  "power scaled with the rating (replace with the chosen part's figures)"))
            cur = s.design
    return Recommendation(label, opt.kind, series, float(headroom), tuple(out), cur)


def _size_r(d: Design, label: str, i: int, i_max, series: str) -> SizedValue:
    """R_boot from the inrush limit, or the present inrush stated when no limit is given."""
    opt = d.options[i]
    path = f"options[{i}].r"
    v_dd = d.aux.v_dd * (1 + d.aux.v_dd_tol)
    v_f = opt.diode.v_f if isinstance(opt.diode, LinearDiode) else 0.0
    r_d = opt.diode.r_d if isinstance(opt.diode, LinearDiode) else opt.diode.r_s
    if i_max is None:
        i_now = (v_dd - v_f) / max(opt.r + r_d + opt.esr, 1e-300)
        return SizedValue("series resistor R_boot", path, "\u03a9", None, opt.r, None,
                          f"kept as designed; its first-pulse inrush is (V_DD,max \u2212 V_F)/(R + r_D + ESR) = "
                          f"{format_eng(i_now, 'A')}; give an inrush limit (i_max, --i-max on the command line) "
                          "to size it")
    s = size_bootstrap_resistor(d, label, i_max, series="E24" if series == "E24" else series)
    if s.value is None:
        return SizedValue("series resistor R_boot", path, "\u03a9", None, None, None,
                          f"{s.note}: an inrush limit of {i_max:.3g} A and this capacitor cannot both be met; "
                          "allow more inrush or a larger capacitor")
    return SizedValue("series resistor R_boot", path, "\u03a9", s.value, s.value, s.margin,
                      f"smallest {series} value limiting the first-pulse inrush to {i_max:.3g} A")


def _size_f(d: Design, label: str, headroom: float, series: str) -> SizedValue:
    """Pump clock: the lowest f_cp holding the worst corner, then ×headroom on the preferred series."""
    i = _index(d, label)
    opt = d.options[i]
    s = size_pump_frequency(d, label)
    if s.value is None:
        return SizedValue("pump clock f_cp", s.field, "Hz", None, None, None, _nothing_works(
            d, opt, "pump clock", s.note + " with this flying capacitor"))
    f_cap = 0.49 / opt.dead_time_cp if opt.dead_time_cp > 0 else None
    v, mg, _ = _with_headroom(d, label, s.field, s.value, headroom, series, cap=f_cap)
    floor = opt.f_cp and s.note.startswith("the model's validity floor")
    note = (f"the bare minimum is the model's validity floor ({PULSE_CYCLES_MIN:g} pump cycles per high-side "
            "turn-on); the rail holds the worst corner there" if floor else
            "lowest clock holding the worst corner, by bisection")
    return SizedValue("pump clock f_cp", s.field, "Hz", s.value, v, mg, note)
