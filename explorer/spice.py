"""Run ngspice in batch mode and read its vectors back.

The SPICE netlist is the trade's common exchange format; this module only
runs a netlist text through the open-source ngspice simulator (if installed)
and returns the requested vectors as numpy arrays. It is used by the tests
that check the models against ngspice and by the netlist export.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import tempfile

import numpy as np

__all__ = ["NgspiceError", "ngspice_path", "run_transient", "spice_number"]


class NgspiceError(RuntimeError):
    """ngspice is missing, failed, or reported a simulation error."""


def ngspice_path() -> str | None:
    """Path of the ngspice executable, or None."""
    return shutil.which("ngspice")


def spice_number(x: float) -> str:
    """A float in plain exponent notation, safe in any SPICE dialect (no ambiguous 'm'/'M')."""
    return f"{float(x):.12g}"


_ERR = re.compile(r"(?im)^(?:.*\berror\b.*|.*timestep too small.*|.*singular matrix.*)$")


def run_transient(netlist: str, vectors: list[str], *, timeout: float = 300.0) -> dict:
    """Run a netlist that contains a ``.tran`` line and return vectors.

    A ``.control`` block is appended that runs the simulation and writes
    ``time`` and the given vectors with ``wrdata``; the netlist itself must
    not contain ``.control`` or ``.end``.

    Parameters
    ----------
    netlist : str
        Circuit text (first line is the title, as SPICE requires).
    vectors : list of str
        Vector expressions, e.g. ``["v(b)-v(s)", "i(vsense)"]``.

    Returns
    -------
    dict
        ``"time"`` and each vector expression → ndarray; ``"log"`` → ngspice output.

    Raises
    ------
    NgspiceError
        When ngspice is not installed, exits non-zero, or its log reports an
        error (a failed transient still exits 0, so the log is searched).
    """
    exe = ngspice_path()
    if exe is None:
        raise NgspiceError("ngspice is not installed (Debian: apt-get install ngspice)")
    with tempfile.TemporaryDirectory(prefix="explorer-spice-") as tmp:
        cir = os.path.join(tmp, "circuit.cir")
        out = os.path.join(tmp, "out.txt")
        ctrl = (".control\nset noaskquit\nset wr_singlescale\nset wr_vecnames\noption numdgt=12\nrun\n"
                f"wrdata {out} {' '.join(vectors)}\nquit\n.endc\n.end\n")
        with open(cir, "w") as fh:
            fh.write(netlist.rstrip() + "\n" + ctrl)
        try:
            proc = subprocess.run([exe, "-b", cir], capture_output=True, text=True, timeout=timeout, cwd=tmp)
        except subprocess.TimeoutExpired:
            raise NgspiceError(f"ngspice did not finish within {timeout} s") from None
        log = proc.stdout + proc.stderr
        bad = [m for m in _ERR.findall(log) if "error(s)" not in m.lower() or "0 error" not in m.lower()]
        if proc.returncode != 0 or bad or not os.path.exists(out):
            raise NgspiceError(f"ngspice failed (exit {proc.returncode}): " + ("; ".join(bad[:3]) or log[-500:]))
        data = np.loadtxt(out, skiprows=1, ndmin=2)
    res = {"time": data[:, 0], "log": log}
    for i, v in enumerate(vectors):
        res[v] = data[:, 1 + i]
    return res
