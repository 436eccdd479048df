"""On-resistance fit, extrapolation, the whole triode law and temperature
(picker/models/README.md §1-§2), checked like a datasheet.

Sources: the triode-region channel 1 / (k (Vgs - Vt)) and the whole law
Id = k ((Vgs - Vt) Vds - Vds^2 / 2) (Sedra & Smith, MOSFET triode region),
worked by hand in each docstring; least squares against numpy.linalg.lstsq; a
level-1 MOSFET simulated by ngspice; the temperature coefficients are from
memory (picker/models/README.md §2).
"""

import math
import shutil
import subprocess

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from picker.models.mosfet import (
    channel_at_drive,
    default_k_vt,
    fit_on_resistance,
    k_vt_of,
    on_resistance,
    small_signal,
    threshold_at,
)

REL_TOL = 1e-9  # exact arithmetic
LSTSQ_REL_TOL = 1e-9  # two least-squares solvers agree to rounding
SPICE_REL_TOL = 0.01  # the simulation carries a Vds/2 term and gmin the model omits
NAN = np.nan


def fit_one(drives_V, rds_ohm, vt_V):
    return fit_on_resistance(np.array([drives_V], float), np.array([rds_ohm], float),
                             np.array([vt_V]))


def test_two_point_fit_by_hand():
    """Vt = 1.0 V; 60 mΩ at 2.5 V, 40 mΩ at 4.5 V.

    x1 = 1/(2.5 - 1) = 1/1.5 = 0.666667, x2 = 1/(4.5 - 1) = 1/3.5 = 0.285714.
    K = (R1 - R2)/(x1 - x2) = 0.020/0.380952 = 0.0525 Ω·V;
    R_fix = R2 - K x2 = 0.040 - 0.0525/3.5 = 0.040 - 0.015 = 0.025 Ω.
    Source: Sedra & Smith, MOSFET triode region (the model), models/README.md §1 (the fit).
    """
    fit = fit_one([2.5, 4.5], [0.060, 0.040], 1.0)
    assert fit.k_ohm_V[0] == pytest.approx(0.0525, rel=REL_TOL)
    assert fit.r_fix_ohm[0] == pytest.approx(0.025, rel=REL_TOL)
    assert fit.lowest_drive_V[0] == 2.5
    assert fit.n_points[0] == 2


def test_three_point_least_squares_matches_numpy_lstsq():
    """Three or four points per part: the closed form against numpy.linalg.lstsq.

    Reference: numpy.linalg.lstsq on the design matrix [1, x], x = 1/(V - Vt),
    one part at a time; the free fit is feasible (both coefficients > 0) here.
    """
    drive_V = np.array([[2.5, 4.5, 10.0, NAN], [1.8, 2.5, 4.5, 10.0], [4.5, 2.5, 10.0, NAN]])
    rds_ohm = np.array([[0.052, 0.033, 0.024, NAN],
                        [0.120, 0.070, 0.045, 0.035],
                        [0.017, 0.026, 0.012, NAN]])
    vt_V = np.array([1.2, 1.0, 1.5])
    fit = fit_on_resistance(drive_V, rds_ohm, vt_V)
    for row in range(3):
        used = np.isfinite(drive_V[row])
        x = 1.0 / (drive_V[row, used] - vt_V[row])
        design = np.column_stack([np.ones_like(x), x])
        (r_fix, k), *_ = np.linalg.lstsq(design, rds_ohm[row, used], rcond=None)
        assert r_fix > 0 and k > 0
        # then lifted onto the highest point above the line (§1)
        lift = max(0.0, float(np.max(rds_ohm[row, used] - (r_fix + k * x))))
        assert lift > 0  # three or four scattered points: a least-squares line misses some
        assert fit.r_fix_ohm[row] == pytest.approx(r_fix + lift, rel=LSTSQ_REL_TOL)
        assert fit.k_ohm_V[row] == pytest.approx(k, rel=LSTSQ_REL_TOL)
        curve = fit.r_fix_ohm[row] + fit.k_ohm_V[row] * x
        assert np.all(curve >= rds_ohm[row, used] - 1e-15)
        assert np.min(curve - rds_ohm[row, used]) == pytest.approx(0.0, abs=1e-15)
    assert list(fit.n_points) == [3, 4, 3]
    assert list(fit.lowest_drive_V) == [2.5, 1.8, 2.5]


def test_negative_fixed_part_is_clamped_to_zero():
    """Vt = 1.0 V; 100 mΩ at 2 V, 20 mΩ at 4.5 V: steeper than 1/(V - Vt).

    Free fit: x1 = 1, x2 = 2/7; K = 0.080/(5/7) = 0.112 Ω·V,
    R_fix = 0.020 - 0.112·2/7 = 0.020 - 0.032 = -0.012 Ω < 0 → R_fix = 0 and
    K = Σ x R / Σ x² = (0.1 + 0.04/7) / (1 + 4/49) = (0.74/7)·(49/53) = 5.18/53
    = 0.0977358 Ω·V. Also checked against numpy.linalg.lstsq through the origin.
    The line then gives 97.74 mΩ at 2 V, under the 100 mΩ maximum: lifted by
    0.100 - 0.0977358 = 2.2642 mΩ (at 4.5 V it is 0.0977358·2/7 + 0.0022642
    = 30.19 mΩ, above the 20 mΩ point). Source: models/README.md §1.
    """
    fit = fit_one([2.0, 4.5], [0.100, 0.020], 1.0)
    assert fit.r_fix_ohm[0] == pytest.approx(0.100 - 5.18 / 53, rel=REL_TOL)
    assert fit.k_ohm_V[0] == pytest.approx(5.18 / 53, rel=REL_TOL)
    x = np.array([[1.0], [2 / 7]])
    (k_ref,), *_ = np.linalg.lstsq(x, np.array([0.100, 0.020]), rcond=None)
    assert fit.k_ohm_V[0] == pytest.approx(k_ref, rel=LSTSQ_REL_TOL)


def test_negative_slope_is_clamped_to_zero():
    """Vt = 1.0 V; 40 mΩ at 2.5 V, 42 mΩ at 4.5 V: R rises with drive (rounded data).

    Free fit gives K = (0.040 - 0.042)/(1/1.5 - 1/3.5) < 0 → K = 0,
    R_fix = mean = (0.040 + 0.042)/2 = 0.041 Ω, then lifted onto the 42 mΩ
    point: 0.042 Ω, a flat line at the higher maximum. Source: models/README.md §1.
    """
    fit = fit_one([2.5, 4.5], [0.040, 0.042], 1.0)
    assert fit.k_ohm_V[0] == 0.0
    assert fit.r_fix_ohm[0] == pytest.approx(0.042, rel=REL_TOL)


def test_one_point_is_all_channel():
    """Vt = 1.0 V; 50 mΩ at 2.5 V → R_fix = 0, K = 0.050·(2.5 - 1.0) = 0.075 Ω·V (models/README.md §1)."""
    fit = fit_one([NAN, 2.5, NAN], [0.030, 0.050, NAN], 1.0)  # 0.030 has no drive: not a point
    assert fit.r_fix_ohm[0] == 0.0
    assert fit.k_ohm_V[0] == pytest.approx(0.075, rel=REL_TOL)
    assert fit.n_points[0] == 1


def test_no_point_or_no_threshold_is_unknown():
    """No point, or vgs_th_max_V blank: R is unknown (NaN), never a made-up figure (§1)."""
    none = fit_one([NAN, NAN], [NAN, NAN], 1.0)
    assert np.isnan(none.r_fix_ohm[0]) and np.isnan(none.k_ohm_V[0])
    assert np.isnan(none.lowest_drive_V[0]) and none.n_points[0] == 0
    no_vt = fit_one([2.5, 4.5], [0.060, 0.040], NAN)
    assert np.isnan(no_vt.r_fix_ohm[0]) and np.isnan(no_vt.k_ohm_V[0])
    assert np.isnan(no_vt.lowest_drive_V[0])  # no point is usable without a threshold


@pytest.mark.parametrize("low_drive_V", [1.0, 0.8])
def test_point_at_or_below_threshold_is_left_out(low_drive_V):
    """A point at V <= Vt (1.0 V) is left out and counted; the part is fitted
    from the rest: 40 mΩ at 4.5 V alone gives R_fix = 0, K = 0.040·3.5 =
    0.14 Ω·V (models/README.md §1)."""
    fit = fit_one([low_drive_V, 4.5], [0.200, 0.040], 1.0)
    assert fit.r_fix_ohm[0] == 0.0
    assert fit.k_ohm_V[0] == pytest.approx(0.14, rel=REL_TOL)
    assert fit.n_points[0] == 1 and fit.left_out[0] == 1
    assert fit.lowest_drive_V[0] == fit.highest_drive_V[0] == 4.5


def test_whole_catalogue_in_one_call_equals_one_at_a_time():
    """Parts with 0-3 points, a bad point and clamped cases: fitted together and one by one."""
    drive_V = np.array([
        [2.5, 4.5, NAN], [NAN, 2.5, NAN], [NAN, NAN, NAN],
        [1.8, 2.5, 4.5], [2.0, 4.5, NAN], [2.5, 4.5, NAN], [0.9, 4.5, NAN],
    ])
    rds_ohm = np.array([
        [0.060, 0.040, NAN], [NAN, 0.050, NAN], [NAN, NAN, NAN],
        [0.090, 0.055, 0.038], [0.100, 0.020, NAN], [0.040, 0.042, NAN], [0.1, 0.04, NAN],
    ])
    vt_V = np.array([1.0, 1.0, 1.0, 0.9, 1.0, 1.0, 1.0])
    together = fit_on_resistance(drive_V, rds_ohm, vt_V)
    for row in range(len(vt_V)):
        alone = fit_on_resistance(drive_V[row:row + 1], rds_ohm[row:row + 1], vt_V[row:row + 1])
        for field in ("r_fix_ohm", "k_ohm_V", "lowest_drive_V", "n_points"):
            np.testing.assert_array_equal(getattr(together, field)[row], getattr(alone, field)[0])
    assert list(together.n_points) == [2, 1, 0, 3, 2, 2, 1]
    assert list(together.left_out) == [0, 0, 0, 0, 0, 0, 1]


def test_column_drives_shared_by_all_parts():
    """The rds_on_mohm@<V>V header drives may be passed once, shape (m,): same fit as the table.

    Part 0 is the hand case above (0.025 Ω, 0.0525 Ω·V); part 1 has only 50 mΩ at 2.5 V
    → R_fix = 0, K = 0.050·1.5 = 0.075 Ω·V.
    """
    rds_ohm = np.array([[0.060, 0.040], [0.050, NAN]])
    shared = fit_on_resistance(np.array([2.5, 4.5]), rds_ohm, np.array([1.0, 1.0]))
    np.testing.assert_allclose(shared.r_fix_ohm, [0.025, 0.0], rtol=REL_TOL, atol=1e-15)
    np.testing.assert_allclose(shared.k_ohm_V, [0.0525, 0.075], rtol=REL_TOL)
    assert list(shared.n_points) == [2, 1] and list(shared.lowest_drive_V) == [2.5, 2.5]


def test_threshold_coefficient_grows_with_the_threshold():
    """k_vt = max(3 mV/°C, 0.3 % of Vth max per °C) (picker/models/README.md §2,
    from memory): a 1.0 V part falls 3 mV/°C (0.700 V at 125 °C, 1.135 V at
    -20 °C); a 2.0 V part 6 mV/°C (1.400 V at 125 °C); a 0.6 V part still
    3 mV/°C (0.300 V at 125 °C). A column of 5 mV/°C gives 0.5 V at 125 °C,
    written as datasheets print it (-5) or as a fall (5); a blank column is
    the default."""
    np.testing.assert_allclose(threshold_at(np.array([1.0, 2.0, 0.6]), 125.0),
                               [0.700, 1.400, 0.300], rtol=REL_TOL)
    assert threshold_at(1.0, -20.0) == pytest.approx(1.135, rel=REL_TOL)
    column = np.array([-5.0, 5.0, NAN, NAN])
    k_vt = k_vt_of(column, np.array([1.0, 1.0, 1.0, 2.0]))
    np.testing.assert_allclose(threshold_at(np.array([1.0, 1.0, 1.0, 2.0]), 125.0, k_vt),
                               [0.5, 0.5, 0.7, 1.4], rtol=REL_TOL)
    assert default_k_vt(np.nan) == pytest.approx(0.003)


def test_resistance_multiplier_is_1_5_at_125_C():
    """(1 + 0.005·(125 - 25)) = 1.5: normalised on-resistance at 125 °C (from memory).

    Threshold held (k_vt = 0), R_fix = 0.025, K = 0.0525, Vg = 4.5, Vt = 1.0:
    R25 = 0.025 + 0.0525/3.5 = 0.040 Ω → R125 = 0.060 Ω; at -20 °C
    0.040·(1 - 0.225) = 0.031 Ω.
    """
    r_ohm = on_resistance(4.5, np.array([125.0, -20.0]), 0.025, 0.0525, 1.0, k_vt_V_per_C=0.0)
    np.testing.assert_allclose(r_ohm, [0.060, 0.031], rtol=REL_TOL)


def test_cold_corner_by_hand():
    """Vg = 2.9 V at -20 °C, fit (0.025 Ω, 0.0525 Ω·V), Vt25 = 1.0 V (models/README.md §2).

    Vt(-20) = 1.0 + 0.003·45 = 1.135 V; overdrive 2.9 - 1.135 = 1.765 V;
    R25-equivalent 0.025 + 0.0525/1.765 = 0.025 + 0.0297450 = 0.0547450 Ω;
    multiplier 1 + 0.005·(-45) = 0.775 → R = 0.0424274 Ω.
    """
    expected = (0.025 + 0.0525 / 1.765) * 0.775
    assert on_resistance(2.9, -20.0, 0.025, 0.0525, 1.0) == pytest.approx(expected, rel=REL_TOL)
    assert expected == pytest.approx(0.0424274, rel=1e-6)


def test_no_channel_below_threshold_and_nan_propagates():
    """Vg <= Vt(T) gives NaN (the model says nothing there); NaN fit gives NaN."""
    got = on_resistance(np.array([1.0, 0.9, 4.5, 4.5]), 25.0,
                        np.array([0.025, 0.025, NAN, 0.025]), np.array([0.05, 0.05, 0.05, 0.05]),
                        np.array([1.0, 1.0, 1.0, NAN]))
    assert np.isnan(got).all()


def _readme_part():
    """The part of the worked examples in picker/models/README.md §1: 45 mΩ at
    4.5 V, 60 mΩ at 2.5 V, vgs_th_max_V 1.0 V."""
    return fit_one([2.5, 4.5], [0.060, 0.045], 1.0)


def test_conservative_extrapolation_worked_example():
    """picker/models/README.md §1, by hand: K = 0.015/0.380952 = 0.039375 Ω·V,
    R_fix = 0.045 - 0.039375/3.5 = 0.03375 Ω. At 1.8 V (25 °C): the fitted
    curve 0.03375 + 0.039375/0.8 = 82.97 mΩ; conservative N = 0.03375·1.5 +
    0.039375 = 0.0900 Ω·V (= 60 mΩ · 1.5 V), R = 0.0900/0.8 = 112.5 mΩ; at
    V_lo = 2.5 V both give the datasheet's 60 mΩ; with "none" there is no
    figure at 1.8 V; below the depth limit (2.5 + 1.0)/2 = 1.75 V there is
    none in any mode."""
    fit = _readme_part()
    assert fit.k_ohm_V[0] == pytest.approx(0.039375, rel=REL_TOL)
    assert fit.r_fix_ohm[0] == pytest.approx(0.03375, rel=REL_TOL)
    k0 = np.array([0.0])  # threshold held: the example is at 25 °C
    at = {mode: small_signal(np.array([1.8, 2.5, 1.76, 1.74]), 25.0, fit, np.array([1.0]), k0,
                             0.005, mode) for mode in ("conservative", "fit", "none")}
    assert at["conservative"][0] == pytest.approx(0.1125, rel=REL_TOL)
    assert at["fit"][0] == pytest.approx(0.03375 + 0.039375 / 0.8, rel=REL_TOL)
    assert at["conservative"][1] == pytest.approx(0.060, rel=REL_TOL)
    assert at["fit"][1] == pytest.approx(0.060, rel=REL_TOL)
    assert np.isnan(at["none"][0]) and at["none"][1] == pytest.approx(0.060, rel=REL_TOL)
    for mode in at:
        assert np.isnan(at[mode][3])  # 1.74 V: below the depth limit
    assert np.isfinite(at["conservative"][2])  # 1.76 V: above it


def test_no_credit_above_the_highest_rated_drive():
    """One point, 70 mΩ at 2.5 V, Vt 1.0 V: K = 0.105 Ω·V. The law alone
    would give 0.105/9 = 11.7 mΩ at 10 V; §1 evaluates the part as if driven
    at 2.5 V: 70 mΩ, and marks it (Drive.above)."""
    fit = fit_one([2.5], [0.070], 1.0)
    assert on_resistance(10.0, 25.0, fit.r_fix_ohm, fit.k_ohm_V, 1.0)[0] == pytest.approx(
        0.105 / 9, rel=REL_TOL)
    r = small_signal(np.array([10.0]), 25.0, fit, np.array([1.0]), np.array([0.0]))
    assert r[0] == pytest.approx(0.070, rel=REL_TOL)
    _, drive = channel_at_drive(10.0, fit, np.array([1.0]), np.array([0.003]), NAN)
    assert drive.above[0] and not drive.below[0] and drive.vg_eff_V[0] == 2.5


def test_whole_triode_law_against_its_small_vds_limit():
    """picker/models/README.md §1 worked example: K' = 0.09 Ω·V (the
    extrapolated part above at 1.8 V, 25 °C), Vov = 0.8 V, I = 1 A. The
    small-signal drop is 0.09/0.8 = 112.5 mV; the whole law (Sedra & Smith,
    Id = k (Vov Vds - Vds²/2) with k = 1/K') gives Vds = 0.8 - sqrt(0.64 -
    0.18) = 121.8 mV. At 1 mA both agree to 1 part in 10^4 (the relative
    excess is about x/2 with x = K' I / Vov² = 1.4e-4)."""
    fit = _readme_part()
    channel, _ = channel_at_drive(1.8, fit, np.array([1.0]), np.array([0.0]), NAN)
    assert channel.drop(25.0, 1.0)[0] == pytest.approx(0.8 - math.sqrt(0.64 - 0.18), rel=REL_TOL)
    assert 0.8 - math.sqrt(0.46) == pytest.approx(0.12177, abs=1e-5)
    small = channel.drop(25.0, 1e-3)[0] / 1e-3
    assert small == pytest.approx(0.1125, rel=1e-4)
    assert small > 0.1125  # the whole law is never below its limit
    # the Vds^2/2 term checked independently: k (Vov V - V^2/2) gives back 1 A
    v = channel.drop(25.0, 1.0)[0]
    assert (0.8 * v - v * v / 2) / 0.09 == pytest.approx(1.0, rel=1e-12)


def test_ohmic_boundary_worked_example():
    """picker/models/README.md §1: K' = 0.09 Ω·V, Vov = 0.8 V: the channel
    carries at most Vov²/(2K') = 0.64/0.18 = 3.556 A; there Vds = Vov = 0.8 V,
    twice the small-signal 0.09·3.556/0.8 = 0.4 V; at 3.6 A there is no figure."""
    fit = _readme_part()
    channel, _ = channel_at_drive(1.8, fit, np.array([1.0]), np.array([0.0]), NAN)
    i_max = channel.max_current_A(25.0)[0]
    assert i_max == pytest.approx(0.64 / 0.18, rel=REL_TOL)
    assert channel.drop(25.0, i_max * (1 - 1e-12))[0] == pytest.approx(0.8, rel=1e-5)
    assert np.isnan(channel.drop(25.0, 3.6)[0])


def test_conservative_numerator_follows_the_hot_threshold():
    """N(T) = R_fix (V_lo - Vt(T)) + K (§1): with k_vt = 3 mV/°C at 125 °C,
    Vt = 0.7 V, N = 0.03375·1.8 + 0.039375 = 0.100125 Ω·V, m = 1.5, and at
    1.8 V drive R = 0.100125·1.5/1.1 = 136.53 mΩ."""
    fit = _readme_part()
    channel, _ = channel_at_drive(1.8, fit, np.array([1.0]), np.array([0.003]), NAN)
    assert channel.small_signal_ohm(125.0)[0] == pytest.approx(0.100125 * 1.5 / 1.1, rel=REL_TOL)


def test_drop_slope_against_a_difference_quotient():
    """d drop/dT (the self-heating solve's Newton step) against
    (drop(T + h) - drop(T - h)) / 2h, h = 1e-3 °C, inside and below the rated
    drives, at small and large overdrive."""
    fit = fit_on_resistance(np.array([2.5, 4.5]), np.array([[0.060, 0.045], [0.060, 0.045]]),
                            np.array([1.0, 1.0]))
    for vg in (1.8, 3.0):
        channel, _ = channel_at_drive(vg, fit, np.array([1.0, 1.0]), np.array([0.003, 0.006]),
                                      np.array([0.005, 0.004]))
        for t in (-20.0, 60.0, 140.0):
            _, slope = channel.drop_and_slope(np.array([t, t]), 1.5)
            h = 1e-3
            numeric = (channel.drop(t + h, 1.5) - channel.drop(t - h, 1.5)) / (2 * h)
            np.testing.assert_allclose(slope, numeric, rtol=1e-5)


def test_saturation_temperature_against_a_scan():
    """The first T >= Ta where 2 K'(T) I >= Vov(T)² (a quadratic solved in
    closed form) against a 0.01 °C scan of the same inequality: a part that
    saturates as it heats (R rising faster than the overdrive), one that
    never does (the threshold falling faster), and one saturated already."""
    fit = fit_on_resistance(np.array([2.5]), np.array([[0.200], [0.050], [0.900]]),
                            np.array([1.0, 1.0, 1.0]))
    channel, _ = channel_at_drive(1.8, fit, np.ones(3), np.array([0.001, 0.006, 0.003]),
                                  np.array([0.008, 0.002, 0.005]))
    got = channel.saturation_temperature(25.0, 1.0)
    grid = np.arange(25.0, 400.0, 0.01)
    for i in range(3):
        vov, kch, _ = channel.take([i]).terms(grid)
        sat = 2 * kch * 1.0 >= vov * vov
        expected = grid[np.argmax(sat)] if sat.any() else np.inf
        if np.isinf(expected):
            assert got[i] > 400.0
        else:
            assert got[i] == pytest.approx(expected, abs=0.011)
    assert got[2] == 25.0 and 25.0 < got[0] < 400.0 and got[1] > 400.0


def test_broadcasts_over_parts_and_points():
    """R for 2 parts at 3 drives: shape (2, 3), each entry as the scalar formula gives it."""
    vg_V = np.array([[2.5, 3.5, 4.5]])
    r_ohm = on_resistance(vg_V, 25.0, np.array([[0.025], [0.0]]), np.array([[0.0525], [0.075]]),
                          np.array([[1.0], [1.0]]))
    assert r_ohm.shape == (2, 3)
    np.testing.assert_allclose(r_ohm[1], 0.075 / (vg_V[0] - 1.0), rtol=REL_TOL)


@pytest.mark.skipif(shutil.which("ngspice") is None, reason="ngspice not installed")
def test_fit_recovers_a_simulated_level_1_mosfet(tmp_path):
    """ngspice level-1 NMOS (VTO = 1 V, KP = 20 A/V², W = L) in series with 10 mΩ, Vds ≈ 1 mV.

    Triode region at small Vds: R = R_series + 1/(KP (W/L) (Vgs - VTO))
    (Sedra & Smith), so the fit with Vt = VTO should give R_fix = 0.010 Ω and
    K = 1/20 = 0.050 Ω·V. Reference: ngspice, operating points at 2, 2.5, 4.5 V.
    """
    drives_V = [2.0, 2.5, 4.5]
    lines = ["level-1 triode check", "vg g 0 dc 2", "vd d0 0 dc 1m", "rext d0 d 0.01",
             "m1 d g 0 0 nm w=100u l=100u", ".model nm nmos level=1 vto=1.0 kp=20 lambda=0",
             ".control", f"foreach v {' '.join(map(str, drives_V))}", "alter vg dc = $v", "op",
             "print i(vd)", "end", ".endc", ".end"]
    netlist = tmp_path / "triode.cir"
    netlist.write_text("\n".join(lines) + "\n")
    # ngspice -b exits 1 when a deck has no .print line, so judge by the output
    run = subprocess.run(["ngspice", "-b", str(netlist)], capture_output=True, text=True,
                         timeout=60)
    currents_A = [abs(float(line.split("=")[1])) for line in run.stdout.splitlines()
                  if line.startswith("i(vd)")]
    assert len(currents_A) == 3, run.stdout + run.stderr
    rds_ohm = [1e-3 / i for i in currents_A]
    fit = fit_one(drives_V, rds_ohm, 1.0)
    assert fit.r_fix_ohm[0] == pytest.approx(0.010, rel=SPICE_REL_TOL)
    assert fit.k_ohm_V[0] == pytest.approx(0.050, rel=SPICE_REL_TOL)


overdrives = st.floats(0.2, 10.0)


@given(r_fix=st.floats(0.0, 0.5), k=st.floats(1e-3, 1.0), vt=st.floats(0.3, 3.0),
       d1=overdrives, gap=st.floats(0.1, 10.0))
def test_two_point_fit_passes_through_both_points(r_fix, k, vt, d1, gap):
    """Points taken from a model curve (free fit feasible): the fit passes through both exactly."""
    drives_V = [vt + d1, vt + d1 + gap]
    rds_ohm = [r_fix + k / (v - vt) for v in drives_V]
    fit = fit_one(drives_V, rds_ohm, vt)
    back = on_resistance(np.array(drives_V), 25.0, fit.r_fix_ohm[0], fit.k_ohm_V[0], vt)
    np.testing.assert_allclose(back, rds_ohm, rtol=1e-9, atol=1e-12)


@given(points=st.lists(st.tuples(st.floats(1.1, 12.0), st.floats(1e-3, 1.0)), min_size=1,
                       max_size=5, unique_by=lambda p: round(p[0], 3)))
def test_fitted_curve_is_nowhere_below_a_rated_maximum(points):
    """Any points (Vt = 1.0 V): the lifted curve lies on or above every one
    of them, and touches at least one (it is not lifted further than needed)."""
    drives_V, rds_ohm = zip(*points)
    fit = fit_one(list(drives_V), list(rds_ohm), 1.0)
    curve = fit.r_fix_ohm[0] + fit.k_ohm_V[0] / (np.array(drives_V) - 1.0)
    assert np.all(curve >= np.array(rds_ohm) * (1 - 1e-11))
    assert np.min(curve - np.array(rds_ohm)) <= 1e-11 * max(rds_ohm)


@given(k=st.floats(1e-3, 1.0), vov=st.floats(0.05, 5.0), frac=st.floats(1e-6, 0.999))
def test_whole_law_drop_is_never_below_the_small_signal_drop(k, vov, frac):
    """Below the ohmic boundary Vds = Vov - sqrt(Vov² - 2 K I) lies between
    I K / Vov and twice that (at the boundary) (Sedra & Smith triode law)."""
    fit = fit_one([1.0 + vov], [k / vov], 1.0)
    channel, _ = channel_at_drive(1.0 + vov, fit, np.array([1.0]), np.array([0.0]), NAN)
    current = frac * vov * vov / (2 * k)
    small = current * k / vov
    got = channel.drop(25.0, current)[0]
    assert small * (1 - 1e-12) <= got <= 2 * small * (1 + 1e-12)


@given(r_fix=st.floats(0.0, 0.5), k=st.floats(1e-4, 1.0), vt=st.floats(0.3, 3.0),
       t=st.floats(-40.0, 150.0), d1=overdrives, gap=st.floats(0.01, 10.0))
def test_on_resistance_falls_with_drive(r_fix, k, vt, t, d1, gap):
    """More gate drive, lower R, at any temperature (K > 0)."""
    vg_V = threshold_at(vt, t) + np.array([d1, d1 + gap])
    low, high = on_resistance(vg_V, t, r_fix, k, vt)
    assert high < low
