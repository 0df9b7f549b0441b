"""Instructions per evaluation of the demo from an empty memory, under valgrind's callgrind.

Wall times on a shared or virtual machine scatter by ±30 % between runs of the same code; instruction
counts repeat to about 0.5 %, so speed changes are compared in them (docs/performance.md). Each figure
is (a process with 4 evaluations − one with 1) / 3, one BLAS thread, `explorer.memo` cleared before
each evaluation. Needs valgrind (Debian: ``apt-get install valgrind``); without it the script says so
and exits 0.

Run from the repository root: ``.venv/bin/python bench/bench_instructions.py [all|0|1|2|3|4 ...]``
(``all``: the whole ``evaluate``; a number: that option of the demo alone). Takes about a minute each.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
import tempfile

_CHILD = """
import sys, warnings
import explorer
from explorer import memo
from explorer.options import supply_model
warnings.simplefilter("ignore", explorer.ExplorerWarning)
d = explorer.demo_design()
what, n = sys.argv[1], int(sys.argv[2])
if what == "all":
    fn = lambda: explorer.evaluate(d)
else:
    o = d.options[int(what)]
    m = supply_model(o.kind)
    fn = lambda: m.evaluate(d, o)
for _ in range(n):
    memo.clear()
    fn()
"""


def _count(what: str, n: int, tmp: str) -> int:
    env = dict(os.environ, OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1", MKL_NUM_THREADS="1",
               PYTHONHASHSEED="0")
    out = os.path.join(tmp, f"cg.{what}.{n}")
    r = subprocess.run(["valgrind", "--tool=callgrind", f"--callgrind-out-file={out}", sys.executable, "-c",
                        _CHILD, what, str(n)], capture_output=True, text=True, env=env, check=True)
    m = re.search(r"Collected : (\d+)", r.stderr)
    if m is None:
        raise RuntimeError("callgrind printed no instruction count:\n" + r.stderr[-2000:])
    return int(m.group(1))


def main(argv: list[str]) -> int:
    if shutil.which("valgrind") is None:
        print("valgrind not found: instruction counts skipped (apt-get install valgrind)")
        return 0
    whats = argv or ["all"]
    names = {"all": "evaluate(demo), five options"}
    with tempfile.TemporaryDirectory() as tmp:
        for what in whats:
            per = (_count(what, 4, tmp) - _count(what, 1, tmp)) / 3
            label = names.get(what) or f"option {what} of the demo alone"
            print(f"instructions per cold evaluation, {label}: {per / 1e6:.2f} M")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
