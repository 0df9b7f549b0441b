"""Effective capacitance: nominal × tolerance × temperature class × DC bias.

Class-2 ceramic temperature characteristics are coded by EIA-198 (the same
codes appear in IEC 60384-9 / -22): a letter for the lowest temperature, a
digit for the highest temperature and a letter for the largest capacitance
change over that range, referred to 25 °C. For example X7R: −55 °C to
+125 °C, ΔC within ±15 %. Class-1 C0G (NP0) is 0 ± 30 ppm/K. A code gives an
envelope, not a curve, so the worst corner uses the envelope's bound and the
nominal corner uses the 25 °C value.

DC-bias loss is specific to a part: the user gives a curve of remaining
fraction against V/V_rating. No default curve is assumed.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .errors import DesignError

__all__ = ["Dielectric", "parse_dielectric", "dc_bias_factor", "capacitance", "CORNERS"]

#: EIA-198 class-2 code: lowest temperature letter → °C.
_LOW_T = {"X": -55.0, "Y": -30.0, "Z": 10.0}
#: EIA-198 class-2 code: highest temperature digit → °C.
_HIGH_T = {"2": 45.0, "4": 65.0, "5": 85.0, "6": 105.0, "7": 125.0, "8": 150.0, "9": 200.0}
#: EIA-198 class-2 code: change letter → (largest decrease, largest increase) as fractions.
_CHANGE = {
    "A": (-0.010, 0.010), "B": (-0.015, 0.015), "C": (-0.022, 0.022), "D": (-0.033, 0.033),
    "E": (-0.047, 0.047), "F": (-0.075, 0.075), "P": (-0.10, 0.10), "R": (-0.15, 0.15),
    "S": (-0.22, 0.22), "T": (-0.33, 0.22), "U": (-0.56, 0.22), "V": (-0.82, 0.22),
}
_CLASS2 = re.compile(r"^([XYZ])([2456789])([ABCDEFPRSTUV])$")

#: Names of the corners :func:`capacitance` understands.
CORNERS = ("nominal", "min", "max")


@dataclass(frozen=True)
class Dielectric:
    """Temperature characteristic of a capacitor dielectric.

    Attributes
    ----------
    code : str
        The code as written (``"X7R"``, ``"C0G"``, ``"ideal"``).
    t_low, t_high : float
        Rated temperature range [°C].
    dc_low, dc_high : float
        Largest fractional decrease (negative) and increase of capacitance over
        the range, referred to 25 °C [-].
    """

    code: str
    t_low: float
    t_high: float
    dc_low: float
    dc_high: float


def parse_dielectric(code: str, path: str = "") -> Dielectric:
    """Decode a dielectric code.

    Accepts EIA-198 class-2 codes (``X7R``, ``X5R``, ``Y5V`` …), class-1
    ``C0G``/``NP0`` (±30 ppm/K from −55 °C to +125 °C, i.e. within ±0.3 %) and
    ``ideal`` (no temperature change, for film or for studies).

    Examples
    --------
    >>> d = parse_dielectric("X7R")
    >>> (d.t_low, d.t_high, d.dc_low, d.dc_high)
    (-55.0, 125.0, -0.15, 0.15)
    """
    if not isinstance(code, str):
        raise DesignError(path, "dielectric must be a code such as 'X7R', 'X5R', 'C0G' or 'ideal'", code)
    c = code.strip().upper()
    if c in ("C0G", "NP0", "COG", "NPO"):
        return Dielectric(code, -55.0, 125.0, -30e-6 * 100.0, 30e-6 * 100.0)
    if c == "IDEAL":
        return Dielectric(code, -273.0, 1000.0, 0.0, 0.0)
    m = _CLASS2.match(c)
    if not m:
        raise DesignError(path, "unknown dielectric; use an EIA-198 class-2 code (e.g. X7R, X5R, X6S, Y5V), "
                          "C0G/NP0 or 'ideal'", code)
    lo, hi, ch = m.groups()
    return Dielectric(code, _LOW_T[lo], _HIGH_T[hi], *_CHANGE[ch])


def dc_bias_factor(v_applied, v_rating, curve) -> np.ndarray | float:
    """Remaining capacitance fraction at a DC voltage, from a user curve.

    Parameters
    ----------
    v_applied : float or array [V]
        DC voltage across the capacitor.
    v_rating : float or None [V]
        Rated voltage; the curve's abscissa is ``v_applied / v_rating``.
    curve : sequence of (x, fraction) or None
        Points sorted by x; linear interpolation, held flat outside.

    Returns 1.0 where no curve is given.
    """
    if curve is None or v_rating is None:
        return np.ones_like(np.asarray(v_applied, dtype=float)) if np.ndim(v_applied) else 1.0
    xs = np.array([p[0] for p in curve], dtype=float)
    fs = np.array([p[1] for p in curve], dtype=float)
    r = np.interp(np.abs(np.asarray(v_applied, dtype=float)) / v_rating, xs, fs)
    return float(r) if np.ndim(r) == 0 else r


def capacitance(c_nom, *, c_tol=0.0, dielectric: Dielectric | None = None, v_applied=0.0,
                v_rating=None, dc_bias=None, corner: str = "nominal"):
    """Effective capacitance C_eff = C_nom · k_tol · k_temp · k_bias [F].

    Parameters
    ----------
    c_nom : float or array [F]
        Nominal (marked) capacitance.
    c_tol : float [-]
        Symmetric tolerance, e.g. 0.1 for ±10 %.
    dielectric : Dielectric, optional
        Temperature class; ``None`` means no temperature change.
    v_applied : float or array [V]
        DC voltage across the part, for the DC-bias factor.
    v_rating, dc_bias :
        See :func:`dc_bias_factor`.
    corner : {"nominal", "min", "max"}
        ``"min"`` takes the lower tolerance and the class's largest decrease
        (EIA-198 envelope); ``"max"`` the upper ones; ``"nominal"`` neither.

    Examples
    --------
    >>> round(capacitance(1e-6, c_tol=0.1, dielectric=parse_dielectric("X7R"), corner="min") * 1e9, 6)
    765.0
    """
    if corner not in CORNERS:
        raise DesignError("corner", f"must be one of {', '.join(CORNERS)}", corner)
    k_bias = dc_bias_factor(v_applied, v_rating, dc_bias)
    if corner == "nominal":
        k_tol = 1.0
        k_temp = 1.0
    elif corner == "min":
        k_tol = 1.0 - c_tol
        k_temp = 1.0 + (dielectric.dc_low if dielectric else 0.0)
    else:
        k_tol = 1.0 + c_tol
        k_temp = 1.0 + (dielectric.dc_high if dielectric else 0.0)
    return c_nom * k_tol * k_temp * k_bias
