"""Tolerance corners, worst-case search and Monte Carlo for one supply option.

Every spread is a multiplicative factor on a design value, collected in
:class:`Factors`. A factor set is turned into a perturbed design by
:func:`apply_factors` and evaluated with the option's own ``evaluate_option``,
so corners and samples use exactly the model that ``evaluate`` uses. Models
that can evaluate many factor sets at once expose ``rail_min_batch(design,
option, factors)``; Monte Carlo then runs vectorised, otherwise it loops.

Spreads (design sections ``spread``, ``aux`` and each capacitor):

* capacitance: the part's symmetric tolerance ``c_tol`` times the EIA-198
  temperature-class envelope [1 + ΔC_low, 1 + ΔC_high], for each capacitor of
  the option on its own (a pump's flying and output capacitors are separate
  parts, each with its own tolerance and class: ``k_c`` and ``k_out``). The
  class gives an envelope, not a curve, so corners take its bounds and Monte
  Carlo samples uniformly within it, independently per capacitor (the corners
  therefore include combinations a common temperature would not produce: on
  the safe side); the DC-bias factor stays in the model;
* gate charge, driver quiescent current, diode forward voltage: ± the
  relative spreads of the ``spread`` section;
* aux rail: ± ``aux.v_dd_tol``;
* temperature: ``checks.t_min`` … ``t_max``; diode leakage grows by the factor
  ``spread.leak_per_100k`` per 100 K above ``checks.t_amb`` (exponential in
  temperature, the usual behaviour of junction leakage).

``distribution="uniform"`` samples within ±spread; ``"gaussian"`` takes the
spread as three standard deviations (truncated at ±4.5σ so factors stay
positive).

The trip probability's confidence interval is the exact binomial interval of
Clopper & Pearson, "The use of confidence or fiducial limits illustrated in
the case of the binomial", Biometrika 26(4), 1934, doi:10.1093/biomet/26.4.404.
"""

from __future__ import annotations

import dataclasses
import itertools
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .capacitors import parse_dielectric
from .design import Design
from .errors import DesignError
from .loads import required_rail
from .options import supply_model
from .options.base import SPREADS as _NAMES

__all__ = ["Factors", "apply_factors", "corner_factors", "corner_text", "sample_factors", "worst_case", "WorstCase", "monte_carlo",
           "MonteCarlo", "clopper_pearson"]


@dataclass(frozen=True)
class Factors:
    """Multiplicative factors (scalars or equal-length arrays) and the temperature of one corner/sample.

    Attributes
    ----------
    k_c : capacitance factor (tolerance × temperature class) on the option's first capacitor: C_boot,
          a pump's C_fly, an isolated module's C_out [-]
    k_out : the same for a charge pump's output capacitor (1 for the other kinds) [-]
    q_g, i_q, v_dd, v_f : factors on gate charge, quiescent current, aux rail, diode forward voltage [-]
    t : temperature [°C]; sets the leakage growth
    """

    k_c: float | np.ndarray = 1.0
    k_out: float | np.ndarray = 1.0
    q_g: float | np.ndarray = 1.0
    i_q: float | np.ndarray = 1.0
    v_dd: float | np.ndarray = 1.0
    v_f: float | np.ndarray = 1.0
    t: float | np.ndarray = 25.0

    def leak(self, design: Design):
        """Leakage factor at this temperature: leak_per_100k^((t − t_amb)/100)."""
        return design.spread.leak_per_100k ** ((np.asarray(self.t) - design.checks.t_amb) / 100.0)

    def at(self, i: int) -> "Factors":
        """The i-th sample of an array-valued factor set."""
        return Factors(**{n: float(np.broadcast_to(getattr(self, n), np.shape(self.k_c) or (1,))[i])
                          if np.ndim(getattr(self, n)) else getattr(self, n) for n in _NAMES})


def apply_factors(design: Design, label: str, f: Factors) -> Design:
    """The design with one option and the shared parts perturbed by scalar factors.

    The option's own parts are the model's business
    (:meth:`~explorer.options.base.SupplyModel.apply_factors`: its capacitors at
    ``c·k_c`` / ``c·k_out`` with tolerance and temperature class already applied,
    a bootstrap's diode, ...); gate, driver and aux rail are scaled here. The
    result is evaluated at the ``"nominal"`` corner.
    """
    opt = design.option(label)
    opt = _model(opt).apply_factors(design, opt, f)
    options = tuple(opt if o.label == label else o for o in design.options)
    return dataclasses.replace(
        design, options=options,
        gate=dataclasses.replace(design.gate, q_g=design.gate.q_g * f.q_g),
        driver=dataclasses.replace(design.driver, i_q=design.driver.i_q * f.i_q),
        aux=dataclasses.replace(design.aux, v_dd=design.aux.v_dd * f.v_dd))


def _model(opt):
    """The option's supply model (a DesignError if its module is not built in this version)."""
    model = supply_model(opt.kind)
    if model is None:
        raise DesignError(f"options[{opt.label}]", f"the {opt.kind} model is not available")
    return model


def _ranges(design: Design, label: str) -> dict:
    """Range of every spread; spreads that cannot affect this option are pinned at nominal (the model says)."""
    opt = design.option(label)
    return _model(opt).spread_ranges(design, opt)


def corner_factors(design: Design, label: str) -> list[tuple[str, Factors]]:
    """Every extreme combination of the spreads (2^k corners for the k spreads that are not zero)."""
    ranges = _ranges(design, label)
    live = [n for n in _NAMES if ranges[n][0] != ranges[n][1]]
    out = []
    for combo in itertools.product((0, 1), repeat=len(live)):
        kw = {n: (1.0 if n != "t" else design.checks.t_amb) for n in _NAMES}
        parts = []
        for n, hi in zip(live, combo):
            kw[n] = ranges[n][hi]
            parts.append(f"{n} {'high' if hi else 'low'}")
        out.append((", ".join(parts) or "nominal", Factors(**kw)))
    return out


#: How each spread reads in a corner's plain-words name (capacitances are named by their part).
_SPREAD_WORDS = {"q_g": "Q_G", "i_q": "I_Q", "v_dd": "V_DD", "v_f": "diode V_F"}


def _cap_word(field_name: str) -> str:
    """``c_boot`` → ``C_boot`` (the capacitor as a schematic names it)."""
    return "C" + field_name[1:] if field_name.startswith("c_") else field_name


def corner_text(design: Design, label: str, factors: Factors) -> str:
    """A corner in plain words with its values, e.g. ``C_boot −23.5 %, Q_G +10 %, V_DD −5 %, 125 °C``.

    Each spread that differs from nominal is given as its change in per cent (a capacitance: its
    tolerance × temperature class × DC-bias factor; the temperature in °C); ``nominal`` when none does.
    """
    opt = design.option(label)
    model = _model(opt)
    caps = model.capacitor_names or tuple(_cap_word(f) for f in model.capacitor_fields)
    parts = []
    for n in _NAMES:
        v = float(getattr(factors, n))
        if n == "t":
            if v != design.checks.t_amb:
                parts.append(f"{v:g} \u00b0C")
            continue
        if v == 1.0:
            continue
        i = ("k_c", "k_out").index(n) if n in ("k_c", "k_out") else None
        name = _SPREAD_WORDS[n] if i is None else caps[i] if i < len(caps) else "C"
        pct = 100 * (v - 1)
        sign = "+" if pct > 0 else "\u2212"
        parts.append(f"{name} {sign}{abs(pct):.3g} %")
    return ", ".join(parts) or "nominal"


@dataclass(frozen=True)
class WorstCase:
    """Result of the worst-case corner search for one option.

    Attributes
    ----------
    label : str
    corner : str
        Short name of the corner with the lowest rail minimum (which spread is low or high, e.g.
        ``k_c low, q_g high``; :func:`corner_factors`).
    corner_text : str
        The same corner in plain words with its values (:func:`corner_text`, e.g. ``C_boot −23.5 %``).
    factors : Factors
    rail_min : float [V]
        Steady-state rail minimum at that corner.
    margin : float [V]
        rail_min − required rail (max(uvlo_off, v_gs_on_min) + v_margin); ≥ 0 holds.
    v_max : float [V]
        Highest steady-state rail voltage over all corners (for overvoltage).
    v_max_corner : str
    corners : list of (name, rail_min, rail_max)
    """

    label: str
    corner: str
    factors: Factors
    rail_min: float
    margin: float
    v_max: float
    v_max_corner: str
    corners: list = field(repr=False, default_factory=list)
    corner_text: str = ""

    @property
    def holds(self) -> bool:
        return bool(self.margin >= 0)

    def to_dict(self) -> dict:
        return {"label": self.label, "corner": self.corner, "corner_text": self.corner_text,
                "rail_min": self.rail_min, "margin": self.margin,
                "holds": self.holds, "v_max": self.v_max, "v_max_corner": self.v_max_corner}


def _evaluate(design: Design, label: str):
    opt = design.option(label)
    return _model(opt).evaluate(design, opt)


def worst_case(design: Design, label: str) -> WorstCase:
    """Evaluate every corner and return the one with the lowest steady-state rail minimum."""
    rows = []
    for name, f in corner_factors(design, label):
        r = _evaluate(apply_factors(design, label, f), label)
        if r.error is not None:
            raise DesignError(f"options[{label}]", f"cannot be evaluated at corner {name}: {r.error}")
        if r.v_rail is None:  # never refreshed (HS on throughout): the rail is not held, it reads 0 V
            rows.append((name, f, 0.0, max((c.v_max for c in r.capacitors), default=0.0)))
            continue
        rows.append((name, f, r.v_rail.min, r.v_rail.max))
    worst = min(rows, key=lambda x: x[2])
    high = max(rows, key=lambda x: x[3])
    return WorstCase(label=label, corner=worst[0], factors=worst[1], rail_min=worst[2],
                     margin=worst[2] - required_rail(design), v_max=high[3], v_max_corner=high[0],
                     corners=[(n, lo, hi) for n, _, lo, hi in rows],
                     corner_text=corner_text(design, label, worst[1]))


# --------------------------------------------------------------------------- Monte Carlo

def clopper_pearson(k: int, n: int, confidence: float = 0.95) -> tuple[float, float]:
    """Exact binomial confidence interval for k successes in n trials (Clopper & Pearson 1934)."""
    from scipy import stats  # imported here: only Monte Carlo needs it, and it takes ~0.3 s to load

    a = 1 - confidence
    lo = 0.0 if k == 0 else float(stats.beta.ppf(a / 2, k, n - k + 1))
    hi = 1.0 if k == n else float(stats.beta.ppf(1 - a / 2, k + 1, n - k))
    return lo, hi


def sample_factors(design: Design, label: str, n: int, rng: np.random.Generator) -> Factors:
    """Draw n factor sets from the design's spreads."""
    ranges = _ranges(design, label)
    gaussian = design.spread.distribution == "gaussian"
    out = {}
    for name in _NAMES:
        lo, hi = ranges[name]
        if lo == hi:
            out[name] = np.full(n, lo)
        elif name in ("k_c", "k_out", "t") or not gaussian:
            out[name] = rng.uniform(lo, hi, n)
        else:
            mid, sigma = 0.5 * (lo + hi), (hi - lo) / 6.0
            out[name] = mid + sigma * np.clip(rng.standard_normal(n), -4.5, 4.5)
    if gaussian:
        # capacitance, per capacitor: its tolerance gaussian (3σ = c_tol) times its class envelope
        # sampled uniformly
        opt = design.option(label)
        for name, cap in zip(("k_c", "k_out"), _model(opt).capacitors(opt)):
            d = parse_dielectric(cap.dielectric)
            k_t = rng.uniform(d.dc_low, d.dc_high, n)
            out[name] = (1 + cap.c_tol / 3 * np.clip(rng.standard_normal(n), -4.5, 4.5)) * (1 + k_t)
    return Factors(**out)


@dataclass(frozen=True)
class MonteCarlo:
    """Monte Carlo of the steady-state rail minimum for one option.

    Attributes
    ----------
    rail_min : ndarray [V]
        Steady-state rail minimum of each sample.
    p_trip : float [-]
        Fraction of samples whose rail falls below uvlo_off.
    ci : (float, float) [-]
        Clopper–Pearson confidence interval of the trip probability.
    p_margin : float [-]
        Fraction of samples below the required rail (uvlo_off/v_gs_on_min + margin).
    limit : float or None [V]
        The trip limit, the driver's uvlo_off.
    required : float or None [V]
        The required rail ``p_margin`` counts against.
    """

    label: str
    n: int
    seed: int
    confidence: float
    rail_min: np.ndarray = field(repr=False)
    p_trip: float
    ci: tuple
    p_margin: float
    vectorised: bool
    limit: float | None = None
    required: float | None = None

    def to_dict(self) -> dict:
        return {"label": self.label, "n": self.n, "seed": self.seed, "confidence": self.confidence,
                "p_trip": self.p_trip, "ci": list(self.ci), "p_margin": self.p_margin,
                "rail_min_lowest": float(self.rail_min.min()), "rail_min_median": float(np.median(self.rail_min)),
                "vectorised": self.vectorised}


def monte_carlo(design: Design, label: str, n: int = 10_000, *, seed: int = 0, confidence: float = 0.95,
                progress: Callable[[int, int], None] | None = None) -> MonteCarlo:
    """Monte Carlo of the rail minimum over the design's spreads.

    Parameters
    ----------
    design : Design
    label : str
        The option to analyse.
    n : int
        Number of samples.
    seed : int
        Seed of numpy's default generator; the same seed gives the same numbers.
    progress : callable(done, total), optional
        Called as work proceeds (a notebook passes a progress bar; CI passes nothing).
    """
    if not isinstance(n, (int, np.integer)) or n < 1 or n > 10_000_000:
        raise DesignError("n", "expected a whole number of samples from 1 to 1e7", n)
    rng = np.random.default_rng(seed)
    f = sample_factors(design, label, int(n), rng)
    opt = design.option(label)
    model = _model(opt)
    vectorised = model.has_rail_min_batch
    if vectorised:
        rail = np.asarray(model.rail_min_batch(design, opt, f), dtype=float)
        if progress:
            progress(n, n)
    else:
        rail = np.empty(n)
        step = max(1, n // 100)
        for i in range(n):
            r = _evaluate(apply_factors(design, label, f.at(i)), label)
            rail[i] = r.v_rail.min if r.v_rail is not None else np.nan
            if progress and (i % step == 0 or i == n - 1):
                progress(i + 1, n)
    trips = int(np.count_nonzero(~(rail >= design.driver.uvlo_off)))
    lo, hi = clopper_pearson(trips, n, confidence)
    p_margin = float(np.count_nonzero(~(rail >= required_rail(design)))) / n
    return MonteCarlo(label=label, n=int(n), seed=seed, confidence=confidence, rail_min=rail,
                      p_trip=trips / n, ci=(lo, hi), p_margin=p_margin, vectorised=vectorised,
                      limit=design.driver.uvlo_off, required=required_rail(design))

