"""Scalar root bracketing without importing scipy (so a command-line evaluation starts fast).

``import scipy.optimize`` loads most of scipy (about 0.2 to 0.4 s on a loaded machine), more than a
whole evaluation of the demo; the models need only one bracketing root finder.
"""

from __future__ import annotations

import math

__all__ = ["brentq"]

#: Smallest relative tolerance accepted, as in scipy.optimize.brentq (4 × machine epsilon).
RTOL_MIN = 4 * 2.220446049250313e-16


def brentq(f, a: float, b: float, xtol: float = 2e-12, rtol: float = RTOL_MIN, maxiter: int = 100) -> float:
    """A root of ``f`` in the bracket [a, b] by Brent's method.

    Brent's method (R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall
    1973, ch. 4: inverse quadratic interpolation or secant steps inside a bracket, falling back to
    bisection), in the step-by-step form of scipy's ``brentq`` (scipy/optimize/Zeros/brentq.c,
    BSD licence), so the iterates and the returned root are the same floats as
    :func:`scipy.optimize.brentq` with the same tolerances (``tests/test_roots.py`` checks it
    against scipy bit for bit). Converged when the half-bracket is below
    ``(xtol + rtol·|x|)/2`` or ``f(x) == 0``.

    Raises
    ------
    ValueError
        When ``f(a)`` and ``f(b)`` have the same sign, ``f`` is NaN at a point visited, or a
        tolerance is out of range.
    RuntimeError
        When the iteration does not converge within ``maxiter`` steps (as scipy's).
    """
    if not xtol > 0:
        raise ValueError(f"xtol too small ({xtol:g} <= 0)")
    if not rtol >= RTOL_MIN:
        raise ValueError(f"rtol too small ({rtol:g} < {RTOL_MIN:g})")
    xpre, xcur = float(a), float(b)
    xblk = fblk = spre = scur = 0.0
    fpre, fcur = float(f(xpre)), float(f(xcur))
    if math.isnan(fpre) or math.isnan(fcur):
        raise ValueError("the function is NaN at an end of the bracket")
    if fpre == 0:
        return xpre
    if fcur == 0:
        return xcur
    if math.copysign(1.0, fpre) == math.copysign(1.0, fcur):
        raise ValueError("f(a) and f(b) must have different signs")
    for _ in range(maxiter):
        if fpre != 0 and fcur != 0 and math.copysign(1.0, fpre) != math.copysign(1.0, fcur):
            xblk, fblk = xpre, fpre
            spre = scur = xcur - xpre
        if abs(fblk) < abs(fcur):
            xpre, xcur, xblk = xcur, xblk, xcur
            fpre, fcur, fblk = fcur, fblk, fcur
        delta = (xtol + rtol * abs(xcur)) / 2
        sbis = (xblk - xcur) / 2
        if fcur == 0 or abs(sbis) < delta:
            return xcur
        if abs(spre) > delta and abs(fcur) < abs(fpre):
            if xpre == xblk:  # interpolate (secant)
                stry = -fcur * (xcur - xpre) / (fcur - fpre)
            else:  # extrapolate (inverse quadratic)
                dpre = (fpre - fcur) / (xpre - xcur)
                dblk = (fblk - fcur) / (xblk - xcur)
                stry = -fcur * (fblk * dblk - fpre * dpre) / (dblk * dpre * (fblk - fpre))
            if 2 * abs(stry) < min(abs(spre), 3 * abs(sbis) - delta):  # good short step
                spre, scur = scur, stry
            else:  # bisect
                spre = scur = sbis
        else:  # bisect
            spre = scur = sbis
        xpre, fpre = xcur, fcur
        xcur += scur if abs(scur) > delta else (delta if sbis > 0 else -delta)
        fcur = float(f(xcur))
        if math.isnan(fcur):
            raise ValueError(f"the function is NaN at x = {xcur!r}")
    raise RuntimeError(f"no convergence within {maxiter} iterations (last x = {xcur!r})")
