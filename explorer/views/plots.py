"""Plots of every result (Bokeh): compute, then result, then this view.

Each ``*_plot`` function takes a result object (a :class:`~explorer.compare.Comparison`, a
:class:`~explorer.sweep.MarginMap`, a :class:`~explorer.tolerance.MonteCarlo`) and returns a
:class:`Plot`: the Bokeh figure and the :class:`~bokeh.models.ColumnDataSource` objects that hold
its data, by name. Sources carry the result's own numbers in SI units (volts, seconds, watts, HS duty
as a share 0..1), so tests compare them with the result's arrays and figures; the axes show them
with an engineering prefix chosen from the data (``time [ms]``) and the hover tools show the exact
values. :meth:`Plot.update` recomputes the data from a new result of the same type and assigns it to
the *same* sources (a panel's plot follows its inputs without being rebuilt); per-option data are
rows of one source with ``label`` and ``color`` columns, so adding, removing or renaming an option
needs no new glyph.

Nothing here computes a figure of the physics: the plots read the results (the operating HS share of
a design comes from :func:`explorer.topology.operating_share`, the zero contour of a margin map from
:func:`zero_contour`, a pure function of the grid).

Static output: :func:`standalone_html` writes one page with BokehJS inline once (no network);
in a notebook :func:`setup_notebook` puts BokehJS on the page once, gzip-compressed (see its notes),
after which a :class:`Plot` displays itself. This module imports Bokeh; ``import explorer`` does not
import this module.
"""

from __future__ import annotations

import base64
import functools
import gzip
import html
import json
import math
import os
from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from bokeh.embed import file_html, json_item
from bokeh.models import (ColorBar, ColumnDataSource, CustomJSHover, CustomJSTickFormatter, FactorRange,
                          HoverTool, LabelSet, Legend, LegendItem, LinearAxis, LinearColorMapper, Range1d)
from bokeh.palettes import RdBu11
from bokeh.plotting import figure as _figure
from bokeh.resources import INLINE

from ..loads import required_rail
from ..topology import analysis_frequency, operating_share, topology_of
from .table import topology_text

__all__ = ["Plot", "PALETTE", "option_colors", "thin", "zero_contour", "startup_plot", "steady_plot",
           "duty_plot", "stress_plot", "loss_plot", "margin_map_plot", "monte_carlo_plot",
           "comparison_plots", "standalone_html", "setup_notebook", "setup_html", "notebook_html", "bokeh_js"]

#: Option colours: the colour-blind-safe set of Okabe & Ito ("Color Universal Design", 2002,
#: jfly.iam.u-tokyo.ac.jp/color), in their order with black moved to the end (on white it
#: reads as text) and yellow last but one (it has the least contrast on white).
PALETTE = ("#E69F00", "#56B4E9", "#009E73", "#0072B2", "#D55E00", "#CC79A7", "#F0E442", "#000000")

#: Loss-mechanism fills: Paul Tol's "muted" colour-blind-safe scheme (Tol, "Colour schemes",
#: SRON/EPS/TN/09-002, 2021); after nine the colours repeat with a hatch.
_MECHANISM_FILLS = ("#CC6677", "#332288", "#DDCC77", "#117733", "#88CCEE", "#882255", "#44AA99",
                    "#999933", "#AA4499")

#: Diverging map for margins: ColorBrewer RdBu (colour-blind safe), red for negative margins.
_DIVERGING = tuple(reversed(RdBu11))

_LEVEL_COLOR = {"UVLO on": "#555555", "UVLO off": "#B2182B", "required rail": "#222222"}
_LEVEL_DASH = {"UVLO on": "dotted", "UVLO off": "dashed", "required rail": "solid"}

_EXP_PREFIX = {-15: "f", -12: "p", -9: "n", -6: "\u00b5", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}

_HOVER_JS = """
if (value == null || !isFinite(value)) return "\u2014";
if (value === 0) return "0 " + unit;
let e = Math.floor(Math.log10(Math.abs(value)) / 3) * 3;
e = Math.max(-15, Math.min(12, e));
const p = {"-15": "f", "-12": "p", "-9": "n", "-6": "\u00b5", "-3": "m", "0": "", "3": "k", "6": "M",
           "9": "G", "12": "T"}[String(e)];
return Number((value / Math.pow(10, e)).toPrecision(6)).toString() + " " + p + unit;
"""


# --------------------------------------------------------------------------- the handle

@dataclass(frozen=True)
class Plot:
    """A Bokeh figure (or layout) and the sources holding its data.

    Attributes
    ----------
    figure : bokeh.models.LayoutDOM
        What to show or embed.
    sources : dict of str to ColumnDataSource
        Every source holding the plotted data, by name.
    """

    figure: object
    sources: dict
    refresh: Callable = field(repr=False, compare=False)

    def update(self, obj) -> None:
        """Recompute from a new result of the same type; the same sources get new ``.data``."""
        self.refresh(obj)

    def _repr_html_(self) -> str:
        return notebook_html(self)

    def __repr__(self) -> str:
        title = getattr(getattr(self.figure, "title", None), "text", "") or type(self.figure).__name__
        return f"<Plot {title!r}; sources: {', '.join(self.sources)}>"


def option_colors(labels) -> dict:
    """Colour of each label by its position (``PALETTE``, repeating after eight)."""
    return {lab: PALETTE[i % len(PALETTE)] for i, lab in enumerate(labels)}


# --------------------------------------------------------------------------- pure helpers

def _prefix(values, unit: str) -> tuple[str, float]:
    """Engineering prefix and its scale for the largest finite magnitude in ``values``."""
    a = np.abs(np.asarray([v for v in np.ravel(np.asarray(values, dtype=float)) if math.isfinite(v)] or [0.0]))
    top = float(a.max())
    if top == 0.0 or unit in ("", "-", "%"):
        return "", 1.0
    e = int(math.floor(math.log10(top) / 3.0) * 3)
    e = max(-15, min(12, e))
    return _EXP_PREFIX[e], 10.0 ** e


def thin(t, v, max_points: int | None):
    """A waveform with at most about ``max_points`` points that keeps every bucket's extremes.

    The samples are cut into ``max_points // 2`` buckets of consecutive points; each bucket keeps
    its lowest and highest sample in time order, and the first and last samples are kept, so the
    peaks and dips a plot must show survive. ``max_points=None`` (or a waveform no longer than
    it) returns the arrays unchanged.
    """
    t = np.asarray(t, dtype=float)
    v = np.asarray(v, dtype=float)
    if max_points is None or t.size <= max_points:
        return t, v
    if max_points < 4:
        raise ValueError(f"max_points: expected at least 4, got {max_points}")
    edges = np.linspace(0, t.size, max_points // 2 + 1).astype(int)
    keep = {0, t.size - 1}
    for a, b in zip(edges[:-1], edges[1:]):
        if b > a:
            seg = v[a:b]
            keep.add(a + int(np.argmin(seg)))
            keep.add(a + int(np.argmax(seg)))
    idx = np.array(sorted(keep))
    return t[idx], v[idx]


def zero_contour(x, y, z, level: float = 0.0) -> list:
    """Lines where the gridded field ``z[i, j]`` (at ``x[i]``, ``y[j]``) crosses ``level``.

    Marching squares with linear interpolation along cell edges (Lorensen & Cline, "Marching
    cubes", SIGGRAPH 1987, in its 2-D form), done by contourpy; NaN points are masked out.
    Returns a list of ``(xs, ys)`` arrays, one per connected line.
    """
    import contourpy
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    z = np.ma.masked_invalid(np.asarray(z, dtype=float).T)  # contourpy wants z[y, x]
    if x.size < 2 or y.size < 2:
        return []
    gen = contourpy.contour_generator(x, y, z, line_type=contourpy.LineType.Separate)
    return [(seg[:, 0].copy(), seg[:, 1].copy()) for seg in gen.lines(level) if len(seg) >= 2]


# --------------------------------------------------------------------------- figure helpers

def _fig(title: str, **kw):
    kw.setdefault("height", 340)
    kw.setdefault("width", 720)
    kw.setdefault("tools", "pan,wheel_zoom,box_zoom,reset,save")
    kw.setdefault("toolbar_location", "right")
    p = _figure(title=title, **kw)
    p.title.text_font_size = "11pt"
    return p


def _hover_fmt(unit: str) -> CustomJSHover:
    """A fresh formatter (a Bokeh model belongs to one document: never share one between figures)."""
    return CustomJSHover(code=_HOVER_JS, args={"unit": unit})


def _pct_fmt() -> CustomJSHover:
    return CustomJSHover(code='return value == null || !isFinite(value) ? "\u2014" : '
                              'Number((100 * value).toPrecision(6)).toString() + " %";')


class _Axis:
    """An axis whose label carries the unit with an engineering prefix chosen from the data."""

    def __init__(self, axis, quantity: str, unit: str, percent: bool = False):
        self.axis, self.quantity, self.unit, self.percent = axis, quantity, unit, percent
        self.fmt = CustomJSTickFormatter(code="return Number((tick * k).toPrecision(6)).toString();",
                                         args={"k": 1.0})
        axis.formatter = self.fmt

    def set(self, values) -> None:
        if self.percent:
            pre, scale, unit = "", 0.01, "%"
        else:
            (pre, scale), unit = _prefix(values, self.unit), self.unit
        self.axis.axis_label = f"{self.quantity} [{pre}{unit}]"
        self.fmt.args = {"k": 1.0 / scale}


def _set(src: ColumnDataSource, data: dict) -> None:
    src.data = {k: (list(v) if not isinstance(v, np.ndarray) else v) for k, v in data.items()}


def _levels(design) -> dict:
    """The rail thresholds drawn as labelled lines [V]."""
    d = design.driver
    rows = [("UVLO on", d.uvlo_on), ("UVLO off", d.uvlo_off), ("required rail", required_rail(design))]
    return {"y": [v for _, v in rows], "name": [n for n, _ in rows],
            "color": [_LEVEL_COLOR[n] for n, _ in rows], "dash": [_LEVEL_DASH[n] for n, _ in rows],
            "text": [f"{n} {_eng(v, 'V')}" for n, v in rows],
            "x": [6.0, 6.0, 170.0]}  # label positions [screen px]: UVLO on and the requirement often coincide


def _eng(x, unit: str) -> str:
    from ..units import format_eng
    return format_eng(x, unit, digits=4)


def _draw_levels(p, src: ColumnDataSource) -> None:
    p.hspan(y="y", source=src, line_color="color", line_width=1.5, line_dash="dash", line_alpha=0.9)
    p.add_layout(LabelSet(x="x", x_units="screen", y="y", text="text", source=src, text_font_size="8pt",
                          text_color="color", y_offset=2))


def _lines(p, src: ColumnDataSource) -> None:
    p.multi_line(xs="xs", ys="ys", source=src, line_color="color", line_width=2, legend_field="label",
                 hover_line_width=3)
    p.legend.location = "bottom_right"
    p.legend.click_policy = "hide"
    p.legend.label_text_font_size = "8pt"


# --------------------------------------------------------------------------- start-up and steady state

def startup_plot(comparison, *, log_time: bool = False, max_points: int | None = None) -> Plot:
    """Start-up of every option from a dead rail on one time axis.

    Sources: ``lines`` (``xs`` time [s], ``ys`` rail [V], ``label``, ``color``: one row per option
    with a start-up waveform, the ``OptionResult.startup`` arrays), ``levels`` (UVLO on/off and the
    required rail [V], ``y``, ``name``, ``text``) and ``uvlo`` (each option's time to UVLO-on
    ``t`` [s] at ``v`` = UVLO-on [V]). ``log_time=True`` draws a logarithmic time axis (start-up
    times differ by orders of magnitude between options); the points at t = 0 are then left out.
    ``max_points`` thins long waveforms with :func:`thin` (None: every sample).
    """
    p = _fig("Start-up from a dead rail", x_axis_type="log" if log_time else "linear")
    src = {"lines": ColumnDataSource(), "levels": ColumnDataSource(), "uvlo": ColumnDataSource()}
    xa, ya = _Axis(p.xaxis[0], "time", "s"), _Axis(p.yaxis[0], "rail V_B \u2212 V_S", "V")

    def fill(c):
        colors = option_colors([r.label for r in c.options])
        xs, ys, labs = [], [], []
        for r in c.options:
            su = r.startup
            if su is None or su.t.size == 0:
                continue
            t, v = su.t, su.v
            if log_time:
                k = t > 0
                t, v = t[k], v[k]
            t, v = thin(t, v, max_points)
            xs.append(t)
            ys.append(v)
            labs.append(r.label)
        _set(src["lines"], {"xs": xs, "ys": ys, "label": labs, "color": [colors[x] for x in labs]})
        _set(src["levels"], _levels(c.design))
        hit = [r for r in c.options if r.startup is not None and r.startup.t_uvlo is not None]
        _set(src["uvlo"], {"t": [r.startup.t_uvlo for r in hit],
                           "v": [c.design.driver.uvlo_on] * len(hit),
                           "label": [r.label for r in hit], "color": [colors[r.label] for r in hit]})
        xa.set(np.concatenate(xs) if xs else [0.0])
        ya.set([c.design.driver.uvlo_on])

    fill(comparison)
    _lines(p, src["lines"])
    _draw_levels(p, src["levels"])
    pts = p.scatter(x="t", y="v", source=src["uvlo"], size=8, marker="circle", fill_color="color",
                    line_color="black")
    p.add_tools(HoverTool(renderers=[p.renderers[0]], tooltips=[("option", "@label"), ("t", "$x{custom}"),
                                                                ("rail", "$y{custom}")],
                          formatters={"$x": _hover_fmt("s"), "$y": _hover_fmt("V")}, line_policy="interp"))
    p.add_tools(HoverTool(renderers=[pts], tooltips=[("option", "@label"), ("reaches UVLO on at", "@t{custom}")],
                          formatters={"@t": _hover_fmt("s")}))
    return Plot(p, src, fill)


def steady_plot(comparison, *, max_points: int | None = None) -> Plot:
    """Steady-state rail of every option over its analysis period, with the required minimum.

    Sources: ``lines`` (``xs`` time [s], ``ys`` rail [V], ``label``, ``color``: the
    ``OptionResult.t`` / ``.v`` arrays of each option that has them; a whole fundamental for an
    inverter or a line leg, so the long on-time droop shows) and ``levels`` (the required rail and
    UVLO-off [V]). ``max_points`` thins long waveforms with :func:`thin`.
    """
    p = _fig("Steady-state rail over the analysis period")
    src = {"lines": ColumnDataSource(), "levels": ColumnDataSource()}
    xa, ya = _Axis(p.xaxis[0], "time", "s"), _Axis(p.yaxis[0], "rail V_B \u2212 V_S", "V")

    def fill(c):
        colors = option_colors([r.label for r in c.options])
        xs, ys, labs = [], [], []
        for r in c.options:
            if r.t.size == 0:
                continue
            t, v = thin(r.t, r.v, max_points)
            xs.append(t)
            ys.append(v)
            labs.append(r.label)
        _set(src["lines"], {"xs": xs, "ys": ys, "label": labs, "color": [colors[x] for x in labs]})
        lv = _levels(c.design)
        _set(src["levels"], {k: v[1:] for k, v in lv.items()})  # UVLO off and the required rail
        xa.set(np.concatenate(xs) if xs else [0.0])
        ya.set(lv["y"])
        from ..topology import analysis_period
        p.title.text = f"Steady-state rail over the analysis period ({_eng(analysis_period(c.design.bridge), 's')})"

    fill(comparison)
    _lines(p, src["lines"])
    _draw_levels(p, src["levels"])
    p.add_tools(HoverTool(renderers=[p.renderers[0]], tooltips=[("option", "@label"), ("t", "$x{custom}"),
                                                                ("rail", "$y{custom}")],
                          formatters={"$x": _hover_fmt("s"), "$y": _hover_fmt("V")}, line_policy="interp"))
    return Plot(p, src, fill)


# --------------------------------------------------------------------------- duty limits

#: The sweep's duty field of each topology as a second axis: field → (quantity, unit, scale to unit).
_DUTY_AXIS = {"bridge.v_out": ("buck V_out", "V", 1.0), "bridge.v_in": ("boost V_in", "V", 1.0),
              "bridge.duty": ("duty command", "%", 100.0), "bridge.m": ("modulation index m (crest)", "-", 1.0)}


def _duty_range(r):
    """(lo, hi) of the feasible HS share as the table reads it (None ends open; none feasible: NaN)."""
    d = r.duty
    if d is None or (d.min is None and d.max is None):
        return math.nan, math.nan
    return (0.0 if d.min is None else d.min), (1.0 if d.max is None else d.max)


def duty_plot(comparison) -> Plot:
    """Feasible high-side duty range of each option, the operating point, and the topology's terms.

    Sources: ``ranges`` (one row per option: ``label``, ``color``, ``lo``/``hi`` the feasible HS
    on-time share [-] from ``OptionResult.duty`` (an open end reads 0 or 1, none feasible NaN),
    ``terms`` the limit in the topology's own terms as the table words it) and ``operating`` (the
    design's HS share ``x`` [-], :func:`~explorer.topology.operating_share`). A second axis above
    reads the same share as the topology's own duty variable (a buck's V_out, a boost's V_in, a
    bridge's duty command, a three-phase leg's m).
    """
    p = _fig("Feasible high-side duty per option", y_range=FactorRange(), x_range=Range1d(0.0, 1.0),
             height=300)
    src = {"ranges": ColumnDataSource(), "operating": ColumnDataSource()}
    xa = _Axis(p.xaxis[0], "HS on-time share", "", percent=True)
    p.extra_x_ranges = {"topology": Range1d(0.0, 1.0)}
    top = LinearAxis(x_range_name="topology")
    p.add_layout(top, "above")
    ta = _Axis(top, "", "")

    def fill(c):
        b = c.design.bridge
        topo = topology_of(b)
        colors = option_colors([r.label for r in c.options])
        labs = [r.label for r in c.options]
        lo, hi = zip(*[_duty_range(r) for r in c.options]) if labs else ((), ())
        terms = [topology_text(r.duty.topology, b) if r.duty is not None else "\u2014" for r in c.options]
        words = [("none holds" if math.isnan(a) else f"{100 * a:.1f} \u2026 {100 * z:.1f} %") + f"; {t}"
                 for a, z, t in zip(lo, hi, terms)]
        _set(src["ranges"], {"label": labs, "color": [colors[x] for x in labs], "lo": np.array(lo, dtype=float),
                             "hi": np.array(hi, dtype=float), "terms": terms, "text": words,
                             "x_text": np.full(len(labs), 0.01)})
        h = operating_share(b)
        _set(src["operating"], {"x": [h], "text": [f"operating point {100 * h:.3g} %"]})
        p.y_range.factors = list(reversed(labs))
        xa.set([1.0])
        quantity, unit, k = _DUTY_AXIS[topo.duty_field]
        f = analysis_frequency(b)
        s0, s1 = topo.duty_setting(b, 0.0, f) * k, topo.duty_setting(b, 1.0, f) * k
        p.extra_x_ranges["topology"].start, p.extra_x_ranges["topology"].end = s0, s1
        pre, scale = _prefix([s0, s1], unit)
        top.axis_label = f"{quantity} [{pre}{unit}]"
        ta.fmt.args = {"k": 1.0 / scale}
        extra = f", f_o = {_eng(b.f_o, 'Hz')}" if topo.fundamental else (
            f", f_line = {_eng(b.f_line, 'Hz')}" if topo.line_frequency else "")
        p.title.text = f"Feasible high-side duty per option ({b.topology}{extra})"

    fill(comparison)
    bars = p.hbar(y="label", left="lo", right="hi", height=0.6, source=src["ranges"], fill_color="color",
                  line_color="color", fill_alpha=0.6)
    p.add_layout(LabelSet(x="x_text", y="label", text="text", source=src["ranges"], text_font_size="8pt",
                          y_offset=-4, x_offset=2))
    p.vspan(x="x", source=src["operating"], line_color="black", line_width=2, line_dash="dashed")
    p.add_layout(LabelSet(x="x", y=0, y_units="screen", text="text", source=src["operating"],
                          text_font_size="8pt", x_offset=4, y_offset=4))
    p.add_tools(HoverTool(renderers=[bars], tooltips=[("option", "@label"), ("from", "@lo{custom}"),
                                                      ("to", "@hi{custom}"), ("limit", "@terms")],
                          formatters={"@lo": _pct_fmt(), "@hi": _pct_fmt()}))
    return Plot(p, src, fill)


# --------------------------------------------------------------------------- stress

#: Blocking-voltage checks drawn as stress rows: check id → (part, the option field of its rating).
_BLOCKING = {"diode_v_rrm": ("diode reverse V", "v_rrm"), "switch_v_block": ("pump switches blocking V", "v_rating_sw")}


def _stress_rows(c) -> list:
    """(label, part, peak, rating, derated limit, margin) of every stressed part [V]."""
    from ..results import cap_check_name
    rows = []
    for r in c.options:
        checks = {k.name: k for k in r.checks}
        for cap in r.capacitors:
            k = checks.get(cap_check_name(cap.name))
            rows.append((r.label, cap.name, cap.v_max, cap.v_rating,
                         k.limit if k else math.nan, k.margin if k else math.nan))
        try:
            opt = c.design.option(r.label)
        except Exception:  # an option the design no longer has: only its capacitors are drawn
            opt = None
        for name, (part, rating_field) in _BLOCKING.items():
            if name in checks:
                k = checks[name]
                rows.append((r.label, part, k.value, getattr(opt, rating_field, None), k.limit, k.margin))
    return rows


def stress_plot(comparison) -> Plot:
    """Voltage stress of every part against its rating and derated rating, margin in volts beside it.

    The isolation barrier (hundreds of volts against a kilovolt rating) is the isolation family's
    check, left to the table so that the low-voltage parts stay readable.

    Sources: ``parts`` (one row per capacitor, bootstrap diode or pump-switch set:
    ``label``, ``part``, ``row``, ``color``, ``peak`` highest voltage [V], ``rating`` [V] (NaN: none
    given), ``derated`` the limit the check uses [V] (the rating times the design's derating), and
    ``margin`` [V] of that check, from ``OptionResult.capacitors`` and ``OptionResult.checks``).
    """
    p = _fig("Voltage stress against rating", y_range=FactorRange(), height=420)
    src = {"parts": ColumnDataSource()}
    xa = _Axis(p.xaxis[0], "voltage", "V")

    def fill(c):
        colors = option_colors([r.label for r in c.options])
        rows = _stress_rows(c)
        f = lambda i: np.array([math.nan if x[i] is None else x[i] for x in rows], dtype=float)  # noqa: E731
        peak, rating, derated, margin = f(2), f(3), f(4), f(5)
        keys = [f"{x[0]} \u00b7 {x[1]}" for x in rows]
        right = np.nanmax(np.vstack([peak, rating, derated]), axis=0) if rows else np.zeros(0)
        _set(src["parts"], {"label": [x[0] for x in rows], "part": [x[1] for x in rows], "row": keys,
                            "color": [colors[x[0]] for x in rows], "peak": peak, "rating": rating,
                            "derated": derated, "margin": margin, "x_text": right,
                            "margin_text": ["" if math.isnan(m) else f"margin {m:+.3g} V" for m in margin]})
        p.y_range.factors = list(reversed(keys))
        xa.set(right if rows else [1.0])

    fill(comparison)
    bars = p.hbar(y="row", left=0, right="peak", height=0.6, source=src["parts"], fill_color="color",
                  line_color="color", fill_alpha=0.7)
    r_rat = p.scatter(x="rating", y="row", source=src["parts"], marker="diamond", size=11, fill_color="white",
                      line_color="black", line_width=1.5)
    r_der = p.scatter(x="derated", y="row", source=src["parts"], marker="triangle", size=10,
                      fill_color="#B2182B", line_color="#B2182B")
    p.add_layout(LabelSet(x="x_text", y="row", text="margin_text", source=src["parts"], text_font_size="8pt",
                          x_offset=8, y_offset=-4))
    p.add_layout(Legend(items=[LegendItem(label="highest voltage", renderers=[bars]),
                               LegendItem(label="rating", renderers=[r_rat]),
                               LegendItem(label="derated rating (check limit)", renderers=[r_der])],
                        location="bottom_right", label_text_font_size="8pt"))
    v = _hover_fmt("V")
    p.add_tools(HoverTool(renderers=[bars], tooltips=[("option", "@label"), ("part", "@part"),
                                                      ("highest", "@peak{custom}"), ("rating", "@rating{custom}"),
                                                      ("derated", "@derated{custom}"), ("margin", "@margin{custom}")],
                          formatters={"@peak": v, "@rating": v, "@derated": v, "@margin": v}))
    p.x_range.start = 0
    return Plot(p, src, fill)


# --------------------------------------------------------------------------- loss split

def loss_plot(comparison) -> Plot:
    """Split of each option's overhead by mechanism, as stacked bars.

    Sources: ``segments`` (one row per option and mechanism of ``OptionResult.losses``: ``label``,
    ``color`` the option's, ``mechanism``, ``fill`` the mechanism's, ``value`` [W], ``bottom`` /
    ``top`` [W] the stack) and ``overhead`` (``OptionResult.overhead`` [W] per option, drawn as a
    bar-wide tick: where a model's split does not add up to its overhead the gap shows).
    """
    p = _fig("Overhead split by mechanism", x_range=FactorRange(), height=380)
    src = {"segments": ColumnDataSource(), "overhead": ColumnDataSource()}
    ya = _Axis(p.yaxis[0], "power", "W")

    def fill(c):
        colors = option_colors([r.label for r in c.options])
        fills: dict = {}
        seg = {k: [] for k in ("label", "color", "mechanism", "fill", "hatch", "value", "bottom", "top")}
        for r in c.options:
            acc = 0.0
            for mech, val in r.losses.items():
                if val is None:
                    continue
                i = fills.setdefault(mech, len(fills))
                seg["label"].append(r.label)
                seg["color"].append(colors[r.label])
                seg["mechanism"].append(mech.replace("_", " "))
                seg["fill"].append(_MECHANISM_FILLS[i % len(_MECHANISM_FILLS)])
                seg["hatch"].append(" " if i < len(_MECHANISM_FILLS) else "/")
                seg["value"].append(float(val))
                seg["bottom"].append(acc)
                acc += float(val)
                seg["top"].append(acc)
        for k in ("value", "bottom", "top"):
            seg[k] = np.array(seg[k], dtype=float)
        _set(src["segments"], seg)
        ov = [r for r in c.options if r.overhead is not None]
        _set(src["overhead"], {"label": [r.label for r in ov], "color": [colors[r.label] for r in ov],
                               "overhead": np.array([r.overhead for r in ov], dtype=float)})
        p.x_range.factors = [r.label for r in c.options]
        ya.set(np.concatenate([seg["top"], src["overhead"].data["overhead"]]) if ov or len(seg["top"]) else [1.0])

    fill(comparison)
    bars = p.vbar(x="label", bottom="bottom", top="top", width=0.7, source=src["segments"], fill_color="fill",
                  line_color="color", line_width=2, hatch_pattern="hatch", hatch_color="white",
                  legend_field="mechanism")
    ticks = p.scatter(x="label", y="overhead", source=src["overhead"], marker="dash", size=40,
                      line_color="black", line_width=2)
    p.legend.location = "top_left"
    p.legend.label_text_font_size = "8pt"
    p.add_layout(p.legend[0], "right")
    p.xaxis.major_label_orientation = 0.35
    p.y_range.start = 0
    w = _hover_fmt("W")
    p.add_tools(HoverTool(renderers=[bars], tooltips=[("option", "@label"), ("mechanism", "@mechanism"),
                                                      ("power", "@value{custom}")], formatters={"@value": w}))
    p.add_tools(HoverTool(renderers=[ticks], tooltips=[("option", "@label"), ("overhead", "@overhead{custom}")],
                          formatters={"@overhead": w}))
    return Plot(p, src, fill)


# --------------------------------------------------------------------------- margin map

def _edges(x: np.ndarray, log: bool) -> np.ndarray:
    """Cell edges around grid points (geometric midpoints on a log axis)."""
    if x.size == 1:
        return np.array([x[0] * 0.9, x[0] * 1.1]) if log else np.array([x[0] - 0.005, x[0] + 0.005])
    u = np.log(x) if log else x
    mid = 0.5 * (u[1:] + u[:-1])
    e = np.concatenate([[u[0] - (mid[0] - u[0])], mid, [u[-1] + (u[-1] - mid[-1])]])
    return np.exp(e) if log else e


def margin_map_plot(margin_map_result, design=None) -> Plot:
    """Heat map of a :class:`~explorer.sweep.MarginMap`, its zero contour and the design's point.

    ``update`` takes a new map (the design point stays) or a ``(map, design)`` pair.

    Sources: ``cells`` (one row per grid point: ``f_sw`` [Hz], ``duty`` HS share [-], ``margin`` =
    rail minimum − UVLO-off [V], ``rail_min`` [V], and the cell's ``left``/``right``/``bottom``/
    ``top``), ``contour`` (``xs``/``ys`` lines where the margin is 0, the trip boundary, and where
    the rail meets the required rail; ``level`` names it; :func:`zero_contour`) and ``design``
    (the design's ``f_sw`` and operating HS share, empty without ``design``). The frequency axis is
    logarithmic when the grid spans a decade or more.
    """
    mm = margin_map_result
    log = bool(mm.f_sw.size > 1 and mm.f_sw.min() > 0 and mm.f_sw.max() / mm.f_sw.min() >= 10)
    p = _fig("Rail margin map", x_axis_type="log" if log else "linear", height=420)
    src = {"cells": ColumnDataSource(), "contour": ColumnDataSource(), "design": ColumnDataSource()}
    xa, ya = _Axis(p.xaxis[0], "switching frequency f_sw", "Hz"), _Axis(p.yaxis[0], "HS on-time share", "",
                                                                          percent=True)
    mapper = LinearColorMapper(palette=_DIVERGING, low=-1.0, high=1.0, nan_color="#BBBBBB")

    state = {"design": design}

    def fill(args):
        m, d = args if isinstance(args, tuple) else (args, state["design"])
        state["design"] = d
        fe, ue = _edges(m.f_sw, log), _edges(m.duty, False)
        ii, jj = np.meshgrid(np.arange(m.f_sw.size), np.arange(m.duty.size), indexing="ij")
        ii, jj = ii.ravel(), jj.ravel()
        _set(src["cells"], {"f_sw": m.f_sw[ii], "duty": m.duty[jj], "margin": m.margin.ravel(),
                            "rail_min": m.rail_min.ravel(), "left": fe[ii], "right": fe[ii + 1],
                            "bottom": ue[jj], "top": ue[jj + 1]})
        xs, ys, level = [], [], []
        x = np.log10(m.f_sw) if log else m.f_sw
        levels = [("rail = UVLO off (trip)", 0.0)]
        if m.uvlo_off is not None:
            levels.append(("rail = required", m.required - m.uvlo_off))
        for name, lev in levels:
            for cx, cy in zero_contour(x, m.duty, m.margin, lev):
                xs.append(10 ** cx if log else cx)
                ys.append(cy)
                level.append(name)
        _set(src["contour"], {"xs": xs, "ys": ys, "level": level,
                              "dash": ["solid" if lv.endswith("(trip)") else "dashed" for lv in level]})
        if d is not None:  # at the leg's own frequency: f_line for a leg that switches at line frequency
            h, f_leg = operating_share(d.bridge), analysis_frequency(d.bridge)
            _set(src["design"], {"f_sw": [f_leg], "duty": [h],
                                 "text": [f"design {_eng(f_leg, 'Hz')}, {100 * h:.3g} %"]})
            xa.quantity = ("leg frequency f_line" if topology_of(d.bridge).line_frequency
                           else "switching frequency f_sw")
        else:
            _set(src["design"], {"f_sw": [], "duty": [], "text": []})
        fin = m.margin[np.isfinite(m.margin)]
        a = float(np.max(np.abs(fin))) if fin.size else 1.0
        mapper.low, mapper.high = -(a or 1.0), (a or 1.0)
        xa.set(m.f_sw)
        ya.set([1.0])
        p.title.text = f"Rail margin over f_sw \u00d7 HS duty: {m.label} (rail minimum \u2212 UVLO off)"

    fill((mm, design))
    cells = p.quad(left="left", right="right", bottom="bottom", top="top", source=src["cells"],
                   fill_color={"field": "margin", "transform": mapper}, line_color=None)
    p.multi_line(xs="xs", ys="ys", source=src["contour"], line_color="black", line_width=2.5,
                 line_dash="dash", legend_field="level")
    p.scatter(x="f_sw", y="duty", source=src["design"], marker="star", size=16, fill_color="#F0E442",
              line_color="black", legend_label="design point")
    p.add_layout(ColorBar(color_mapper=mapper, title="margin [V]", width=12), "right")
    p.legend.location = "bottom_left"
    p.legend.label_text_font_size = "8pt"
    v = _hover_fmt("V")
    p.add_tools(HoverTool(renderers=[cells], tooltips=[("f_sw", "@f_sw{custom}"), ("HS share", "@duty{custom}"),
                                                       ("rail min", "@rail_min{custom}"),
                                                       ("margin", "@margin{custom}")],
                          formatters={"@f_sw": _hover_fmt("Hz"), "@duty": _pct_fmt(), "@rail_min": v,
                                      "@margin": v}))
    return Plot(p, src, fill)


# --------------------------------------------------------------------------- Monte Carlo

def monte_carlo_plot(mc_result, design=None) -> Plot:
    """Histogram of a :class:`~explorer.tolerance.MonteCarlo`'s rail minima, its limits, P(margin lost) and
    P(UVLO trip) in the title.

    ``update`` takes a new result or a ``(result, design)`` pair.

    Sources: ``bins`` (``left``/``right`` bin edges [V] and ``count`` [-] of
    ``numpy.histogram`` of the finite rail minima) and ``limits`` (``x`` [V]: UVLO-off, the trip
    limit, and the required rail; from the result, or from ``design`` for a result without them).
    """
    p = _fig("Monte Carlo of the rail minimum", height=320)
    src = {"bins": ColumnDataSource(), "limits": ColumnDataSource()}
    xa = _Axis(p.xaxis[0], "steady-state rail minimum", "V")
    p.yaxis[0].axis_label = "samples [-]"

    state = {"design": design}

    def fill(args):
        mc, d = args if isinstance(args, tuple) else (args, state["design"])
        state["design"] = d
        x = np.asarray(mc.rail_min, dtype=float)
        fin = x[np.isfinite(x)]
        bins = int(min(60, max(10, round(math.sqrt(max(fin.size, 1))))))
        count, edges = np.histogram(fin, bins=bins) if fin.size else (np.zeros(0), np.zeros(1))
        _set(src["bins"], {"left": edges[:-1], "right": edges[1:], "count": count.astype(float)})
        lim = [("UVLO off (trip)", mc.limit if d is None else d.driver.uvlo_off),
               ("required rail", mc.required if d is None else required_rail(d))]
        lim = [(n, v) for n, v in lim if v is not None]
        _set(src["limits"], {"x": [v for _, v in lim], "name": [n for n, _ in lim],
                             "text": [f"{n} {_eng(v, 'V')}" for n, v in lim],
                             "y": [10.0 + 14.0 * i for i in range(len(lim))]})
        xa.set(np.concatenate([fin, [v for _, v in lim]]) if fin.size or lim else [1.0])
        lo, hi = mc.ci
        bad = x.size - fin.size
        p.title.text = (f"{mc.label}: P(margin lost) = {mc.p_margin:.3g}, "
                        f"P(UVLO trip) = {mc.p_trip:.3g} ({100 * mc.confidence:g} % interval "
                        f"{lo:.3g} \u2026 {hi:.3g}), n = {mc.n}" + (f", {bad} not evaluated" if bad else ""))

    fill((mc_result, design))
    bars = p.quad(left="left", right="right", bottom=0, top="count", source=src["bins"], fill_color=PALETTE[3],
                  line_color=PALETTE[3], fill_alpha=0.8)
    p.vspan(x="x", source=src["limits"], line_color="#B2182B", line_width=2, line_dash="dashed")
    p.add_layout(LabelSet(x="x", y="y", y_units="screen", text="text", source=src["limits"], text_font_size="8pt",
                          x_offset=4, text_color="#B2182B"))
    v = _hover_fmt("V")
    p.add_tools(HoverTool(renderers=[bars], tooltips=[("from", "@left{custom}"), ("to", "@right{custom}"),
                                                      ("samples", "@count{0}")],
                          formatters={"@left": v, "@right": v}))
    p.y_range.start = 0
    return Plot(p, src, fill)


# --------------------------------------------------------------------------- comparison plots

def comparison_plots(comparison, *, max_points: int | None = None, log_time: bool = False) -> dict:
    """Every plot of a comparison, in order: ``startup``, ``steady``, ``duty``, ``stress``, ``loss``."""
    return {"startup": startup_plot(comparison, log_time=log_time, max_points=max_points),
            "steady": steady_plot(comparison, max_points=max_points),
            "duty": duty_plot(comparison), "stress": stress_plot(comparison), "loss": loss_plot(comparison)}


# --------------------------------------------------------------------------- static output

#: The page of :func:`standalone_html` may fetch nothing: scripts and styles are inline.
_CSP = ("default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; style-src 'unsafe-inline'; "
        "img-src data: blob:; font-src data:; connect-src 'none'; base-uri 'none'; form-action 'none'")

_PAGE_STYLE = ("body{font-family:system-ui,sans-serif;margin:1.5em auto;max-width:62em;padding:0 1em;color:#222}"
               ".plot{margin:1.2em 0}")


def _as_dict(plots) -> dict:
    if isinstance(plots, Plot):
        return {"plot": plots}
    if isinstance(plots, dict):
        return dict(plots)
    return {f"plot {i + 1}": p for i, p in enumerate(plots)}


def bokeh_js() -> str:
    """BokehJS core (``bokeh.min.js``) as one inline ``<script>``: all the plots here need."""
    from bokeh.resources import Resources
    return Resources(mode="inline", components=["bokeh"]).render_js()


def standalone_html(plots, title: str = "explorer plots", path=None) -> str:
    """One self-contained HTML page of plots: BokehJS inline once, no network request.

    Parameters
    ----------
    plots : Plot, dict of name to Plot, or a sequence of Plot
        Shown in order, each under its name.
    title : str
    path : str or path-like, optional
        Also write the page there.

    Returns
    -------
    str
        The page. A Content-Security-Policy in its head forbids every outside request.
    """
    from bokeh.embed import components
    named = _as_dict(plots)
    script, divs = components({name: p.figure for name, p in named.items()})
    e = html.escape
    body = "".join(f"<div class='plot' data-plot='{e(name)}'>{div}</div>" for name, div in divs.items())
    page = (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
            f"<meta http-equiv='Content-Security-Policy' content=\"{_CSP}\">"
            f"<title>{e(title)}</title><style>{_PAGE_STYLE}</style>{bokeh_js()}{script}</head>"
            f"<body><h1>{e(title)}</h1>{body}</body></html>")
    if path is not None:
        with open(os.fspath(path), "w", encoding="utf-8") as fh:
            fh.write(page)
    return page


# --------------------------------------------------------------------------- notebooks

@functools.lru_cache(maxsize=1)
def _bokeh_gzip_b64() -> str:
    """``bokeh.min.js`` gzip-compressed (fixed mtime: the same bytes every run) in base64."""
    from bokeh.util.paths import bokehjs_path
    with open(os.path.join(bokehjs_path(), "js", "bokeh.min.js"), "rb") as fh:
        raw = fh.read()
    return base64.b64encode(gzip.compress(raw, compresslevel=9, mtime=0)).decode("ascii")


def setup_html() -> str:
    """The HTML :func:`setup_notebook` displays: BokehJS compressed, unpacked by the browser.

    The script decodes the base64 text, inflates it with the browser's ``DecompressionStream``
    (Chromium 80, Firefox 113, Safari 16.4 and later) and runs it; ``window.explorerBokeh`` is a
    promise of the loaded ``Bokeh`` that each plot's output waits for. A page that already has this
    Bokeh version keeps it.
    """
    from bokeh import __version__ as version
    return (
        "<div class='explorer-bokeh-setup' style='font-size:smaller;color:#555'>explorer: BokehJS "
        f"{html.escape(version)} for the plots of this notebook (runs when the notebook is trusted).</div>"
        "<script type='text/javascript'>(function () {"
        f"var want = {json.dumps(version)};"
        "if (window.explorerBokeh) return;"
        "if (window.Bokeh && window.Bokeh.version === want) { window.explorerBokeh = Promise.resolve(window.Bokeh); return; }"
        f"var b64 = \"{_bokeh_gzip_b64()}\";"
        "window.explorerBokeh = (async function () {"
        "var bin = atob(b64), bytes = new Uint8Array(bin.length);"
        "for (var i = 0; i < bin.length; i++) bytes[i] = bin.charCodeAt(i);"
        "var stream = new Blob([bytes]).stream().pipeThrough(new DecompressionStream('gzip'));"
        "var text = await new Response(stream).text();"
        "var s = document.createElement('script'); s.textContent = text; document.head.appendChild(s);"
        "return window.Bokeh; })();"
        "})();</script>")


def setup_notebook() -> None:
    """Make BokehJS available in this notebook, once (call in a cell before the first plot).

    BokehJS (``bokeh.min.js``, 1.27 MB) inlined per plot would push a stored notebook over 1 MB;
    here it is stored once, gzip-compressed in base64 (about 470 kB), and the browser unpacks it.
    After this a :class:`Plot` as a cell's value shows itself, and ``jupyter_bokeh`` widgets find
    ``window.Bokeh``. Notebooks run JavaScript only when trusted: a colleague who opens a notebook
    received from elsewhere sees each plot's plain-text note until they trust it (``jupyter trust``);
    the hand-off report (``python -m explorer report DESIGN --out report.html``) shows every plot
    without a kernel and without trust.
    """
    from IPython.display import HTML, display
    display(HTML(setup_html()))


def notebook_html(plot: Plot) -> str:
    """A plot as notebook HTML: a note that shows without JavaScript, replaced by the drawing.

    The figure's document travels as JSON (``bokeh.embed.json_item``) in the output; the script
    waits for the BokehJS of :func:`setup_notebook` (or any ``window.Bokeh``) and embeds it.
    """
    import uuid
    el = uuid.uuid4().hex
    item = json.dumps(json_item(plot.figure), separators=(",", ":")).replace("</", "<\\/")
    title = getattr(getattr(plot.figure, "title", None), "text", "") or "plot"
    return (
        f"<div id='{el}' class='explorer-plot'><p style='font-size:smaller;color:#555'>[plot: "
        f"{html.escape(title)}] Interactive (Bokeh): drawn when the notebook is trusted and "
        "explorer.views.plots.setup_notebook() ran in an earlier cell; the hand-off report "
        "(python -m explorer report) shows every plot without a kernel.</p></div>"
        f"<script type='application/json' id='{el}-item'>{item}</script>"
        "<script type='text/javascript'>(function () {"
        f"var id = '{el}', tries = 0;"
        "function draw(B) { var el = document.getElementById(id); if (!el || el.dataset.drawn) return;"
        "el.dataset.drawn = '1'; el.innerHTML = '';"
        "B.embed.embed_item(JSON.parse(document.getElementById(id + '-item').textContent), id); }"
        "function wait() { if (window.explorerBokeh) { window.explorerBokeh.then(draw); return; }"
        "if (window.Bokeh) { draw(window.Bokeh); return; }"
        "if (++tries < 200) setTimeout(wait, 50); }"
        "wait(); })();</script>")
