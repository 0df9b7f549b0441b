"""Rebuild every notebook under notebooks/ from its source, execute it and store its outputs.

Run after any change that moves a figure or a printed text (nbval in `make test` fails until you do):

    .venv/bin/python notebooks/build_notebooks.py            # all of them
    .venv/bin/python notebooks/build_notebooks.py lv_buck_5v_aux template   # some of them

Each notebook's source is ``notebooks/src/<name>.py`` in the "percent" cell format: a line
``# %%`` starts a code cell, ``# %% [markdown]`` a Markdown cell whose lines start with ``# ``.
The notebooks use only the public API. Their stored outputs are what a colleague reads and what
nbval re-checks in CI, so the build is deterministic: cell ids are numbered, execution timings are
not recorded, and the ids a run draws at random (widget model ids, UUIDs of Bokeh documents) are
renumbered in order of appearance. A notebook over :data:`MAX_BYTES` is an error.
"""

from __future__ import annotations

import json
import pathlib
import re
import sys

import nbformat
from nbconvert.preprocessors import ExecutePreprocessor

HERE = pathlib.Path(__file__).parent
SOURCES = HERE / "src"
#: Largest stored notebook [bytes] (tests/test_notebooks.py checks it too).
MAX_BYTES = 1_000_000
#: Longest time one cell may run [s].
CELL_TIMEOUT = 600


def parse_source(text: str) -> list[tuple[str, str]]:
    """Cells ``(kind, source)`` of a percent-format file; ``kind`` is ``"md"`` or ``"code"``."""
    cells: list[tuple[str, list[str]]] = []
    for line in text.splitlines():
        if line.startswith("# %%"):
            cells.append(("md" if "[markdown]" in line else "code", []))
        elif cells:
            kind, lines = cells[-1]
            if kind == "md":
                if line and not line.startswith("#"):
                    raise ValueError(f"Markdown line without '# ': {line!r}")
                line = line[2:] if line.startswith("# ") else line[1:]
            lines.append(line)
        elif line.strip():
            raise ValueError(f"text before the first '# %%' cell marker: {line!r}")
    return [(kind, "\n".join(lines).strip("\n")) for kind, lines in cells]


#: Ids drawn at random per run, renumbered so that a rebuild gives the same bytes.
_VOLATILE = [
    (re.compile(r"[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}"),
     lambda i: f"00000000-0000-4000-8000-{i:012x}"),
    (re.compile(r"(?<![0-9a-fA-F])[0-9a-f]{32}(?![0-9a-fA-F])"), lambda i: f"{i:032x}"),
]


def renumber_ids(text: str) -> str:
    """Replace each random id by a counter in order of first appearance (same id, same number)."""
    for pattern, make in _VOLATILE:
        seen: dict[str, str] = {}
        text = pattern.sub(lambda m: seen.setdefault(m.group(0), make(len(seen) + 1)), text)
    return text


def _join_streams(outputs: list) -> list:
    """Consecutive stream outputs of the same stream as one (the text is the same)."""
    out: list = []
    for o in outputs:
        if (o.get("output_type") == "stream" and out and out[-1].get("output_type") == "stream"
                and out[-1].get("name") == o.get("name")):
            out[-1]["text"] = "".join(out[-1]["text"]) + "".join(o["text"])
        else:
            out.append(o)
    return out


def build(name: str) -> pathlib.Path:
    """Execute ``src/<name>.py`` and write ``<name>.ipynb`` with its outputs."""
    cells = parse_source((SOURCES / f"{name}.py").read_text(encoding="utf-8"))
    nb = nbformat.v4.new_notebook()
    nb.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3", "language": "python"}
    for kind, src in cells:
        nb.cells.append(nbformat.v4.new_markdown_cell(src) if kind == "md" else nbformat.v4.new_code_cell(src))
    ExecutePreprocessor(timeout=CELL_TIMEOUT, kernel_name="python3", record_timing=False).preprocess(
        nb, {"metadata": {"path": str(HERE)}})
    for i, c in enumerate(nb.cells):  # stable ids keep diffs small
        c["id"] = f"cell-{i:02d}"
        if c.get("outputs"):  # how print output is cut into chunks depends on timing: join them
            c["outputs"] = _join_streams(c["outputs"])
    nbformat.validate(nb)
    # renumber in the order the kernel made the ids (stored widget state is keyed by them), then sort
    numbered = json.loads(renumber_ids(json.dumps(nb, ensure_ascii=False)))
    text = json.dumps(numbered, indent=1, sort_keys=True, ensure_ascii=False) + "\n"
    path = HERE / f"{name}.ipynb"
    size = len(text.encode("utf-8"))
    if size > MAX_BYTES:
        raise SystemExit(f"{path.name} is {size} bytes, over the {MAX_BYTES}-byte limit: trim its outputs")
    path.write_text(text, encoding="utf-8")
    print(f"wrote {path} ({size} bytes)", file=sys.stderr)
    return path


def names() -> list[str]:
    """Every notebook this script builds (one per source file)."""
    return sorted(p.stem for p in SOURCES.glob("*.py"))


if __name__ == "__main__":
    wanted = sys.argv[1:] or names()
    unknown = sorted(set(wanted) - set(names()))
    if unknown:
        raise SystemExit(f"no source for {', '.join(unknown)}; notebooks: {', '.join(names())}")
    for n in wanted:
        build(n)
