"""Every figure of every option on a set of designs equals a stored copy, to the last bit.

The stored files (tests/reference/golden/*.json) are the explorer-result JSON made by
``tests/reference/golden/make_golden.py``. They are this project's own earlier output, not an outside
reference: this test guards against unintended change (a restructuring must leave every figure
bit-identical). The physics itself is checked against outside sources in the other test files. A
change that moves figures on purpose regenerates the files and says in its commit which moved and why.
"""

from __future__ import annotations

import importlib.util
import json
import pathlib

import pytest

HERE = pathlib.Path(__file__).resolve().parent / "reference" / "golden"
_spec = importlib.util.spec_from_file_location("make_golden", HERE / "make_golden.py")
make_golden = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(make_golden)


def _diff(a, b, path="") -> list:
    """Paths where two JSON trees differ (first few only)."""
    if type(a) is not type(b):
        return [f"{path}: {a!r} != {b!r}"]
    if isinstance(a, dict):
        out = [f"{path}.{k}: missing on one side" for k in set(a) ^ set(b)]
        for k in sorted(set(a) & set(b)):
            out += _diff(a[k], b[k], f"{path}.{k}")
        return out
    if isinstance(a, list):
        if len(a) != len(b):
            return [f"{path}: length {len(a)} != {len(b)}"]
        return [x for i, (u, v) in enumerate(zip(a, b)) for x in _diff(u, v, f"{path}[{i}]")]
    return [] if a == b else [f"{path}: {a!r} != {b!r}"]


@pytest.mark.parametrize("name", sorted(make_golden.VARIANTS))
def test_result_json_is_bit_identical_to_stored_copy(name):
    design = make_golden.designs()[name]
    fresh = json.loads(make_golden.result_json(design))
    stored = json.loads((HERE / f"{name}.json").read_text())
    diffs = _diff(stored, fresh)
    assert not diffs, f"{name}: {len(diffs)} figures differ, e.g.\n" + "\n".join(diffs[:10])
