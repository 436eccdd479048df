"""Saturated bipolar switch (models/README.md §6), checked like a datasheet.

Sources: Vbe falls about 2 mV/°C (Horowitz & Hill, The Art of Electronics);
hFE rises about 0.5 %/°C (from memory); log-log and linear interpolation
checked by hand and against numpy.interp.
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from picker.models.bipolar import (
    VBE_ON_V,
    VCE_SAT_FORCED_GAIN,
    base_current,
    forced_gain,
    hfe_at_current,
    hfe_at_temperature,
    saturation_overdrive,
    vbe_at,
    vce_sat_at_current,
    vce_sat_guaranteed,
)

REL_TOL = 1e-9  # exact arithmetic
NAN = np.nan


def test_vbe_falls_2_mV_per_degree():
    """Horowitz & Hill: -2 mV/°C. 0.65 + 0.002·45 = 0.740 V at -20 °C; 0.65 - 0.002·20 = 0.610 V
    at 45 °C; a part's own 0.70 V gives 0.70 - 0.002·100 = 0.50 V at 125 °C; blank → 0.65 V."""
    assert VBE_ON_V == 0.65
    got = vbe_at(np.array([NAN, NAN, 0.70, NAN]), np.array([-20.0, 45.0, 125.0, 25.0]))
    np.testing.assert_allclose(got, [0.740, 0.610, 0.500, 0.650], rtol=REL_TOL)


def test_base_current_by_hand():
    """Ohm's law across the base resistor: (3.0 - 0.74)/68 kΩ = 2.26/68000 = 33.235 µA;
    drive 0.5 V below Vbe 0.74 V: no base current; unknown drive: NaN; Rb = 0: NaN."""
    got = base_current(np.array([3.0, 0.5, NAN, 3.0]), 0.74, np.array([68e3, 68e3, 68e3, 0.0]))
    assert got[0] == pytest.approx(2.26 / 68e3, rel=REL_TOL)
    assert got[0] == pytest.approx(33.235e-6, rel=1e-4)
    assert got[1] == 0.0
    assert np.isnan(got[2]) and np.isnan(got[3])


def test_hfe_log_log_interpolation_by_hand():
    """hFE 100 at 0.1 mA, 200 at 10 mA; at 1 mA (models/README.md §6, log-log):
    ln h = ln 100 + (ln 1e-3 - ln 1e-4)/(ln 1e-2 - ln 1e-4)·(ln 200 - ln 100)
         = ln 100 + (1/2) ln 2 → h = 100·√2 = 141.42.
    Columns in any order with NaN gaps; checked against numpy.interp in log space too.
    """
    ic_points_A = np.array([[1e-2, NAN, 1e-4]])
    hfe_points = np.array([[200.0, NAN, 100.0]])
    hfe, extrapolated = hfe_at_current(ic_points_A, hfe_points, 1e-3)
    assert hfe[0] == pytest.approx(100 * math.sqrt(2), rel=REL_TOL)
    assert hfe[0] == pytest.approx(141.42, abs=0.005)
    assert not extrapolated[0]
    reference = math.exp(np.interp(math.log(1e-3), np.log([1e-4, 1e-2]), np.log([100.0, 200.0])))
    assert hfe[0] == pytest.approx(reference, rel=REL_TOL)


def test_hfe_clamps_at_the_ends_and_flags_only_below():
    """Points 100 at 0.1 mA, 200 at 10 mA, 150 at 100 mA (models/README.md §6):
    40 µA (below) → 100, extrapolated; exactly 0.1 mA → 100, not flagged;
    1 A (above) → 150, not flagged; 50 mA → between 200 and 150 in log-log."""
    ic_points_A = np.tile([1e-4, 1e-2, 1e-1], (4, 1))
    hfe_points = np.tile([100.0, 200.0, 150.0], (4, 1))
    ic_A = np.array([40e-6, 1e-4, 1.0, 5e-2])
    hfe, extrapolated = hfe_at_current(ic_points_A, hfe_points, ic_A)
    frac = math.log(5e-2 / 1e-2) / math.log(1e-1 / 1e-2)
    expected_50mA = math.exp(math.log(200) + frac * math.log(150 / 200))
    np.testing.assert_allclose(hfe, [100.0, 100.0, 150.0, expected_50mA], rtol=REL_TOL)
    assert list(extrapolated) == [True, False, False, False]


def test_hfe_one_point_and_no_point():
    """One point (hFE 120 at 2 mA): 120 everywhere, extrapolated below 2 mA; no point: NaN."""
    ic_points_A = np.array([[NAN, 2e-3], [NAN, 2e-3], [NAN, NAN]])
    hfe_points = np.array([[NAN, 120.0], [NAN, 120.0], [NAN, NAN]])
    hfe, extrapolated = hfe_at_current(ic_points_A, hfe_points, np.array([1e-3, 5e-3, 1e-3]))
    assert list(hfe[:2]) == [120.0, 120.0] and np.isnan(hfe[2])
    assert list(extrapolated) == [True, False, False]


def test_hfe_rises_half_a_percent_per_degree():
    """From memory: hFE(T) = hFE25 (1 + 0.005 (T - 25)): 100 → 100·(1 - 0.225) = 77.5 at -20 °C,
    100·1.1 = 110 at 45 °C, 100·1.5 = 150 at 125 °C."""
    got = hfe_at_temperature(100.0, np.array([-20.0, 45.0, 125.0]))
    np.testing.assert_allclose(got, [77.5, 110.0, 150.0], rtol=REL_TOL)


def test_vce_sat_linear_interpolation_by_hand():
    """0.10 V at 10 mA, 0.30 V at 100 mA (Ic/Ib = 10), linear in Ic (models/README.md §6):
    50 mA → 0.10 + (50 - 10)/(100 - 10)·0.20 = 0.10 + 0.0888889 = 0.188889 V;
    1 mA → 0.10 V (lowest point), 1 A → 0.30 V (highest); no points → NaN.
    Checked against numpy.interp, which clamps the same way."""
    ic_points_A = np.array([[0.1, 0.01]] * 3 + [[NAN, NAN]])
    vce_points_V = np.array([[0.30, 0.10]] * 3 + [[NAN, NAN]])
    ic_A = np.array([0.05, 1e-3, 1.0, 0.05])
    got = vce_sat_at_current(ic_points_A, vce_points_V, ic_A)
    np.testing.assert_allclose(got[:3], [0.10 + 40 / 90 * 0.20, 0.10, 0.30], rtol=REL_TOL)
    reference = np.interp(ic_A[:3], [0.01, 0.1], [0.10, 0.30])
    np.testing.assert_allclose(got[:3], reference, rtol=REL_TOL)
    assert np.isnan(got[3])


def test_forced_gain_decides_the_vce_sat_guarantee():
    """Datasheet Vce(sat) holds at Ic/Ib <= 10 (models/README.md §6):
    40 µA / 33.235 µA = 1.2 → guaranteed; 100 mA / 1 mA = 100 → not; 10 mA / 1 mA = 10 → yes;
    unknown Ib → NaN gain, not guaranteed; Ib = 0 → infinite gain, not guaranteed."""
    ic_A = np.array([40e-6, 0.1, 0.01, 0.01, 0.01])
    ib_A = np.array([2.26 / 68e3, 1e-3, 1e-3, NAN, 0.0])
    gain = forced_gain(ic_A, ib_A)
    assert gain[0] == pytest.approx(40e-6 * 68e3 / 2.26, rel=REL_TOL)
    assert gain[1] == pytest.approx(100.0) and np.isnan(gain[3]) and np.isinf(gain[4])
    assert VCE_SAT_FORCED_GAIN == 10
    assert list(vce_sat_guaranteed(ic_A, ib_A)) == [True, False, True, False, False]


def test_latch_switch_at_the_cold_corner_by_hand():
    """40 µA collector, 68 kΩ from a 3.0 V cell, -20 °C, hFE 100 at 0.1 mA only (models/README.md §6):
    Vbe = 0.65 + 0.002·45 = 0.74 V (Horowitz & Hill); Ib = 2.26 V/68 kΩ = 33.235 µA;
    hFE = 100 (below the lowest point: extrapolated) · 0.775 (from memory) = 77.5;
    Ib·hFE/Ic = 33.235e-6·77.5/40e-6 = 64.39 ≥ overdrive 2: saturates."""
    vbe_V = vbe_at(NAN, -20.0)
    ib_A = base_current(3.0, vbe_V, 68e3)
    hfe25, extrapolated = hfe_at_current(np.array([[1e-4]]), np.array([[100.0]]), 40e-6)
    hfe = hfe_at_temperature(hfe25, -20.0)
    ratio = saturation_overdrive(ib_A, hfe, 40e-6)
    assert extrapolated[0]
    assert ratio[0] == pytest.approx(2.26 / 68e3 * 77.5 / 40e-6, rel=REL_TOL)
    assert ratio[0] == pytest.approx(64.39, abs=0.01)
    assert np.isnan(saturation_overdrive(NAN, 77.5, 40e-6))


positive_points = st.lists(st.tuples(st.floats(1e-5, 1.0), st.floats(5.0, 800.0)),
                           min_size=1, max_size=5, unique_by=lambda p: p[0])


@given(points=positive_points, ic=st.floats(1e-6, 10.0))
def test_interpolated_gain_stays_within_the_points(points, ic):
    """Interpolation never invents a gain outside the datasheet's range, and matches
    numpy.interp in log-log space (which clamps the same way)."""
    ic_points = np.array([[p[0] for p in points]])
    hfe_points = np.array([[p[1] for p in points]])
    hfe, extrapolated = hfe_at_current(ic_points, hfe_points, ic)
    assert hfe_points.min() * (1 - 1e-12) <= hfe[0] <= hfe_points.max() * (1 + 1e-12)
    assert extrapolated[0] == (ic < ic_points.min())
    order = np.argsort(ic_points[0])
    log_ic, log_hfe = np.log(ic_points[0][order]), np.log(hfe_points[0][order])
    reference = math.exp(np.interp(math.log(ic), log_ic, log_hfe))
    assert hfe[0] == pytest.approx(reference, rel=1e-9)


def test_column_currents_shared_by_all_parts():
    """The hfe_min@<I>mA header currents may be passed once, shape (m,), for every part:
    same result as the (n, m) table. Part 0: 100 at 0.1 mA, 200 at 10 mA → 141.42 at 1 mA;
    part 1: only 150 at 10 mA → 150 at 1 mA, extrapolated."""
    hfe_points = np.array([[100.0, 200.0], [NAN, 150.0]])
    shared = hfe_at_current(np.array([1e-4, 1e-2]), hfe_points, 1e-3)
    table = hfe_at_current(np.tile([1e-4, 1e-2], (2, 1)), hfe_points, 1e-3)
    np.testing.assert_array_equal(shared[0], table[0])
    np.testing.assert_allclose(shared[0], [100 * math.sqrt(2), 150.0], rtol=REL_TOL)
    assert list(shared[1]) == [False, True]


def test_a_current_one_rounding_step_below_the_lowest_point_is_extrapolated():
    """Regression (found by the property test above): 1e-5 A against a point at
    1.0000000000000003e-05 A is below it, although their logarithms are equal."""
    hfe, extrapolated = hfe_at_current(np.array([[1.0000000000000003e-05]]), np.array([[5.0]]), 1e-5)
    assert extrapolated[0] and hfe[0] == 5.0
