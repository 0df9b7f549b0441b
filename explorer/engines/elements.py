"""Two-terminal elements of a switched-capacitor network (see :mod:`explorer.engines.network`).

Nodes are named by strings; ``"0"`` (:data:`GROUND`) is the reference. Element
values may be numpy arrays that broadcast to one shape (a batch of networks of
one topology).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Union

__all__ = ["GROUND", "Cap", "Res", "VSrc", "ISrc", "Element"]


GROUND = "0"


@dataclass(frozen=True)
class Cap:
    """Capacitor ``c`` [F] in series with ``esr`` [Ω] from node ``a`` (+) to ``b``."""

    name: str
    a: str
    b: str
    c: float
    esr: float = 0.0


@dataclass(frozen=True)
class Res:
    """Resistor ``r`` [Ω] from ``a`` to ``b``; a switch when ``closed`` lists its conducting phases."""

    name: str
    a: str
    b: str
    r: float
    closed: tuple | None = None  #: phases in which it conducts (None: always)

    def on(self, p: int) -> bool:
        return self.closed is None or p in self.closed


@dataclass(frozen=True)
class VSrc:
    """Ideal voltage source: v(a) − v(b) = u[``input``] [V]."""

    name: str
    a: str
    b: str
    input: str


@dataclass(frozen=True)
class ISrc:
    """Current source: u[``input``] [A] flows out of node ``a`` through the source into ``b``."""

    name: str
    a: str
    b: str
    input: str


Element = Union[Cap, Res, VSrc, ISrc]
