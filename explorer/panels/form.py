"""The field form: what a panel shows for a design, generated from the design's Specs.

Pure Python (no ipywidgets, no Bokeh): the widgets in :mod:`explorer.panels.widgets` are views of
a :class:`DesignForm`, and tests drive the form without a browser.

A form holds the design as the user is typing it: a nested dict in the design-file layout whose
number leaves are the *texts as typed* (``"200 kHz"``, ``"2.2u"``, ``""``). :meth:`DesignForm.build`
hands that dict to :func:`explorer.load_design`, which parses engineering notation with each field's
unit and validates everything, so a panel accepts exactly what a design file accepts and reports
exactly the same :class:`~explorer.errors.DesignError`. Nothing typed is ever overwritten by a
failed build, and texts of fields the current topology hides are kept for when it comes back.

Which bridge fields a topology shows comes from the topology table (:mod:`explorer.topology`): its
required keys, the field its duty-like variable lives in, and the keys its flags bring
(:data:`FLAG_FIELDS`). A field's label, unit, meaning and allowed range come from its
:class:`~explorer.design.Spec`.
"""

from __future__ import annotations

import copy
import dataclasses
from dataclasses import dataclass
from typing import Any

from ..demo import DEMO
from ..design import (Aux, Bridge, Capacitor, Checks, Design, Driver, Gate, JunctionDiode, LinearDiode, Spec, split_path,
                      design_to_dict, load_design, specs)
from ..options import option_class
from ..topology import TOPOLOGY

__all__ = ["Field", "FLAG_FIELDS", "TOPOLOGY_FIELDS", "SECTIONS", "SLIDER_FIELDS", "bridge_fields",
           "section_fields", "option_fields", "field_text", "DesignForm", "new_option"]

#: Bridge keys that a topology flag brings with it (flag of :class:`explorer.topology.Topology` → keys).
FLAG_FIELDS = {
    "light_load": ("mode", "ls_pulse", "skip_cycles"),
    "fundamental": ("third_harmonic", "pwm", "phi"),
    "line_frequency": ("v_sw_low",),
    "soft_start": ("soft_start",),
}


def _topology_keys(topo) -> tuple:
    keys = list(topo.required)
    leaf = topo.duty_field.split(".", 1)[1]
    if leaf not in keys:
        keys.append(leaf)
    for flag, names in FLAG_FIELDS.items():
        if getattr(topo, flag):
            keys += [n for n in names if n not in keys]
    return tuple(keys)


#: Per topology, the bridge keys that belong to it (required keys, duty-like field, flag keys).
TOPOLOGY_FIELDS = {name: _topology_keys(t) for name, t in TOPOLOGY.items()}
_SPECIFIC = {k for keys in TOPOLOGY_FIELDS.values() for k in keys}

#: The design sections a design panel shows, with their headings.
SECTIONS = (("bridge", "Bridge leg", Bridge), ("gate", "High-side gate", Gate), ("driver", "Driver, floating side", Driver),
            ("aux", "Aux rail", Aux), ("checks", "Margins and temperature", Checks))

#: Fields that get a slider beside their text box: path → "log" (a frequency) or "lin".
SLIDER_FIELDS = {"bridge.f_sw": "log", "checks.t_amb": "lin"}


@dataclass(frozen=True)
class Field:
    """One leaf of the form.

    Attributes
    ----------
    path : str
        Design-file path (``"bridge.f_sw"``, ``"options[1].c_fly.c"``), as DesignError names it.
    name : str
        The key itself (the label shown).
    spec : Spec
        Unit, meaning, allowed range.
    editable : bool
        False for values edited in the design file only (a DC-bias curve).
    """

    path: str
    name: str
    spec: Spec
    editable: bool = True

    @property
    def label(self) -> str:
        """What the form calls the field: its key, or for a part's value the part's name
        (``c_fly`` for ``c_fly.c``) and for a part's other keys ``part.key`` (``c_fly.esr``)."""
        parts = self.path.split(".")
        if len(parts) >= 3 and not parts[-2].endswith("]"):
            return parts[-2] if parts[-1] == "c" else f"{parts[-2]}.{parts[-1]}"
        return self.name

    @property
    def unit(self) -> str:
        """Unit shown beside the box ("" for plain numbers)."""
        return "" if self.spec.unit in ("-", "") else self.spec.unit

    @property
    def tooltip(self) -> str:
        """Meaning and allowed values, in plain words."""
        extra = " (leave empty for none)" if self.spec.nullable else ""
        return f"{self.spec.doc}; {self.spec.allowed()}{extra}"


def bridge_fields(topology: str) -> tuple:
    """Names of the bridge fields shown for a topology, in the design file's order."""
    own = TOPOLOGY_FIELDS[topology]
    return tuple(n for n in specs(Bridge) if n not in _SPECIFIC or n in own)


def _leaves(cls, value: Any, prefix: str) -> list:
    out = []
    for f in dataclasses.fields(cls):
        spec = f.metadata.get("spec")
        if spec is None:
            continue
        path = f"{prefix}.{f.name}"
        if spec.kind == "capacitor":
            out += _leaves(Capacitor, None, path)
        elif spec.kind == "diode":
            sub = value.get(f.name) if isinstance(value, dict) else None
            kind = JunctionDiode if isinstance(sub, dict) and "i_s" in sub else LinearDiode
            out += _leaves(kind, None, path)
        else:
            out.append(Field(path, f.name, spec, editable=spec.kind != "curve"))
    return out


def section_fields(section: str, topology: str | None = None) -> list:
    """The :class:`Field` leaves of a design section (bridge: only those of ``topology``)."""
    cls = dict((k, c) for k, _, c in SECTIONS)[section]
    leaves = _leaves(cls, None, section)
    if section == "bridge" and topology is not None:
        shown = set(bridge_fields(topology))
        leaves = [f for f in leaves if f.name in shown]
    return leaves


def option_fields(option: dict, index: int) -> list:
    """The :class:`Field` leaves of one option (a design-file dict), from its kind's option class."""
    return _leaves(option_class(option["kind"]), option, f"options[{index}]")


def field_text(value: Any) -> Any:
    """What a text box shows for a design-file value (None → empty; bools and choices unchanged)."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return value
    if isinstance(value, float):
        return repr(value)
    return value if isinstance(value, str) else str(value) if isinstance(value, int) else value


def _texts(node: Any) -> Any:
    if isinstance(node, dict):
        return {k: _texts(v) for k, v in node.items()}
    if isinstance(node, list) and not (node and isinstance(node[0], list)):  # options; a curve stays
        return [_texts(v) for v in node]
    return field_text(node)



def new_option(kind: str, design: Design | None = None) -> dict:
    """A starting point for a new option of ``kind`` (a design-file dict, readable numbers).

    A copy of the first option of that kind in ``design``, else of the built-in demo design's (an
    invented scenario); the user edits it from there. No value is made up here.
    """
    pool = [design_to_dict(design, readable=True)["options"]] if design is not None else []
    pool.append(design_to_dict(load_design(DEMO), readable=True)["options"])
    for options in pool:
        for o in options:
            if o["kind"] == kind:
                return copy.deepcopy(o)
    raise KeyError(f"no template for an option of kind {kind!r}")


class DesignForm:
    """A design as it is being typed (see the module notes).

    Parameters
    ----------
    design : Design, dict, path or JSON text
        The starting design (anything :func:`explorer.load_design` accepts).

    Attributes
    ----------
    data : dict
        The design-file dict with texts as typed at the number leaves.
    """

    def __init__(self, design):
        self.reset(load_design(design))

    def reset(self, design: Design) -> None:
        """Start over from a valid design (every text replaced)."""
        d = design_to_dict(design, readable=True)
        self.data = {k: (_texts(v) if isinstance(v, (dict, list)) else v) for k, v in d.items()}
        self.last_valid: Design = design

    # ------------------------------------------------------------------ leaves
    def get(self, path: str) -> Any:
        node: Any = self.data
        for p in split_path(path):
            node = node[p]
        return node

    def set(self, path: str, value: Any) -> None:
        """Set one leaf to what the user typed or picked (no validation here)."""
        parts = split_path(path)
        node: Any = self.data
        for p in parts[:-1]:
            node = node[p]
        node[parts[-1]] = value

    @property
    def topology(self) -> str:
        return self.data["bridge"]["topology"]

    @property
    def options(self) -> list:
        return self.data["options"]

    # ------------------------------------------------------------------ options
    def add_option(self, kind: str) -> int:
        """Append a new option of ``kind`` (see :func:`new_option`) with a free label; its index."""
        o = new_option(kind, self.last_valid)
        o["label"] = self._free_label(o["label"])
        self.options.append(o)
        return len(self.options) - 1

    def duplicate_option(self, index: int) -> int:
        o = copy.deepcopy(self.options[index])
        o["label"] = self._free_label(f"{o['label']} copy")
        self.options.insert(index + 1, o)
        return index + 1

    def remove_option(self, index: int) -> None:
        del self.options[index]

    def _free_label(self, label: str) -> str:
        used = {o.get("label") for o in self.options}
        if label not in used:
            return label
        n = 2
        while f"{label} ({n})" in used:
            n += 1
        return f"{label} ({n})"

    # ------------------------------------------------------------------ build
    def to_design_dict(self) -> dict:
        """The dict :meth:`build` validates: empty texts of nullable fields are null, and bridge
        fields the topology hides keep their values from the last valid design (their texts stay
        in the form for when the topology shows them again)."""
        d = copy.deepcopy(self.data)
        topo = d["bridge"].get("topology")
        shown = set(bridge_fields(topo)) if topo in TOPOLOGY else set(specs(Bridge))
        before = design_to_dict(self.last_valid)["bridge"]
        for name in specs(Bridge):
            if name not in shown:
                d["bridge"][name] = before[name]
        _nulls(d)
        return d

    def build(self) -> Design:
        """The validated design; raises :class:`~explorer.errors.DesignError` (the texts stay)."""
        design = load_design(self.to_design_dict())
        self.last_valid = design
        return design


def _nulls(node: Any) -> None:
    """Empty text → null, in place (the loader then says whether the field may be null)."""
    items = node.items() if isinstance(node, dict) else enumerate(node) if isinstance(node, list) else ()
    for k, v in list(items):
        if isinstance(v, str) and not v.strip() and k not in ("label", "title"):
            node[k] = None
        elif isinstance(v, (dict, list)):
            _nulls(v)
