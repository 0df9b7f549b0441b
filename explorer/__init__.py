"""explorer: compare floating supplies for high-side gate drivers of bridge legs.

Public API::

    import explorer
    design = explorer.load_design("my_design.json")   # or a dict, or JSON text
    result = explorer.evaluate(design)                 # a Comparison
    result.to_dict()                                   # the explorer-result JSON contract

The core depends on numpy and scipy only; the notebook panels live in
``explorer.panels`` and are imported only when used.
"""

from .compare import CAUTION, RANKINGS, Comparison, evaluate
from .demo import DEMO, demo_design
from .design import Design, design_to_dict, load_design, replace_field, replace_fields, save_design
from .errors import DesignError, ExplorerWarning, ModelValidityWarning, RuleViolation
from .rules import assert_rules, check_rules, load_rules
from .units import format_eng, parse_eng

__version__ = "0.1.0"

__all__ = [
    "CAUTION", "RANKINGS", "Comparison", "evaluate", "DEMO", "demo_design", "Design",
    "design_to_dict", "load_design", "replace_field", "replace_fields", "save_design", "DesignError",
    "ExplorerWarning", "ModelValidityWarning", "format_eng", "parse_eng", "__version__",
    "RuleViolation", "assert_rules", "check_rules", "load_rules",
]
