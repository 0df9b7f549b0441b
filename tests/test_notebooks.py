"""The stored notebooks: one per source, small, executed, deterministic ids, and nbval really checks them."""

import importlib.util
import json
import pathlib
import re
import shutil
import subprocess
import sys

import pytest

ROOT = pathlib.Path(__file__).parent.parent
NOTEBOOKS = ROOT / "notebooks"
SANITIZE = NOTEBOOKS / "sanitize.cfg"


def _builder():
    spec = importlib.util.spec_from_file_location("build_notebooks", NOTEBOOKS / "build_notebooks.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


build = _builder()
STORED = sorted(NOTEBOOKS.glob("*.ipynb"))


def test_one_stored_notebook_per_source():
    assert sorted(p.stem for p in STORED) == build.names()
    assert {"demo", "template", "lv_buck_5v_aux", "three_phase_low_speed", "boost_near_unity",
            "hbridge_full_command", "hv_half_bridge_isolated"} <= set(build.names())


@pytest.mark.parametrize("path", STORED, ids=lambda p: p.stem)
def test_stored_notebook_is_small_executed_and_current(path):
    text = path.read_text(encoding="utf-8")
    assert len(text.encode("utf-8")) <= 1_000_000, "over 1 MB: trim its outputs"
    nb = json.loads(text)
    code = [c for c in nb["cells"] if c["cell_type"] == "code"]
    # nbval skips a cell whose execution_count is null, so every code cell must have run
    assert code and all(c["execution_count"] is not None for c in code)
    assert not [o for c in code for o in c["outputs"] if o["output_type"] == "error"]
    # the stored cells are the source's cells (the notebook was rebuilt after the source changed)
    cells = build.parse_source((NOTEBOOKS / "src" / f"{path.stem}.py").read_text(encoding="utf-8"))
    assert [(("md" if c["cell_type"] == "markdown" else "code"), "".join(c["source"])) for c in nb["cells"]] == cells
    # scenarios are said to be invented where they appear
    assert "invent" in "".join(nb["cells"][0]["source"]).lower()


@pytest.mark.parametrize("path", STORED, ids=lambda p: p.stem)
def test_random_ids_are_renumbered(path):
    # a rebuild gives the same bytes: every UUID and 32-hex id is a counter, not a random draw
    text = path.read_text(encoding="utf-8")
    # (numbered in the order the kernel made them, before the keys were sorted, so a second
    # renumbering of the sorted text may permute the counters: check that each one is a counter)
    for h in re.findall(r"(?<![0-9a-fA-F])[0-9a-f]{32}(?![0-9a-fA-F])", text):
        assert int(h, 16) < 100_000, h
    for u in re.findall(r"[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}", text):
        assert u.startswith("00000000-0000-4000-8000-"), u


def test_renumbering_keeps_references_consistent():
    a, b = "3f2b8c1e9d4a4f6b8e2c7a1d5b9e0f3c", "0a1b2c3d4e5f60718293a4b5c6d7e8f9"
    text = f'{{"model_id": "{a}", "state": {{"{a}": 1, "{b}": 2}}, "uuid": "9c5b94b1-35ad-49bb-b118-8e8fc24abf80", ' \
           f'"value": "0.000123"}}'
    out = build.renumber_ids(text)
    assert out.count(f"{1:032x}") == 2 and out.count(f"{2:032x}") == 1
    assert "00000000-0000-4000-8000-000000000001" in out and '"0.000123"' in out


def test_source_format_is_strict():
    assert build.parse_source("# %% [markdown]\n# # Title\n#\n# text\n\n# %%\nx = 1\n") == \
        [("md", "# Title\n\ntext"), ("code", "x = 1")]
    with pytest.raises(ValueError, match="before the first"):
        build.parse_source("x = 1\n# %%\n")
    with pytest.raises(ValueError, match="Markdown line without"):
        build.parse_source("# %% [markdown]\nplain\n")


def test_sanitizer_masks_ids_only():
    # the sanitize file may mask random ids, never a number a reader relies on
    text = SANITIZE.read_text()
    for regex in re.findall(r"^regex: (.*)$", text, re.M):
        for figure in ("4.74 V", "11.2 V", "0.000369", "98.4 %", "1.86 ms", "-0.059", "2026", "1e-3", "220n"):
            assert not re.search(regex, figure), (regex, figure)


def test_nbval_fails_on_a_changed_stored_number(tmp_path):
    # copy a notebook, change one engineering number in a stored output, and nbval must fail on it
    src = NOTEBOOKS / "lv_buck_5v_aux.ipynb"
    nb = json.loads(src.read_text(encoding="utf-8"))
    changed = False
    for c in nb["cells"]:
        for o in c.get("outputs", []):
            if o.get("output_type") == "stream" and "rail min   4.73 V" in "".join(o["text"]):
                o["text"] = "".join(o["text"]).replace("rail min   4.73 V", "rail min   4.72 V")
                changed = True
    assert changed, "the number to change is not in the stored notebook any more: pick another"
    copy = tmp_path / "changed.ipynb"
    copy.write_text(json.dumps(nb), encoding="utf-8")
    shutil.copytree(NOTEBOOKS / "src", tmp_path / "src")
    r = subprocess.run([sys.executable, "-m", "pytest", "--nbval", str(copy), "--nbval-sanitize-with", str(SANITIZE),
                        "-p", "no:cacheprovider", "-q", "--rootdir", str(tmp_path)],
                       capture_output=True, text=True, timeout=600, cwd=tmp_path)
    assert r.returncode == 1, r.stdout[-3000:]
    assert "4.72 V" in r.stdout and "4.73 V" in r.stdout  # the report shows the stored and the fresh value
    assert re.search(r"1 failed, \d+ passed", r.stdout), r.stdout[-2000:]
