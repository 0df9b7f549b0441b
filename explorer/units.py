"""Engineering notation: parse ``"2.2u"`` / ``"200k"`` and format ``2.2e-6`` back.

The suffixes are the SI prefixes used in engineering practice (SI Brochure,
9th edition, BIPM 2019, table 7), written as single letters; ``u``, ``µ``
(micro sign, U+00B5) and ``μ`` (Greek mu, U+03BC) are all micro. Upper-case
``M`` is mega and lower-case ``m`` is milli, as in SI.
"""

from __future__ import annotations

import math
import re

from .errors import DesignError

__all__ = ["PREFIXES", "parse_eng", "format_eng"]

PREFIXES: dict[str, float] = {
    "a": 1e-18, "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "\u00b5": 1e-6,
    "\u03bc": 1e-6, "m": 1e-3, "": 1.0, "k": 1e3, "M": 1e6, "G": 1e9, "T": 1e12,
}

_NUMBER = re.compile(
    r"^\s*(?P<num>[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*(?P<suf>[a-zA-Z\u00b5\u03bc]?)\s*$",
    re.ASCII,  # ASCII digits and spaces only: look-alike digits from other scripts are refused
)

_FORMAT_PREFIXES = [("T", 1e12), ("G", 1e9), ("M", 1e6), ("k", 1e3), ("", 1.0),
                    ("m", 1e-3), ("\u00b5", 1e-6), ("n", 1e-9), ("p", 1e-12), ("f", 1e-15)]


def parse_eng(value: object, path: str = "") -> float:
    """Return ``value`` as a float in SI units.

    Parameters
    ----------
    value : int, float or str
        A number, or a string such as ``"2.2u"``, ``"200k"``, ``"1.5m"``,
        ``"4.7µ"`` or ``"1e-6"``.
    path : str
        Field path used in the error message.

    Raises
    ------
    DesignError
        For a boolean, a non-numeric string, an unknown suffix or a
        non-finite result.

    Examples
    --------
    >>> parse_eng("2.2u")
    2.2e-06
    >>> parse_eng("200k")
    200000.0
    """
    if isinstance(value, bool):
        raise DesignError(path, "expected a number, not true/false", value)
    if isinstance(value, (int, float)):
        x = float(value)
    elif isinstance(value, str):
        if len(value) > 64:
            raise DesignError(path, "number text is too long (64 characters at most)", value[:20] + "...")
        m = _NUMBER.match(value)
        if not m:
            raise DesignError(path, "expected a number such as 2.2e-6 or '2.2u' "
                              "(suffixes f p n u/\u00b5 m k M G T)", value)
        suf = m.group("suf")
        if suf not in PREFIXES:
            raise DesignError(path, f"unknown suffix {suf!r}; allowed: f p n u \u00b5 m k M G T", value)
        x = float(m.group("num")) * PREFIXES[suf]
    else:
        raise DesignError(path, f"expected a number, not {type(value).__name__}", value)
    if not math.isfinite(x):
        raise DesignError(path, "must be a finite number", value)
    return x


def format_eng(x: float | None, unit: str = "", digits: int = 3) -> str:
    """Format ``x`` with an SI prefix and ``digits`` significant digits.

    ``None`` and non-finite values become ``"—"`` (not applicable / unbounded).

    Examples
    --------
    >>> format_eng(2.2e-6, "F")
    '2.2 µF'
    >>> format_eng(150e3, "Hz")
    '150 kHz'
    """
    if x is None or not math.isfinite(x):
        return "\u2014"
    if x == 0:
        return f"0 {unit}".rstrip()
    ax = abs(x)
    for pre, scale in _FORMAT_PREFIXES:
        if ax >= scale * 0.9995:
            break
    else:
        pre, scale = _FORMAT_PREFIXES[-1]
    mant = x / scale
    text = f"{mant:.{digits}g}"
    if "e" in text:  # mantissa rounded up to 1000: use the next prefix
        text = f"{mant:.{digits - 1}f}"
    return f"{text} {pre}{unit}".rstrip()
