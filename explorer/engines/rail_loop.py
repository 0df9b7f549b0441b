"""The diode-charged rail's loop: its parameters per interval and the physical constants.

The bootstrap circuit seen from its capacitor (voltage ``V = V_B − V_S``)::

    V_DD ──R──diode──┬── B          C·dV/dt = i_d(V) − I − G·V
                     C              (steps of −q/C at interval starts)
    SW (v_sw) ───────┴── S

Per interval ``j`` of a schedule the loop source is ``v_src = V_DD − v_sw``,
the load is a constant current ``I`` (driver quiescent current, leakage) plus
a conductance ``G`` (gate pull-down while the high side is on), and a charge
``q`` is removed at the interval start (gate charge at turn-on, recovery and
junction charge at switch-node edges). An optional clamp (a Zener across C) holds
the rail at ``v_clamp`` once it gets there: the rail is monotone within an interval,
so a rising rail that reaches the clamp stays at it to the interval's end while the
clamp takes the diode current the loads do not (the maps' ``min(·, v_clamp)``), and
a step that would lift it above the clamp ends at the clamp.

The maps are in :mod:`explorer.engines.rail_linear` (straight-line diode),
:mod:`explorer.engines.rail_junction` (exponential junction), their composition
over a period or a start-up in :mod:`explorer.engines.rail_orbit`, and the
charge and energy integrals in :mod:`explorer.engines.rail_integrals`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["K_B", "Q_E", "broadcast_as", "thermal_voltage", "Loop", "LOOP_ARRAYS", "broadcast_loop", "full_as", "take_loop",
           "loop_fields", "map_loop", "unclamped"]


#: Boltzmann constant [J/K] (SI 2019 exact value, BIPM SI Brochure 9th ed.).
K_B = 1.380649e-23


#: Elementary charge [C] (SI 2019 exact value).
Q_E = 1.602176634e-19


def broadcast_as(x, shape, dtype=None):
    """``x`` broadcast to ``shape``, as ``dtype`` if given (``x`` itself where it already is such an array)."""
    if isinstance(x, np.ndarray) and x.shape == shape and (dtype is None or x.dtype == dtype):
        return x
    return np.broadcast_to(x if dtype is None else np.asarray(x, dtype=dtype), shape)


def thermal_voltage(t_celsius: float) -> float:
    """Thermal voltage V_T = k·T/q [V] at a temperature in °C."""
    return K_B * (t_celsius + 273.15) / Q_E


@dataclass(frozen=True)
class Loop:
    """The charging loop and load of every interval (arrays broadcast to ``(..., n)``).

    Attributes
    ----------
    dt : ndarray [s]
        Interval durations.
    v_src : ndarray [V]
        Loop source V_DD − v_sw during the interval.
    c : ndarray or float [F]
        Effective bootstrap capacitance.
    r : ndarray or float [Ω]
        Total series resistance of the loop: r + esr + r_d (straight line) or
        r + esr + r_s (junction).
    i_load : ndarray or float [A]
        Constant load current drawn from the capacitor during the interval.
    g_load : ndarray or float [S]
        Load conductance during the interval (gate pull-down while HS on).
    q_step : ndarray or float [C]
        Charge removed from the capacitor at the start of the interval
        (negative: charge added).
    v_f : ndarray or float [V]
        Straight-line diode knee voltage (``diode == "linear"``).
    i_s, n_vt : ndarray or float [A], [V]
        Junction saturation current and n·V_T (``diode == "junction"``).
    diode : {"linear", "junction"}
    v_clamp : ndarray, float or None [V]
        Clamp across the capacitor (None: none); see the module notes.
    q_lead : ndarray, float or None [C]
        The part of ``q_step`` drawn first, before the rest of the step (None: none): the
        level-shift reset charge at an HS turn-off, drawn while the switch node is still high,
        before the diode's junction capacitance hands its charge back as the node falls. The rail
        dips to ``v_pre − q_lead/C`` before the step's remainder; only the extremes see it (the
        charge over the step is ``q_step`` either way).
    """

    dt: np.ndarray
    v_src: np.ndarray
    c: np.ndarray
    r: np.ndarray
    i_load: np.ndarray = 0.0
    g_load: np.ndarray = 0.0
    q_step: np.ndarray = 0.0
    v_f: np.ndarray = 0.0
    i_s: np.ndarray = 1e-14
    n_vt: np.ndarray = 0.025
    diode: str = "linear"
    v_clamp: np.ndarray | None = None
    q_lead: np.ndarray | None = None

    @property
    def able(self) -> np.ndarray:
        """The diode may conduct in this interval (its source is above the switch node)."""
        if self.diode == "linear":
            return np.asarray(self.v_src - self.v_f) > 0.0
        return np.asarray(self.v_src) > 0.0


#: The array fields of a :class:`Loop` (``v_clamp`` and ``q_lead`` join them where they are set).
LOOP_ARRAYS = ("dt", "v_src", "c", "r", "i_load", "g_load", "q_step", "v_f", "i_s", "n_vt")


def loop_fields(loop: Loop) -> tuple:
    """The names of the loop's array fields: :data:`LOOP_ARRAYS`, and ``v_clamp`` and ``q_lead`` where set."""
    if loop.v_clamp is None and loop.q_lead is None:
        return LOOP_ARRAYS
    return LOOP_ARRAYS + tuple(k for k in ("v_clamp", "q_lead") if getattr(loop, k) is not None)


def full_as(x, shape) -> np.ndarray:
    """``x`` as a float array of ``shape``: itself where it already is one, else a broadcast copy (one
    fill is cheaper than a broadcast view on the short arrays of a schedule)."""
    if type(x) is np.ndarray and x.shape == shape and x.dtype == np.float64:
        return x
    out = np.empty(shape)
    out[...] = x
    return out


def broadcast_loop(loop: Loop) -> Loop:
    """The loop with every array field a float array of the common shape (the loop itself where they
    already are)."""
    names = loop_fields(loop)
    shape = loop.dt.shape if type(loop.dt) is np.ndarray else None
    for k in names:
        v = getattr(loop, k)
        if not (type(v) is np.ndarray and v.shape == shape and v.dtype == np.float64):
            break
    else:
        return loop
    vals = [getattr(loop, k) for k in names]
    shape = np.broadcast(*vals).shape
    return Loop(**{k: full_as(v, shape) for k, v in zip(names, vals)}, diode=loop.diode)


def map_loop(loop: Loop, fn) -> Loop:
    """The loop with ``fn`` applied to each of its array fields (the clamp too, where set)."""
    return Loop(**{k: fn(getattr(loop, k)) for k in loop_fields(loop)}, diode=loop.diode)


def take_loop(loop: Loop, idx) -> Loop:
    return map_loop(loop, lambda a: a[idx])


def unclamped(loop: Loop) -> Loop:
    """The same loop without its clamp."""
    return loop if loop.v_clamp is None else Loop(**{k: getattr(loop, k) for k in LOOP_ARRAYS}, diode=loop.diode,
                                                  q_lead=loop.q_lead)
