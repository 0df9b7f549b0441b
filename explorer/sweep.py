"""Sweeps of any design field over a 1-D or 2-D grid, every figure of every option.

Axes are design-file field paths (``"bridge.f_sw"``, ``"options[0].c"``,
``"options[2].c_fly.c"``, ``"aux.v_dd"``, ``"options[1].f_cp"``) or the alias
``"duty"``, which sets the topology's own duty variable so that the HS
on-time share of the switching period takes the given value (a buck's v_out,
a boost's v_in, a bridge's duty command, a three-phase leg's modulation index
at the crest; see :func:`duty_field`), or ``"temperature"`` [°C] (see
:func:`temperature_fields`).

Each grid point is a complete, re-validated design evaluated with the same
models as :func:`explorer.evaluate`, so a sweep value equals the point's
``evaluate`` result exactly. A grid point whose design is invalid (e.g. a
buck output above the bus) gives NaN figures and its reason in ``invalid``.
The points share :mod:`explorer.memo`: an option whose own fields and the
design's common fields are those of an earlier point is not evaluated again
(a grid over two options' fields evaluates each option once per value of its
own axis), and a pump's start-up and R_out are reused across bridge changes.
For the headline rail-margin map over f_sw × duty there is a vectorised fast
path, :func:`margin_map`.
"""

from __future__ import annotations

import dataclasses
import os
import warnings
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .compare import evaluate
from .design import Design, check_value, load_design, replace_fields, spec_at, split_path
from .errors import DesignError
from .loads import required_rail
from .options import supply_model
from .topology import analysis_frequency, frequency_field, topology_of
from .units import format_eng

__all__ = ["FIGURES", "Sweep", "sweep", "duty_field", "temperature_fields", "margin_map", "MarginMap"]


def _get(fn: Callable) -> Callable:
    def safe(r):
        v = fn(r)
        return np.nan if v is None else float(v)
    return safe


#: Figure name → how to read it from an OptionResult (NaN where the figure does not apply).
FIGURES: dict[str, Callable] = {
    "rail_min": _get(lambda r: r.v_rail.min if r.v_rail else None),
    "rail_max": _get(lambda r: r.v_rail.max if r.v_rail else None),
    "rail_mean": _get(lambda r: r.v_rail.mean if r.v_rail else None),
    "efficiency": _get(lambda r: r.efficiency),
    "p_delivered": _get(lambda r: r.p_delivered),
    "p_drawn": _get(lambda r: r.p_drawn),
    "overhead": _get(lambda r: r.overhead),
    "t_uvlo": _get(lambda r: r.startup.t_uvlo if r.startup else None),
    "i_peak": _get(lambda r: r.startup.i_peak if r.startup else None),
    "duty_max": _get(lambda r: r.duty.max if r.duty else None),
    "hold_up": _get(lambda r: r.duty.hold_up if r.duty else None),
    "r_out": _get(lambda r: r.r_out),
    "feasible": _get(lambda r: r.feasible),
}


def duty_field(design: Design, duty: float, f_sw: float | None = None) -> tuple[str, float]:
    """The design field and value that make the HS on-time share of the period equal ``duty``.

    ``f_sw`` is the leg's own switching frequency (default the design's: f_sw, or f_line for a leg
    that switches at line frequency, :func:`explorer.topology.analysis_frequency`).

    A buck's HS is on D·T (v_out = D·η·v_bus); a boost's rectifier is on
    (1 − D)·T − 2·t_dead (v_in = (h + 2·t_dead·f_sw)·v_bus/η); a bridge leg's HS
    is on d·T − t_dead (d = h + t_dead·f_sw); a three-phase leg's period at the
    standstill crest angle likewise, through the modulation index m that gives that
    crest duty for its PWM scheme (:func:`explorer.topology._three_phase_setting`;
    the clamped schemes hold that period at the rail for any m). The rule is the topology table's
    (:attr:`explorer.topology.Topology.duty_setting`); see :mod:`explorer.schedule`.
    """
    b = design.bridge
    topo = topology_of(b)
    return topo.duty_field, topo.duty_setting(b, duty, analysis_frequency(b) if f_sw is None else f_sw)


@dataclass(frozen=True)
class Sweep:
    """Figures of every option over a grid.

    Attributes
    ----------
    axes : tuple of str
        Field paths (or ``"duty"``) of the grid's axes.
    values : tuple of ndarray
        The values along each axis.
    figures : dict
        ``figures[label][figure]`` is an array shaped like the grid.
    invalid : dict
        Grid index → the reason a point's design was rejected.
    warnings : dict
        Grid index → the texts of the warnings that point's evaluation gave (model validity,
        plausibility), in the order given; points without warnings are absent. The sweep itself
        gives one summary warning per category instead of one per point.
    """

    axes: tuple
    values: tuple
    figures: dict
    invalid: dict = field(default_factory=dict)
    warnings: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        from .results import clean
        return {"axes": list(self.axes), "values": [clean(v) for v in self.values],
                "figures": {lab: {k: clean(v) for k, v in figs.items()} for lab, figs in self.figures.items()},
                "invalid": {str(k): v for k, v in self.invalid.items()},
                "warnings": {str(k): list(v) for k, v in self.warnings.items()}}


def temperature_fields(design: Design, t: float) -> dict:
    """Design changes for an operating temperature ``t`` [°C].

    Sets ``checks.t_amb`` (the junction diode's thermal voltage follows it) and
    adds each option model's own changes
    (:meth:`~explorer.options.base.SupplyModel.temperature_changes`: a bootstrap
    diode's leakage grows by ``spread.leak_per_100k`` per 100 K above the
    design's own ``t_amb``). Capacitance keeps its 25 °C value: an
    EIA-198 code bounds the change over temperature but gives no curve, so the
    class envelope is handled by the corners and Monte Carlo instead.
    """
    out = {"checks.t_amb": float(t)}
    for i, o in enumerate(design.options):
        model = supply_model(o.kind)
        if model is not None:
            out.update(model.temperature_changes(design, i, o, t))
    return out


def _point(design: Design, assignments) -> Design:
    changes = {p: float(v) for p, v in assignments if p not in ("duty", "temperature")}
    for path, value in assignments:
        if path == "temperature":
            changes.update(temperature_fields(design, float(value)))
    leg_f = frequency_field(design.bridge)
    for path, value in assignments:
        if path == "duty":  # at the point's own leg frequency
            f = changes.get(leg_f, analysis_frequency(design.bridge))
            path, value = duty_field(design, float(value), f)
            changes[path] = float(value)
    return replace_fields(design, changes)


#: Allowed ranges of the two aliases (HS duty share [-], temperature [°C] as ``checks.t_amb``).
_ALIAS_RANGES = {"duty": (0.0, 1.0, "an HS duty share from 0 to 1"),
                 "temperature": (-273.0, 300.0, "a temperature from -273 to 300 [\u00b0C]")}


def _check_axis(design: Design, path: str, values: np.ndarray) -> None:
    """Refuse values a field never allows (e.g. a negative f_sw) with a DesignError naming the axis.

    Points that are invalid only together with other fields (a buck output above the bus) are
    left to the grid, which reports them in ``Sweep.invalid``.
    """
    where = f"axes[{path}]"
    if path in _ALIAS_RANGES:
        lo, hi, words = _ALIAS_RANGES[path]
        bad = values[~((values >= lo) & (values <= hi))]
        if bad.size:
            raise DesignError(where, f"expected {words}", float(bad[0]))
        return
    spec = spec_at(design, path)
    for x in np.unique(values):
        check_value(spec, float(x), where)


def sweep(design, axes: dict, *, labels=None, figures=None,
          progress: Callable[[int, int], None] | None = None, factorise: bool = True,
          workers: int | None = 1) -> Sweep:
    """Evaluate the design over a 1-D or 2-D grid of field values.

    Parameters
    ----------
    design : Design or anything load_design accepts
    axes : dict
        One or two entries ``{field path or "duty": values}``.
    labels : list of str, optional
        Options to keep (default all).
    figures : list of str, optional
        Names from :data:`FIGURES` (default all).
    progress : callable(done, total), optional
    factorise : bool
        True (default): an option is evaluated only over the axes that can change it (the design's
        common fields, the aliases and its own fields; an axis ``options[j]...`` changes option j
        alone, since no option's figures depend on another option), and its figures are repeated
        along the other axes; a grid over two options' fields costs one evaluation per value of
        each axis instead of one per point. False: every point evaluated in full. Both give the
        same figures and the same ``invalid`` reasons (a point's design is valid when its common
        fields and each option are; the reason is the first the loader would give).
    workers : int or None
        Processes that evaluate the points (default 1: this one; None: one per CPU). The figures,
        ``invalid`` and ``warnings`` are the same as with one (each point is evaluated on its own);
        each extra process pays its start (about a third of a second to import), so it pays off
        for grids of some hundred points and more. Progress is reported as parts finish.

    Examples
    --------
    >>> from explorer import demo_design
    >>> s = sweep(demo_design(), {"bridge.f_sw": [100e3, 200e3]}, figures=["rail_min"])
    >>> s.figures["bootstrap 220n"]["rail_min"].shape
    (2,)
    """
    d0 = load_design(design)
    workers = _check_workers(workers)
    if not isinstance(axes, dict) or not 1 <= len(axes) <= 2:
        raise DesignError("axes", "expected one or two {field path: values} entries", axes)
    names = list(figures or FIGURES)
    for n in names:
        if n not in FIGURES:
            raise DesignError("figures", f"unknown figure; allowed: {', '.join(FIGURES)}", n)
    paths = tuple(axes)
    vals = tuple(np.asarray(v, dtype=float).ravel() for v in axes.values())
    for p, v in zip(paths, vals):
        if v.size == 0 or v.size > 100_000:
            raise DesignError(f"axes[{p}]", "expected 1 to 100000 values", v.size)
    for p, v in zip(paths, vals):  # an unknown field or a value the field never allows is an error of the call
        _check_axis(d0, p, v)
    shape = tuple(v.size for v in vals)
    labs = list(labels or [o.label for o in d0.options])
    for lab in labs:
        d0.option(lab)
    keep = tuple(o.label in labs for o in d0.options)  # trimmed after the change: paths index d0's options
    owners = [_owner(p) for p in paths]
    if factorise and any(o is not None for o in owners):
        out, invalid, caught = _factorised(d0, paths, vals, owners, keep, names, progress, workers)
        _summarise(caught, d0, paths, vals)
        return Sweep(paths, vals, {lab: out[lab] for lab in labs}, invalid, _texts(caught))
    out = {lab: {n: np.full(shape, np.nan) for n in names} for lab in labs}
    invalid, caught = {}, {}
    total = int(np.prod(shape))
    chosen = tuple(j for j, k in enumerate(keep) if k)
    items = [(idx, [(p, vals[k][i]) for k, (p, i) in enumerate(zip(paths, idx))], chosen)
             for idx in np.ndindex(shape)]
    for count, (idx, error, figs, w) in enumerate(_run(d0, items, names, workers)):
        if error is not None:
            invalid[idx] = error
            continue
        if w:
            caught[idx] = w
        for lab, row in figs.items():
            for n, x in zip(names, row):
                out[lab][n][idx] = x
        if progress:
            progress(count + 1, total)
    _summarise(caught, d0, paths, vals)
    return Sweep(paths, vals, out, invalid, _texts(caught))


def _check_workers(workers) -> int:
    """The number of processes of a sweep (None: one per CPU), or a DesignError naming the argument."""
    if workers is None:
        return max(1, os.cpu_count() or 1)
    if isinstance(workers, bool) or not isinstance(workers, (int, np.integer)) or workers < 1:
        raise DesignError("workers", "expected a whole number of processes \u2265 1, or None (one per CPU)",
                          workers)
    return int(workers)


def _evaluate_item(d0: Design, item, names):
    """One point of a sweep: (key, error text or None, {label: figure values in ``names`` order}, warnings).

    ``item`` is (key, assignments, option indices to evaluate); with no indices the point's design is
    only validated. The figures leave as plain numbers (an OptionResult is far larger to send between
    processes).
    """
    key, assign, chosen = item
    try:
        dp = _point(d0, assign)
        if not chosen:
            return key, None, {}, ()
        res, w = _recorded(evaluate, dataclasses.replace(dp, options=tuple(dp.options[j] for j in chosen)))
    except DesignError as e:
        return key, str(e), {}, ()
    return key, None, {r.label: [FIGURES[n](r) for n in names] for r in res.options}, w


def _evaluate_chunk(d0: Design, items, names) -> list:
    """Points of a sweep evaluated in a worker process (module level, so that a spawned process finds it)."""
    return [_evaluate_item(d0, item, names) for item in items]


def _run(d0: Design, items: list, names, workers: int):
    """The points' outcomes (:func:`_evaluate_item`), here or in ``workers`` processes (in finishing order
    of parts of the list; each outcome carries its key)."""
    if workers <= 1 or len(items) < 2:
        for item in items:
            yield _evaluate_item(d0, item, names)
        return
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool
    n_parts = min(len(items), 4 * workers)
    parts = [items[i::n_parts] for i in range(n_parts)]
    # fresh interpreters ("spawn"): a forked child can deadlock in a BLAS thread pool the parent started
    try:
        with ProcessPoolExecutor(max_workers=min(workers, n_parts),
                                 mp_context=multiprocessing.get_context("spawn")) as pool:
            futures = [pool.submit(_evaluate_chunk, d0, part, names) for part in parts]
            for fut in as_completed(futures):
                yield from fut.result()
    except BrokenProcessPool:
        raise DesignError("workers", "a worker process stopped before it finished: each one imports the "
                          "calling script afresh, so a script that sweeps with workers > 1 must start its work "
                          "under `if __name__ == \"__main__\":` (a notebook needs nothing); or use workers=1",
                          workers) from None


def _recorded(fn, *args):
    """fn(*args) and the warnings it gave, as a tuple of (category, text), whatever the caller's filters are."""
    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always")
        r = fn(*args)
    return r, tuple((w.category, str(w.message)) for w in rec)


def _texts(caught: dict) -> dict:
    """Grid index → the warning texts (once each, in order) of that point."""
    return {idx: tuple(dict.fromkeys(t for _, t in w)) for idx, w in sorted(caught.items())}


def _value_text(design: Design, path: str, x: float) -> str:
    """An axis value as engineers read it (with the field's unit and an SI prefix)."""
    if path == "temperature":
        return f"{x:g} \u00b0C"
    unit = "" if path == "duty" else spec_at(design, path).unit
    return format_eng(x, unit) if unit else f"{x:g}"


def _summarise(caught: dict, design: Design, paths, vals) -> None:
    """One warning per category for the whole grid (not one per point): how many points gave it and the
    first of them, with the rest left in :attr:`Sweep.warnings`."""
    first: dict = {}
    count: dict = {}
    for idx in sorted(caught):
        for cat in dict.fromkeys(c for c, _ in caught[idx]):
            count[cat] = count.get(cat, 0) + 1
            first.setdefault(cat, (idx, next(t for c, t in caught[idx] if c is cat)))
    total = int(np.prod([v.size for v in vals]))
    for cat, (idx, text) in first.items():
        at = ", ".join(f"{p} = {_value_text(design, p, vals[a][i])}" for a, (p, i) in enumerate(zip(paths, idx)))
        warnings.warn(f"{count[cat]} of {total} grid points gave a {cat.__name__}; the first, at {at}: {text} "
                      f"(every point's warnings are in Sweep.warnings)", cat, stacklevel=3)


def _owner(path: str) -> int | None:
    """The index of the one option an axis changes (``options[j]...``), or None for a common field or alias."""
    if path in _ALIAS_RANGES:
        return None
    parts = split_path(path)
    return parts[1] if parts[0] == "options" else None


def _factorised(d0: Design, paths, vals, owners, keep, names, progress, workers: int = 1):
    """:func:`sweep` with each option evaluated over its own sub-grid (the common axes and its own).

    Returns (figures by label, invalid, warnings by grid index). A point is invalid when its common fields or any option's
    fields are (the design loader checks the sections, then the options in order, each on its
    own); its reason is that of the lowest-indexed group that fails, which is the loader's first.
    """
    shape = tuple(v.size for v in vals)
    n_ax = len(shape)
    groups = sorted({i for i, k in enumerate(keep) if k} | {o for o in owners if o is not None})
    rel = {j: [a for a in range(n_ax) if owners[a] is None or owners[a] == j] for j in groups}
    work = sum(int(np.prod([shape[a] for a in rel[j]])) for j in groups)
    total, done = int(np.prod(shape)), 0
    out = {}
    bad_first = np.full(shape, -1)  # the lowest failing group's index, per point
    reasons: dict = {}
    sub_caught: dict = {}
    items = [((j, sub), [(paths[a], vals[a][i]) for a, i in zip(rel[j], sub)], (j,) if keep[j] else ())
             for j in groups for sub in np.ndindex(tuple(shape[a] for a in rel[j]))]
    figs_of = {j: {n: np.full(tuple(shape[a] for a in rel[j]), np.nan) for n in names} for j in groups}
    bad_of = {j: np.zeros(tuple(shape[a] for a in rel[j]), dtype=bool) for j in groups}
    for (j, sub), error, row, w in _run(d0, items, names, workers):
        done += 1
        if error is not None:
            bad_of[j][sub] = True
            reasons[(j, sub)] = error
            continue
        if w:
            sub_caught[(j, sub)] = w
        for vals_j in row.values():
            for n, x in zip(names, vals_j):
                figs_of[j][n][sub] = x
        if progress:
            progress(max(1, done * total // work), total)
    for j in reversed(groups):  # the lowest index written last, so it wins
        axes_j = rel[j]
        figs, bad = figs_of[j], bad_of[j]
        expand = tuple(a for a in range(n_ax) if a not in axes_j)
        if keep[j]:
            out[d0.options[j].label] = {n: np.array(np.broadcast_to(np.expand_dims(f, expand), shape))
                                        for n, f in figs.items()}
        bad_first[np.broadcast_to(np.expand_dims(bad, expand), shape)] = j
    invalid = {}
    for idx in zip(*np.nonzero(bad_first >= 0)):
        j = int(bad_first[idx])
        sub = tuple(int(idx[a]) for a in rel[j])
        idx = tuple(int(i) for i in idx)
        invalid[idx] = reasons[(j, sub)]
        for figs in out.values():
            for f in figs.values():
                f[idx] = np.nan
    caught: dict = {}  # each valid point: its options' warnings in option order (a design-wide one once)
    for (j, sub), w in sorted(sub_caught.items()):
        for rest in np.ndindex(*(shape[a] for a in range(n_ax) if a not in rel[j])):
            it_sub, it_rest = iter(sub), iter(rest)
            idx = tuple(int(next(it_sub)) if a in rel[j] else int(next(it_rest)) for a in range(n_ax))
            if bad_first[idx] < 0:
                caught[idx] = tuple(dict.fromkeys(caught.get(idx, ()) + w))
    return out, invalid, caught


# --------------------------------------------------------------------------- margin map

@dataclass(frozen=True)
class MarginMap:
    """Rail margin over an f_sw × duty grid for one option.

    ``margin[i, j]`` = steady-state rail minimum − uvlo_off at ``f_sw[i]`` and
    HS duty command ``duty[j]`` [V]; NaN where the point is not a valid design.
    ``required`` is the required rail [V] and ``uvlo_off`` the driver's UVLO-off [V] the margin
    is counted from.
    """

    label: str
    f_sw: np.ndarray
    duty: np.ndarray
    rail_min: np.ndarray
    margin: np.ndarray
    required: float
    vectorised: bool
    uvlo_off: float | None = None

    def to_dict(self) -> dict:
        from .results import clean
        return {"label": self.label, "f_sw": clean(self.f_sw), "duty": clean(self.duty),
                "rail_min": clean(self.rail_min), "margin": clean(self.margin), "required": self.required}


def margin_map(design, label: str, f_sw, duty) -> MarginMap:
    """Steady-state rail margin (rail minimum − uvlo_off) over f_sw × HS duty.

    ``f_sw`` is the leg's own switching frequency (for ``line_leg`` the line frequency, at which that
    leg switches) and ``duty`` the HS on-time share of its period. Uses the option
    model's vectorised ``rail_min_map`` when it has one (the bootstrap, the charge
    pumps and the isolated module do: the whole grid in batched solves, equal to
    ``evaluate`` at each point), else the general :func:`sweep` with the ``"duty"``
    alias. Each point is one switching period held for ever (for three_phase: the
    standstill case).
    """
    d = load_design(design)
    opt = d.option(label)
    f = np.asarray(f_sw, dtype=float).ravel()
    u = np.asarray(duty, dtype=float).ravel()
    if f.size == 0 or u.size == 0:
        raise DesignError("f_sw" if f.size == 0 else "duty", "expected at least one value", [])
    for x in np.unique(f):
        check_value(spec_at(d, "bridge.f_sw"), float(x), "f_sw")
    bad = u[~((u >= 0.0) & (u <= 1.0))]
    if bad.size:
        raise DesignError("duty", "expected HS duty shares from 0 to 1", float(bad[0]))
    model = supply_model(opt.kind)
    if model is not None and model.has_rail_min_map:
        rail = np.asarray(model.rail_min_map(d, opt, f[:, None], u[None, :]), dtype=float)
        vec = True
    else:
        s = sweep(d, {"bridge.f_sw": f, "duty": u}, labels=[label], figures=["rail_min"])
        rail = s.figures[label]["rail_min"]
        vec = False
    return MarginMap(label, f, u, rail, rail - d.driver.uvlo_off, required_rail(d), vec, d.driver.uvlo_off)
