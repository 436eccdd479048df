"""Values with units, checked against the standards that define the spellings.

Sources:
- SI prefixes: The International System of Units (SI Brochure), 9th edition,
  BIPM 2019, Table 7 (pico 1e-12 ... giga 1e9).
- Letter-and-digit code: IEC 60062, "Marking codes for resistors and
  capacitors" (the letter stands for the decimal point and the multiplier:
  4K7 = 4.7 kΩ, 2R2 = 2.2 Ω, R47 = 0.47 Ω, 1M0 = 1.0 MΩ, 4n7 = 4.7 nF).
"""

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from picker.errors import PickerError, QuantityError
from picker.catalog.quantities import format_quantity, parse_quantity, parse_range

REL_TOL = 0.0  # decimal arithmetic: results are exact


SI_PREFIXES = [  # SI Brochure 9th ed. (BIPM 2019), Table 7
    ("1 pF", "F", 1e-12),
    ("1 nA", "A", 1e-9),
    ("1 uA", "A", 1e-6),
    ("1 \u00b5A", "A", 1e-6),  # micro sign
    ("1 \u03bcA", "A", 1e-6),  # Greek small letter mu
    ("1 mV", "V", 1e-3),
    ("1 kohm", "ohm", 1e3),
    ("1 MΩ", "ohm", 1e6),
    ("1 GΩ", "ohm", 1e9),
]

IEC_60062 = [  # IEC 60062 letter-and-digit code
    ("4k7", "ohm", 4700.0),
    ("4K7", "ohm", 4700.0),
    ("2R2", "ohm", 2.2),
    ("R47", "ohm", 0.47),
    ("1M0", "ohm", 1e6),
    ("1K0", "ohm", 1000.0),
    ("100R", "ohm", 100.0),
    ("4n7", "F", 4.7e-9),
    ("2p2", "F", 2.2e-12),
    ("4k7Ω", "ohm", 4700.0),
]

UNITS_AND_COLUMNS = [  # a value given in another unit lands in the unit asked for
    ("25", "mohm", 25.0),          # plain number: already in the column's unit
    ("25mΩ", "mohm", 25.0),
    ("25 mohm", "mohm", 25.0),
    ("0.025 Ω", "mohm", 25.0),
    ("0.025 ohm", "mohm", 25.0),
    ("1.2 µA", "uA", 1.2),
    ("1.2uA", "uA", 1.2),
    ("1200 nA", "uA", 1.2),
    ("45 mA", "A", 0.045),
    ("2 W", "W", 2.0),
    ("100 mW", "W", 0.1),
    ("2.6 Ah", "Ah", 2.6),
    ("2600 mAh", "Ah", 2.6),
    ("-20 °C", "degC", -20.0),
    ("-20 degC", "degC", -20.0),
    ("-20C", "degC", -20.0),
    ("250 °C/W", "C/W", 250.0),
    ("250 K/W", "C/W", 250.0),       # a kelvin step equals a degree Celsius step (SI Brochure)
    ("-3 mV/°C", "mV/C", -3.0),
    ("0.5 %/°C", "pct/C", 0.5),
    ("68k", "ohm", 68000.0),         # a prefix alone where a resistance is expected
    ("10K", "ohm", 10000.0),
    ("4.7e-6", "A", 4.7e-6),
    ("−2.5 V", "V", -2.5),           # U+2212 minus sign, as datasheets print it
    ("±8 V", "V", 8.0),              # a ± rating is a magnitude
    ("80 %", "1", 0.8),
    (0.8, "1", 0.8),                 # numbers from a TOML file pass through
    (5000, "1", 5000.0),
]


@pytest.mark.parametrize("text,unit,expected", SI_PREFIXES + IEC_60062 + UNITS_AND_COLUMNS)
def test_truth_table(text, unit, expected):
    assert parse_quantity(text, unit) == pytest.approx(expected, rel=REL_TOL, abs=0)


def test_decimal_comma_where_the_file_uses_one():
    assert parse_quantity("2,5 V", "V", decimal_comma=True) == 2.5
    assert parse_quantity("0,025 Ω", "mohm", decimal_comma=True) == 25.0


ERRORS = [  # text, unit, fragment of the message
    ("45 mA", "mohm", "is a current; expected a resistance (mΩ)"),
    ("3 V", "A", "is a voltage; expected a current"),
    ("abc", "V", "is not a number"),
    ("", "V", "empty value"),
    ("nan", "V", "is not a number"),
    ("inf", "A", "is not a number"),
    ("1e400", "V", "out of range"),
    ("2,5", "V", "has a comma"),
    ("1.2,5", "V", "mixes"),
    ("3 Q", "V", "unknown unit 'Q'"),
    ("4k7", "V", "unknown unit"),      # the resistor code only where a resistance is expected
    (float("nan"), "V", "not a finite number"),
    (True, "V", "is not a number"),
]


@pytest.mark.parametrize("text,unit,fragment", ERRORS)
def test_errors_say_what_was_expected(text, unit, fragment):
    with pytest.raises(QuantityError) as err:
        parse_quantity(text, unit, decimal_comma="1.2,5" == text)
    assert fragment in str(err.value)
    assert isinstance(err.value, ValueError)  # our errors are also ValueErrors


def test_ranges():
    assert parse_range("3.0V..4.2V", "V") == (3.0, 4.2)
    assert parse_range("3.0..4.2V", "V") == (3.0, 4.2)  # the unit on the high side applies
    assert parse_range("-20..50", "degC") == (-20.0, 50.0)
    with pytest.raises(QuantityError, match="low end is above"):
        parse_range("4.2V..3.0V", "V")
    with pytest.raises(QuantityError, match="not a range"):
        parse_range("3.0V", "V")


@pytest.mark.parametrize("value,unit,text", [
    (0.025, "ohm", "25 mΩ"),
    (4700.0, "ohm", "4.7 kΩ"),
    (1.2e-7, "A", "120 nA"),
    (0.1, "V", "100 mV"),
    (25.0, "mohm", "25 mΩ"),
])
def test_format_with_engineering_prefix(value, unit, text):
    assert format_quantity(value, unit) == text


@settings(max_examples=300)
@given(st.floats(allow_nan=False, allow_infinity=False, min_value=-1e12, max_value=1e12),
       st.sampled_from(["V", "mV", "A", "uA", "nA", "ohm", "mohm", "W", "degC", "1"]))
def test_format_then_parse_gives_the_same_float(value, unit):
    assert parse_quantity(format_quantity(value, unit, None), unit) == value


@settings(max_examples=500)
@given(st.text(max_size=40), st.sampled_from(["V", "mohm", "uA", "degC", "C/W", "1", "ohm", "F"]),
       st.booleans())
def test_any_text_gives_a_finite_number_or_our_error(text, unit, comma):
    try:
        value = parse_quantity(text, unit, decimal_comma=comma)
    except PickerError:
        return
    assert math.isfinite(value)


@pytest.mark.parametrize("text", ["4 2", "4\n2", "1 000", "2. 5", "0,5 5"])
def test_a_space_inside_a_number_is_refused_not_merged(text):
    """Regression: spaces were dropped before reading, so '4 2' became 42."""
    with pytest.raises(QuantityError, match="space inside the number"):
        parse_quantity(text, "V", decimal_comma=True)


def test_spaces_around_the_number_and_before_the_unit_are_fine():
    assert parse_quantity(" 4.2 V ", "V") == 4.2
    assert parse_quantity("25\u00a0mΩ", "mohm") == 25.0
