"""Benchmark of the command line as a whole process: start, import, evaluate, print, exit.

Each command runs as a fresh ``python -m explorer ...`` subprocess, several times; the figure is the
median wall time (and the fastest). Python's own start-up and ``import numpy`` are measured the same
way, for scale. Bytecode caches are allowed to be written (as in a normal installation), so the first,
compiling run is a warm-up and not counted.

Prints figures for docs/performance.md. Run: python bench/bench_cli.py [--repeat N]
"""

from __future__ import annotations

import argparse
import os
import pathlib
import subprocess
import sys
import tempfile
import time

import numpy as np

ROOT = pathlib.Path(__file__).resolve().parent.parent


def _times(cmd, env, repeat):
    subprocess.run(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)  # warm-up
    out = []
    for _ in range(repeat):
        t = time.perf_counter()
        subprocess.run(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
        out.append(time.perf_counter() - t)
    return np.array(out)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=15)
    args = ap.parse_args()
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    py = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        demo = pathlib.Path(tmp, "demo.json")
        with open(demo, "w") as fh:
            subprocess.run([py, "-m", "explorer", "demo"], env=env, stdout=fh, check=True)
        cases = [
            ("python -c pass (interpreter alone)", [py, "-c", "pass"]),
            ("python -c 'import numpy'", [py, "-c", "import numpy"]),
            ("python -m explorer demo", [py, "-m", "explorer", "demo"]),
            ("python -m explorer evaluate demo.json", [py, "-m", "explorer", "evaluate", str(demo)]),
            ("python -m explorer evaluate demo.json --json", [py, "-m", "explorer", "evaluate", str(demo), "--json"]),
            ("python -m explorer netlist demo.json --label 'bootstrap 220n'",
             [py, "-m", "explorer", "netlist", str(demo), "--label", "bootstrap 220n"]),
        ]
        for name, cmd in cases:
            t = _times(cmd, env, args.repeat)
            print(f"{name:64s} median {np.median(t) * 1e3:6.0f} ms, fastest {t.min() * 1e3:6.0f} ms "
                  f"({args.repeat} runs; target for explorer commands <= 350 ms)")


if __name__ == "__main__":
    main()
