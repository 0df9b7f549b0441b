"""explorer: compare floating supplies for high-side gate drivers of bridge legs.

Public API::

    import explorer
    design = explorer.load_design("my_design.json")   # or a dict, or JSON text
    result = explorer.evaluate(design)                 # a Comparison
    result.to_dict()                                   # the explorer-result JSON contract

The core depends on numpy and scipy only (scipy imported only by the paths that need it); the notebook panels live in
``explorer.panels`` and are imported only when used.
"""

from .compare import CAUTION, RANKINGS, Comparison, evaluate
from .demo import DEMO, demo_design
from .design import Design, design_to_dict, load_design, replace_field, replace_fields, save_design
from .errors import DesignError, ExplorerWarning, ModelValidityWarning, RuleViolation
from .units import format_eng, parse_eng

__version__ = "0.1.0"

#: Public names loaded on first use (the rule machinery is not needed to evaluate a design, and a
#: command-line evaluation should not pay for importing it).
_LAZY = {"assert_rules": "rules", "check_rules": "rules", "load_rules": "rules"}


def __getattr__(name):
    if name in _LAZY:
        import importlib
        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(_LAZY))

__all__ = [
    "CAUTION", "RANKINGS", "Comparison", "evaluate", "DEMO", "demo_design", "Design",
    "design_to_dict", "load_design", "replace_field", "replace_fields", "save_design", "DesignError",
    "ExplorerWarning", "ModelValidityWarning", "format_eng", "parse_eng", "__version__",
    "RuleViolation", "assert_rules", "check_rules", "load_rules",
]
