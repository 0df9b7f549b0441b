"""Design rules: requirements a design must keep meeting, checked in a notebook or in CI.

A rule is a small frozen dataclass stating one requirement on one supply option
(or on every option when ``option`` is None): the rail keeps a margin above
UVLO-off at every tolerance corner, each capacitor stays within a share of its
rating, start-up is fast enough, the UVLO trip probability is low enough, and
so on. :func:`check_rules` measures every rule with the public models
(:func:`explorer.evaluate`, :func:`explorer.tolerance.worst_case`,
:func:`explorer.tolerance.monte_carlo`) and returns a :class:`RulesReport`;
:func:`assert_rules` raises :class:`~explorer.errors.RuleViolation` (an
``AssertionError``) naming each broken rule with its figures, so a part change
that breaks a requirement fails a notebook, a test or CI.

The same rules are written in a JSON file of format ``explorer-rules``,
version 1 (see :func:`load_rules`)::

    {"format": "explorer-rules", "version": 1,
     "rules": [{"rule": "rail_margin", "option": "bootstrap 220n", "margin": 1.0},
               {"rule": "capacitor_share", "option": "bootstrap 220n", "share": 0.5},
               {"rule": "startup_time", "option": "bootstrap 220n", "t_max": "1m"},
               {"rule": "trip_probability", "option": "bootstrap 220n", "p_max": 1e-3}]}

Fields are described once, in each rule's :class:`~explorer.design.Spec`, the
same machinery that reads design files: a bad field gives a
:class:`~explorer.errors.DesignError` naming it (``rules[2].t_max``), its value
and what is allowed. The rule thresholds are the user's requirements; the
numbers shown in the examples are illustrations, not recommendations.
"""

from __future__ import annotations

import dataclasses
import json
import os
from dataclasses import dataclass, field
from typing import Any, Sequence, Union

from .compare import Comparison, evaluate
from .design import FRACTION, NONNEG, POS, Design, build_tagged, load_design, read_bounded
from .design import spec_field as _f
from .errors import DesignError, RuleViolation
from .results import Check, clean
from .schedule import nominal_duty
from .units import format_eng

__all__ = ["RULES_FORMAT", "RULES_VERSION", "RULE_KINDS", "RailMargin", "CapacitorShare", "StartupTime",
           "TripProbability", "EfficiencyMin", "DutyCovers", "HoldUp", "ChecksHold", "RuleOutcome",
           "RulesReport", "check_rules", "assert_rules", "load_rules", "rules_to_dict", "save_rules"]

RULES_FORMAT = "explorer-rules"
RULES_VERSION = 1
#: Rule files larger than this are refused before parsing [bytes].
MAX_RULES_BYTES = 1_000_000

_OPTION = dict(kind="text", nullable=True)
_OPTION_DOC = "label of the option the rule applies to (null = every option of the design)"
_NAME_DOC = "your name for the rule, shown in reports and errors (null = generated)"


class _Rule:
    """Shared behaviour: a rule measures one option and gives a :class:`~explorer.results.Check`."""

    rule: str
    option: str | None
    name: str | None

    def title(self) -> str:
        """The rule's name as shown in reports: the user's ``name`` or a generated one."""
        return self.name or self.describe()

    def describe(self) -> str:  # pragma: no cover - every rule overrides it
        raise NotImplementedError

    def measure(self, ctx: "_Context", label: str) -> Check:  # pragma: no cover - every rule overrides it
        raise NotImplementedError

    def to_dict(self) -> dict:
        """The rule as a rule-file entry."""
        return {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}


def _rule_kind(name: str):
    return _f("-", "rule kind", name, kind="choice", choices=(name,))


@dataclass(frozen=True, kw_only=True)
class RailMargin(_Rule):
    """Steady-state rail minimum at least ``margin`` above a threshold, at every corner or at nominal.

    The worst corner is the one :func:`explorer.tolerance.worst_case` finds (every extreme
    combination of the design's spreads); ``at="nominal"`` uses the plain evaluation.
    """

    rule: str = _rule_kind("rail_margin")
    option: str | None = _f("-", _OPTION_DOC, None, **_OPTION)
    margin: float = _f("V", "required distance of the rail minimum above the threshold", 1.0, lo=0.0, hi=100.0)
    above: str = _f("-", "threshold: the driver's UVLO falling threshold or the gate's V_GS needed",
                    "uvlo_off", kind="choice", choices=("uvlo_off", "v_gs_on_min"))
    at: str = _f("-", "where the rail is taken", "every_corner", kind="choice", choices=("every_corner", "nominal"))
    name: str | None = _f("-", _NAME_DOC, None, kind="text", nullable=True)

    def describe(self) -> str:
        where = "at every corner" if self.at == "every_corner" else "at nominal"
        return f"rail minimum \u2265 {self.above} + {format_eng(self.margin, 'V')} {where}"

    def measure(self, ctx, label):
        d = ctx.design
        threshold = d.driver.uvlo_off if self.above == "uvlo_off" else d.gate.v_gs_on_min
        if self.at == "every_corner":
            w = ctx.worst_case(label)
            rail, where = w.rail_min, f"at the worst corner ({w.corner_text or w.corner})"
        else:
            r = ctx.result(label)
            rail, where = (r.v_rail.min if r.v_rail is not None else 0.0), "at nominal"  # never refreshed: 0 V
        return Check("rail_margin", rail - threshold, self.margin, "min", "V",
                     f"rail minimum {format_eng(rail, 'V')} {where} is {rail - threshold:+.3g} V from "
                     f"{self.above} {format_eng(threshold, 'V')}; required \u2265 {self.margin:g} V")


@dataclass(frozen=True, kw_only=True)
class CapacitorShare(_Rule):
    """Each capacitor's highest voltage at most ``share`` of its voltage rating.

    The voltage is the model's own ``CapacitorStress.v_max`` of the nominal evaluation (for a
    bootstrap it already includes the aux rail at its tolerance and the switch-node undershoot).
    A capacitor without a rating cannot be checked: :class:`DesignError`.
    """

    rule: str = _rule_kind("capacitor_share")
    option: str | None = _f("-", _OPTION_DOC, None, **_OPTION)
    share: float = _f("-", "largest allowed V_max / V_rating", 0.5, lo=0.0, lo_open=True, hi=1.0)
    capacitor: str | None = _f("-", "capacitor name as in the result (C_boot, c_fly, c_out); null = every one",
                               None, kind="text", nullable=True)
    name: str | None = _f("-", _NAME_DOC, None, kind="text", nullable=True)

    def describe(self) -> str:
        which = self.capacitor or "every capacitor"
        return f"{which} V_max \u2264 {100 * self.share:g} % of its rating"

    def measure(self, ctx, label):
        r = ctx.result(label)
        caps = [c for c in r.capacitors if self.capacitor in (None, c.name)]
        if not caps:
            raise DesignError(f"{ctx.path(self)}.capacitor", f"option {label!r} has no capacitor of that name; "
                              "names: " + ", ".join(c.name for c in r.capacitors), self.capacitor)
        for c in caps:
            if c.v_rating is None:
                raise DesignError(f"{ctx.path(self)}", f"capacitor {c.name} of option {label!r} has no "
                                  "v_rating in the design, so its share of the rating cannot be checked")
        worst = max(caps, key=lambda c: c.v_max / c.v_rating)
        ratio = worst.v_max / worst.v_rating
        return Check("capacitor_share", ratio, self.share, "max", "-",
                     f"{worst.name} sees {format_eng(worst.v_max, 'V')} of its {format_eng(worst.v_rating, 'V')} "
                     f"rating ({100 * ratio:.1f} %); allowed \u2264 {100 * self.share:g} %")


@dataclass(frozen=True, kw_only=True)
class StartupTime(_Rule):
    """Start-up from a dead rail reaches the UVLO rising threshold within ``t_max``."""

    rule: str = _rule_kind("startup_time")
    option: str | None = _f("-", _OPTION_DOC, None, **_OPTION)
    t_max: float = _f("s", "longest allowed time from start to UVLO-on", **POS)
    name: str | None = _f("-", _NAME_DOC, None, kind="text", nullable=True)

    def describe(self) -> str:
        return f"start-up to UVLO-on \u2264 {format_eng(self.t_max, 's')}"

    def measure(self, ctx, label):
        s = ctx.result(label).startup
        t = None if s is None else s.t_uvlo
        if t is None:
            return Check("startup_time", float("inf"), self.t_max, "max", "s",
                         f"the rail never reaches UVLO-on in the analysed start-up; allowed "
                         f"\u2264 {format_eng(self.t_max, 's')}")
        return Check("startup_time", t, self.t_max, "max", "s",
                     f"start-up to UVLO-on takes {format_eng(t, 's')}; allowed \u2264 {format_eng(self.t_max, 's')}")


@dataclass(frozen=True, kw_only=True)
class TripProbability(_Rule):
    """Probability that the rail minimum falls below UVLO-off at most ``p_max`` (Monte Carlo).

    ``statistic="upper"`` compares the upper end of the Clopper–Pearson interval (the safe
    reading: with n samples and no trip it is about 3.7/n at 95 %), ``"estimate"`` the
    observed fraction. Same seed, same numbers.
    """

    rule: str = _rule_kind("trip_probability")
    option: str | None = _f("-", _OPTION_DOC, None, **_OPTION)
    p_max: float = _f("-", "largest allowed probability of a UVLO trip", **FRACTION)
    samples: int = _f("-", "Monte Carlo samples", 10_000, kind="int", lo=1, hi=10_000_000)
    seed: int = _f("-", "random seed", 0, kind="int", lo=0, hi=2**32 - 1)
    confidence: float = _f("-", "confidence of the interval", 0.95, lo=0.5, hi=1.0, hi_open=True)
    statistic: str = _f("-", "compare the interval's upper end or the observed fraction", "upper",
                        kind="choice", choices=("upper", "estimate"))
    name: str | None = _f("-", _NAME_DOC, None, kind="text", nullable=True)

    def describe(self) -> str:
        return f"P(UVLO trip) \u2264 {self.p_max:.3g} ({self.statistic}, {self.samples} samples)"

    def measure(self, ctx, label):
        mc = ctx.monte_carlo(label, self.samples, self.seed, self.confidence)
        value = mc.ci[1] if self.statistic == "upper" else mc.p_trip
        return Check("trip_probability", value, self.p_max, "max", "-",
                     f"{round(mc.p_trip * mc.n)} of {mc.n} samples trip (p = {mc.p_trip:.3g}, "
                     f"{100 * mc.confidence:g} % interval {mc.ci[0]:.3g} .. {mc.ci[1]:.3g}, seed {mc.seed}); "
                     f"{'upper end' if self.statistic == 'upper' else 'estimate'} {value:.3g} allowed "
                     f"\u2264 {self.p_max:.3g}")


@dataclass(frozen=True, kw_only=True)
class EfficiencyMin(_Rule):
    """Efficiency (power delivered to the floating rail / power drawn) at least ``min``."""

    rule: str = _rule_kind("efficiency")
    option: str | None = _f("-", _OPTION_DOC, None, **_OPTION)
    min: float = _f("-", "lowest allowed efficiency", **FRACTION)
    name: str | None = _f("-", _NAME_DOC, None, kind="text", nullable=True)

    def describe(self) -> str:
        return f"efficiency \u2265 {100 * self.min:g} %"

    def measure(self, ctx, label):
        r = ctx.result(label)
        eta = r.efficiency if r.efficiency is not None else float("nan")
        return Check("efficiency", eta, self.min, "min", "-",
                     f"efficiency {100 * eta:.1f} % (drawn {format_eng(r.p_drawn, 'W')}, delivered "
                     f"{format_eng(r.p_delivered, 'W')}); required \u2265 {100 * self.min:g} %")


@dataclass(frozen=True, kw_only=True)
class DutyCovers(_Rule):
    """The option's feasible high-side duty range covers a required range.

    ``duty_min``/``duty_max`` null means the operating point's duty
    (:func:`explorer.schedule.nominal_duty`; the highest duty over the fundamental for a
    three-phase leg). The figure is the smaller distance of the required range's ends inside
    the feasible range (negative: it sticks out).
    """

    rule: str = _rule_kind("duty_covers")
    option: str | None = _f("-", _OPTION_DOC, None, **_OPTION)
    duty_min: float | None = _f("-", "lowest HS duty that must be feasible (null = operating point)", None,
                                nullable=True, **FRACTION)
    duty_max: float | None = _f("-", "highest HS duty that must be feasible (null = operating point)", None,
                                nullable=True, **FRACTION)
    name: str | None = _f("-", _NAME_DOC, None, kind="text", nullable=True)

    def _check(self, path: str) -> None:
        if self.duty_min is not None and self.duty_max is not None and self.duty_min > self.duty_max:
            raise DesignError(f"{path}.duty_min", f"must not exceed duty_max = {self.duty_max:g}", self.duty_min)

    def describe(self) -> str:
        lo = "the operating point" if self.duty_min is None else f"{100 * self.duty_min:g} %"
        hi = "the operating point" if self.duty_max is None else f"{100 * self.duty_max:g} %"
        return f"feasible HS duty covers {lo} \u2026 {hi}" if lo != hi else f"feasible HS duty covers {lo}"

    def measure(self, ctx, label):
        op = nominal_duty(ctx.design.bridge)
        lo = op if self.duty_min is None else self.duty_min
        hi = op if self.duty_max is None else self.duty_max
        d = ctx.result(label).duty
        need = f"{100 * lo:.1f} % \u2026 {100 * hi:.1f} %"
        if d is None or (d.min is None and d.max is None):
            return Check("duty_covers", -1.0, 0.0, "min", "-",
                         f"no HS duty is feasible; required {need}")
        f_lo = 0.0 if d.min is None else d.min
        f_hi = 1.0 if d.max is None else d.max
        return Check("duty_covers", min(lo - f_lo, f_hi - hi), 0.0, "min", "-",
                     f"feasible HS duty {100 * f_lo:.1f} % \u2026 {100 * f_hi:.1f} %; required {need}")


@dataclass(frozen=True, kw_only=True)
class HoldUp(_Rule):
    """Hold-up at 100 % duty at least ``t_min`` (an option that needs no refresh holds indefinitely)."""

    rule: str = _rule_kind("hold_up")
    option: str | None = _f("-", _OPTION_DOC, None, **_OPTION)
    t_min: float = _f("s", "shortest allowed time the rail holds at 100 % duty", **NONNEG)
    name: str | None = _f("-", _NAME_DOC, None, kind="text", nullable=True)

    def describe(self) -> str:
        return f"hold-up at 100 % duty \u2265 {format_eng(self.t_min, 's')}"

    def measure(self, ctx, label):
        d = ctx.result(label).duty
        if d is not None and d.hold_up is None:
            return Check("hold_up", float("inf"), self.t_min, "min", "s",
                         f"holds at 100 % duty indefinitely; required \u2265 {format_eng(self.t_min, 's')}")
        t = d.hold_up if d is not None else float("nan")
        return Check("hold_up", t, self.t_min, "min", "s",
                     f"hold-up at 100 % duty {format_eng(t, 's')}; required \u2265 {format_eng(self.t_min, 's')}")


@dataclass(frozen=True, kw_only=True)
class ChecksHold(_Rule):
    """Every check of the option's own model holds (the option is feasible)."""

    rule: str = _rule_kind("checks_hold")
    option: str | None = _f("-", _OPTION_DOC, None, **_OPTION)
    name: str | None = _f("-", _NAME_DOC, None, kind="text", nullable=True)

    def describe(self) -> str:
        return "every model check holds"

    def measure(self, ctx, label):
        r = ctx.result(label)
        bad = [c for c in r.checks if not c.ok]
        if r.error is not None:
            text = f"not evaluated: {r.error}"
        elif bad:
            text = "broken: " + "; ".join(f"{c.name} {c.value:.4g} {c.unit} vs limit {c.limit:.4g}" for c in bad)
        else:
            text = f"all {len(r.checks)} checks hold"
        return Check("checks_hold", float(len(bad) + (r.error is not None)), 0.0, "max", "-", text)


#: Rule kind (the ``rule`` key of a rule file) → its class.
RULE_KINDS = {cls.__dataclass_fields__["rule"].default: cls
              for cls in (RailMargin, CapacitorShare, StartupTime, TripProbability, EfficiencyMin, DutyCovers,
                          HoldUp, ChecksHold)}

Rule = Union[RailMargin, CapacitorShare, StartupTime, TripProbability, EfficiencyMin, DutyCovers, HoldUp,
             ChecksHold]


# --------------------------------------------------------------------------- checking

class _Context:
    """One design's evaluation, worst corners and Monte Carlo runs, each computed once."""

    def __init__(self, design: Design, comparison: Comparison | None, rules: Sequence):
        self.design = design
        self.comparison = comparison if comparison is not None else evaluate(design)
        self._paths = {id(r): f"rules[{i}]" for i, r in enumerate(rules)}
        self._worst: dict = {}
        self._mc: dict = {}

    def path(self, rule) -> str:
        return self._paths.get(id(rule), "rules")

    def result(self, label: str):
        return self.comparison[label]

    def worst_case(self, label: str):
        from .tolerance import worst_case
        if label not in self._worst:
            self._worst[label] = worst_case(self.design, label)
        return self._worst[label]

    def monte_carlo(self, label: str, n: int, seed: int, confidence: float):
        from .tolerance import monte_carlo
        key = (label, n, seed, confidence)
        if key not in self._mc:
            self._mc[key] = monte_carlo(self.design, label, n, seed=seed, confidence=confidence)
        return self._mc[key]


@dataclass(frozen=True)
class RuleOutcome:
    """One rule measured on one option.

    Attributes
    ----------
    rule : Rule
    option : str
        Label of the option measured.
    check : Check
        The figure, its limit and unit, and the plain-words statement with the figures.
    """

    rule: Any
    option: str
    check: Check

    @property
    def ok(self) -> bool:
        return self.check.ok

    @property
    def message(self) -> str:
        """``rule 'name' (kind) on 'option': holds|BROKEN: figures``."""
        state = "holds" if self.ok else "BROKEN"
        return f"rule {self.rule.title()!r} ({self.rule.rule}) on {self.option!r}: {state}: {self.check.text}"

    def to_dict(self) -> dict:
        return {"rule": self.rule.rule, "name": self.rule.title(), "option": self.option, "ok": self.ok,
                "value": clean(self.check.value), "limit": clean(self.check.limit), "sense": self.check.sense,
                "unit": self.check.unit, "margin": clean(self.check.margin), "text": self.check.text,
                "spec": self.rule.to_dict()}


@dataclass(frozen=True)
class RulesReport:
    """Every rule's outcome for one design.

    Attributes
    ----------
    title : str
        The design's title.
    outcomes : tuple of RuleOutcome
        In rule order, one per option the rule applies to.
    comparison : Comparison
        The evaluation the rules were measured on.
    """

    title: str
    outcomes: tuple
    comparison: Comparison = field(repr=False, compare=False)

    @property
    def ok(self) -> bool:
        """True when every rule holds."""
        return all(o.ok for o in self.outcomes)

    @property
    def broken(self) -> list:
        """The outcomes of the rules that do not hold."""
        return [o for o in self.outcomes if not o.ok]

    def to_dict(self) -> dict:
        return {"format": "explorer-rules-report", "version": 1, "title": self.title, "ok": self.ok,
                "outcomes": [o.to_dict() for o in self.outcomes]}

    def to_text(self) -> str:
        from .views.rules import rules_text
        return rules_text(self)

    def __str__(self) -> str:
        return self.to_text()

    def __repr__(self) -> str:
        state = "all hold" if self.ok else f"{len(self.broken)} broken"
        return f"<RulesReport {self.title!r}: {len(self.outcomes)} rule outcomes, {state}>"

    def _repr_html_(self) -> str:
        """A plain HTML table (no JavaScript)."""
        from .views.rules import rules_html
        return rules_html(self)


def check_rules(design, rules, *, comparison: Comparison | None = None) -> RulesReport:
    """Measure every rule on the design.

    Parameters
    ----------
    design : Design, dict, path or JSON text
        Anything :func:`~explorer.design.load_design` accepts.
    rules : sequence of rules, or a rule file (path, dict or JSON text)
        Rules as dataclasses of this module, or anything :func:`load_rules` accepts.
    comparison : Comparison, optional
        An evaluation of this same design to reuse (else it is evaluated here).

    Returns
    -------
    RulesReport

    Raises
    ------
    DesignError
        For a bad design, a bad rule file, or a rule naming an option the design does not have.
    """
    d = load_design(design)
    rules = _as_rules(rules)
    labels = [o.label for o in d.options]
    for i, r in enumerate(rules):
        if r.option is not None and r.option not in labels:
            raise DesignError(f"rules[{i}].option", "no option with this label in the design; labels: "
                              + ", ".join(labels), r.option)
    if comparison is not None and comparison.design != d:
        raise DesignError("comparison", "is the evaluation of another design")
    ctx = _Context(d, comparison, rules)
    out = []
    for r in rules:
        for label in ([r.option] if r.option is not None else labels):
            out.append(RuleOutcome(r, label, r.measure(ctx, label)))
    return RulesReport(d.title, tuple(out), ctx.comparison)


def assert_rules(design, rules, *, comparison: Comparison | None = None) -> RulesReport:
    """Like :func:`check_rules`, but raise :class:`~explorer.errors.RuleViolation` if a rule is broken.

    The message names every broken rule, its option and its figures; the exception's
    ``report`` holds the whole :class:`RulesReport`. Returns the report when all hold.
    """
    report = check_rules(design, rules, comparison=comparison)
    if not report.ok:
        raise RuleViolation(report)
    return report


# --------------------------------------------------------------------------- rule files

def _as_rules(rules) -> tuple:
    if isinstance(rules, (str, os.PathLike, dict)):
        return load_rules(rules)
    if isinstance(rules, _Rule):
        return (rules,)
    try:
        out = tuple(rules)
    except TypeError:
        raise DesignError("rules", "expected a list of rules or a rule file", type(rules).__name__) from None
    for i, r in enumerate(out):
        if not isinstance(r, _Rule):
            raise DesignError(f"rules[{i}]", "expected a rule (RailMargin, CapacitorShare, ...)",
                              type(r).__name__)
    return out


def _rules_from_dict(data: Any) -> tuple:
    if not isinstance(data, dict):
        raise DesignError("", "a rule file must hold a JSON object")
    for key in data:
        if key not in ("format", "version", "title", "rules"):
            raise DesignError(str(key), "unknown key; allowed: format, version, title, rules")
    if data.get("format") != RULES_FORMAT:
        raise DesignError("format", f"expected {RULES_FORMAT!r}", data.get("format"))
    ver = data.get("version")
    if isinstance(ver, bool) or not isinstance(ver, int) or ver < 1:
        raise DesignError("version", f"expected a whole number from 1 to {RULES_VERSION}", ver)
    if ver > RULES_VERSION:
        raise DesignError("version", f"this rule file was written by a newer explorer (version {ver}); this "
                          f"explorer reads versions 1 to {RULES_VERSION}: update explorer", ver)
    raw = data.get("rules")
    if not isinstance(raw, list) or not 1 <= len(raw) <= 500:
        raise DesignError("rules", "expected a list of 1 to 500 rules",
                          raw if not isinstance(raw, (list, dict)) else f"{len(raw)} items")
    return tuple(build_tagged(r, RULE_KINDS, "rule", f"rules[{i}]", "a 'rule' key") for i, r in enumerate(raw))


def load_rules(source) -> tuple:
    """Read and validate rules from an ``explorer-rules`` file (path, JSON text or dict).

    Raises
    ------
    DesignError
        Naming the field (``rules[2].t_max``), the value and what is allowed.
    """
    if isinstance(source, dict):
        return _rules_from_dict(source)
    if not isinstance(source, (str, os.PathLike)):
        raise DesignError("", f"expected a rule file path, JSON text or a dict, not {type(source).__name__}")
    if isinstance(source, str) and source.lstrip().startswith("{"):
        text = source
    else:
        text = read_bounded(source, limit=MAX_RULES_BYTES, field="", what="rule file")
    try:
        data = json.loads(text, parse_constant=_reject_constant)
    except json.JSONDecodeError as e:
        raise DesignError("", f"not valid JSON: {e.msg} (line {e.lineno}, column {e.colno})") from None
    except RecursionError:
        raise DesignError("", "nested too deeply; not a rule file") from None
    return _rules_from_dict(data)


def _reject_constant(name: str):
    raise DesignError("", f"{name} is not allowed in a rule file (numbers must be finite)")


def rules_to_dict(rules, *, title: str | None = None) -> dict:
    """The rules as an ``explorer-rules`` dict; :func:`load_rules` of it gives back equal rules."""
    d = {"format": RULES_FORMAT, "version": RULES_VERSION}
    if title:
        d["title"] = title
    d["rules"] = [r.to_dict() for r in _as_rules(rules)]
    return d


def save_rules(rules, path, *, title: str | None = None) -> None:
    """Write an ``explorer-rules`` file (temporary file first, so a failed save keeps the old one)."""
    text = json.dumps(rules_to_dict(rules, title=title), indent=2, ensure_ascii=False, allow_nan=False)
    tmp = f"{os.fspath(path)}.tmp"
    with open(tmp, "w", encoding="utf-8") as fh:
        fh.write(text + "\n")
    os.replace(tmp, path)
