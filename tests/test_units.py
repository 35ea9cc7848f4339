"""Engineering quantities: parsing and formatting (partcheck/units.py).

Sources: the IEC 60062 letter-and-digit code examples are READ from the Wikipedia "RKM code"
article as summarised in shared/design/reference/derating-standards.md §8 (the IEC text itself
was not read).  SI prefixes and unit symbols: SI Brochure, 9th edition (2019), §3 (from memory).
The other cases are the grammar in the module docstring (common practice on BOMs/datasheets).
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from partcheck.errors import QuantityError
from partcheck.units import format_quantity, parse_quantity

# IEC 60062 letter-and-digit (RKM) code, examples READ from Wikipedia "RKM code"
# (derating-standards.md §8): the letter replaces the decimal point.
IEC_60062 = [
    ("R47", "ohm", 0.47),       # IEC 60062 example: R47 = 0.47 Ω
    ("4R7", "ohm", 4.7),        # IEC 60062 example: 4R7 = 4.7 Ω
    ("470R", "ohm", 470.0),     # IEC 60062 example: 470R = 470 Ω
    ("4K7", "ohm", 4700.0),     # IEC 60062 example: 4K7 = 4.7 kΩ
    ("47K", "ohm", 47000.0),    # IEC 60062 example: 47K = 47 kΩ
    ("47K3", "ohm", 47300.0),   # IEC 60062 example: 47K3 = 47.3 kΩ
    ("470K", "ohm", 470000.0),  # IEC 60062 example: 470K = 470 kΩ
    ("4M7", "ohm", 4.7e6),      # IEC 60062 example: 4M7 = 4.7 MΩ
    ("2R2", "ohm", 2.2),        # IEC 60062 rule (same letter R), §8 "2R2 = 2.2 Ω follows the same rule"
    ("1M0", "ohm", 1.0e6),      # IEC 60062 rule: M = 10^6
    ("4n7", "F", 4.7e-9),       # IEC 60062 capacitance example: 4n7 = 4.7 nF
    ("1µ0", "F", 1.0e-6),       # IEC 60062 capacitance example: 1µ0 = 1 µF (READ, probsee)
    ("10p", "F", 10e-12),       # IEC 60062 capacitance example: 10p
    ("4k7", "ohm", 4700.0),     # lowercase k as BOMs write it (§8 parser notes, from memory)
    ("0R", "ohm", 0.0),         # 0R = 0 Ω jumper (§8 parser notes, from memory)
]


@pytest.mark.parametrize(("text", "kind", "expected"), IEC_60062, ids=[c[0] for c in IEC_60062])
def test_iec_60062_letter_and_digit_code(text, kind, expected):
    assert parse_quantity(text, kind) == expected


# SI prefixes and unit symbols (SI Brochure §3, from memory; "meg" and "K" = kilo are BOM practice).
PLAIN = [
    ("100 V", "V", 100.0),
    ("22 µF", "F", 22e-6),      # U+00B5 MICRO SIGN
    ("22 μF", "F", 22e-6),      # U+03BC GREEK SMALL LETTER MU
    ("22uF", "F", 22e-6),
    ("22u", "F", 22e-6),
    ("10 pF", "F", 10e-12),
    ("2 fF", "F", 2e-15),
    ("2.2 mH", "H", 2.2e-3),
    ("10 uH", "H", 10e-6),
    ("1.5e-3 A", "A", 1.5e-3),
    ("250kHz", "Hz", 250e3),
    ("1 GHz", "Hz", 1e9),
    ("1 kV", "V", 1000.0),
    ("3V3", "V", 3.3),          # unit letter as decimal point, common practice on schematics
    ("2A5", "A", 2.5),
    ("5 W", "W", 5.0),
    ("100 ns", "s", 100e-9),
    ("12 nC", "C", 12e-9),      # charge: gate charge
    ("4.7 MΩ", "ohm", 4.7e6),
    ("1 mohm", "ohm", 1e-3),
    ("5 mΩ", "ohm", 5e-3),
    ("10meg", "ohm", 10e6),
    ("1 Meg", "ohm", 1e6),
    ("-40 °C", "degC", -40.0),
    ("85degC", "degC", 85.0),
    ("85 C", "degC", 85.0),
    ("3 K", "K", 3.0),
    ("62 °C/W", "K/W", 62.0),
    ("62 K/W", "K/W", 62.0),
    ("2000h", "h", 2000.0),
    ("±10%", "%", 0.10),
    ("+/-5 %", "%", 0.05),
    ("20%", "%", 0.20),
    ("0.5", "%", 0.5),          # a plain number for a percentage is already a fraction
    ("0.85", None, 0.85),
    ("1e-3", None, 1e-3),
    ("  4.7  ", "F", 4.7),
    (".5 A", "A", 0.5),
]


@pytest.mark.parametrize(("text", "kind", "expected"), PLAIN, ids=[f"{c[0]}-{c[1]}" for c in PLAIN])
def test_parse(text, kind, expected):
    assert parse_quantity(text, kind) == expected


def test_decimal_comma_only_when_asked():
    assert parse_quantity("4,7", "F", decimal_comma=True) == 4.7
    assert parse_quantity("4,7 nF", "F", decimal_comma=True) == 4.7e-9
    with pytest.raises(QuantityError) as info:
        parse_quantity("4,7", "F")
    assert str(info.value) == ("'4,7' is not a capacitance (F) (a comma is not a decimal point here; use '.' "
                               "or read the file with decimal commas)")


def test_numbers_pass_through():
    assert parse_quantity(4.7e-9, "F") == 4.7e-9
    assert parse_quantity(3, "V") == 3.0


REJECT = [
    ("22uF", "V", "'22uF' is not a voltage (V) (the unit says a capacitance (F))"),
    ("5 kV", "degC", "'5 kV' is not a temperature (°C) (the unit says a voltage (V))"),
    ("10 %", "V", "'10 %' is not a voltage (V) (the unit says a percentage (%))"),
    ("R47", "V", "'R47' is not a voltage (V) (the R code is for resistances)"),
    ("4R7", "F", "'4R7' is not a capacitance (F) (the R code is for resistances)"),
    ("300 K", "degC", "'300 K' is not a temperature (°C) (temperatures are written in °C here, not kelvin)"),
    ("5 kdegC", "degC", "'5 kdegC' is not a temperature (°C) (no SI prefix is used with a temperature (°C))"),
    ("5 mK", "K", ("'5 mK' is not a temperature difference (K) (no SI prefix is used with a temperature "
                   "difference (K))")),
    ("1.0.0", "V", "'1.0.0' is not a voltage (V) (unexpected '.0' after the number)"),
    ("", "V", "'' is not a voltage (V) (the text is empty)"),
    ("abc", "V", ("'abc' is not a voltage (V) (expected a number with an optional SI prefix and unit V/v, "
                  "such as 4.7k or 22 mV)")),
    ("1e400", "V", "'1e400' is not a voltage (V) (the value must be finite)"),
    ("fast", None, "'fast' is not a plain number (expected a number such as 0.85 or 1e-3)"),
]


@pytest.mark.parametrize(("text", "kind", "message"), REJECT, ids=[f"{c[0]}-{c[1]}" for c in REJECT])
def test_reject_with_message(text, kind, message):
    with pytest.raises(QuantityError) as info:
        parse_quantity(text, kind)
    assert str(info.value) == message
    assert isinstance(info.value, ValueError)


def test_bool_and_unknown_kind():
    with pytest.raises(QuantityError, match=r"'True' is not a voltage \(V\) \(a true/false value is not a number\)"):
        parse_quantity(True, "V")
    with pytest.raises(ValueError, match="unknown unit kind 'volts'"):
        parse_quantity("1", "volts")


FORMAT = [
    (4700.0, "ohm", "4.7 kΩ"),
    (22e-6, "F", "22 µF"),
    (0.47, "ohm", "470 mΩ"),
    (4.7e-9, "F", "4.7 nF"),
    (999.9, "V", "1 kV"),          # rounding to 3 digits carries into the next prefix
    (0.1, "%", "10 %"),
    (10.0, "%", "1000 %"),
    (125.0, "degC", "125 °C"),
    (-40.0, "degC", "-40 °C"),
    (60000.0, "h", "60 000 h"),
    (1500.0, "K/W", "1500 K/W"),
    (0.0, "V", "0 V"),
    (None, "V", "—"),
    (float("nan"), "V", "n/a"),
    (-4.7e-3, "A", "-4.7 mA"),
    (1e15, "Hz", "1000 THz"),
]


@pytest.mark.parametrize(("value", "kind", "text"), FORMAT, ids=[f"{c[2]}" for c in FORMAT])
def test_format(value, kind, text):
    assert format_quantity(value, kind) == text


_KINDS = ["V", "A", "W", "Hz", "F", "H", "ohm", "s", "C"]


@settings(max_examples=300, deadline=None)
@given(
    value=st.floats(min_value=1e-14, max_value=1e11, allow_nan=False, allow_infinity=False),
    negative=st.booleans(),
    kind=st.sampled_from(_KINDS),
)
def test_format_then_parse_round_trip(value, negative, kind):
    value = -value if negative else value
    text = format_quantity(value, kind, digits=15)
    assert math.isclose(parse_quantity(text, kind), value, rel_tol=1e-13), text


@settings(max_examples=100, deadline=None)
@given(value=st.floats(min_value=-200.0, max_value=999.0, allow_nan=False), kind=st.sampled_from(["degC", "K/W"]))
def test_format_then_parse_round_trip_without_prefixes(value, kind):
    text = format_quantity(value, kind, digits=15)
    assert math.isclose(parse_quantity(text, kind), value, rel_tol=1e-13, abs_tol=1e-12), text


def test_hours_round_trip_with_digit_groups():
    """format_quantity writes hours in groups of three ("123 456 h"); parse_quantity reads them back."""
    for hours in (60000.0, 123456.0, 2000.0):
        assert parse_quantity(format_quantity(hours, "h"), "h") == hours
    with pytest.raises(QuantityError):
        parse_quantity("5 00 h", "h")  # not groups of three
