"""Saturated bipolar switch (models/README.md §6), checked like a datasheet.

Sources: Vbe falls about 2 mV/°C (Horowitz & Hill, The Art of Electronics);
hFE rises about 0.5 %/°C (from memory); the base node by Kirchhoff's current
law, checked against its Thevenin equivalent; open-base leakage
Iceo = (1 + hFE) Icbo (Sedra & Smith, Microelectronic Circuits); log-log and
linear interpolation checked by hand and against numpy.interp. The device
physics itself is checked against ngspice in tests/test_bipolar_spice.py.
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from picker.models.bipolar import (
    base_current,
    forced_gain,
    hfe_at_current,
    hfe_at_temperature,
    open_base_leakage,
    pulldown_holds,
    saturation_overdrive,
    vbe_25,
    vbe_at,
    vce_sat_at_current,
    vce_sat_guaranteed,
)

REL_TOL = 1e-9  # exact arithmetic
NAN = np.nan


def test_vbe_of_a_saturated_switch_prefers_vbe_sat():
    """models/README.md §6: Vbe(sat) max where given, else Vbe(on), else 0.75 V
    with the note `vbe assumed`. Rows: both given -> 0.85 (the sat figure, not
    0.65); only Vbe(on) -> 0.66; only Vbe(sat) -> 0.9; neither -> 0.75, assumed."""
    got, assumed = vbe_25(np.array([0.85, NAN, 0.9, NAN]), np.array([0.65, 0.66, NAN, NAN]))
    np.testing.assert_allclose(got, [0.85, 0.66, 0.9, 0.75], rtol=REL_TOL)
    assert list(assumed) == [False, False, False, True]


def test_vbe_falls_2_mV_per_degree():
    """Horowitz & Hill: -2 mV/°C. 0.75 + 0.002·45 = 0.840 V at -20 °C; 0.75 - 0.002·20 =
    0.710 V at 45 °C; 0.70 - 0.002·100 = 0.50 V at 125 °C."""
    got = vbe_at(np.array([0.75, 0.75, 0.70]), np.array([-20.0, 45.0, 125.0]))
    np.testing.assert_allclose(got, [0.840, 0.710, 0.500], rtol=REL_TOL)


def test_base_current_by_hand():
    """Ohm's law across the base resistor: (3.0 - 0.84)/68 kΩ = 2.16/68000 = 31.765 µA;
    drive 0.5 V below Vbe 0.84 V: off, no base current; unknown drive: NaN; Rb = 0: NaN."""
    got = base_current(np.array([3.0, 0.5, NAN, 3.0]), 0.84, np.array([68e3, 68e3, 68e3, 0.0]))
    assert got[0] == pytest.approx(2.16 / 68e3, rel=REL_TOL)
    assert got[0] == pytest.approx(31.765e-6, rel=1e-4)
    assert got[1] == 0.0
    assert np.isnan(got[2]) and np.isnan(got[3])


@pytest.mark.parametrize("drive, rb, rpd", [(3.0, 1e6, 2.2e6), (3.0, 470e3, 1e6), (1.8, 10e3, 47e3),
                                            (3.0, 1e6, 100e3), (4.2, 2.2e6, 1e6)])
def test_pull_down_current_against_the_thevenin_equivalent(drive, rb, rpd):
    """Ib = (drive - Vbe)/Rb - Vbe/Rpd (Kirchhoff at the base) equals the
    Thevenin form (Vth - Vbe)/Rth with Vth = drive·Rpd/(Rb + Rpd), Rth = Rb‖Rpd
    (Thevenin's theorem, any circuits textbook); where Vth <= Vbe the switch is
    off: Ib = 0. Worked by hand for the first case: (3.0 - 0.84)/1 MΩ -
    0.84/2.2 MΩ = 2.160 - 0.3818 = 1.778 µA."""
    vbe = 0.84
    vth, rth = drive * rpd / (rb + rpd), rb * rpd / (rb + rpd)
    expected = max((vth - vbe) / rth, 0.0)
    assert base_current(drive, vbe, rb, rpd) == pytest.approx(expected, rel=1e-12, abs=1e-18)
    if (drive, rb, rpd) == (3.0, 1e6, 2.2e6):
        assert expected == pytest.approx(1.778e-6, rel=1e-3)
    if (drive, rb, rpd) == (3.0, 1e6, 100e3):  # Vth = 0.273 V: off
        assert expected == 0.0


def test_hfe_log_log_interpolation_by_hand():
    """hFE 100 at 0.1 mA, 200 at 10 mA; at 1 mA (models/README.md §6, log-log):
    ln h = ln 100 + (ln 1e-3 - ln 1e-4)/(ln 1e-2 - ln 1e-4)·(ln 200 - ln 100)
         = ln 100 + (1/2) ln 2 → h = 100·√2 = 141.42.
    Columns in any order with NaN gaps; checked against numpy.interp in log space too.
    """
    ic_points_A = np.array([[1e-2, NAN, 1e-4]])
    hfe_points = np.array([[200.0, NAN, 100.0]])
    gain = hfe_at_current(ic_points_A, hfe_points, 1e-3)
    assert gain.hfe[0] == pytest.approx(100 * math.sqrt(2), rel=REL_TOL)
    assert gain.hfe[0] == pytest.approx(141.42, abs=0.005)
    assert not gain.extrapolated[0] and not gain.far_below[0]
    reference = math.exp(np.interp(math.log(1e-3), np.log([1e-4, 1e-2]), np.log([100.0, 200.0])))
    assert gain.hfe[0] == pytest.approx(reference, rel=REL_TOL)


def test_hfe_continues_along_a_falling_end_segment():
    """Gain falls toward both ends of the current range (models/README.md §6):
    62 at 0.1 mA, 106 at 1 mA, 144 at 10 mA, 114 at 100 mA.
    - 20 µA (below, the first segment falls toward it):
      62·(106/62)^(ln 0.2/ln 10) = 62·0.6874 = 42.62, extrapolated;
    - 200 mA (above, the last segment falls toward it):
      114·(114/144)^(ln 2/ln 10) = 114·0.9321 = 106.26, extrapolated;
    - 8 µA, under a tenth of 0.1 mA: the same line, 62·(106/62)^(ln 0.08/ln 10)
      = 62·0.5553 = 34.43, and `far below data` instead of `extrapolated`;
    - exactly 10 µA is not under a tenth: extrapolated, not far below."""
    currents = np.array([1e-4, 1e-3, 1e-2, 1e-1])
    hfe = np.tile([62.0, 106.0, 144.0, 114.0], (4, 1))
    gain = hfe_at_current(currents, hfe, np.array([20e-6, 0.2, 8e-6, 10e-6]))
    slope_low = math.log(106 / 62) / math.log(10)
    slope_high = math.log(114 / 144) / math.log(10)
    np.testing.assert_allclose(gain.hfe, [62 * 0.2 ** slope_low, 114 * 2 ** slope_high,
                                          62 * 0.08 ** slope_low, 62 * 0.1 ** slope_low],
                               rtol=REL_TOL)
    np.testing.assert_allclose(gain.hfe[:3], [42.62, 106.26, 34.43], atol=0.01)
    assert list(gain.extrapolated) == [True, True, False, True]
    assert list(gain.far_below) == [False, False, True, False]


def test_hfe_holds_an_end_where_the_segment_does_not_fall_toward_it():
    """200 at 0.1 mA, 150 at 1 mA (the gain rises toward the low end): at 20 µA
    the end value 200 is held, not continued up to 200·(200/150)^0.699 = 245;
    100 at 1 mA, 180 at 10 mA (rising toward the high end): at 50 mA, 180 is held."""
    gain = hfe_at_current(np.array([[1e-4, 1e-3], [1e-3, 1e-2]]),
                          np.array([[200.0, 150.0], [100.0, 180.0]]), np.array([20e-6, 50e-3]))
    assert list(gain.hfe) == [200.0, 180.0]
    assert list(gain.extrapolated) == [True, True]


def test_hfe_one_point_and_no_point():
    """One point (hFE 120 at 2 mA): 120 everywhere, extrapolated past it (far
    below at 0.1 mA); no point: NaN."""
    ic_points_A = np.array([[NAN, 2e-3], [NAN, 2e-3], [NAN, 2e-3], [NAN, NAN]])
    hfe_points = np.array([[NAN, 120.0], [NAN, 120.0], [NAN, 120.0], [NAN, NAN]])
    gain = hfe_at_current(ic_points_A, hfe_points, np.array([1e-3, 5e-3, 1e-4, 1e-3]))
    assert list(gain.hfe[:3]) == [120.0] * 3 and np.isnan(gain.hfe[3])
    assert list(gain.extrapolated) == [True, True, False, False]
    assert list(gain.far_below) == [False, False, True, False]


def test_hfe_rises_half_a_percent_per_degree():
    """From memory: hFE(T) = hFE25 (1 + 0.005 (T - 25)): 100 → 100·(1 - 0.225) = 77.5 at -20 °C,
    100·1.1 = 110 at 45 °C, 100·1.5 = 150 at 125 °C."""
    got = hfe_at_temperature(100.0, np.array([-20.0, 45.0, 125.0]))
    np.testing.assert_allclose(got, [77.5, 110.0, 150.0], rtol=REL_TOL)


def test_vce_sat_linear_interpolation_and_its_ends_by_hand():
    """0.10 V at 10 mA, 0.30 V at 100 mA (Ic/Ib = 10), linear in Ic (models/README.md §6):
    50 mA → 0.10 + (50 - 10)/(100 - 10)·0.20 = 0.188889 V (numpy.interp agrees);
    1 mA → 0.10 V (held below the lowest point: Vce(sat) falls with current);
    200 mA → continued along the rising segment: 0.30 + 100/90·0.20 = 0.522222 V, extrapolated;
    a falling top segment (0.30 V at 10 mA, 0.20 V at 100 mA) is held at 0.20 V;
    no points → NaN."""
    ic_points_A = np.array([[0.1, 0.01]] * 4 + [[0.01, 0.1], [NAN, NAN]])
    vce_points_V = np.array([[0.30, 0.10]] * 4 + [[0.30, 0.20], [NAN, NAN]])
    ic_A = np.array([0.05, 1e-3, 0.2, 0.1, 0.2, 0.05])
    got = vce_sat_at_current(ic_points_A, vce_points_V, ic_A)
    np.testing.assert_allclose(got.value[:5], [0.10 + 40 / 90 * 0.20, 0.10, 0.30 + 100 / 90 * 0.20,
                                               0.30, 0.20], rtol=REL_TOL)
    np.testing.assert_allclose(got.value[:2], np.interp(ic_A[:2], [0.01, 0.1], [0.10, 0.30]),
                               rtol=REL_TOL)
    assert list(got.above[:5]) == [False, False, True, False, True]
    assert np.isnan(got.value[5])


def test_forced_gain_decides_the_vce_sat_guarantee():
    """Datasheet Vce(sat) holds at Ic/Ib <= 10 (models/README.md §6):
    40 µA / 31.765 µA = 1.26 → guaranteed; 100 mA / 1 mA = 100 → not; 10 mA / 1 mA = 10 → yes;
    unknown Ib → NaN gain, not guaranteed; Ib = 0 (off) → infinite gain, not guaranteed."""
    ic_A = np.array([40e-6, 0.1, 0.01, 0.01, 0.01])
    ib_A = np.array([2.16 / 68e3, 1e-3, 1e-3, NAN, 0.0])
    gain = forced_gain(ic_A, ib_A)
    assert gain[0] == pytest.approx(40e-6 * 68e3 / 2.16, rel=REL_TOL)
    assert gain[1] == pytest.approx(100.0) and np.isnan(gain[3]) and np.isinf(gain[4])
    assert list(vce_sat_guaranteed(ic_A, ib_A)) == [True, False, True, False, False]


def test_latch_switch_at_the_cold_corner_by_hand():
    """45 µA collector, 1 MΩ from a 3.0 V cell with a 2.2 MΩ pull-down, -20 °C,
    Vbe(sat) max 0.80 V, hFE 62 at 0.1 mA and 106 at 1 mA (models/README.md §6):
    Vbe = 0.80 + 0.002·45 = 0.89 V (Horowitz & Hill);
    Ib = (3.0 - 0.89)/1 MΩ - 0.89/2.2 MΩ = 2.11 - 0.40455 = 1.70545 µA;
    hFE = 62·(106/62)^(ln 0.45/ln 10) = 62·0.8303 = 51.48 (extrapolated), ·0.775 = 39.90;
    Ib·hFE/Ic = 1.70545e-6·39.90/45e-6 = 1.512 < overdrive 2: not enough."""
    vbe_V = vbe_at(vbe_25(0.80, NAN)[0], -20.0)
    ib_A = base_current(3.0, vbe_V, 1e6, 2.2e6)
    gain = hfe_at_current(np.array([[1e-4, 1e-3]]), np.array([[62.0, 106.0]]), 45e-6)
    hfe = hfe_at_temperature(gain.hfe, -20.0)
    ratio = saturation_overdrive(ib_A, hfe, 45e-6)
    assert ib_A == pytest.approx(1.70545e-6, rel=1e-5)
    assert gain.extrapolated[0] and hfe[0] == pytest.approx(39.90, abs=0.01)
    assert ratio[0] == pytest.approx(1.512, abs=0.001)
    assert np.isnan(saturation_overdrive(NAN, 77.5, 40e-6))


def test_open_base_leakage_worked_example():
    """Sedra & Smith: an open base amplifies the collector-base leakage,
    Iceo = (1 + hFE) Icbo. Icbo 10 nA at 25 °C → 40 nA at 45 °C (doubling per 10 °C,
    common practice); hFE max 400 → 440 at 45 °C (0.5 %/°C, from memory):
    Iceo = 441 · 40 nA = 17.64 µA. A pull-down holds the base while Icbo·Rpd < 0.15 V:
    1 MΩ → 0.04 V, holds; 3.75 MΩ → 0.15 V exactly, does not; 10 MΩ → 0.4 V, does not;
    unknown leakage → not held."""
    iceo = open_base_leakage(40e-9, hfe_at_temperature(400.0, 45.0))
    assert iceo == pytest.approx(17.64e-6, rel=REL_TOL)
    assert list(pulldown_holds(np.array([40e-9, 40e-9, 40e-9, NAN]),
                               np.array([1e6, 3.75e6, 10e6, 1e6]))) == [True, False, False, False]


positive_points = st.lists(st.tuples(st.floats(1e-5, 1.0), st.floats(5.0, 800.0)),
                           min_size=1, max_size=5, unique_by=lambda p: p[0])


@given(points=positive_points, ic=st.floats(1e-6, 10.0))
def test_gain_never_exceeds_the_data_it_comes_from(points, ic):
    """Between the points the gain matches numpy.interp in log-log space; past
    an end it is never above that end point's value (it falls or holds), and it
    is flagged."""
    currents = np.array([[p[0] for p in points]])
    hfe_points = np.array([[p[1] for p in points]])
    gain = hfe_at_current(currents, hfe_points, ic)
    order = np.argsort(currents[0])
    xs, fs = currents[0][order], hfe_points[0][order]
    if xs[0] <= ic <= xs[-1]:
        reference = math.exp(np.interp(math.log(ic), np.log(xs), np.log(fs)))
        assert gain.hfe[0] == pytest.approx(reference, rel=1e-9)
        assert not (gain.extrapolated[0] or gain.far_below[0])
    else:
        end = fs[0] if ic < xs[0] else fs[-1]
        assert gain.hfe[0] <= end * (1 + 1e-12)
        assert gain.extrapolated[0] or gain.far_below[0]
        assert gain.far_below[0] == (ic < 0.1 * xs[0])


def test_column_currents_shared_by_all_parts():
    """The hfe_min@<I>mA header currents may be passed once, shape (m,), for every part:
    same result as the (n, m) table. Part 0: 100 at 0.1 mA, 200 at 10 mA → 141.42 at 1 mA;
    part 1: only 150 at 10 mA → 150 at 1 mA, extrapolated."""
    hfe_points = np.array([[100.0, 200.0], [NAN, 150.0]])
    shared = hfe_at_current(np.array([1e-4, 1e-2]), hfe_points, 1e-3)
    table = hfe_at_current(np.tile([1e-4, 1e-2], (2, 1)), hfe_points, 1e-3)
    np.testing.assert_array_equal(shared.hfe, table.hfe)
    np.testing.assert_allclose(shared.hfe, [100 * math.sqrt(2), 150.0], rtol=REL_TOL)
    assert list(shared.extrapolated) == [False, True]


def test_a_current_one_rounding_step_below_the_lowest_point_is_extrapolated():
    """Regression (found by the property test above): 1e-5 A against a point at
    1.0000000000000003e-05 A is below it, although their logarithms are equal."""
    gain = hfe_at_current(np.array([[1.0000000000000003e-05]]), np.array([[5.0]]), 1e-5)
    assert gain.extrapolated[0] and gain.hfe[0] == 5.0
