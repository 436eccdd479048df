"""Preferred resistor values (picker/models/eseries.py) against IEC 60063.

Source: IEC 60063, "Preferred number series for resistors and capacitors":
the E6-E24 tables (two significant figures) and the E48-E192 tables (three).
The values below are written from memory of the standard's tables, as are the
departures from the rounded formula 10^(i/n) that the standard is known for;
each is marked so beside the check.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from picker.catalog.quantities import parse_quantity, resistor_code
from picker.models import eseries

# A few values of each series, one decade (IEC 60063, from memory).
IEC_60063_SAMPLES = {
    "E6": [1.0, 1.5, 2.2, 3.3, 4.7, 6.8],
    "E12": [1.0, 1.2, 1.8, 2.7, 3.9, 5.6, 8.2],
    "E24": [1.1, 1.3, 1.6, 2.0, 2.4, 3.0, 3.6, 4.3, 5.1, 6.2, 7.5, 9.1],
    "E48": [1.00, 1.05, 1.21, 1.47, 2.15, 3.16, 4.64, 6.81, 9.53],
    "E96": [1.02, 1.07, 1.13, 1.37, 1.91, 2.49, 3.74, 4.99, 7.32, 9.76],
    "E192": [1.01, 1.04, 1.09, 1.38, 2.23, 4.70, 6.04, 9.20, 9.88],
}
SIZES = {"E6": 6, "E12": 12, "E24": 24, "E48": 48, "E96": 96, "E192": 192}  # IEC 60063


def decade(series: str) -> np.ndarray:
    """The series' mantissas in [1, 10), from its values between 1 and 9.99 kohm."""
    return eseries.values(series, 1000.0, 9999.0) / 1000.0


@pytest.mark.parametrize("series", list(SIZES))
def test_series_sizes_and_samples(series):
    """IEC 60063: E-n holds n values a decade; sampled values from the standard's tables
    (from memory)."""
    values = decade(series)
    assert len(values) == SIZES[series]
    for v in IEC_60063_SAMPLES[series]:
        assert np.any(np.isclose(values, v, rtol=0, atol=1e-9)), f"{v} missing from {series}"


def formula(series: str) -> np.ndarray:
    """The rounded formula 10^(i/n): two significant figures up to E24, three above."""
    n = SIZES[series]
    figures = 2 if n <= 24 else 3
    return np.array([float(f"{10 ** (i / n):.{figures - 1}f}") for i in range(n)])


def test_e24_departs_from_the_formula_where_the_standard_does():
    """IEC 60063's E24 is not the rounded 10^(i/24): the standard keeps 2.7, 3.0, 3.3,
    3.6, 3.9, 4.3, 4.7 and 8.2 where the formula gives 2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6
    and 8.3 (from memory; these are the values every E24 resistor kit carries)."""
    table, calc = decade("E24"), formula("E24")
    differ = {float(t): float(c) for t, c in zip(table, calc) if not math.isclose(t, c)}
    assert differ == {2.7: 2.6, 3.0: 2.9, 3.3: 3.2, 3.6: 3.5, 3.9: 3.8, 4.3: 4.2, 4.7: 4.6,
                      8.2: 8.3}


def test_e12_and_e6_share_e24s_departures():
    """IEC 60063: E12 is every second E24 value and E6 every fourth, so they keep 2.7,
    3.3, 3.9, 4.7, 8.2 (E12) and 3.3, 4.7 (E6) over the formula (from memory)."""
    for series, expected in (("E12", {2.7, 3.3, 3.9, 4.7, 8.2}), ("E6", {3.3, 4.7})):
        table, calc = decade(series), formula(series)
        assert {float(t) for t, c in zip(table, calc) if not math.isclose(t, c)} == expected


def test_e192_departs_from_the_formula_at_one_value_and_e48_e96_follow_it():
    """IEC 60063's three-figure series follow the rounded 10^(i/n), except E192's 9.20,
    where the formula gives 9.19 (from memory)."""
    table, calc = decade("E192"), formula("E192")
    assert [(float(t), float(c)) for t, c in zip(table, calc) if not math.isclose(t, c)] == [(9.2, 9.19)]
    for series in ("E48", "E96"):
        np.testing.assert_allclose(decade(series), formula(series), rtol=0, atol=1e-12)


def test_values_are_exact_and_span_the_range():
    """Values in ohms are whole numbers above 100 ohm (470 kohm is 470000.0 exactly), the
    range includes both ends when they are series values, and the default range runs
    from 100 ohm to 2.2 Mohm (models/README.md §10)."""
    e24 = eseries.values("E24")
    assert e24[0] == 100.0 and e24[-1] == 2.2e6
    assert 470000.0 in e24 and 2.7e3 in e24 and 9.1e5 in e24
    assert np.all(e24 == np.round(e24))
    assert np.all(np.diff(e24) > 0)
    # 100 ohm to 2.2 Mohm: four whole decades (96 values) and 1.0..2.2 of the fifth (9)
    assert len(e24) == 4 * 24 + 9


def test_largest_passing_is_the_largest_value_a_monotone_check_accepts():
    """The search answers what a look over every value would: the largest value whose
    check passes at +tol, here R (1 + tol) <= bound for bounds between and on values."""
    grid = eseries.values("E24")
    tol = 0.05
    bounds = np.array([99.0, 105.0, 1000.0 * 1.05, 1000.0 * 1.05 - 1e-9, 4.7e5 * 1.05, 3e6 * 1.05,
                       2.3e4, 1e7])
    got = eseries.largest_passing(lambda r: r <= bounds, len(bounds), "E24", tol)
    expected = []
    for b in bounds:
        fits = grid[grid * (1 + tol) <= b]
        expected.append(fits[-1] if fits.size else np.nan)
    np.testing.assert_array_equal(got, np.array(expected))
    assert got[2] == 1000.0 and got[3] == 910.0 and got[4] == 4.7e5 and got[5] == 2.2e6
    assert np.isnan(got[0])


def test_largest_at_most_matches_the_search():
    rng = np.random.default_rng(7)
    bounds = 10 ** rng.uniform(1.5, 7.0, 2000)
    for series in eseries.SERIES:
        tol = eseries.DEFAULT_TOLERANCE[series]
        searched = eseries.largest_passing(lambda r: r <= bounds, len(bounds), series, tol)
        direct = eseries.largest_at_most(bounds / (1 + tol), series)
        np.testing.assert_array_equal(searched, direct)


@pytest.mark.parametrize("ohm, code", [
    (470e3, "470k"), (2.2e6, "2M2"), (4.7e3, "4k7"), (100.0, "100R"), (0.47, "R47"),
    (1e6, "1M"), (1.02e3, "1k02"), (988e3, "988k"), (10.0, "10R"), (4.7, "4R7"),
])
def test_resistor_code_is_iec_60062(ohm, code):
    """IEC 60062 letter-and-digit code: the letter is the multiplier and stands for the
    decimal point (4K7 = 4.7 kohm, 2R2 = 2.2 ohm, R47 = 0.47 ohm); it reads back."""
    assert resistor_code(ohm) == code
    assert parse_quantity(code, "ohm") == pytest.approx(ohm, rel=1e-12)
