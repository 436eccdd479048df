"""Self-heating: the lowest fixed point of Tj = Ta + P(Tj) θJA
(picker/models/README.md §3) against closed forms worked by hand.

Source: Tj = Ta + P theta_JA (JEDEC JESD51 junction-to-ambient thermal
resistance). With a power that is linear or quadratic in Tj the fixed points
have closed forms (below); the solver must find the lowest one to 0.01 °C,
call it runaway where there is none, and settle where plain repetition of
T <- Ta + P(T) theta swings about the root.
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from picker.models.mosfet import ChannelPower, channel_at_drive, fit_on_resistance
from picker.models.thermal import RUNAWAY_BOUND_C, TOL_C, solve_junction_temperature

A_PER_C = 0.005  # on-resistance rise per °C used in the hand cases


class Linear:
    """P(T) = p0 (1 + s (T - 25)) [W], dP/dT = p0 s; with `take` (narrowing)."""

    def __init__(self, p0_W, s_per_C):
        self.p0, self.s = np.asarray(p0_W, float), np.asarray(s_per_C, float)

    def __call__(self, t_C):
        t_C = np.asarray(t_C, float)
        return self.p0 * (1 + self.s * (t_C - 25.0)), self.p0 * self.s + 0 * t_C

    def take(self, rows):
        return Linear(self.p0[rows] if self.p0.ndim else self.p0,
                      self.s[rows] if self.s.ndim else self.s)


def closed_form_C(ta_C, c_C, a_per_C=A_PER_C):
    """Tj = Ta + c (1 + a (Tj - 25)) -> Tj = (Ta + c (1 - 25 a)) / (1 - c a), c a < 1."""
    return (ta_C + c_C * (1 - 25 * a_per_C)) / (1 - c_C * a_per_C)


def test_lowest_fixed_point_by_hand():
    """1.5 A through 40 mΩ at 25 °C, rising 0.5 %/°C, 250 °C/W, Ta = 45 °C.

    c = 1.5²·0.040·250 = 22.5 °C; c a = 0.1125;
    Tj = (45 + 22.5·(1 - 0.125)) / (1 - 0.1125) = 64.6875/0.8875 = 72.887 °C.
    """
    tj, runaway = solve_junction_temperature(45.0, 250.0, Linear([1.5 ** 2 * 0.040], A_PER_C))
    assert closed_form_C(45.0, 22.5) == pytest.approx(72.887, abs=1e-3)
    assert tj[0] == pytest.approx(72.887, abs=TOL_C)
    assert not runaway[0]


@pytest.mark.parametrize("c_C", [200.0, 250.0, 400.0])
def test_no_fixed_point_is_runaway(c_C):
    """c a >= 1 (c = 200 °C with a = 0.5 %/°C): the line Ta + c (1 + a (T - 25))
    never meets T, so there is no root below the 1000 °C bound: runaway."""
    p0 = c_C / 250.0
    tj, runaway = solve_junction_temperature(25.0, 250.0, Linear([p0], A_PER_C))
    assert runaway[0] and tj[0] == RUNAWAY_BOUND_C


def test_a_cap_below_the_root_is_runaway():
    """The channel saturates at 60 °C (cap) before the 72.9 °C balance is
    reached: runaway; with the cap at 80 °C the root stands."""
    power = Linear([1.5 ** 2 * 0.040], A_PER_C)
    tj, runaway = solve_junction_temperature([45.0, 45.0], 250.0, power, np.array([60.0, 80.0]))
    assert list(runaway) == [True, False]
    assert tj[0] == 60.0 and tj[1] == pytest.approx(72.887, abs=TOL_C)


def test_falling_power_settles_where_plain_iteration_swings():
    """Where P falls as the die warms (the threshold drops faster than the
    resistance rises) g(T) = Ta + θ P(T) has slope -θ p0 s. With p0 = 1 W,
    s = -0.006 /°C, θ = 250 °C/W the slope is -1.5: plain repetition
    T <- g(T) swings ever wider about the root. The root by hand:
    T - Ta = θ p0 (1 + s (T - 25)), Ta = 25 → d = 250 (1 - 0.006 d),
    d = 250/2.5 = 100 °C, Tj = 125 °C."""
    power = Linear([1.0], -0.006)
    tj, runaway = solve_junction_temperature(25.0, 250.0, power)
    assert tj[0] == pytest.approx(125.0, abs=TOL_C) and not runaway[0]
    t, steps = 25.0, []
    for _ in range(100):  # the old method: plain fixed-point iteration
        t = 25.0 + 250.0 * power(t)[0][0]
        steps.append(t)
        if abs(t) > 1e6:
            break
    assert abs(steps[-1] - 125.0) > abs(steps[0] - 125.0)  # it never settles


class Quadratic:
    """P(T) = p0 + p2 (T - Ta)² [W]: two fixed points where 4 θ² p0 p2 < 1."""

    def __init__(self, ta, p0, p2):
        self.ta, self.p0, self.p2 = ta, p0, p2

    def __call__(self, t_C):
        d = np.asarray(t_C, float) - self.ta
        return self.p0 + self.p2 * d * d, 2 * self.p2 * d


def test_the_lowest_of_two_fixed_points():
    """θ = 100 °C/W, p0 = 0.2 W, p2 = 1e-4 W/°C², Ta = 25 °C:
    d = θ (p0 + p2 d²) → 0.01 d² - d + 20 = 0 → d = (1 ∓ sqrt(1 - 0.8)) / 0.02
    = 27.64 or 72.36 °C: the junction settles at the lower, 52.64 °C
    (unguarded Newton started high would land on 97.36 °C)."""
    tj, runaway = solve_junction_temperature(25.0, 100.0, Quadratic(25.0, 0.2, 1e-4))
    low = 25.0 + (1 - math.sqrt(0.2)) / 0.02
    assert tj[0] == pytest.approx(low, abs=TOL_C) and not runaway[0]
    assert low == pytest.approx(52.64, abs=0.01)


def test_no_thermal_resistance_no_current_and_unknown_power():
    """NaN θ: Tj = Ta (the figures at Ta), not runaway; zero power: Tj = Ta;
    power unknown at Ta: NaN."""
    power = Linear(np.array([1.0, 0.0, np.nan]), A_PER_C)
    tj, runaway = solve_junction_temperature(np.array([30.0, 30.0, 30.0]),
                                             np.array([np.nan, 100.0, 100.0]), power)
    assert tj[0] == 30.0 and tj[1] == 30.0 and np.isnan(tj[2])
    assert not runaway.any()


@given(ta=st.floats(-40.0, 85.0), current=st.floats(0.01, 3.0), rth=st.floats(20.0, 800.0),
       r25=st.floats(1e-3, 0.5))
def test_root_is_the_closed_form_wherever_there_is_one(ta, current, rth, r25):
    """Any part with a linear R(T): the closed form where c a < 0.95, runaway
    where there is no root below 1000 °C (c a >= 1, or a root past the bound)."""
    c = current ** 2 * r25 * rth
    tj, runaway = solve_junction_temperature(ta, rth, Linear([current ** 2 * r25], A_PER_C))
    if c * A_PER_C < 0.95 and closed_form_C(ta, c) < RUNAWAY_BOUND_C - 1:
        assert tj[0] == pytest.approx(closed_form_C(ta, c), abs=TOL_C) and not runaway[0]
    elif c * A_PER_C >= 1 or closed_form_C(ta, c) > RUNAWAY_BOUND_C + 1:
        assert runaway[0]


def test_narrowing_to_the_parts_still_moving_changes_nothing():
    """The same parts with and without `take`: the same answer to the bit
    (each part's steps are its own)."""
    rng = np.random.default_rng(7)
    n = 500
    p0 = rng.uniform(0.01, 0.8, n)
    s = rng.uniform(-0.008, 0.006, n)
    rth = rng.uniform(50, 600, n)
    ta = rng.uniform(-20, 60, n)
    narrowed = solve_junction_temperature(ta, rth, Linear(p0, s))

    def plain(t):  # the same function without `take`
        return Linear(p0, s)(t)

    whole = solve_junction_temperature(ta, rth, plain)
    np.testing.assert_array_equal(narrowed[0], whole[0])
    np.testing.assert_array_equal(narrowed[1], whole[1])


def test_channel_power_against_a_fine_scan():
    """A MOSFET channel at small overdrive (1.8 V on a 1.0 V part rated at
    2.5/4.5 V: conservative extrapolation, whole triode law) over currents
    from light to near runaway: the solver's Tj against the first sign
    change of f(T) found by a 0.001 °C scan (numpy, independent of the
    solver's steps), within 0.01 °C."""
    fit = fit_on_resistance(np.array([2.5, 4.5]), np.array([[0.060, 0.045]] * 4),
                            np.array([1.0] * 4))
    channel, _ = channel_at_drive(1.8, fit, np.ones(4), np.array([0.003] * 4), np.nan)
    currents = np.array([0.5, 1.0, 1.5, 2.0])
    power = ChannelPower(channel, currents)
    rth = 250.0
    tj, runaway = solve_junction_temperature(25.0, rth, power)
    grid = np.arange(25.0, 400.0, 0.001)
    for i in range(4):
        p, _ = ChannelPower(channel.take([i]), currents[i])(grid)
        f = 25.0 + rth * p - grid
        change = np.flatnonzero(~(f > 0))
        if change.size == 0:
            assert runaway[i]
        else:
            assert tj[i] == pytest.approx(grid[change[0]], abs=TOL_C)
