"""Every figure of every option on a set of designs equals a stored copy.

The stored files (tests/reference/golden/*.json) are the explorer-result JSON made by
``tests/reference/golden/make_golden.py``. They are this project's own earlier output, not an outside
reference: this test guards against unintended change. The physics itself is checked against outside
sources in the other test files. A change that moves figures on purpose regenerates the files and says
in its commit which moved and why.

Numbers are compared to 1e-6 of their size (:data:`REL`): numpy picks its SIMD kernels (exp, log,
sums) and OpenBLAS its matrix kernels by the CPU it runs on, so the same code gives results that
differ from one machine to another. Seen here between two CPUs: 1e-15 relative on most figures, up to
3e-7 on a pump's RMS currents where the pump is barely loaded (a small RMS from the phase integrals of
currents a thousand times larger), and any value on the energy-balance residuals, which are rounding
by definition (compared to :data:`RESIDUAL` in absolute terms). A change of the physics or of a
figure's definition moves figures far more than that. Text, flags and counts must be equal. A pure restructuring is held to the last bit on one machine:
``make_golden.py DIR`` at the base commit writes copies made on this machine, and
``EXPLORER_GOLDEN=DIR`` makes this test compare with them exactly (DEVELOPERS.md, "Speed changes").
"""

from __future__ import annotations

import importlib.util
import json
import math
import os
import pathlib

import pytest

HERE = pathlib.Path(__file__).resolve().parent / "reference" / "golden"
_spec = importlib.util.spec_from_file_location("make_golden", HERE / "make_golden.py")
make_golden = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(make_golden)

#: Relative agreement asked of every number against the stored copies (module notes).
REL = 1e-6
#: Largest energy-balance residual accepted on either side [W] (fields named ``*_residual``: rounding
#: residues of near-cancelling terms, so no relative agreement is asked of them).
RESIDUAL = 1e-12


def _close(a: float, b: float, exact: bool, path: str = "") -> bool:
    if exact or a == b:
        return a == b
    if not (math.isfinite(a) and math.isfinite(b)):
        return False
    if path.rsplit(".", 1)[-1].endswith("_residual"):
        return abs(a) <= RESIDUAL and abs(b) <= RESIDUAL
    return abs(a - b) <= REL * max(abs(a), abs(b))


def _diff(a, b, path="", exact=False) -> list:
    """Paths where two JSON trees differ."""
    num = (int, float)
    if isinstance(a, num) and isinstance(b, num) and not isinstance(a, bool) and not isinstance(b, bool):
        if isinstance(a, float) or isinstance(b, float):
            return [] if _close(float(a), float(b), exact, path) else [f"{path}: {a!r} != {b!r}"]
    if type(a) is not type(b):
        return [f"{path}: {a!r} != {b!r}"]
    if isinstance(a, dict):
        out = [f"{path}.{k}: missing on one side" for k in set(a) ^ set(b)]
        for k in sorted(set(a) & set(b)):
            out += _diff(a[k], b[k], f"{path}.{k}", exact)
        return out
    if isinstance(a, list):
        if len(a) != len(b):
            return [f"{path}: length {len(a)} != {len(b)}"]
        return [x for i, (u, v) in enumerate(zip(a, b)) for x in _diff(u, v, f"{path}[{i}]", exact)]
    return [] if a == b else [f"{path}: {a!r} != {b!r}"]


def test_diff_tells_rounding_from_change():
    # the comparison itself: last-bit scatter passes, a change in the 1e-6 place, a text or a count does not
    assert not _diff({"v": 11.997649565008171}, {"v": 11.99764956500817})
    assert _diff({"v": 11.997649565008171}, {"v": 11.997649565008171}, exact=True) == []
    assert _diff({"v": 11.997649565008171}, {"v": 11.99764956500817}, exact=True)
    assert _diff({"v": 12.0}, {"v": 12.00002})
    assert not _diff({"energy_residual": 7.9e-15}, {"energy_residual": 1.3e-14})
    assert _diff({"energy_residual": 7.9e-15}, {"energy_residual": 1e-9})
    assert _diff({"n": 3}, {"n": 4}) and _diff({"s": "holds"}, {"s": "fails"})
    assert _diff({"x": [1.0, 2.0]}, {"x": [1.0]}) and _diff({"f": True}, {"f": 1})


@pytest.mark.parametrize("name", sorted(make_golden.VARIANTS))
def test_result_json_equals_stored_copy(name):
    design = make_golden.designs()[name]
    fresh = json.loads(make_golden.result_json(design))
    own = os.environ.get("EXPLORER_GOLDEN")
    where = pathlib.Path(own) if own else HERE
    stored = json.loads((where / f"{name}.json").read_text())
    diffs = _diff(stored, fresh, exact=bool(own))
    assert not diffs, (f"{name}: {len(diffs)} figures differ from {where} "
                       f"({'to the last bit' if own else f'beyond {REL:g} relative'}), e.g.\n" + "\n".join(diffs[:10]))
