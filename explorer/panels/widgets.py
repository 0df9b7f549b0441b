"""The widget panels: design entry, option editor, side-by-side comparison, and the composed explorer.

Layout (our own): a caution strip on top when one applies; on the left the design panel (topology
chooser and the fields of that topology, then gate, driver, aux rail and margins); on the right the
option cards in a row, the side-by-side table and the plots in tabs; a tool row at the bottom
(load, save, static summary) with a status line that says whether the numbers on screen are up
to date.

The panels hold no physics: a change goes into a :class:`~explorer.panels.form.DesignForm`, which
``load_design`` validates; a valid design goes to an :class:`~explorer.panels.runner.Evaluator`;
its result is shown through :mod:`explorer.views` (the table's rows and the plots' ``update``).
Bad input shows the DesignError text beside the field, the last valid result stays, and no
traceback ever reaches a panel (:mod:`explorer.panels.guard`).
"""

from __future__ import annotations

import asyncio
import functools
import html
import json
import math
import os
import threading
import warnings

import ipywidgets as W
import numpy as np

from ..design import Design, load_design, save_design, specs
from ..errors import DesignError
from ..topology import TOPOLOGY, analysis_frequency
from ..units import format_eng, format_exact, parse_eng
from ..views.table import CAUTION, side_by_side_html
from .form import SECTIONS, SLIDER_FIELDS, TOPOLOGY_FIELDS, DesignForm, Field, option_fields, section_fields
from .guard import guarded, one_line, raising
from .progress import ProgressBar
from .runner import Evaluator

__all__ = ["ELV_DC_LIMIT", "PLOT_POINTS", "AnalysisPanel", "option_colors", "plots_module", "DesignPanel", "OptionEditor", "ComparisonPanel", "Explorer", "explore",
           "cautions_for", "summary_html"]

#: Bus voltage above which the panels show the high-voltage caution [V]. 60 V DC is a commonly used
#: upper bound of the extra-low-voltage range for DC (from memory; a trigger for a note, never a
#: check value). Which limit applies to a product is for the applicable safety standards, local
#: codes and licensed practice to say.
ELV_DC_LIMIT = 60.0

#: Most points per waveform a panel's plot carries (peaks and dips kept, see ``plots.thin``): keeps the
#: updates quick and a stored notebook small.
PLOT_POINTS = 500

#: Option kinds the editor offers, with the words on the add button's chooser.
KIND_WORDS = {"bootstrap": "bootstrap", "charge_pump": "charge pump", "isolated": "isolated module"}

_BAD = "#b71c1c"
_OK = "#1b5e20"
_CSS = """<style>
.explorer-bad input, .explorer-bad select { border: 2px solid #b71c1c !important; background: #fff3f3 !important; }
.explorer-card { border: 1px solid #c8c8c8; border-radius: 4px; padding: 4px; margin: 0 6px 6px 0; }
.explorer-caution { border: 2px solid #b71c1c; background: #fff3f3; padding: 2px 10px; }
</style>"""


def _e(x) -> str:
    return html.escape(str(x))


def cautions_for(design: Design, comparison=None) -> list[str]:
    """The caution lines a panel shows for a design (and the cautions its results carry)."""
    out = []
    v_bus = design.bridge.v_bus
    if v_bus > ELV_DC_LIMIT:
        out.append(f"High voltage: the bus is {format_eng(v_bus, 'V')}, above {ELV_DC_LIMIT:g} V DC, the "
                   "extra-low-voltage threshold this panel uses to raise this note (which limit applies is "
                   "for the applicable safety standards, local codes and licensed practice). Voltages like "
                   "this can be lethal and stored charge persists after power-off; work on such circuits "
                   "only under licensed practice.")
    if any(o.kind == "isolated" for o in design.options):
        out.append("Isolated option shown: its isolation figures are a screening check only; the barrier, "
                   "creepage and clearance are designed and verified to the applicable safety standards "
                   "(e.g. IEC 62368-1, IEC 61800-5-1, IEC 60664-1), local codes and licensed practice.")
    if comparison is not None:
        for r in comparison.options:
            if r.kind == "isolated" and len(out) and out[-1].startswith("Isolated option shown"):
                continue  # the line above says it, with the deference to licensed practice
            for c in r.cautions:
                line = f"[{r.label}] {c}"
                if line not in out:
                    out.append(line)
    return out


def plots_module():
    """``explorer.views.plots`` (needs Bokeh), or None when this install has no plots."""
    import importlib
    try:
        plots = importlib.import_module("explorer.views.plots")
    except ModuleNotFoundError as exc:
        if (exc.name or "").startswith(("bokeh", "explorer.views.plots")):
            return None
        raise
    return plots


def option_colors(labels) -> dict:
    plots = plots_module()
    return plots.option_colors(labels) if plots is not None else {}


# --------------------------------------------------------------------------- shared looks

_SHARED: dict = {}


def _lay(**kw):
    """A Layout shared by every widget that asks for the same settings (never mutate one)."""
    key = ("layout", *sorted(kw.items()))
    if key not in _SHARED:
        _SHARED[key] = W.Layout(**kw)
    return _SHARED[key]


def _sty(name: str):
    """The shared style of a kind of widget (``html``, ``button``, ``toggle``)."""
    if name not in _SHARED:
        from ipywidgets.widgets.widget_bool import ToggleButtonStyle
        from ipywidgets.widgets.widget_string import HTMLStyle
        _SHARED[name] = {"html": HTMLStyle, "button": W.ButtonStyle, "toggle": ToggleButtonStyle}[name]()
    return _SHARED[name]


def _html(value: str = "", **layout):
    return W.HTML(value=value, layout=_lay(**layout), style=_sty("html"))


def _vbox(children=(), **layout):
    return W.VBox(list(children), layout=_lay(**layout))


def _hbox(children=(), **layout):
    return W.HBox(list(children), layout=_lay(**layout))


def _button(description: str, icon: str, tooltip: str, **layout):
    return W.Button(description=description, icon=icon, tooltip=tooltip, layout=_lay(**layout), style=_sty("button"))


# --------------------------------------------------------------------------- one field

class _Looks:
    """One layout and one style per widget class, shared by every field of a panel (a stored
    notebook keeps each widget model's state: sharing them keeps it small)."""

    def __init__(self, width: str, description_width: str):
        self.layout = W.Layout(width=width)
        self._dw = description_width
        self._styles: dict = {}

    def style(self, cls):
        if cls not in self._styles:
            from ipywidgets.widgets.widget_bool import CheckboxStyle
            from ipywidgets.widgets.widget_string import DescriptionStyle, TextStyle
            make = {W.Text: TextStyle, W.Checkbox: CheckboxStyle}.get(cls, DescriptionStyle)
            self._styles[cls] = make(description_width=self._dw)
        return self._styles[cls]


class FieldControl:
    """One form field as a widget (text box, checkbox, chooser), optionally with a slider."""

    def __init__(self, field: Field, value, on_change, *, looks: _Looks, slider: str | None = None,
                 slider_range: tuple | None = None, buttons: bool = False):
        self.field = field
        self.path = field.path
        self._on_change = on_change
        self._syncing = False
        spec = field.spec
        desc = field.label + (f" [{field.unit}]" if field.unit else "")
        common = dict(description=desc, tooltip=field.tooltip, layout=looks.layout)
        if spec.kind == "bool":
            self.widget = W.Checkbox(value=bool(value), indent=True, style=looks.style(W.Checkbox), **common)
        elif spec.kind == "choice" and buttons:
            self.widget = W.ToggleButtons(options=list(spec.choices), value=value, tooltip=field.tooltip,
                                          style={"button_width": "56px"})
        elif spec.kind == "choice":
            self.widget = W.Dropdown(options=list(spec.choices), value=value, style=looks.style(W.Dropdown), **common)
        elif not field.editable:
            shown = "none" if value in ("", None) else f"{len(value)} points (edit in the design file)"
            self.widget = W.Text(value=shown, disabled=True, style=looks.style(W.Text), **common)
        else:
            self.widget = W.Text(value=str(value), continuous_update=False, style=looks.style(W.Text), **common)
        if field.editable:
            self.widget.observe(self._changed, "value")
        self.slider = None
        if slider is not None and slider_range is not None:
            self._make_slider(slider, slider_range, value)
        self.view = self.widget if self.slider is None else _vbox([self.widget, self.slider])

    def _make_slider(self, kind: str, rng: tuple, value) -> None:
        lo, hi = rng
        try:
            x = parse_eng(value, self.path, self.field.spec.unit)
        except DesignError:
            x = lo
        x = min(max(x, lo), hi)
        layout = _lay(width="300px")
        if kind == "log":
            self.slider = W.FloatLogSlider(value=x, base=10, min=math.log10(lo), max=math.log10(hi), step=0.01,
                                           readout=False, continuous_update=False, layout=layout,
                                           tooltip=f"drag to change {self.field.name}")
        else:
            self.slider = W.FloatSlider(value=x, min=lo, max=hi, step=(hi - lo) / 200, readout=False,
                                        continuous_update=False, layout=layout,
                                        tooltip=f"drag to change {self.field.name}")
        self.slider.observe(self._slid, "value")

    def _slid(self, change) -> None:
        if self._syncing:
            return
        x = float(f"{change['new']:.4g}")
        text = format_exact(x, self.field.spec.unit) if self.field.spec.unit not in ("-", "") else repr(x)
        self.widget.value = text  # → _changed → the form

    def _changed(self, change) -> None:
        if self.slider is not None and isinstance(change["new"], str):
            try:
                x = parse_eng(change["new"], self.path, self.field.spec.unit)
            except DesignError:
                x = None
            if x is not None and self.slider.min <= (math.log10(x) if isinstance(self.slider, W.FloatLogSlider)
                                                      and x > 0 else x) <= self.slider.max:
                self._syncing = True
                try:
                    self.slider.value = x
                finally:
                    self._syncing = False
        self._on_change(self.path, change["new"])

    def mark(self, message: str | None) -> None:
        """Show (or clear, with None) an error on this field."""
        if message is None:
            self.widget.remove_class("explorer-bad")
            self.widget.tooltip = self.field.tooltip
        else:
            self.widget.add_class("explorer-bad")
            self.widget.tooltip = message


class _Group:
    """A titled group of fields: the main fields, a 'more' toggle for the rest (built when first
    opened, or when an error or a caller needs one), and an inline error line.

    ``make`` turns a :class:`Field` into a :class:`FieldControl`.
    """

    def __init__(self, title: str, main: list, more: list, make, *, header=None, card: bool = False):
        self.controls = {c.path: c for c in main}
        self._more = list(more)
        self._make = make
        self.error = _html()
        self.more_box = W.VBox(layout=W.Layout(display="none"))  # its own: shown and hidden
        self.toggle = W.ToggleButton(value=False, description=f"more ({len(more)})",
                                     tooltip="show the fields that have defaults", style=_sty("toggle"),
                                     layout=_lay(width="110px", display="" if more else "none"))
        self.toggle.observe(self._toggled, "value")
        head = header if header is not None else _html(f"<b>{_e(title)}</b>")
        self.view = _vbox([head, *[c.view for c in main], self.error, self.toggle, self.more_box],
                          **({"width": "266px"} if card else {}))
        if card:
            self.view.add_class("explorer-card")

    def _toggled(self, change) -> None:
        if change["new"]:
            self.build_more()
        self.more_box.layout.display = "flex" if change["new"] else "none"

    def build_more(self) -> None:
        if self._more:
            made = [self._make(f) for f in self._more]
            self._more = []
            self.controls.update({c.path: c for c in made})
            self.more_box.children = [c.view for c in made]

    def has(self, path: str) -> bool:
        return path in self.controls or any(f.path == path for f in self._more)

    def get(self, path: str):
        if path not in self.controls and self.has(path):
            self.build_more()
        return self.controls.get(path)

    def show_error(self, err: DesignError | None) -> bool:
        """Mark the field the error names (True if it is in this group) and say why, inline."""
        for c in self.controls.values():
            c.mark(None)
        self.error.value = ""
        if err is None:
            return False
        target = self._control_for(err.path)
        if target is None:
            return False
        target.mark(str(err))
        if target.view in self.more_box.children:
            self.toggle.value = True
        self.error.value = f"<span style='color:{_BAD}'>\u26a0 {_e(err)}</span>"
        return True

    def _control_for(self, path: str):
        # a capacitor given as a number is reported on the capacitor itself: show it on its value
        for p in (path, f"{path}.c"):
            if self.has(p):
                return self.get(p)
        return None


def _split(fields: list, topology_keys: tuple = ()) -> tuple[list, list]:
    main = [f for f in fields if f.spec.required or f.name in topology_keys]
    more = [f for f in fields if f not in main]
    return main, more


# --------------------------------------------------------------------------- design panel

class DesignPanel(W.VBox):
    """Topology chooser and the fields of the design sections (only the chosen topology's bridge keys).

    Parameters
    ----------
    form : DesignForm
    on_change : callable(path, value)
        Called after the form has taken a change (the explorer validates and evaluates).
    """

    def __init__(self, form: DesignForm, on_change):
        self.form = form
        self._notify = on_change
        self._looks = _Looks("290px", "120px")
        self.groups: dict[str, _Group] = {}
        self._boxes: dict[str, W.Box] = {}
        children = []
        for key, title, _ in SECTIONS:
            box = _vbox()
            self._boxes[key] = box
            self._build(key)
            children.append(box)
        super().__init__(children, layout=W.Layout(width="310px", flex="0 0 310px"))

    def _slider(self, f: Field):
        b = self.form.last_valid
        kind = SLIDER_FIELDS.get(f.path)
        duty_field = TOPOLOGY[self.form.topology].duty_field
        if kind == "log":
            v = getattr(b.bridge, f.name)
            return kind, (v / 10.0, v * 10.0)
        if f.path == "checks.t_amb":
            return "lin", (b.checks.t_min, b.checks.t_max) if b.checks.t_max > b.checks.t_min else None
        if f.path == duty_field:
            spec = f.spec
            hi = spec.hi if spec.hi is not None else b.bridge.v_bus
            return "lin", (spec.lo or 0.0, hi)
        return None, None

    def _build(self, key: str) -> None:
        topo = self.form.topology if key == "bridge" else None
        fields = section_fields(key, topo if topo in TOPOLOGY else None)
        fields = [f for f in fields if f.path != "bridge.topology"]

        def make(f):
            kind, rng = self._slider(f)
            return FieldControl(f, self.form.get(f.path), self._changed, looks=self._looks, slider=kind,
                                slider_range=rng)
        own = TOPOLOGY_FIELDS.get(topo, ()) if topo else ()
        main_f, more = _split(fields, own)
        main = [make(f) for f in main_f]
        title = dict((k, t) for k, t, _ in SECTIONS)[key]
        header = None
        if key == "bridge":
            spec = specs(type(self.form.last_valid.bridge))["topology"]
            self.topology = W.Dropdown(options=list(spec.choices), value=self.form.topology, description="topology",
                                       tooltip=spec.doc + "; the fields below follow it",
                                       layout=self._looks.layout, style=self._looks.style(W.Dropdown))
            self.topology.observe(self._topology_changed, "value")
            header = _vbox([_html(f"<b>{_e(title)}</b>"), self.topology])
        group = _Group(title, main, more, make, header=header)
        self.groups[key] = group
        self._boxes[key].children = [group.view]

    def _changed(self, path, value) -> None:
        self.form.set(path, value)
        self._notify(path, value)

    def _topology_changed(self, change) -> None:
        self.form.set("bridge.topology", change["new"])
        self._build("bridge")
        self._notify("bridge.topology", change["new"])

    def control(self, path: str) -> FieldControl:
        """The control of a field by its design-file path (``"bridge.f_sw"``)."""
        for g in self.groups.values():
            if g.has(path):
                return g.get(path)
        raise KeyError(f"no control for {path!r} in the design panel (hidden for this topology?)")

    def show_error(self, err: DesignError | None) -> bool:
        found = False
        for g in self.groups.values():
            found |= g.show_error(None if found else err)
        return found

    def rebuild(self) -> None:
        """Rebuild every field from the form (after loading another design)."""
        for key, _, _ in SECTIONS:
            self._build(key)


# --------------------------------------------------------------------------- option editor

class OptionEditor(W.VBox):
    """One card per option (fields from the option's Spec); add, duplicate, relabel, remove.

    Structural changes rebuild the cards from the form, so every text typed so far stays.
    """

    def __init__(self, form: DesignForm, on_change):
        self.form = form
        self._notify = on_change
        self._looks = _Looks("250px", "95px")
        self.cards: list[_Group] = []
        self.row = W.HBox(layout=W.Layout(flex_flow="row wrap", align_items="flex-start"))
        self.kind = W.Dropdown(options=[(w, k) for k, w in KIND_WORDS.items()], value="charge_pump",
                               description="new option", layout=W.Layout(width="240px"),
                               style={"description_width": "80px"})
        self.add = _button("add", "plus", "add an option of this kind (a copy of one already in the design, else "
                           "of the demo's)", width="80px")
        self.add.on_click(lambda _: self._structure(lambda: self.form.add_option(self.kind.value)))
        self.rebuild()
        super().__init__([_hbox([_html("<b>Supply options</b>", width="150px"),
                                  self.kind, self.add]), self.row])

    def rebuild(self, colors: dict | None = None) -> None:
        colors = colors or option_colors([o.get("label") for o in self.form.options])
        self.cards = [self._card(i, o, colors.get(o.get("label"), "#888888")) for i, o in enumerate(self.form.options)]
        self.row.children = [c.view for c in self.cards]

    def _card(self, i: int, option: dict, color: str) -> _Group:
        fields = [f for f in option_fields(option, i) if f.name != "kind"]

        def make(f):
            return FieldControl(f, self.form.get(f.path), self._changed, looks=self._looks)
        label = make(next(f for f in fields if f.name == "label"))
        ratio_f = [f for f in fields if f.name == "ratio"]
        # the pump's ratio as a row of buttons in the card's head
        ratio = FieldControl(ratio_f[0], self.form.get(ratio_f[0].path), self._changed, looks=self._looks,
                             buttons=True) if ratio_f else None
        fields = [f for f in fields if f.name not in ("label", "ratio")]
        dup = _button("duplicate", "copy", "add a copy of this option beside it", width="110px")
        rem = _button("remove", "trash", "remove this option (a design keeps at least one)", width="100px")
        dup.on_click(lambda _, i=i: self._structure(lambda: self.form.duplicate_option(i)))
        rem.on_click(lambda _, i=i: self._structure(lambda: self.form.remove_option(i)))
        rem.disabled = len(self.form.options) <= 1
        kind = KIND_WORDS.get(option["kind"], option["kind"])
        head = _vbox([_html(f"<div style='border-top:6px solid {_e(color)};padding-top:2px'><b>{_e(kind)}</b></div>"),
                      label.view, *([ratio.view] if ratio is not None else []), _hbox([dup, rem])])
        main_f, more_f = _split(fields)
        group = _Group(option.get("label", ""), [make(f) for f in main_f], more_f, make, header=head, card=True)
        group.controls[label.path] = label
        if ratio is not None:
            group.controls[ratio.path] = ratio
        return group

    def _changed(self, path, value) -> None:
        self.form.set(path, value)
        self._notify(path, value)

    def _structure(self, action) -> None:
        action()
        self.rebuild()
        self._notify("options", None)

    def control(self, path: str) -> FieldControl:
        for g in self.cards:
            if g.has(path):
                return g.get(path)
        raise KeyError(f"no control for {path!r} in the option editor")

    def card_buttons(self, index: int) -> dict:
        """The buttons of a card by name (``duplicate``, ``remove``), for tests and scripts."""
        row = self.cards[index].view.children[0].children[-1]
        return {b.description: b for b in row.children}

    def show_error(self, err: DesignError | None) -> bool:
        found = False
        for g in self.cards:
            found |= g.show_error(None if found else err)
        return found


# --------------------------------------------------------------------------- comparison panel

class ComparisonPanel(W.VBox):
    """The side-by-side table and the comparison plots, updated in place from each new result."""

    def __init__(self, comparison=None, *, plots=True):
        self.which = plots  # True: every comparison plot; False: none; or a tuple of plot names
        self.table = _html()
        self.plots: dict = {}
        self.plot_views: dict = {}
        self.tabs = W.Tab()
        self.note = _html()
        self.comparison = None
        super().__init__([self.table, self.note, self.tabs])
        if comparison is not None:
            self.show(comparison)

    def show(self, comparison) -> None:
        """Show a new result: the table's rows and the plots' sources (assigned in place)."""
        self.comparison = comparison
        labels = [r.label for r in comparison.options]
        self.table.value = side_by_side_html(comparison, option_colors(labels))
        plots = plots_module() if self.which else None
        if not self.which:
            return
        if plots is None:
            self.note.value = "<i>Plots need Bokeh and jupyter_bokeh: pip install 'explorer[panels]'.</i>"
            return
        if not self.plots:
            from jupyter_bokeh import BokehModel
            self.plots = plots.comparison_plots(comparison, max_points=PLOT_POINTS)
            if self.which is not True:
                self.plots = {k: v for k, v in self.plots.items() if k in self.which}
            self.plot_views = {name: BokehModel(p.figure) for name, p in self.plots.items()}
            self.tabs.children = list(self.plot_views.values())
            for i, name in enumerate(self.plot_views):
                self.tabs.set_title(i, name)
            return
        for p in self.plots.values():
            p.update(comparison)

    def sources(self) -> dict:
        """Every plotted source's data, by plot and source name (what tests compare)."""
        return {name: {k: dict(s.data) for k, s in p.sources.items()} for name, p in self.plots.items()}


# --------------------------------------------------------------------------- analyses on request

class AnalysisPanel(W.VBox):
    """A margin map or a Monte Carlo of one option, on request, computed off the widget callback.

    ``design`` is a callable giving the design to analyse (the explorer's last valid one). The margin
    map spans a decade each side of the leg's own frequency (f_sw; f_line for a line leg) (:data:`MAP_POINTS` × :data:`MAP_POINTS`, HS share
    0.05 to 0.98); the Monte Carlo draws :data:`MC_SAMPLES` samples over the design's spreads (seed 1).
    """

    #: Points per axis of the margin map: every option kind has a vectorised map (41 × 41 points take
    #: milliseconds; docs/performance.md).
    MAP_POINTS = 41
    MC_SAMPLES = 2000

    def __init__(self, design):
        self._design = design
        labels = [o.label for o in design().options]
        self.option = W.Dropdown(options=labels, value=labels[0], description="option",
                                 layout=_lay(width="260px"), style={"description_width": "55px"})
        self.map_button = _button("margin map", "th", "rail margin over f_sw and HS duty for this option")
        self.mc_button = _button("Monte Carlo", "random", f"{self.MC_SAMPLES} samples of the rail minimum over "
                                 "the design's spreads")
        self.progress = ProgressBar("samples")
        self.progress.layout.display = "none"
        self.message = _html()
        self.area = _vbox()
        self.plot = None
        self._thread = None
        self._error = None
        self.map_button.on_click(lambda _: self._start(self._margin_map))
        self.mc_button.on_click(lambda _: self._start(self._monte_carlo))
        super().__init__([_html("<b>On request</b>"), _hbox([self.option, self.map_button, self.mc_button]),
                          self.progress, self.message, self.area])

    def refresh_labels(self, design) -> None:
        labels = [o.label for o in design.options]
        if list(self.option.options) != labels:
            keep = self.option.value if self.option.value in labels else labels[0]
            self.option.options = labels
            self.option.value = keep

    def _start(self, job) -> None:
        if self._thread is not None and self._thread.is_alive():
            self.message.value = "still computing the previous request\u2026"
            return
        design, label = self._design(), self.option.value
        self.message.value = f"\u23f3 computing for {_e(label)}\u2026"
        try:
            loop = asyncio.get_running_loop()
        except RuntimeError:
            loop = None

        def run():
            try:
                with warnings.catch_warnings(record=True):
                    warnings.simplefilter("always")
                    make = job(design, label)
                deliver = make
            except DesignError as err:
                deliver = functools.partial(self._say, f"\u26a0 {_e(err)}")
            except Exception as exc:  # the panel boundary
                if raising():
                    self._error = exc
                    return
                deliver = functools.partial(self._say, _e(one_line(exc)))
            if loop is not None and loop.is_running():
                loop.call_soon_threadsafe(deliver)
            else:
                deliver()
        self._thread = threading.Thread(target=run, name="explorer-panel-analysis", daemon=True)
        self._thread.start()

    def _say(self, text: str) -> None:
        self.message.value = text

    def _margin_map(self, design, label):
        from ..sweep import margin_map
        f = analysis_frequency(design.bridge) * np.geomspace(0.1, 10.0, self.MAP_POINTS)  # the leg's own
        f = f[f <= specs(type(design.bridge))["f_sw"].hi]
        u = np.linspace(0.05, 0.98, self.MAP_POINTS)
        result = margin_map(design, label, f, u)
        return functools.partial(self._show, "margin_map_plot", result, design,
                                 f"margin map of {label}: {len(f)} \u00d7 {len(u)} points")

    def _monte_carlo(self, design, label):
        from ..tolerance import monte_carlo
        self.progress.layout.display = ""
        result = monte_carlo(design, label, self.MC_SAMPLES, seed=1, progress=self.progress)
        return functools.partial(self._show, "monte_carlo_plot", result, design,
                                 f"Monte Carlo of {label}: P(trip) {result.p_trip:.3g}, 95 % interval "
                                 f"{result.ci[0]:.3g} \u2026 {result.ci[1]:.3g}")

    def _show(self, kind: str, result, design, words: str) -> None:
        mod = plots_module()
        self.result = result
        self.message.value = _e(words)
        if mod is None:
            return
        from jupyter_bokeh import BokehModel
        self.plot = getattr(mod, kind)(result, design)
        self.area.children = [BokehModel(self.plot.figure)]

    def wait(self, timeout: float = 120.0) -> "AnalysisPanel":
        """Block until the running request is done (tests, scripts); re-raise its error with RAISE_ERRORS."""
        if self._thread is not None:
            self._thread.join(timeout)
        if self._error is not None:
            err, self._error = self._error, None
            raise err
        return self


# --------------------------------------------------------------------------- summary

def summary_html(comparison, *, plots: bool = True) -> str:
    """A static summary for a notebook output: cautions, the side-by-side table, the plots and the
    design file itself, readable without a kernel (the plots need BokehJS on the page, see
    ``explorer.views.plots.setup_notebook``; the table and the design are plain HTML)."""
    design = comparison.design
    labels = [r.label for r in comparison.options]
    caution = "".join(f"<li>{_e(c)}</li>" for c in cautions_for(design, comparison))
    parts = [f"<div class='explorer-summary'><h3>{_e(comparison.title)}</h3>"]
    if caution:
        parts.append(f"<ul style='border:2px solid {_BAD};padding:4px 24px'>{caution}</ul>")
    parts.append(side_by_side_html(comparison, option_colors(labels)))
    mod = plots_module() if plots else None
    if mod is not None:
        from bokeh.embed import components
        script, divs = components({k: p.figure for k, p in mod.comparison_plots(comparison, max_points=PLOT_POINTS).items()})
        parts.append(script + "".join(f"<div data-plot='{_e(k)}'>{d}</div>" for k, d in divs.items()))
    text = json.dumps(design.to_dict(), indent=1, ensure_ascii=False, allow_nan=False)
    parts.append(f"<details><summary>design file (explorer-design JSON)</summary><pre class='explorer-design'>"
                 f"{_e(text)}</pre></details>")
    parts.append(f"<p style='font-size:smaller'>{_e(CAUTION)}</p></div>")
    return "".join(parts)


class _HTML:
    def __init__(self, text: str):
        self.text = text

    def _repr_html_(self) -> str:
        return self.text

    def __repr__(self) -> str:
        return "<explorer summary (HTML)>"


# --------------------------------------------------------------------------- the explorer

def _show_status(panel, text: str) -> None:
    panel._status(text, error=True)


class Explorer(W.VBox):
    """The composed explorer: design panel, option editor, comparison, cautions and tools.

    Parameters
    ----------
    design : Design, dict, path or JSON text
        The starting design (anything :func:`explorer.load_design` accepts).
    background : bool
        Evaluate changes on a worker thread (default); False evaluates in the callback.
    rank : str
        Ranking rule of the comparison.
    plots : bool or tuple of str
        Which comparison plots to show (``("startup", "duty")``; True: all, False: none).

    Attributes
    ----------
    design : Design
        The last valid design (what the numbers on screen are for once :attr:`busy` is False).
    result : Comparison
        The result on screen.
    """

    def __init__(self, design, *, background: bool = True, rank: str = "overhead", plots=True):
        self.form = DesignForm(design)
        self.error: DesignError | None = None
        self.warnings: list = []
        self.evaluator = Evaluator(self._deliver, background=background, rank=rank)
        self.css = _html(_CSS)
        self.caution = _html()
        self.status = _html()
        self.design_panel = DesignPanel(self.form, self._changed)
        self.option_editor = OptionEditor(self.form, self._changed)
        self.comparison = ComparisonPanel(plots=plots)
        self.analysis = AnalysisPanel(lambda: self.form.last_valid)
        self.path = W.Text(value="design.json", description="file", tooltip="design file to load or save",
                           layout=W.Layout(width="320px"), style={"description_width": "40px"})
        self.load_button = _button("load", "folder-open", "load the design file")
        self.save_button = _button("save design", "save", "write the current design to the file (numbers with units)")
        self.summary_button = _button("static summary", "file-text", "write the table, plots and design into the "
                                      "output below; it stays readable without a kernel")
        self.load_button.on_click(self._load)
        self.save_button.on_click(self._save)
        self.summary_button.on_click(self._summary)
        self.output = W.Output()
        self.title = _html()
        tools = _hbox([self.path, self.load_button, self.save_button, self.summary_button])
        right = W.VBox([self.option_editor, self.comparison, self.analysis],
                       layout=W.Layout(flex="1 1 auto", min_width="500px", overflow="auto"))
        super().__init__([self.css, self.title, self.caution, self.status,
                          _hbox([self.design_panel, right]), tools, self.output])
        self.evaluator_background = background
        # the first result is computed here, so a stored notebook has it
        self.evaluator.background = False
        self._revalidate()
        self.evaluator.background = background

    # ------------------------------------------------------------------ public
    @property
    def design(self) -> Design:
        return self.form.last_valid

    @property
    def result(self):
        return self.comparison.comparison

    @property
    def busy(self) -> bool:
        return self.evaluator.busy

    def wait(self, timeout: float = 60.0) -> "Explorer":
        """Block until the newest change is evaluated and shown (tests, scripts)."""
        self.evaluator.wait(timeout)
        return self

    def control(self, path: str):
        """The widget of a field by its design-file path (``"bridge.f_sw"``, ``"options[1].c_fly.c"``)."""
        panel = self.option_editor if path.startswith("options") else self.design_panel
        return panel.control(path).widget

    def summary(self, *, plots: bool = True):
        """The static summary of the result on screen, as a displayable object (for a notebook cell)."""
        return _HTML(summary_html(self.result, plots=plots))

    def __repr__(self) -> str:
        r = self.result
        shown = f"{len(r.options)} options" if r is not None else "no result"
        return f"<explorer panel: {self.design.title!r}, {shown}>"

    # ------------------------------------------------------------------ flow
    @guarded(_show_status)
    def _changed(self, path, value) -> None:
        self._revalidate()

    def _revalidate(self) -> None:
        try:
            design = self.form.build()
        except DesignError as err:
            self._show_error(err)
            return
        self._show_error(None)
        self._show_cautions(design)
        self.title.value = f"<h3 style='margin:4px 0'>{_e(design.title)}</h3>"
        if self.result is not None and not self.evaluator.busy and design == self.result.design:
            self._status(f"<span style='color:{_OK}'>\u2714 up to date</span> (the same design as shown)")
            return
        self.evaluator.submit(design)
        if self.evaluator.busy:
            self._status("\u23f3 computing\u2026 (the numbers below are from the previous entry)")

    def _show_error(self, err: DesignError | None) -> None:
        self.error = err
        shown = self.design_panel.show_error(err)
        shown = self.option_editor.show_error(None if shown else err) or shown
        if err is not None:
            where = "" if shown else f" {_e(err)}"
            self._status(f"\u26a0 entry not accepted:{where} the marked field says why; the results below are "
                         "from the last valid entry", error=True)

    def _show_cautions(self, design: Design, comparison=None) -> None:
        lines = cautions_for(design, comparison)
        self.caution.value = ("" if not lines else "<div class='explorer-caution'><b>Caution</b><ul>"
                              + "".join(f"<li>{_e(c)}</li>" for c in lines) + "</ul></div>")

    def _status(self, text: str, error: bool = False) -> None:
        color = _BAD if error else "#333333"
        self.status.value = f"<span style='color:{color}'>{text}</span>"

    def _deliver(self, gen, result, error, caught, seconds) -> None:
        try:
            self._apply(result, error, caught, seconds)
        except Exception as exc:  # the panel boundary
            if raising():
                raise
            self._status(_e(one_line(exc)), error=True)

    def _apply(self, result, error, caught, seconds) -> None:
        if error is not None:
            if isinstance(error, DesignError):
                self._show_error(error)
                return
            if raising():
                raise error
            self._status(_e(one_line(error)), error=True)
            return
        self.warnings = caught
        self.comparison.show(result)
        self.analysis.refresh_labels(result.design)
        self._show_cautions(result.design, result)
        if self.error is None:
            warn = f"; {len(caught)} model warning{'s' if len(caught) > 1 else ''} (see the table)" if caught else ""
            self._status(f"<span style='color:{_OK}'>\u2714 up to date</span>{warn}")

    # ------------------------------------------------------------------ tools
    @guarded(_show_status)
    def _load(self, _=None) -> None:
        try:
            design = load_design(self.path.value)
        except DesignError as err:
            self._status(f"\u26a0 not loaded: {_e(err)}; the design on screen is unchanged", error=True)
            return
        self.form.reset(design)
        self.design_panel.rebuild()
        self.option_editor.rebuild()
        self._revalidate()
        if self.error is None:
            self._status(f"loaded {_e(self.path.value)}")

    @guarded(_show_status)
    def _save(self, _=None) -> None:
        try:
            design = self.form.build()
        except DesignError as err:
            self._show_error(err)
            self._status(f"\u26a0 not saved: {_e(err)}; fix the marked entry first (the file is unchanged, "
                         "nothing typed is lost)", error=True)
            return
        path = self.path.value
        try:
            save_design(design, path, readable=True)
        except OSError as exc:
            self._status(f"\u26a0 not saved: cannot write {_e(path)}: {_e(exc.strerror or exc)}", error=True)
            return
        self._status(f"saved the design to {_e(os.path.abspath(path))}")

    @guarded(_show_status)
    def _summary(self, _=None) -> None:
        self.output.outputs = ({"output_type": "display_data", "metadata": {},
                                "data": {"text/html": summary_html(self.result),
                                         "text/plain": f"static summary of {self.design.title!r}"}},)


def explore(design=None, *, background: bool = True, rank: str = "overhead", plots=True) -> Explorer:
    """The composed explorer for a design (default: the built-in demo, an invented scenario).

    ``design`` is anything :func:`explorer.load_design` accepts: a design file's path, JSON text, a
    dict or a :class:`~explorer.design.Design` built in code. In a notebook call
    ``explorer.views.plots.setup_notebook()`` in an earlier cell so the plots can draw. ``plots``
    picks the comparison plots shown (True: all of them; a tuple of names such as
    ``("startup", "duty")``; False: the table only).
    """
    if design is None:
        from ..demo import DEMO
        design = DEMO
    return Explorer(design, background=background, rank=rank, plots=plots)
