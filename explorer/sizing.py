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

from .design import (BootstrapOption, ChargePumpOption, Design, IsolatedOption, LinearDiode, load_design, replace_field,
                     replace_fields)
from .errors import DesignError
from .loads import load_power
from .errors import ModelValidityWarning
from .options import model_for
from .options.charge_pump import PULSE_CYCLES_MIN
from .options.isolated import module_output
from .preferred import next_preferred, preferred_values
from .schedule import period_schedule
from .tolerance import worst_case

__all__ = ["SizingResult", "size_capacitor", "size_bootstrap_resistor", "size_pump_frequency",
           "size_isolated_rating"]


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
        model_for(design.option(label).kind)(design, design.option(label))
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
    if isinstance(opt, BootstrapOption):
        path = f"options[{i}].c"
    elif isinstance(opt, ChargePumpOption):
        path = f"options[{i}].c_fly.c"
    else:
        raise DesignError(f"options[{i}].kind", "capacitor sizing applies to bootstrap and charge_pump options",
                          opt.kind)
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
    opt = d.options[i]
    if not isinstance(opt, BootstrapOption):
        raise DesignError(f"options[{i}].kind", "resistor sizing applies to bootstrap options", opt.kind)
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
    opt = d.options[i]
    if not isinstance(opt, ChargePumpOption):
        raise DesignError(f"options[{i}].kind", "frequency sizing applies to charge_pump options", opt.kind)
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
    opt = d.options[i]
    if not isinstance(opt, IsolatedOption):
        raise DesignError(f"options[{i}].kind", "rating sizing applies to isolated options", opt.kind)
    if not (isinstance(headroom, (int, float)) and headroom >= 1):
        raise DesignError("headroom", "expected a factor >= 1", headroom)
    p_load = float(load_power(d, period_schedule(d), module_output(d, opt)))
    p = next_preferred(p_load * headroom, series)
    path = f"options[{i}].p_rated"
    dd = replace_fields(d, {path: p, f"options[{i}].p_no_load": opt.p_no_load * p / opt.p_rated})
    r = model_for("isolated")(dd, dd.options[i])
    return SizingResult(label, path, p, r.v_rail.min - d.driver.uvlo_off, None, None, dd,
                        f"gate load {p_load:.3g} W \u00d7 {headroom:g} headroom \u2192 {p:.3g} W module")

