"""The house rules of DEVELOPERS.md that the code's shape can check (read with ast, nothing imported).

* A supply model is composed of small steps: no function in ``explorer/options/`` is longer than
  :data:`MAX_LINES` lines (its docstring not counted). Common practice, no source.
* A module uses another module only through its public names: no ``from x import _name`` of a
  private name of another module, in the package or in the tests (``from x import public as _alias``
  is fine), and no ``module._name`` through an imported module.
"""

from __future__ import annotations

import ast
import pathlib

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "explorer"
#: Longest function allowed in explorer/options/, docstring not counted (common practice, no source).
MAX_LINES = 80


def _sources(*dirs: pathlib.Path):
    for d in dirs:
        yield from sorted(p for p in d.rglob("*.py") if ".venv" not in p.parts)


def _private(name: str) -> bool:
    return name.startswith("_") and not (name.startswith("__") and name.endswith("__"))


def _code_lines(fn: ast.AST) -> int:
    """Lines of a function from its ``def`` to its end, less its docstring's lines."""
    n = fn.end_lineno - fn.lineno + 1
    body = fn.body
    if body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant) \
            and isinstance(body[0].value.value, str):
        n -= body[0].end_lineno - body[0].lineno + 1
    return n


def _where(path: pathlib.Path):
    return path.relative_to(ROOT) if path.is_relative_to(ROOT) else path


def long_functions(path: pathlib.Path, limit: int) -> list[str]:
    tree = ast.parse(path.read_text(), filename=str(path))
    return [f"{_where(path)}:{fn.lineno} {fn.name} ({_code_lines(fn)} lines)"
            for fn in ast.walk(tree) if isinstance(fn, (ast.FunctionDef, ast.AsyncFunctionDef))
            and _code_lines(fn) > limit]


def private_imports(path: pathlib.Path) -> list[str]:
    """Private names one module takes from another: ``from m import _x`` and ``m._x`` on an imported module."""
    tree = ast.parse(path.read_text(), filename=str(path))
    out, modules = [], set()
    where = _where(path)
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            for a in node.names:
                if _private(a.name):
                    out.append(f"{where}:{node.lineno} from {'.' * node.level}{node.module or ''} import {a.name}")
                elif (node.module or "").startswith("explorer") or node.level:
                    modules.add(a.asname or a.name)  # may be a module (from explorer import design)
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name.startswith("explorer"):
                    modules.add(a.asname or a.name.split(".")[0])
    for node in ast.walk(tree):
        if isinstance(node, ast.Attribute) and _private(node.attr):
            base = node.value
            while isinstance(base, ast.Attribute):
                base = base.value
            if isinstance(base, ast.Name) and base.id in modules and base.id not in ("self", "cls"):
                out.append(f"{where}:{node.lineno} {ast.unparse(node)}")
    return out


def test_the_checks_can_fail(tmp_path):
    bad = tmp_path / "bad.py"
    bad.write_text("from explorer.design import _f\nimport explorer.design as d\nx = d._REQUIRED\n\n"
                   "def f():\n    '''doc\n\n    more'''\n" + "    x = 1\n" * (MAX_LINES) + "\n")
    assert len(private_imports(bad)) == 2
    assert long_functions(bad, MAX_LINES) and not long_functions(bad, MAX_LINES + 1)


@pytest.mark.parametrize("path", list(_sources(PACKAGE / "options")), ids=lambda p: p.name)
def test_options_are_composed_of_small_functions(path):
    assert long_functions(path, MAX_LINES) == []


@pytest.mark.parametrize("path", list(_sources(PACKAGE, ROOT / "tests", ROOT / "bench", ROOT / "notebooks")),
                         ids=lambda p: str(p.relative_to(ROOT)))
def test_no_module_takes_a_private_name_of_another(path):
    assert private_imports(path) == []
