"""Off-state leakage against temperature (models/README.md §4).

Sources: leakage doubles every 10 °C (common practice); the exponential
through two datasheet points is exact algebra, I25 (I_hot/I25)^((T-25)/(T_hot-25));
reverse leakage of a junction rises with temperature (any semiconductor text,
e.g. Sedra & Smith, the diode's saturation current), so a falling hot point is
a data error.
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from picker.models.leakage import leakage_at, leakage_findings

REL_TOL = 1e-9  # exact arithmetic
NAN = np.nan


def test_doubles_every_10_degrees():
    """1 µA at 25 °C (common practice: ×2 per 10 °C): 2^((45-25)/10) = 2² = 4 → 4 µA at 45 °C;
    2^((5-25)/10) = 1/4 → 0.25 µA at 5 °C; 2^(10/10) = 2 µA at 35 °C."""
    got = leakage_at(1e-6, np.array([45.0, 5.0, 35.0, 25.0]))
    np.testing.assert_allclose(got, [4e-6, 0.25e-6, 2e-6, 1e-6], rtol=REL_TOL)


def test_two_point_exponential_by_hand():
    """1 µA at 25 °C, 10 µA at 85 °C; at 55 °C: 1·10^((55-25)/(85-25)) = 10^0.5 = √10 = 3.1623 µA.

    It passes through both points: 1 µA at 25 °C, 10 µA at 85 °C.
    """
    got = leakage_at(1e-6, np.array([55.0, 25.0, 85.0]), hot_A=10e-6, hot_C=85.0)
    np.testing.assert_allclose(got, [math.sqrt(10) * 1e-6, 1e-6, 10e-6], rtol=REL_TOL)


def test_each_part_uses_its_own_rule():
    """Per part at 45 °C (models/README.md §4):
    1) a usable hot point: 1 µA·10^(20/60) = 2.1544 µA;
    2) none (NaN): 1 µA·2² = 4 µA;
    3) hot point at 25 °C (no second temperature): left out, 4 µA;
    4) zero I25 with a hot point at 85 °C: doubling from it, 5 µA·2^((45-85)/10) = 5/16 = 0.3125 µA;
    5) unknown I25 with the same hot point: read the same way, 0.3125 µA;
    6) zero I25 alone: unknown (a zero is usually a dash typed as a number);
    7) unknown I25 alone: unknown;
    8) a "hot" point at 20 °C (not above 25 °C): left out, 4 µA.
    """
    got = leakage_at(np.array([1e-6, 1e-6, 1e-6, 0.0, NAN, 0.0, NAN, 1e-6]), 45.0,
                     hot_A=np.array([10e-6, NAN, 3e-6, 5e-6, 5e-6, NAN, NAN, 0.5e-6]),
                     hot_C=np.array([85.0, NAN, 25.0, 85.0, 85.0, NAN, NAN, 20.0]))
    np.testing.assert_allclose(got[[0, 1, 2, 3, 4, 7]],
                               [10 ** (1 / 3) * 1e-6, 4e-6, 4e-6, 0.3125e-6, 0.3125e-6, 4e-6],
                               rtol=REL_TOL)
    assert np.isnan(got[5]) and np.isnan(got[6])
    assert np.isnan(leakage_at(0.0, 45.0))  # no hot point given at all


def test_falling_hot_point_worked_example():
    """The docstring's example (models/README.md §4): 10 nA at 25 °C, 8 nA at 100 °C.
    Through both points 45 °C would give 10·0.8^(20/75) = 9.42 nA, below the 25 °C
    figure; the point is left out and 10·2² = 40 nA is the figure. A hot point equal
    to the 25 °C one is left out the same way."""
    assert 10e-9 * 0.8 ** (20 / 75) == pytest.approx(9.42e-9, abs=0.005e-9)
    got = leakage_at(np.array([10e-9, 10e-9]), 45.0, hot_A=np.array([8e-9, 10e-9]), hot_C=100.0)
    np.testing.assert_allclose(got, [40e-9, 40e-9], rtol=REL_TOL)


def test_zero_at_25_with_a_hot_point_worked_example():
    """0 nA at 25 °C and 500 nA at 100 °C: the doubling rule from the hot point,
    500·2^((45 - 100)/10) = 500/45.255 = 11.049 nA at 45 °C; and at 100 °C the point itself."""
    got = leakage_at(0.0, np.array([45.0, 100.0]), hot_A=500e-9, hot_C=100.0)
    np.testing.assert_allclose(got, [500e-9 * 2 ** -5.5, 500e-9], rtol=REL_TOL)
    assert got[0] == pytest.approx(11.049e-9, rel=1e-4)


def test_catalogue_findings_by_row():
    """What the catalogue check warns about (models/README.md §4): a zero 25 °C figure,
    a zero hot figure, a hot point at or below the 25 °C one, a hot point not above
    25 °C, and half a hot point; a clean two-point row and a row without any point
    raise nothing."""
    i25 = np.array([0.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, NAN])
    hot = np.array([5.0, 0.0, 0.8, 1.0, 5.0, 5.0, NAN, 10.0, NAN])
    hot_c = np.array([85.0, 85.0, 85.0, 85.0, 20.0, NAN, 85.0, 85.0, NAN])
    found = leakage_findings(i25, hot, hot_c)
    assert {k: list(np.flatnonzero(v)) for k, v in found.items()} == {
        "zero": [0], "hot_zero": [1], "falling": [2, 3], "cool": [4], "half": [5, 6]}


@given(i25=st.floats(1e-12, 1e-3), t1=st.floats(-40.0, 150.0), dt=st.floats(0.1, 50.0))
def test_leakage_rises_with_temperature(i25, t1, dt):
    """Reverse leakage never falls as the junction warms (common practice)."""
    low, high = leakage_at(i25, np.array([t1, t1 + dt]))
    assert high > low


@given(i25=st.floats(1e-12, 1e-3), ratio=st.floats(1.01, 1e4), hot=st.floats(50.0, 175.0))
def test_two_point_curve_passes_through_the_hot_point(i25, ratio, hot):
    """The exponential through two points reproduces the hot point."""
    got = leakage_at(i25, hot, hot_A=i25 * ratio, hot_C=hot)
    assert got == pytest.approx(i25 * ratio, rel=1e-9)
