"""Result objects shared by every supply model and by the comparison.

All results are frozen dataclasses in SI units with a ``to_dict()`` that gives
the JSON contract of ``explorer-result`` (``None`` where a figure does not
apply or is unbounded). Arrays (waveforms) are kept on the objects for
panels and plots but left out of ``to_dict()`` unless asked for.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields

import numpy as np

__all__ = ["RailStats", "Startup", "DutyLimits", "CapacitorStress", "Check", "Details", "OptionResult",
           "clean", "verdict_from", "FAMILIES", "family_of", "rail_min_check", "rail_max_v_bs_check",
           "rail_max_v_gs_check", "startup_uvlo_check", "cap_voltage_check", "cap_check_name",
           "RAIL_PLAUSIBLE", "plausibility"]


def clean(x):
    """JSON-ready copy: numpy scalars to float, non-finite to None, arrays to lists."""
    if isinstance(x, dict):
        return {k: clean(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [clean(v) for v in x]
    if isinstance(x, np.ndarray):
        return [clean(v) for v in x.tolist()]
    if isinstance(x, (bool, np.bool_)):
        return bool(x)
    if isinstance(x, (int, np.integer)):
        return int(x)
    if isinstance(x, (float, np.floating)):
        x = float(x)
        return x if math.isfinite(x) else None
    if hasattr(x, "to_dict"):
        return x.to_dict()
    return x


class _Dict:
    """Mixin: ``to_dict()`` of the scalar fields; waveform arrays only on request."""

    _arrays: tuple = ()

    def to_dict(self, waveforms: bool = False) -> dict:
        out = {}
        for f in fields(self):
            if f.name in self._arrays and not waveforms:
                continue
            v = getattr(self, f.name)
            if isinstance(v, _Dict):
                out[f.name] = v.to_dict(waveforms)
            elif isinstance(v, tuple) and v and isinstance(v[0], _Dict):
                out[f.name] = [x.to_dict(waveforms) for x in v]
            else:
                out[f.name] = clean(v)
        return out


@dataclass(frozen=True)
class RailStats(_Dict):
    """Steady-state floating-rail voltage V_B − V_S over the analysis period [V]."""

    min: float
    max: float
    mean: float


@dataclass(frozen=True)
class Startup(_Dict):
    """Start-up from a dead rail.

    Attributes
    ----------
    t_uvlo : float or None [s]
        Time until the rail first reaches the UVLO rising threshold (None: never).
    cycles_uvlo : int or None [-]
        Switching periods (pump cycles for a charge pump) until then.
    i_peak : float or None [A]
        Peak inrush current into the floating supply.
    v_dd_dip : float or None [V]
        Dip of the aux rail while the supply fills from its decoupling.
    t, v : ndarray [s], [V]
        Rail waveform (for plots; not in ``to_dict()`` by default).
    """

    t_uvlo: float | None
    cycles_uvlo: int | None
    i_peak: float | None
    v_dd_dip: float | None = None
    t: np.ndarray = field(default_factory=lambda: np.zeros(0), repr=False)
    v: np.ndarray = field(default_factory=lambda: np.zeros(0), repr=False)
    _arrays = ("t", "v")


@dataclass(frozen=True)
class DutyLimits(_Dict):
    """Feasible HS duty range at this switching frequency.

    Attributes
    ----------
    min, max : float or None [-]
        Feasible HS duty range (None where unbounded or none is feasible).
    hold_up : float or None [s]
        Time the rail stays above the requirement at 100 % duty, starting from
        its steady-state maximum (None: indefinitely).
    t_ls_min : float or None [s]
        Shortest LS on-time that still refreshes the rail (None: not needed).
    topology : dict
        The same limits in the topology's own terms (e.g. ``v_out_max`` for a buck).
    hold_up_threshold : float or None [V]
        The rail level ``hold_up`` counts down to (None: no hold-up limit).
    hold_up_to : str or None
        Which threshold that is, in words (e.g. the required rail max(UVLO-off, V_GS needed) + margin).
    """

    min: float | None
    max: float | None
    hold_up: float | None
    t_ls_min: float | None = None
    topology: dict = field(default_factory=dict)
    hold_up_threshold: float | None = None
    hold_up_to: str | None = None


@dataclass(frozen=True)
class CapacitorStress(_Dict):
    """Stress on one capacitor of a supply option."""

    name: str
    c_eff: float      #: effective capacitance at the nominal corner and its DC bias [F]
    v_max: float      #: highest voltage across it [V]
    v_rating: float | None  #: rated voltage [V]
    ripple: float     #: peak-to-peak voltage ripple in steady state [V]
    i_rms: float      #: RMS current in steady state [A]
    i_peak: float     #: peak current (steady state or start-up, the larger) [A]


@dataclass(frozen=True)
class Check(_Dict):
    """One pass/fail check with its margin.

    ``sense="min"`` means value must be ≥ limit; ``"max"`` means ≤ limit.
    ``margin`` is positive when the check passes, in the check's unit.
    """

    name: str
    value: float
    limit: float
    sense: str
    unit: str
    text: str  #: plain-words statement of what is checked

    @property
    def margin(self) -> float:
        return self.value - self.limit if self.sense == "min" else self.limit - self.value

    @property
    def ok(self) -> bool:
        return bool(self.margin >= 0)

    @property
    def margin_rel(self) -> float | None:
        """The margin as a share of the limit's size [-] (None for a zero limit); checks are ranked by it."""
        return self.margin / abs(self.limit) if self.limit else None

    def margin_words(self) -> str:
        """The margin both ways in plain words: ``margin 19.4 V = 31 % of the 62.4 V limit``."""
        from .units import format_eng
        head = (f"margin {format_eng(self.margin, self.unit)}" if self.ok
                else f"short by {format_eng(-self.margin, self.unit)}")
        if self.margin_rel is None:
            return head
        return f"{head} = {100 * abs(self.margin_rel):.3g} % of the {format_eng(self.limit, self.unit)} limit"

    def to_dict(self, waveforms: bool = False) -> dict:
        d = super().to_dict(waveforms)
        d["margin"] = clean(self.margin)
        d["margin_rel"] = clean(self.margin_rel)
        d["ok"] = self.ok
        return d


def _rel_key(c: Check) -> float:
    """Ranking key of a check: its margin relative to its limit (a zero limit counts as 1 in its unit)."""
    return c.margin / (abs(c.limit) or 1.0)


@dataclass(frozen=True)
class Details(_Dict):
    """Base of a supply family's typed details (one frozen dataclass per kind, SI units per field).

    The built-in families' are in :mod:`explorer.options.details`; ``to_dict()`` gives the
    ``"details"`` object of the ``explorer-result`` JSON.
    """


# --------------------------------------------------------------------------- checks every kind shares
# One builder per shared check: the id, the limit (from the design) and the sense are fixed here; the
# caller gives the figure and, where its model says more precisely what the figure is, the words.

def rail_min_check(design, v_min: float, text: str | None = None) -> Check:
    """``rail_min``: the steady-state rail minimum [V] ≥ max(uvlo_off, v_gs_on_min) + v_margin."""
    from .loads import required_rail
    need = required_rail(design)
    return Check("rail_min", v_min, need, "min", "V", text or
                 f"rail minimum stays at or above max(UVLO off, V_GS needed) + margin = {need:.4g} V")


def rail_max_v_bs_check(design, v_max: float, text: str | None = None) -> Check:
    """``rail_max_v_bs``: the highest rail [V] ≤ the driver's ``v_bs_max``."""
    lim = design.driver.v_bs_max
    return Check("rail_max_v_bs", v_max, lim, "max", "V",
                 text or f"rail maximum stays at or below the driver's v_bs_max = {lim:.4g} V")


def rail_max_v_gs_check(design, v_max: float, text: str | None = None) -> Check:
    """``rail_max_v_gs``: the highest rail [V] ≤ the gate's ``v_gs_max``."""
    lim = design.gate.v_gs_max
    return Check("rail_max_v_gs", v_max, lim, "max", "V",
                 text or f"rail maximum stays at or below the gate rating v_gs_max = {lim:.4g} V")


def startup_uvlo_check(design, v_reached: float, text: str | None = None) -> Check:
    """``startup_uvlo``: the rail reached during start-up [V] ≥ the driver's ``uvlo_on``."""
    lim = design.driver.uvlo_on
    return Check("startup_uvlo", v_reached, lim, "min", "V",
                 text or f"the rail reaches the UVLO rising threshold {lim:.4g} V during start-up")


def cap_check_name(name: str) -> str:
    """Check id of a capacitor's voltage check: ``cap_voltage_<name in lower case>``."""
    return f"cap_voltage_{name.lower()}"


def cap_voltage_check(design, name: str, v_max: float, v_rating: float | None,
                      text: str | None = None) -> Check | None:
    """``cap_voltage_<name>``: the capacitor's highest voltage [V] ≤ ``checks.cap_derating`` × its rating.

    None when the capacitor has no rating (nothing to check).
    """
    if v_rating is None:
        return None
    k = design.checks.cap_derating
    return Check(cap_check_name(name), v_max, v_rating * k, "max", "V",
                 text or f"{name} voltage stays within {k:g} \u00d7 its rating {v_rating:.4g} V")


#: The comparison's families of figures and the check names (or name prefixes) that belong to each.
FAMILIES = {
    "efficiency": ("load_rating",),
    "stress": ("cap_voltage_", "diode_v_rrm", "switch_v_block", "switch_i_peak", "rail_max_v_bs", "rail_max_v_gs", "overcharge",
               "rail_plausible"),
    "startup": ("startup_uvlo",),
    "duty": ("rail_min",),
    "isolation": ("cmti", "v_iso"),
}


def family_of(check_name: str) -> str:
    """The family a check belongs to (``"other"`` if none)."""
    for fam, names in FAMILIES.items():
        if any(check_name == n or (n.endswith("_") and check_name.startswith(n)) for n in names):
            return fam
    return "other"


def verdict_from(checks, warnings=()) -> tuple[bool, str]:
    """Feasibility and a plain-words verdict from a list of checks."""
    failed = sorted((c for c in checks if not c.ok), key=_rel_key)
    if failed:  # the largest shortfall relative to its limit first
        return False, "does not hold: " + "; ".join(f"{c.text} ({c.margin_words()})" for c in failed)
    text = "holds"
    if checks:
        tight = min(checks, key=_rel_key)
        text += (f"; tightest check (smallest margin relative to its limit): {tight.text} "
                 f"({tight.margin_words()})")
    if warnings:
        text += f"; {len(warnings)} warning{'s' if len(warnings) > 1 else ''}"
    return True, text


@dataclass(frozen=True)
class OptionResult(_Dict):
    """Everything computed for one supply option.

    The fields named in the ``explorer-result`` contract are ``label``,
    ``kind``, ``feasible``, ``verdict``, ``warnings``, ``v_rail``,
    ``efficiency``, ``p_delivered``, ``p_drawn``, ``startup``, ``duty``,
    ``r_out`` and ``capacitors``; the rest are additions.

    Attributes
    ----------
    efficiency : float or None [-]
        p_delivered / p_drawn.
    p_delivered : float [W]
        Power delivered into the floating rail's load (gate drive, driver
        quiescent, pull-down).
    p_drawn : float [W]
        Power drawn from the aux rail and the bus together.
    p_drawn_aux, p_drawn_bus : float [W]
        The two parts of ``p_drawn``.
    losses : dict [W]
        Split of the overhead by mechanism.
    checks : tuple of Check
        Every pass/fail check with its margin.
    details : Details or None
        The family's own figures (a frozen dataclass per kind, e.g.
        :class:`~explorer.options.details.BootstrapDetails`); None when not evaluated.
    error : str or None
        Set when the option could not be evaluated (then the figures are None).
    cautions : tuple of str
        Statements that always apply to this kind of option (e.g. that insulation must be designed
        to the safety standards); unlike ``warnings`` they do not say something is wrong.
    assumptions : tuple of str
        The model's assumptions behind this result's figures, in plain words (e.g. where the switch
        node rests while UVLO withholds the high-side pulses, how each edge's capacitive energy is
        charged); not a fault.
    t, v : ndarray [s], [V]
        Steady-state rail waveform over the analysis period.
    """

    label: str
    kind: str
    feasible: bool
    verdict: str
    warnings: tuple
    v_rail: RailStats | None
    efficiency: float | None
    p_delivered: float | None
    p_drawn: float | None
    startup: Startup | None
    duty: DutyLimits | None
    r_out: float | None
    capacitors: tuple
    p_drawn_aux: float | None = None
    p_drawn_bus: float | None = None
    losses: dict = field(default_factory=dict)
    checks: tuple = ()
    details: Details | None = None
    error: str | None = None
    cautions: tuple = ()
    assumptions: tuple = ()
    t: np.ndarray = field(default_factory=lambda: np.zeros(0), repr=False)
    v: np.ndarray = field(default_factory=lambda: np.zeros(0), repr=False)
    _arrays = ("t", "v")

    @property
    def overhead(self) -> float | None:
        """p_drawn − p_delivered [W]."""
        if self.p_drawn is None or self.p_delivered is None:
            return None
        return self.p_drawn - self.p_delivered

    @property
    def worst_margin(self) -> Check | None:
        """The check with the smallest margin relative to its limit."""
        if not self.checks:
            return None
        return min(self.checks, key=_rel_key)

    def families(self) -> dict:
        """Verdict per family of figures (efficiency, stress, startup, duty, isolation).

        Each entry: ``ok`` (every check of the family passes), ``margin``, ``margin_rel`` and
        ``unit`` of its tightest check (ranked by the margin relative to its limit), and
        ``verdict`` in plain words. Families
        without checks are left out.
        """
        out: dict = {}
        for c in self.checks:
            out.setdefault(family_of(c.name), []).append(c)
        res = {}
        for fam in [f for f in (*FAMILIES, "other") if f in out]:
            cs = out[fam]
            tight = min(cs, key=_rel_key)
            bad = [c for c in cs if not c.ok]
            res[fam] = {"ok": not bad, "margin": clean(tight.margin), "margin_rel": clean(tight.margin_rel),
                        "unit": tight.unit, "check": tight.name,
                        "verdict": ("fails: " + "; ".join(f"{c.text} ({c.margin_words()})" for c in bad)) if bad
                        else f"holds: {tight.text} ({tight.margin_words()})"}
        return res

    def to_dict(self, waveforms: bool = False) -> dict:
        d = super().to_dict(waveforms)
        d["overhead"] = clean(self.overhead)
        d["families"] = self.families()
        return d

    @classmethod
    def failed(cls, label: str, kind: str, message: str) -> "OptionResult":
        """A result for an option that could not be evaluated: no made-up numbers."""
        return cls(label=label, kind=kind, feasible=False, verdict=f"not evaluated: {message}",
                   warnings=(), v_rail=None, efficiency=None, p_delivered=None, p_drawn=None,
                   startup=None, duty=None, r_out=None, capacitors=(), error=message)


#: A floating gate-drive rail beyond this magnitude [V] (or below 0 V) means a model's assumptions
#: have broken down (a gate rail is some volts to a few tens of volts; common practice, no source).
RAIL_PLAUSIBLE = 100.0


def plausibility(result: "OptionResult") -> "OptionResult":
    """The result with a failed ``rail_plausible`` check and a warning where its rail figures are implausible.

    A steady-state rail below 0 V or beyond ±:data:`RAIL_PLAUSIBLE` is outside the range any model
    here describes (its constant-charge load, its switches and diodes stop acting as modelled), so
    such a figure is flagged as a model-validity failure instead of shown as if it were a rail.
    Results within range are returned unchanged.
    """
    r = result.v_rail
    if r is None:
        return result
    lo, hi = min(r.min, r.max, r.mean), max(r.min, r.max, r.mean)
    if lo >= 0.0 and hi <= RAIL_PLAUSIBLE:
        return result
    import dataclasses
    if lo < 0.0:
        check = Check("rail_plausible", lo, 0.0, "min", "V",
                      "the model's rail stays at or above 0 V (below it the model does not hold)")
    else:
        check = Check("rail_plausible", hi, RAIL_PLAUSIBLE, "max", "V",
                      f"the model's rail stays within {RAIL_PLAUSIBLE:g} V (beyond it the model does not hold)")
    msg = (f"model validity: the rail figures ({lo:.4g} V to {hi:.4g} V) are outside 0 to {RAIL_PLAUSIBLE:g} V, "
           "where the model's assumptions hold; the design is far outside its range (check the gate charge, "
           "the loads and the parts)")
    warns = result.warnings + (msg,)
    checks = result.checks + (check,)
    feasible, verdict = verdict_from(list(checks), warns)
    return dataclasses.replace(result, warnings=warns, checks=checks, feasible=feasible, verdict=verdict)
