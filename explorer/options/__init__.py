"""Supply option models, one module per family.

Each module exposes ``evaluate_option(design, option) -> OptionResult``. The
registry maps an option ``kind`` to its module; models are imported lazily so
``import explorer`` stays light.
"""

from __future__ import annotations

import importlib

__all__ = ["MODULES", "model_for"]

#: option kind → module implementing ``evaluate_option``.
MODULES = {
    "bootstrap": "explorer.options.bootstrap",
    "charge_pump": "explorer.options.charge_pump",
    "isolated": "explorer.options.isolated",
}


def model_for(kind: str):
    """The ``evaluate_option`` function for an option kind, or None if that model is not built."""
    try:
        mod = importlib.import_module(MODULES[kind])
    except ModuleNotFoundError as e:
        if e.name == MODULES[kind]:
            return None
        raise
    return getattr(mod, "evaluate_option", None)
