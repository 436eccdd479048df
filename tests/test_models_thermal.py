"""Self-heating by fixed-point iteration (models/README.md §3) against the closed form.

Source: Tj = Ta + P theta_JA (JEDEC JESD51 junction-to-ambient thermal
resistance), P = I² R(Tj), R(T) = R25 (1 + a (T - 25)) with a = 0.5 %/°C
(from memory) and the threshold held (k_vt = 0).

Closed form: with c = I² theta R25,
    Tj = Ta + c (1 + a (Tj - 25))
    Tj - c a Tj = Ta + c - 25 c a
    Tj = (Ta + c (1 - 25 a)) / (1 - c a),   valid while c a < 1;
for c a >= 1 there is no fixed point above Ta: thermal runaway.
"""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from picker.models.mosfet import RDS_TC_PER_C, heated_resistance, on_resistance
from picker.models.thermal import RUNAWAY_BOUND_C, solve_junction_temperature

TOL_C = 0.01  # the iteration's stopping step, models/README.md §3
A_PER_C = RDS_TC_PER_C  # 0.005 /°C, from memory


def closed_form_C(ta_C, c_C, a_per_C=A_PER_C):
    return (ta_C + c_C * (1 - 25 * a_per_C)) / (1 - c_C * a_per_C)


def fixed_resistance(r25_ohm):
    """R(Tj) with the threshold held: R_fix = r25, K = 0, k_vt = 0."""
    r25_ohm = np.asarray(r25_ohm, dtype=float)
    return lambda tj_C: on_resistance(4.5, tj_C, r25_ohm, 0.0, 1.0, k_vt_V_per_C=0.0)


def test_fixed_point_matches_closed_form_by_hand():
    """1.5 A, 250 °C/W, R25 = 40 mΩ, Ta = 45 °C (JEDEC JESD51 Tj = Ta + P theta_JA).

    c = 1.5²·250·0.040 = 2.25·10 = 22.5 °C; c a = 22.5·0.005 = 0.1125;
    Tj = (45 + 22.5·(1 - 0.125)) / (1 - 0.1125) = (45 + 19.6875)/0.8875
       = 64.6875/0.8875 = 72.887 °C, within 0.01 °C.
    """
    tj_C, converged = solve_junction_temperature(45.0, 1.5, 250.0, fixed_resistance([0.040]))
    assert closed_form_C(45.0, 22.5) == pytest.approx(72.887, abs=1e-3)
    assert tj_C[0] == pytest.approx(72.887, abs=TOL_C)
    assert converged[0]


def test_whole_catalogue_with_gate_term_and_threshold_held():
    """Four parts, R25 = R_fix + K/(Vg - Vt) with k_vt = 0, so R(T) = R25 (1 + a (T - 25)).

    R25 = 0.025 + 0.0525/(4.5 - 1.0) = 0.040 Ω for every part; Ta -20 / 45 °C,
    I 1.5 / 0.5 A, theta 250 / 400 °C/W → c = I² theta R25, Tj from the closed form.
    """
    ta_C = np.array([-20.0, 45.0, 45.0, -20.0])
    current_A = np.array([1.5, 1.5, 0.5, 0.5])
    rth_C_per_W = np.array([250.0, 400.0, 250.0, 400.0])
    tj_C, converged = solve_junction_temperature(
        ta_C, current_A, rth_C_per_W,
        lambda tj: on_resistance(4.5, tj, 0.025, 0.0525, 1.0, k_vt_V_per_C=0.0))
    expected_C = closed_form_C(ta_C, current_A ** 2 * rth_C_per_W * 0.040)
    np.testing.assert_allclose(tj_C, expected_C, atol=TOL_C)
    assert converged.all()


@pytest.mark.parametrize("c_C", [200.0, 250.0, 1000.0])
def test_runaway_is_not_converged_and_stops_early(c_C):
    """c a >= 1 (200·0.005 = 1.0, 1.25, 5.0): no fixed point, converged False.

    A settling part in the same call still converges; the runaway part stops
    at the 1000 °C bound long before 100 steps (counted calls of R).
    """
    calls = []

    def resistance_at(tj_C):
        calls.append(1)
        return fixed_resistance([c_C, 0.040])(tj_C)  # part 0: I = 1 A, theta = 1 °C/W, so c = R25

    tj_C, converged = solve_junction_temperature(25.0, 1.0, np.array([1.0, 562.5]), resistance_at)
    assert not converged[0] and tj_C[0] > RUNAWAY_BOUND_C
    assert converged[1] and tj_C[1] == pytest.approx(closed_form_C(25.0, 22.5), abs=TOL_C)
    assert len(calls) < 30


def test_unsettled_after_max_steps_is_not_converged():
    """c a = 198·0.005 = 0.99: a fixed point exists but takes hundreds of steps; 5 do not settle."""
    tj_C, converged = solve_junction_temperature(25.0, 1.0, 1.0, fixed_resistance([198.0]),
                                                 max_steps=5)
    assert not converged[0] and np.isfinite(tj_C[0])


def test_no_thermal_resistance_gives_ambient_and_converged():
    """Blank rth_ja: Tj = Ta, converged True; the engine marks the tj check unknown (§3).
    The neighbour with 250 °C/W still heats to 72.887 °C (the hand case above)."""
    tj_C, converged = solve_junction_temperature(np.array([45.0, 45.0]), 1.5,
                                                 np.array([np.nan, 250.0]),
                                                 fixed_resistance([0.040, 0.040]))
    assert tj_C[0] == 45.0 and converged[0]
    assert tj_C[1] == pytest.approx(72.887, abs=TOL_C)


def test_unknown_resistance_gives_unknown_temperature():
    """R unknown at Ta (no fit): Tj NaN (unknown), converged False."""
    tj_C, converged = solve_junction_temperature(25.0, 1.0, 250.0, fixed_resistance([np.nan]))
    assert np.isnan(tj_C[0]) and not converged[0]


def test_resistance_lost_mid_way_is_not_converged():
    """R turns NaN above 30 °C (a guard: the channel cannot switch off as it warms in §2)."""
    def resistance_at(tj_C):
        return np.where(tj_C < 30.0, 0.040, np.nan)

    tj_C, converged = solve_junction_temperature(25.0, 1.5, 250.0, resistance_at)
    assert not converged[0]
    assert tj_C[0] == pytest.approx(25.0 + 22.5)  # the last finite step: 25 + 2.25·250·0.040


def test_no_current_no_heating():
    """I = 0: P = 0, Tj = Ta after one step."""
    tj_C, converged = solve_junction_temperature(45.0, 0.0, 250.0, fixed_resistance([0.040]))
    assert tj_C[0] == 45.0 and converged[0]


@given(ta=st.floats(-40.0, 85.0), current=st.floats(0.0, 3.0), rth=st.floats(10.0, 500.0),
       r25=st.floats(1e-3, 0.2))
def test_fixed_point_is_the_closed_form_wherever_it_settles(ta, current, rth, r25):
    """Whenever c a < 0.5 the iteration settles within 0.01 °C of the closed form, never below Ta."""
    c_C = current ** 2 * rth * r25
    if c_C * A_PER_C >= 0.5 or closed_form_C(ta, c_C) > 0.9 * RUNAWAY_BOUND_C:
        return
    tj_C, converged = solve_junction_temperature(ta, current, rth, fixed_resistance([r25]))
    assert converged[0]
    assert tj_C[0] >= ta
    assert tj_C[0] == pytest.approx(closed_form_C(ta, c_C), abs=TOL_C)


def test_narrowing_to_the_moving_parts_changes_nothing():
    """The solver drops settled parts from its arrays as it goes (when R has
    `take`, as `mosfet.heated_resistance` gives). Each part's iteration is its
    own, so the answer must be bit for bit the one of iterating every part at
    every step. 5,000 seeded parts spread from barely warm to runaway, with
    channels that are off at Ta and parts without rth or on-resistance."""
    rng = np.random.default_rng(7)
    n = 5000
    vt25 = rng.uniform(0.4, 2.8, n)
    r_fix = rng.uniform(0.0, 0.2, n)
    k = rng.uniform(0.0, 0.3, n)
    r_fix[rng.random(n) < 0.02] = np.nan
    rth = rng.uniform(50.0, 700.0, n)
    rth[rng.random(n) < 0.02] = np.nan
    k_vt = np.where(rng.random(n) < 0.5, np.nan, rng.uniform(0.001, 0.005, n))
    r = heated_resistance(2.7, r_fix, k, vt25, k_vt, 0.005)
    for ta_C in (-20.0, 45.0):
        narrowed = solve_junction_temperature(ta_C, 1.2, rth, r)
        every_step = solve_junction_temperature(ta_C, 1.2, rth, lambda tj_C: r(tj_C))
        assert np.array_equal(narrowed[0], every_step[0], equal_nan=True)
        assert np.array_equal(narrowed[1], every_step[1])
        assert 0 < np.count_nonzero(~narrowed[1] & np.isfinite(narrowed[0])) < n  # some run away
        assert np.count_nonzero(narrowed[1]) > n // 2  # most settle


def test_heated_resistance_is_on_resistance_with_its_constants_folded():
    """R(T) of the self-heating solve against `on_resistance` (models/README.md §1-§2),
    for all parts and for a subset taken out: equal to rounding."""
    rng = np.random.default_rng(3)
    n = 200
    vt25, r_fix, k = rng.uniform(0.4, 2.0, n), rng.uniform(0.0, 0.1, n), rng.uniform(0.0, 0.2, n)
    k_vt, a = rng.uniform(0.001, 0.005, n), rng.uniform(0.003, 0.007, n)
    t_C = rng.uniform(-40.0, 150.0, n)
    r = heated_resistance(2.5, r_fix, k, vt25, k_vt, a)
    expected = on_resistance(2.5, t_C, r_fix, k, vt25, k_vt, a)
    np.testing.assert_allclose(r(t_C), expected, rtol=1e-13)
    rows = np.flatnonzero(rng.random(n) < 0.3)
    np.testing.assert_allclose(r.take(rows)(t_C[rows]), expected[rows], rtol=1e-13)
