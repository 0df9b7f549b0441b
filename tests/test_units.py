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


@pytest.mark.parametrize("text, unit, value", [
    # SI Brochure, 9th ed., table 7 (prefixes) and table 4 (unit symbols V, F, Hz, s, A, C, W, Ω)
    ("12V", "V", 12.0), ("220nF", "F", 220e-9), ("200kHz", "Hz", 200e3), ("10uF", "F", 10e-6),
    ("10 µF", "F", 10e-6), ("40 ns", "s", 40e-9), ("2.2Ω", "\u03a9", 2.2), ("2.2 ohm", "\u03a9", 2.2),
    ("100kohm", "\u03a9", 100e3), ("40nC", "C", 40e-9), ("100uA", "A", 100e-6), ("500mW", "W", 0.5),
    ("200khz", "Hz", 200e3), ("25°C", "\u00b0C", 25.0), ("2F", "F", 2.0), ("1f", "F", 1e-15),
    # SPICE's "meg" suffix is mega, in any case (ngspice user manual, the conventions section on scale factors)
    ("10meg", "Hz", 10e6), ("10MEGHz", "Hz", 10e6), ("1Meg", None, 1e6),
    # dv/dt: V/ns is 1e9 V/s
    ("100V/ns", "V/s", 100e9), ("50 kV/us", "V/s", 50e9), ("100G", "V/s", 100e9),
    ("10%", "-", 0.1),
])
def test_parse_with_the_fields_unit(text, unit, value):
    assert parse_eng(text, "x", unit) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize("text, unit, message", [
    ("220nV", "F", "x: unit 'V' does not fit: this field takes a capacitance in F (got '220nV')"),
    ("12F", "V", "x: unit 'F' does not fit: this field takes a voltage in V (got '12F')"),
    ("200ks", "Hz", "x: unit 's' does not fit: this field takes a frequency in Hz (got '200ks')"),
    ("100V/ns", "V", "x: unit 'V/ns' does not fit: this field takes a voltage in V (got '100V/ns')"),
])
def test_wrong_unit_names_the_unit_the_field_takes(text, unit, message):
    with pytest.raises(DesignError) as e:
        parse_eng(text, "x", unit)
    assert str(e.value) == message


@pytest.mark.parametrize("text, value", [("5u", 5e-6), ("100u", 1e-4), ("100n", 1e-7), ("10u", 1e-5),
                                         ("4.7u", 4.7e-6), ("2.2e-3k", 2.2)])
def test_parse_is_correctly_rounded(text, value):
    # the double nearest the decimal value (IEEE 754 round-to-nearest), not mantissa × 1e-6
    assert parse_eng(text) == value


@given(st.floats(min_value=1e-19, max_value=1e15, allow_nan=False),
       st.sampled_from(["F", "V", "Hz", "s", "V/s", "\u03a9", "-"]))
def test_format_exact_round_trips(x, unit):
    from explorer.units import format_exact
    assert parse_eng(format_exact(x, unit), "x", unit) == x
    assert parse_eng(format_exact(-x, unit), "x", unit) == -x
