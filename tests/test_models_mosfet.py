"""On-resistance fit and temperature model (models/README.md §1-§2), checked like a datasheet.

Sources: the triode-region channel resistance 1 / (k (Vgs - Vt)) (Sedra & Smith,
MOSFET triode region); least squares against numpy.linalg.lstsq; a level-1
MOSFET simulated by ngspice; the temperature coefficients are from memory.
"""

import shutil
import subprocess

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from picker.models.mosfet import (
    K_VT_V_PER_C,
    RDS_TC_PER_C,
    extrapolated,
    fit_on_resistance,
    on_resistance,
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
        assert fit.r_fix_ohm[row] == pytest.approx(r_fix, rel=LSTSQ_REL_TOL)
        assert fit.k_ohm_V[row] == pytest.approx(k, rel=LSTSQ_REL_TOL)
    assert list(fit.n_points) == [3, 4, 3]
    assert list(fit.lowest_drive_V) == [2.5, 1.8, 2.5]


def test_negative_fixed_part_is_clamped_to_zero():
    """Vt = 1.0 V; 100 mΩ at 2 V, 20 mΩ at 4.5 V: steeper than 1/(V - Vt).

    Free fit: x1 = 1, x2 = 2/7; K = 0.080/(5/7) = 0.112 Ω·V,
    R_fix = 0.020 - 0.112·2/7 = 0.020 - 0.032 = -0.012 Ω < 0 → R_fix = 0 and
    K = Σ x R / Σ x² = (0.1 + 0.04/7) / (1 + 4/49) = (0.74/7)·(49/53) = 5.18/53
    = 0.0977358 Ω·V. Also checked against numpy.linalg.lstsq through the origin.
    Source: models/README.md §1 (the constraint).
    """
    fit = fit_one([2.0, 4.5], [0.100, 0.020], 1.0)
    assert fit.r_fix_ohm[0] == 0.0
    assert fit.k_ohm_V[0] == pytest.approx(5.18 / 53, rel=REL_TOL)
    x = np.array([[1.0], [2 / 7]])
    (k_ref,), *_ = np.linalg.lstsq(x, np.array([0.100, 0.020]), rcond=None)
    assert fit.k_ohm_V[0] == pytest.approx(k_ref, rel=LSTSQ_REL_TOL)


def test_negative_slope_is_clamped_to_zero():
    """Vt = 1.0 V; 40 mΩ at 2.5 V, 42 mΩ at 4.5 V: R rises with drive (rounded data).

    Free fit gives K = (0.040 - 0.042)/(1/1.5 - 1/3.5) < 0 → K = 0,
    R_fix = mean = (0.040 + 0.042)/2 = 0.041 Ω. Source: models/README.md §1.
    """
    fit = fit_one([2.5, 4.5], [0.040, 0.042], 1.0)
    assert fit.k_ohm_V[0] == 0.0
    assert fit.r_fix_ohm[0] == pytest.approx(0.041, rel=REL_TOL)


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
    assert no_vt.lowest_drive_V[0] == 2.5


@pytest.mark.parametrize("low_drive_V", [1.0, 0.8])
def test_point_at_or_below_threshold_is_not_fitted(low_drive_V):
    """A point at V <= Vt (1.0 V) is a catalogue error: no fit through it, NaN (models/README.md §1)."""
    fit = fit_one([low_drive_V, 4.5], [0.200, 0.040], 1.0)
    assert np.isnan(fit.r_fix_ohm[0]) and np.isnan(fit.k_ohm_V[0])


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
    assert list(together.n_points) == [2, 1, 0, 3, 2, 2, 2]


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


def test_threshold_falls_3_mV_per_degree():
    """Vt(T) = 1.0 - 0.003 (T - 25) (from memory): 0.700 V at 125 °C, 1.135 V at -20 °C.

    A per-part override of 5 mV/°C gives 1.0 - 0.005·100 = 0.5 V at 125 °C; a NaN
    override means the default.
    """
    assert K_VT_V_PER_C == 0.003
    assert threshold_at(1.0, 125.0) == pytest.approx(0.700, rel=REL_TOL)
    assert threshold_at(1.0, -20.0) == pytest.approx(1.135, rel=REL_TOL)
    got = threshold_at(np.array([1.0, 1.0]), 125.0, np.array([0.005, NAN]))
    np.testing.assert_allclose(got, [0.5, 0.7], rtol=REL_TOL)


def test_resistance_multiplier_is_1_5_at_125_C():
    """(1 + 0.005·(125 - 25)) = 1.5: normalised on-resistance at 125 °C (from memory).

    Threshold held (k_vt = 0), R_fix = 0.025, K = 0.0525, Vg = 4.5, Vt = 1.0:
    R25 = 0.025 + 0.0525/3.5 = 0.040 Ω → R125 = 0.060 Ω.
    """
    assert RDS_TC_PER_C == 0.005
    r_ohm = on_resistance(4.5, 125.0, 0.025, 0.0525, 1.0, k_vt_V_per_C=0.0)
    assert r_ohm == pytest.approx(0.060, rel=REL_TOL)


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


def test_extrapolated_below_lowest_drive():
    """models/README.md §1: a drive under the lowest datasheet point is flagged; NaN is not."""
    got = extrapolated(np.array([2.0, 2.5, 3.0, 2.0]), np.array([2.5, 2.5, 2.5, NAN]))
    assert list(got) == [True, False, False, False]


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


@given(r_fix=st.floats(0.0, 0.5), k=st.floats(1e-4, 1.0), vt=st.floats(0.3, 3.0),
       t=st.floats(-40.0, 150.0), d1=overdrives, gap=st.floats(0.01, 10.0))
def test_on_resistance_falls_with_drive(r_fix, k, vt, t, d1, gap):
    """More gate drive, lower R, at any temperature (K > 0)."""
    vg_V = threshold_at(vt, t) + np.array([d1, d1 + gap])
    low, high = on_resistance(vg_V, t, r_fix, k, vt)
    assert high < low
