"""The gate of a linked pass switch (picker/models/gate.py, models/README.md §10),
worked by hand.

Sources: charge balance Q = I t (the definition of the ampere, SI Brochure 9th
ed., 2.3.1); Ohm's law; the subthreshold swing S = ln(10) n kT/q, proportional
to absolute temperature (S. M. Sze, *Physics of Semiconductor Devices*,
MOSFET subthreshold region), with 100 mV/decade at 25 °C for a small power
trench MOSFET (from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from picker.models import gate

DRIVES_V = np.array([2.5, 4.5, 10.0])
QG_C = np.array([[3e-9, 5e-9, 10e-9],       # three points
                 [np.nan, 5e-9, np.nan],    # one point
                 [np.nan, np.nan, np.nan]])  # none


def test_gate_charge_is_the_point_at_or_above_the_drive():
    """models/README.md §10: the point at the lowest drive at or above the swing. A
    4.2 V swing reads the 4.5 V point (5 nC), a 2.0 V swing the 2.5 V point (3 nC)."""
    q = gate.gate_charge_at(DRIVES_V, QG_C, 4.2)
    assert q[0] == 5e-9 and q[1] == 5e-9 and np.isnan(q[2])
    assert gate.gate_charge_at(DRIVES_V, QG_C, 2.0)[0] == 3e-9
    assert gate.gate_charge_at(DRIVES_V, QG_C, 4.5)[0] == 5e-9  # on a point: that point


def test_gate_charge_above_every_point_scales_with_the_drive():
    """Above the plateau Q grows as C V: the highest point scaled by V / V_point.
    12 V on 10 nC at 10 V: 10 nC x 12 / 10 = 12 nC; the one-point row at 6 V:
    5 nC x 6 / 4.5 = 6.667 nC."""
    q = gate.gate_charge_at(DRIVES_V, QG_C, np.array([12.0, 6.0, 6.0]))
    assert q[0] == pytest.approx(12e-9, rel=1e-12)
    assert q[1] == pytest.approx(5e-9 * 6 / 4.5, rel=1e-12)


def test_turn_off_bound_by_hand():
    """A 470 kohm pull-up at +5 % is 493.5 kohm; a threshold minimum of 0.45 V falls
    3 mV/°C to 0.45 - 0.003 x 20 = 0.39 V at 45 °C; with Qg = 5 nC the pull-up's least
    current 0.39 V / 493.5 kohm = 790.3 nA takes at most 5 nC / 790.3 nA = 6.327 ms
    (Q = I t)."""
    vt = gate.threshold_min_at(0.45, 45.0, 0.003)
    assert vt == pytest.approx(0.39, abs=1e-15)
    t = gate.turn_off_bound(470e3 * 1.05, 5e-9, vt)
    assert t == pytest.approx(493.5e3 * 5e-9 / 0.39, rel=1e-12)
    assert t == pytest.approx(6.327e-3, rel=1e-3)
    assert gate.turn_off_bound(1e5, 5e-9, 0.0) == np.inf
    assert np.isnan(gate.turn_off_bound(1e5, np.nan, 0.4))


def test_gate_leak_and_held_off_margin_by_hand():
    """An NPN leaking 60 nA through 2.2 Mohm at +5 % (2.31 Mohm) lifts the gate by
    60 nA x 2.31 Mohm = 138.6 mV; against 0.39 V - 0.1 V = 0.29 V that leaves 151.4 mV."""
    v = gate.gate_leak(60e-9, 2.2e6 * 1.05)
    assert v == pytest.approx(0.1386, rel=1e-12)
    assert gate.held_off_margin(v, 0.39) == pytest.approx(0.1514, rel=1e-9)


def test_subthreshold_swing_and_opened_leakage_by_hand():
    """S at 45 °C: 100 mV x 318.15 / 298.15 = 106.708 mV/decade (S proportional to T).
    A gate opened by 50 mV multiplies a 4 uA leakage by 10^(50 / 106.708) = 10^0.46857 = 2.9415:
    11.766 uA. A shut gate (0 V) leaves it as it is."""
    s = gate.subthreshold_swing(45.0)
    assert s == pytest.approx(0.1 * 318.15 / 298.15, rel=1e-12)
    assert s == pytest.approx(0.106708, rel=1e-5)
    i = gate.opened_leakage(4e-6, 0.05, 45.0)
    assert i == pytest.approx(4e-6 * 10 ** (0.05 / s), rel=1e-12)
    assert i == pytest.approx(11.766e-6, rel=1e-4)
    assert gate.opened_leakage(4e-6, 0.0, 45.0) == 4e-6
    # one swing opens one decade, at any temperature
    for t in (-20.0, 25.0, 85.0):
        assert gate.opened_leakage(1e-6, gate.subthreshold_swing(t), t) == pytest.approx(1e-5, rel=1e-12)
    assert math.isnan(float(gate.opened_leakage(np.nan, 0.1, 45.0)))
