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
from ..topology import operating_share, topology_of
from .table import topology_text

__all__ = ["Plot", "PALETTE", "option_colors", "thin", "zero_contour", "startup_plot", "steady_plot",
           "duty_plot", "stress_plot", "loss_plot", "margin_map_plot", "monte_carlo_plot",
           "comparison_plots", "standalone_html", "setup_notebook", "notebook_html"]

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


@functools.lru_cache(maxsize=None)
def _hover_fmt(unit: str) -> CustomJSHover:
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


# --------------------------------------------------------------------------- comparison plots

def comparison_plots(comparison, *, max_points: int | None = None, log_time: bool = False) -> dict:
    """Every plot of a comparison, in order: ``startup``, ``steady`` (more follow)."""
    return {"startup": startup_plot(comparison, log_time=log_time, max_points=max_points),
            "steady": steady_plot(comparison, max_points=max_points)}
