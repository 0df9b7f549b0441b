"""Supply option models, one module per family, and the registry that every other module asks.

Each family is a :class:`~explorer.options.base.SupplyModel` (its module's ``MODEL``),
registered here by kind. The built-in families are registered lazily with their option
classes, so designs load without importing the models and ``import explorer`` stays light.
A new family registers itself in the same way (see DEVELOPERS.md, "How to add a supply
family").
"""

from __future__ import annotations

from ..design import BootstrapOption, ChargePumpOption, IsolatedOption
from .base import (NotSupported, SupplyModel, kinds, option_class, option_classes, register, register_lazy,
                   supply_model, unregister)

__all__ = ["SupplyModel", "NotSupported", "register", "register_lazy", "unregister", "supply_model",
           "option_class", "option_classes", "kinds", "model_for"]

register_lazy("bootstrap", "explorer.options.bootstrap", BootstrapOption)
register_lazy("charge_pump", "explorer.options.charge_pump", ChargePumpOption)
register_lazy("isolated", "explorer.options.isolated", IsolatedOption)


def model_for(kind: str):
    """The ``evaluate`` function of an option kind, or None if that model is not built."""
    model = supply_model(kind)
    return None if model is None else model.evaluate
