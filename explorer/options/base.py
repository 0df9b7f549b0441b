"""The supply-model protocol and the one registry of supply families.

Every module that needs something of a supply family (the comparison, the
tolerance corners and Monte Carlo, sweeps, sizing, the netlist export, the
design loader) asks the registry for the family's :class:`SupplyModel` and
calls it; none of them branches on the option's type. A family is one
subclass of :class:`SupplyModel` in its own module under ``explorer/options/``,
registered by kind (see DEVELOPERS.md, "How to add a supply family").

The built-in families are registered lazily (:func:`register_lazy`): their
option classes are light dataclasses in :mod:`explorer.design`, and their model
modules are imported the first time a model is asked for, so ``import explorer``
stays light.
"""

from __future__ import annotations

import dataclasses
import importlib
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from ..capacitors import parse_dielectric
from ..errors import DesignError

__all__ = ["SupplyModel", "NotSupported", "register", "register_lazy", "unregister", "supply_model",
           "option_class", "option_classes", "kinds", "cap_range"]

#: Spread factors every option shares (tolerance.Factors names them); a model pins the ones that
#: cannot act on it at their nominal value in :meth:`SupplyModel.spread_ranges`.
SPREADS = ("k_c", "k_out", "q_g", "i_q", "v_dd", "v_f", "t")


class NotSupported(DesignError):
    """An optional path (a batched rail, a netlist) that this family does not provide."""


def cap_range(cap) -> tuple[float, float]:
    """Lowest and highest capacitance factor of one capacitor (tolerance × temperature class) [-]."""
    d = parse_dielectric(cap.dielectric)
    return (1 - cap.c_tol) * (1 + d.dc_low), (1 + cap.c_tol) * (1 + d.dc_high)


def scaled_capacitor(cap, k: float):
    """The capacitor with its tolerance and class already applied (effective nominal value ``c·k``)."""
    return dataclasses.replace(cap, c=cap.c * k, c_tol=0.0, dielectric="ideal")


class SupplyModel:
    """What a supply family tells the rest of explorer (subclass it; one instance per family).

    Required: :attr:`kind`, :attr:`option_class` and :meth:`evaluate`. Everything else has a
    default that fits a family with no diode and no own clock; the optional fast paths
    (:meth:`rail_min_batch`, :meth:`rail_min_map`) and the netlist writer raise
    :class:`NotSupported` until a family provides them, and their callers then take the general
    path (Monte Carlo loops over :meth:`evaluate`, the margin map runs a sweep) or say so.

    Attributes
    ----------
    kind : str
        The design-file ``kind`` of the option (e.g. ``"bootstrap"``).
    option_class : type
        Frozen dataclass of the option's keys, every field with its ``Spec``
        (:func:`explorer.design.spec_field`).
    capacitor_fields : tuple of str
        Option attributes holding a :class:`~explorer.design.Capacitor`, in spread order: the
        first takes the factor ``k_c``, the second ``k_out`` (at most two).
    capacitor_names : tuple of str
        The capacitors of :meth:`capacitors` as a schematic names them, in the same order (for corner
        names in words); empty: made from :attr:`capacitor_fields` (``c_fly`` → ``C_fly``).
    sized_capacitor : str or None
        Option field path that :func:`explorer.sizing.size_capacitor` chooses (e.g. ``"c"``,
        ``"c_fly.c"``); None: the family has no capacitor to size that way.
    glossary_parts : tuple of (title, class)
        Extra design-file objects of the family for the glossary (e.g. its diode forms).
    netlist_probes : dict
        Extra probe expressions of an exported netlist by meaning, besides ``rail`` and ``sw``;
        ``cap`` (the rail capacitor without its ESR drop) is expected.
    netlist_notes : tuple of str
        Header lines of an exported netlist that explain how it relates to the model.
    """

    kind: str = ""
    option_class: type = type(None)
    capacitor_fields: tuple = ()
    capacitor_names: tuple = ()
    sized_capacitor: str | None = None
    glossary_parts: tuple = ()
    netlist_probes: dict = {"cap": "v(vb)-v(co)"}
    netlist_notes: tuple = ()

    # ------------------------------------------------------------------ evaluation
    def evaluate(self, design, option, *, corner: str = "nominal"):
        """Every figure of one option: an :class:`~explorer.results.OptionResult`."""
        raise NotImplementedError(f"{type(self).__name__}.evaluate")

    # ------------------------------------------------------------------ tolerance
    def capacitors(self, option) -> tuple:
        """The option's capacitors, in spread order (the ones its capacitance spread acts on)."""
        return tuple(getattr(option, name) for name in self.capacitor_fields)

    def apply_factors(self, design, option, factors) -> Any:
        """The option with scalar spread factors applied (``tolerance.apply_factors`` does the shared parts).

        Default: each capacitor of :attr:`capacitor_fields` at ``c·k`` with tolerance and
        temperature class already applied (``k_c`` for the first, ``k_out`` for the second).
        """
        ks = (factors.k_c, factors.k_out)
        return dataclasses.replace(option, **{name: scaled_capacitor(getattr(option, name), k)
                                              for name, k in zip(self.capacitor_fields, ks)})

    def spread_ranges(self, design, option) -> dict:
        """Range (low, high) of every spread factor of :data:`SPREADS` for this option.

        Default: capacitance, gate charge, quiescent current and aux rail spread; the diode
        forward voltage and the temperature (through leakage) are pinned at nominal.
        """
        s = design.spread
        caps = self.capacitors(option)
        t_amb = design.checks.t_amb
        return {"k_c": cap_range(caps[0]) if caps else (1.0, 1.0),
                "k_out": cap_range(caps[1]) if len(caps) > 1 else (1.0, 1.0),
                "q_g": (1 - s.q_g, 1 + s.q_g), "i_q": (1 - s.i_q, 1 + s.i_q),
                "v_dd": (1 - design.aux.v_dd_tol, 1 + design.aux.v_dd_tol),
                "v_f": (1.0, 1.0), "t": (t_amb, t_amb)}

    def temperature_changes(self, design, index: int, option, t: float) -> dict:
        """Design changes (field path → value) of this option at operating temperature ``t`` [°C]."""
        return {}

    # ------------------------------------------------------------------ optional fast paths
    def rail_min_batch(self, design, option, factors):
        """Steady-state rail minimum [V] for many factor sets at once (equal to :meth:`evaluate` per point)."""
        raise NotSupported(f"options[{option.label}]", "no batched rail minimum for this kind", self.kind)

    def rail_min_map(self, design, option, f_sw, duty, *, corner: str = "nominal"):
        """Steady-state rail minimum [V] over broadcast f_sw [Hz] × HS duty [-] grids."""
        raise NotSupported(f"options[{option.label}]", "no vectorised margin map for this kind", self.kind)

    @property
    def has_rail_min_batch(self) -> bool:
        return type(self).rail_min_batch is not SupplyModel.rail_min_batch

    @property
    def has_rail_min_map(self) -> bool:
        return type(self).rail_min_map is not SupplyModel.rail_min_map

    # ------------------------------------------------------------------ netlist export
    def netlist_clock(self, design, option):
        """Phase durations [s] of the option's own clock (None: it has none)."""
        return None

    def netlist_settle_time(self, design, option, result, corner: str) -> float:
        """Time for the rail to settle after start-up [s], for the default span of a netlist."""
        raise NotSupported(f"options[{option.label}]", "no netlist writer for this kind", self.kind)

    def netlist_delivered(self, design, option, corner: str, schedule, n_cycles: int, t_uvlo):
        """HS pulses the driver delivers during the start-up schedule (bool per interval).

        Default: every HS pulse from the model's time to UVLO-on (none if it never gets there).
        """
        return schedule.hs_on & (t_uvlo is not None) & (schedule.t_start >= (t_uvlo if t_uvlo is not None
                                                                             else 0.0))

    def netlist_lines(self, design, option, plan, corner: str) -> list:
        """SPICE lines of the supply between the aux rail and the floating rail (nodes vb, vs)."""
        raise NotSupported(f"options[{option.label}]", "no netlist writer for this kind", self.kind)


# --------------------------------------------------------------------------- registry

@dataclass
class _Entry:
    kind: str
    module: str | None
    option_class: type | None
    model: SupplyModel | None


_REGISTRY: dict[str, _Entry] = {}


def register(model: SupplyModel) -> SupplyModel:
    """Register a family's model instance under its kind (replacing an earlier entry of that kind)."""
    if not isinstance(model, SupplyModel) or not model.kind:
        raise TypeError("register() takes a SupplyModel instance with a kind")
    _REGISTRY[model.kind] = _Entry(model.kind, None, model.option_class, model)
    return model


def register_lazy(kind: str, module: str, option_class: type | None = None) -> None:
    """Register a family whose model is the ``MODEL`` of ``module``, imported on first use.

    ``option_class`` lets designs be parsed without importing the model; when omitted it is
    taken from the model (importing the module).
    """
    _REGISTRY[kind] = _Entry(kind, module, option_class, None)


def unregister(kind: str) -> None:
    """Remove a family from the registry (a test's toy family, for instance)."""
    _REGISTRY.pop(kind, None)


def kinds() -> tuple:
    """The registered option kinds, in registration order."""
    return tuple(_REGISTRY)


def _entry(kind: str) -> _Entry:
    try:
        return _REGISTRY[kind]
    except (KeyError, TypeError):
        raise DesignError("kind", f"expected one of {', '.join(map(repr, _REGISTRY))}", kind) from None


def supply_model(kind: str) -> SupplyModel | None:
    """The model of an option kind, or None when its module is not built in this version.

    Raises
    ------
    DesignError
        For a kind that is not registered.
    """
    e = _entry(kind)
    if e.model is None:
        try:
            mod = importlib.import_module(e.module)
        except ModuleNotFoundError as err:
            if err.name == e.module:
                return None
            raise
        e.model = mod.MODEL
    return e.model


def option_class(kind: str) -> type:
    """The option dataclass of a kind (without importing its model when it was registered with one)."""
    e = _entry(kind)
    if e.option_class is None:
        model = supply_model(kind)
        if model is None:
            raise DesignError("kind", "the model of this option kind is not available in this version", kind)
        e.option_class = model.option_class
    return e.option_class


class _OptionClasses(Mapping):
    """Kind → option class, read from the registry (a class is resolved only when asked for)."""

    def __contains__(self, kind) -> bool:
        return isinstance(kind, str) and kind in _REGISTRY

    def __getitem__(self, kind: str) -> type:
        if kind not in self:
            raise KeyError(kind)
        return option_class(kind)

    def __iter__(self):
        return iter(kinds())

    def __len__(self) -> int:
        return len(_REGISTRY)


#: The registry as a mapping kind → option class (what the design loader picks a class from).
option_classes = _OptionClasses()
