"""IEC 60063 preferred number series E6, E12, E24.

The values are the published tables of IEC 60063:2015 ("Preferred number
series for resistors and capacitors"), hard-coded: rounding 10^(i/n) does
not reproduce them (e.g. E24 has 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2
where rounding gives 2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6 and 8.3).
"""

from __future__ import annotations

import math

from .errors import DesignError

__all__ = ["SERIES", "preferred_values", "next_preferred"]

SERIES: dict[str, tuple[float, ...]] = {
    "E6": (1.0, 1.5, 2.2, 3.3, 4.7, 6.8),
    "E12": (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2),
    "E24": (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
            3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1),
}


def _series(name: str) -> tuple[float, ...]:
    if name not in SERIES:
        raise DesignError("series", f"expected one of {', '.join(SERIES)}", name)
    return SERIES[name]


def preferred_values(lo: float, hi: float, series: str = "E12") -> list[float]:
    """All preferred values of a series in [lo, hi], ascending.

    Examples
    --------
    >>> preferred_values(90e-9, 300e-9, "E6")
    [1e-07, 1.5e-07, 2.2e-07]
    """
    base = _series(series)
    if not (lo > 0 and hi >= lo and math.isfinite(hi)):
        raise DesignError("range", "expected 0 < lo <= hi < inf", (lo, hi))
    out = []
    for decade in range(math.floor(math.log10(lo)) - 1, math.floor(math.log10(hi)) + 2):
        for m in base:
            v = float(f"{m}e{decade}")  # exact decimal, no 2.2*1e-7 rounding noise
            if lo * (1 - 1e-12) <= v <= hi * (1 + 1e-12):
                out.append(v)
    return out


def next_preferred(x: float, series: str = "E12", *, down: bool = False) -> float:
    """The smallest preferred value ≥ x (or the largest ≤ x with ``down=True``)."""
    vals = preferred_values(x / 20, x * 20, series)
    if down:
        return max(v for v in vals if v <= x * (1 + 1e-12))
    return min(v for v in vals if v >= x * (1 - 1e-12))
