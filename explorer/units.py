"""Engineering notation: parse ``"2.2u"`` / ``"200k"`` / ``"220nF"`` and format ``2.2e-6`` back.

The prefixes are the SI prefixes used in engineering practice (SI Brochure,
9th edition, BIPM 2019, table 7), written as single letters; ``u``, ``µ``
(micro sign, U+00B5) and ``μ`` (Greek mu, U+03BC) are all micro. Upper-case
``M`` is mega and lower-case ``m`` is milli, as in SI; SPICE's ``meg`` (any
case) is also mega.

A field's own unit may follow the prefix, as engineers type it: ``"12V"``,
``"220nF"``, ``"200kHz"``, ``"40 ns"``, ``"2.2Ω"`` (or ``ohm``), ``"100V/ns"``
(a dv/dt), ``"10%"`` (a fraction). A unit that is not the field's own is
refused with a message naming the unit the field takes.

Numbers are converted exactly in decimal and rounded once, so ``"5u"`` is the
double nearest 5·10⁻⁶ (``5e-06``), not ``5 × 1e-6`` = 4.9999999999999996e-06.
"""

from __future__ import annotations

import math
import re
from decimal import Decimal, InvalidOperation

from .errors import DesignError

__all__ = ["PREFIXES", "UNIT_ALIASES", "parse_eng", "format_eng", "format_exact"]

#: Prefix → power of ten (SI Brochure table 7; ``meg`` as in SPICE).
_EXPONENTS: dict[str, int] = {
    "a": -18, "f": -15, "p": -12, "n": -9, "u": -6, "\u00b5": -6, "\u03bc": -6, "m": -3, "": 0,
    "k": 3, "M": 6, "G": 9, "T": 12,
}
PREFIXES: dict[str, float] = {k: 10.0 ** e for k, e in _EXPONENTS.items()}

#: A field's unit (as in its Spec) → the spellings accepted after the prefix, each with its own
#: power of ten (``V/ns`` is 10⁹ V/s). Multi-letter spellings are matched without regard to case.
UNIT_ALIASES: dict[str, dict[str, int]] = {
    "F": {"F": 0}, "V": {"V": 0}, "A": {"A": 0}, "C": {"C": 0}, "W": {"W": 0}, "s": {"s": 0},
    "Hz": {"Hz": 0},
    "\u03a9": {"\u03a9": 0, "\u2126": 0, "ohm": 0, "ohms": 0},
    "V/s": {"V/s": 0, "V/ms": 3, "V/us": 6, "V/\u00b5s": 6, "V/\u03bcs": 6, "V/ns": 9},
    "\u00b0C": {"\u00b0C": 0, "degC": 0},
    "rad": {"rad": 0},
    "-": {"%": -2},
}
_UNIT_WORDS = {"F": "a capacitance", "V": "a voltage", "A": "a current", "C": "a charge", "W": "a power",
               "s": "a time", "Hz": "a frequency", "\u03a9": "a resistance", "V/s": "a dv/dt",
               "\u00b0C": "a temperature", "rad": "an angle", "-": "a plain number"}

_NUMBER = re.compile(
    r"^\s*(?P<num>[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*"
    r"(?P<suf>[a-zA-Z\u00b5\u03bc\u03a9\u2126\u00b0%/]*)\s*$",
    re.ASCII,  # ASCII digits and spaces only: look-alike digits from other scripts are refused
)

_FORMAT_PREFIXES = [("T", 1e12), ("G", 1e9), ("M", 1e6), ("k", 1e3), ("", 1.0),
                    ("m", 1e-3), ("\u00b5", 1e-6), ("n", 1e-9), ("p", 1e-12), ("f", 1e-15)]

_PREFIX_WORDS = "f p n u/\u00b5 m k M (or meg) G T"


def _prefix_exponent(pre: str) -> int | None:
    if pre in _EXPONENTS:
        return _EXPONENTS[pre]
    if pre.lower() == "meg":
        return 6
    return None


def _split_unit(suf: str, unit: str) -> int | None:
    """Power of ten of ``suf`` read as prefix + the field's unit (None if it is not that)."""
    for alias, exp in sorted(UNIT_ALIASES.get(unit, {}).items(), key=lambda a: -len(a[0])):
        n = len(alias)
        tail = suf[-n:] if len(suf) >= n else None
        if tail is None or not (tail == alias or (n > 1 and tail.lower() == alias.lower())):
            continue
        pe = _prefix_exponent(suf[:-n])
        if pe is not None:
            return pe + exp
    return None


def _foreign_unit(suf: str, unit: str) -> str | None:
    """The unit of another kind that ``suf`` ends with, if any (for the error message)."""
    for other, aliases in UNIT_ALIASES.items():
        if other == unit:
            continue
        for alias in sorted(aliases, key=len, reverse=True):
            n = len(alias)
            tail = suf[-n:]
            if len(suf) >= n and (tail == alias or (n > 1 and tail.lower() == alias.lower())) \
                    and _prefix_exponent(suf[:-n]) is not None:
                return alias
    return None


def _wants(unit: str) -> str:
    if unit in ("-", ""):
        return "this field takes a plain number (a fraction may be written with %)" if unit == "-" else \
            "this field takes a plain number"
    return f"this field takes {_UNIT_WORDS.get(unit, 'a value')} in {unit}"


def parse_eng(value: object, path: str = "", unit: str | None = None) -> float:
    """Return ``value`` as a float in SI units.

    Parameters
    ----------
    value : int, float or str
        A number, or a string such as ``"2.2u"``, ``"200k"``, ``"1.5m"``,
        ``"4.7µ"``, ``"1e-6"``, ``"10meg"``; with ``unit`` given, the unit may
        follow: ``"220nF"``, ``"200kHz"``.
    path : str
        Field path used in the error message.
    unit : str, optional
        The field's unit as in its Spec (``"F"``, ``"Hz"``, ``"Ω"``, ``"V/s"``,
        ``"-"``, ...). None accepts no unit after the prefix.

    Raises
    ------
    DesignError
        For a boolean, a non-numeric string, an unknown prefix, a unit that is
        not the field's own, or a non-finite result.

    Examples
    --------
    >>> parse_eng("2.2u")
    2.2e-06
    >>> parse_eng("200kHz", unit="Hz")
    200000.0
    >>> parse_eng("5u")
    5e-06
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
        exp = _prefix_exponent(suf)
        if exp is None and unit is not None:
            exp = _split_unit(suf, unit)
        if exp is None:
            foreign = _foreign_unit(suf, unit) if unit is not None else None
            if foreign is not None:
                raise DesignError(path, f"unit {foreign!r} does not fit: {_wants(unit)}", value)
            if unit is not None and unit not in ("", "-"):
                raise DesignError(path, f"unknown suffix {suf!r}; allowed: a prefix {_PREFIX_WORDS}, "
                                  f"optionally followed by {unit}", value)
            raise DesignError(path, f"unknown suffix {suf!r}; allowed: f p n u \u00b5 m k M G T", value)
        try:
            x = float(Decimal(m.group("num")).scaleb(exp))
        except (InvalidOperation, OverflowError):  # pragma: no cover - the regex admits only decimals
            raise DesignError(path, "must be a finite number", value) from None
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
    >>> format_eng(5e10, "V/s")  # a dv/dt reads in V/ns
    '50 V/ns'
    """
    if x is None or not math.isfinite(x):
        return "\u2014"
    if unit in ("", "-"):
        return f"{x:.{digits}g}"
    if unit in _DISPLAY_UNITS:
        unit, shift = _DISPLAY_UNITS[unit]
        x = x / 10.0 ** shift
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


_EXACT_PREFIXES = {12: "T", 9: "G", 6: "M", 3: "k", 0: "", -3: "m", -6: "\u00b5", -9: "n", -12: "p",
                   -15: "f", -18: "a"}
#: Units written in another scale than their Spec's (a dv/dt reads in V/ns): unit → (spelling, exponent).
_DISPLAY_UNITS = {"V/s": ("V/ns", 9)}


def format_exact(x: float, unit: str) -> str:
    """``x`` as engineering text that :func:`parse_eng` (with the same ``unit``) reads back exactly.

    The shortest decimal that round-trips the float (Python's ``repr``) is given an SI prefix
    whose power of ten is a multiple of 3 and followed by the unit: ``4e-08, "s"`` → ``"40 ns"``,
    ``1e11, "V/s"`` → ``"100 V/ns"``. Units ``"-"`` and ``""`` give the plain number text.

    Examples
    --------
    >>> format_exact(2.2e-07, "F")
    '220 nF'
    >>> parse_eng(format_exact(0.1 + 0.2, "V"), unit="V") == 0.1 + 0.2
    True
    """
    x = float(x)
    if not math.isfinite(x):
        raise ValueError(f"not a finite number: {x!r}")
    if unit in ("", "-"):
        return repr(x)
    shown, shift = _DISPLAY_UNITS.get(unit, (unit, 0))
    d = Decimal(repr(x)).scaleb(-shift)
    if d == 0:
        return f"0 {shown}"
    e3 = (d.adjusted() // 3) * 3
    e3 = max(min(e3, 12), -18)
    mant = d.scaleb(-e3).normalize()
    text = format(mant, "f")
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return f"{text} {_EXACT_PREFIXES[e3]}{shown}"
