"""Engineering notation both ways (SI prefixes: SI Brochure, 9th ed., BIPM 2019, table 7)."""

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from explorer import DesignError, format_eng, parse_eng


@pytest.mark.parametrize("text, value", [
    ("2.2u", 2.2e-6), ("2.2\u00b5", 2.2e-6), ("2.2\u03bc", 2.2e-6), ("200k", 200e3), ("40n", 40e-9),
    ("1.5m", 1.5e-3), ("10M", 10e6), ("3p", 3e-12), ("5f", 5e-15), ("1G", 1e9), (" 7 ", 7.0),
    ("1e-6", 1e-6), ("-0.7", -0.7), (".5k", 500.0), (12, 12.0), (0.25, 0.25),
])
def test_parse(text, value):
    # SI Brochure table 7: k = 1e3, M = 1e6, m = 1e-3, µ = 1e-6, n = 1e-9, p = 1e-12, f = 1e-15
    assert parse_eng(text) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize("bad", ["", "abc", "2.2x", "1..2", "2.2uF", "inf", "nan", "1e999", True, None,
                                 [1], {"a": 1}, float("nan"), float("inf")])
def test_parse_rejects(bad):
    with pytest.raises(DesignError) as e:
        parse_eng(bad, "gate.q_g")
    assert str(e.value).startswith("gate.q_g: ")


@pytest.mark.parametrize("x, unit, text", [
    (2.2e-6, "F", "2.2 \u00b5F"), (150e3, "Hz", "150 kHz"), (0.0123, "A", "12.3 mA"),
    (48.0, "V", "48 V"), (999.96, "V", "1 kV"), (0, "W", "0 W"), (-3.3e-9, "C", "-3.3 nC"),
    (None, "V", "\u2014"), (math.inf, "s", "\u2014"),
])
def test_format(x, unit, text):
    assert format_eng(x, unit) == text


@given(st.floats(min_value=1e-14, max_value=1e11, allow_nan=False))
def test_round_trip_within_display_precision(x):
    # three significant digits are kept, so the round trip is within half a unit in the third digit
    text = format_eng(x, "", digits=3)
    back = parse_eng(text.replace(" ", ""))
    assert back == pytest.approx(x, rel=5.1e-3)
