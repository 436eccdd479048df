"""Fuzzing the quantity parser: any text gives a finite number or a
QuantityError in one line, never another exception.

The inputs: random text, and text built from the parser's own pieces (signs,
digits, exponents, SI prefixes, unit symbols, IEC 60062 letter codes, NaN and
infinity spellings, huge exponents) so most examples reach deep into it."""

from __future__ import annotations

import math

from hypothesis import given
from hypothesis import strategies as st

from fuzzing import FUZZ, NASTY_CELLS, ours
from picker.errors import QuantityError
from picker.catalog.quantities import PREFIX_EXP, SYMBOLS, UNITS, parse_quantity, parse_range

unit_keys = st.sampled_from(sorted(UNITS))

number_text = st.one_of(
    st.from_regex(r"\A[+\-−±]?\d{0,12}(\.\d{0,12})?([eE][+-]?\d{1,8})?\Z", fullmatch=True),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-(10**330), max_value=10**330).map(str),
    st.sampled_from(["nan", "NaN", "inf", "-inf", "Infinity", "∞", "1e309", "1e-400",
                     "9" * 500, "1e" + "9" * 7, "1e" + "9" * 20, ".", "", "+", "e3", "0x10"]),
)
unit_text = st.one_of(
    st.just(""),
    st.sampled_from(sorted(SYMBOLS)),
    st.tuples(st.sampled_from(sorted(PREFIX_EXP) + ["K", "", "µ", "μ"]),
              st.sampled_from(sorted(SYMBOLS))).map("".join),
    st.sampled_from(sorted(PREFIX_EXP) + ["K", "R", "Mohm", "%", "ppm/K", "/C", "Ah", "mAh"]),
    st.text(max_size=4),
)
iec_code = st.from_regex(r"\A\d{0,4}[RKkMGTpnuµm]\d{1,4}(Ω|ohm|F)?\Z", fullmatch=True)
spaces = st.sampled_from(["", " ", "  ", "\u00a0", "\u2009", "\t"])

quantity_text = st.one_of(
    st.tuples(number_text, spaces, unit_text).map("".join),
    iec_code,
    st.sampled_from(NASTY_CELLS),
    st.text(max_size=30),
    st.text(alphabet=st.sampled_from(list("0123456789.,eE+-−±µμuΩkmMRK VAWhCo°%/ ")),
            max_size=20),
)


def _check(text, unit, decimal_comma):
    try:
        value = parse_quantity(text, unit, decimal_comma=decimal_comma)
    except QuantityError as exc:
        ours(exc)
        return None
    assert isinstance(value, float) and math.isfinite(value), (text, unit, value)
    return value


@FUZZ
@given(text=quantity_text, unit=unit_keys, decimal_comma=st.booleans())
def test_parse_quantity_gives_a_finite_number_or_our_error(text, unit, decimal_comma):
    _check(text, unit, decimal_comma)


@FUZZ
@given(value=st.one_of(st.floats(allow_nan=True, allow_infinity=True),
                       st.integers(min_value=-(10**400), max_value=10**400), st.booleans(),
                       st.none(), st.lists(st.integers(), max_size=2)),
       unit=unit_keys)
def test_parse_quantity_of_non_text_values(value, unit):
    """TOML hands over ints of any size, floats with inf and nan, booleans,
    lists: a finite float or QuantityError. (A huge int is our error, not an
    OverflowError: see test_regression_huge_integer_is_out_of_range.)"""
    _check(value, unit, False)


@FUZZ
@given(low=quantity_text, high=quantity_text, sep=st.sampled_from(["..", "...", " .. ", ".", "-"]),
       unit=st.sampled_from(["V", "degC", "A", "ohm"]))
def test_parse_range_gives_an_ordered_pair_or_our_error(low, high, sep, unit):
    try:
        lo, hi = parse_range(low + sep + high, unit)
    except QuantityError as exc:
        ours(exc)
        return
    assert math.isfinite(lo) and math.isfinite(hi) and lo <= hi


def test_regression_huge_integer_is_out_of_range():
    """Found by fuzzing: a TOML integer beyond a float's range (10**400) raised
    OverflowError from float(); it is now a QuantityError saying so."""
    import pytest

    with pytest.raises(QuantityError, match="not a finite number|out of range"):
        parse_quantity(10**400, "V")


def test_regression_messages_stay_on_one_line():
    """Found by fuzzing: a quoted cell may hold a line break, and an error
    quoting it printed two lines (a cell could also carry a terminal escape
    sequence). Every message of ours, and every catalogue problem, writes
    control characters as escapes."""
    import pytest

    from picker.catalog.load import load_catalog

    with pytest.raises(QuantityError) as info:
        parse_quantity("a\nb\x1b[31m", "V")
    assert str(info.value) == ("'a\\nb\\x1b[31m' is not a number; expected a voltage (V), "
                               "e.g. '25 V'")
    data = b'part,kind,vds_max_V\nA-1,npn,"x\r\ny"\n'
    problem = load_catalog("c.csv", source="t", data=data, cache=False).errors[0]
    assert "\n" not in str(problem) and "\\r\\n" in str(problem)
