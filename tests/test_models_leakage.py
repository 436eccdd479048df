"""Off-state leakage against temperature (models/README.md §4).

Sources: leakage doubles every 10 °C (common practice); the exponential
through two datasheet points is exact algebra, I25 (I_hot/I25)^((T-25)/(T_hot-25)).
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from picker.models.leakage import leakage_at

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
    """Per part at 45 °C: a usable hot point; none (NaN); hot point at 25 °C (unusable);
    zero I25 (ratio undefined); unknown I25.

    1) 1 µA·(10)^(20/60) = 2.1544 µA; 2) 1 µA·4 = 4 µA; 3) 1 µA·4; 4) 0·4 = 0; 5) NaN.
    """
    got = leakage_at(np.array([1e-6, 1e-6, 1e-6, 0.0, NAN]), 45.0,
                     hot_A=np.array([10e-6, NAN, 3e-6, 5e-6, 10e-6]),
                     hot_C=np.array([85.0, NAN, 25.0, 85.0, 85.0]))
    np.testing.assert_allclose(got[:4], [10 ** (1 / 3) * 1e-6, 4e-6, 4e-6, 0.0], rtol=REL_TOL)
    assert np.isnan(got[4])


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
