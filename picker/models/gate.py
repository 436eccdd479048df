"""The gate of a pass switch held by a pull-up and pulled by a driver
(models/README.md §10): its total gate charge at the circuit's drive, the
turn-off time through the pull-up, how far the driver's leakage opens the
gate while off, and what that opening does to the switch's own leakage.

All voltages are magnitudes; functions broadcast over the catalogue and NaN
means unknown.
"""

from __future__ import annotations

import numpy as np

HELD_OFF_MARGIN_V = 0.1  # the gate must stay this far below the lowest threshold (§10)
SWING_V_PER_DECADE_25C = 0.100  # subthreshold swing at 25 °C, about 100 mV/decade (from memory)
KELVIN_OFFSET = 273.15


def gate_charge_at(drives_V, qg_C, vgs_V) -> np.ndarray:
    """Total gate charge [C] for a gate swung to `vgs_V` [V] (scalar or (n,)).

    drives_V: the `qg_nC@<V>V` column conditions [V], (m,) shared or (n, m);
    qg_C: the charges [C], (n, m), NaN where blank. models/README.md §10: the
    point at the lowest drive at or above `vgs_V`; where every point is below
    it, the highest point scaled by `vgs_V / V` (above the Miller plateau the
    gate charge grows about linearly with the drive: the gate-source
    capacitance charging at Q = C V). No usable point: NaN.
    """
    qg = np.atleast_2d(np.asarray(qg_C, dtype=float))
    drives = np.broadcast_to(np.asarray(drives_V, dtype=float), qg.shape)
    v = np.broadcast_to(np.asarray(vgs_V, dtype=float), qg.shape[:1])[:, None]
    usable = np.isfinite(qg) & (qg > 0) & np.isfinite(drives) & (drives > 0)
    above = usable & (drives >= v)
    # the lowest drive at or above v, and its charge
    at = np.argmin(np.where(above, drives, np.inf), axis=1)
    rows = np.arange(qg.shape[0])
    q_above = qg[rows, at]
    # else the highest drive, scaled
    top = np.argmax(np.where(usable, drives, -np.inf), axis=1)
    q_scaled = qg[rows, top] * v[:, 0] / drives[rows, top]
    out = np.where(above.any(axis=1), q_above, q_scaled)
    return np.where(usable.any(axis=1), out, np.nan)


def threshold_min_at(vgs_th_min_V, t_C, k_vt_V_per_C) -> np.ndarray:
    """The lowest threshold [V] at t_C [°C]: `Vt_min(T) = vgs_th_min_V - k_vt (T - 25)`
    (the threshold falls as the die warms, models/README.md §2, §10)."""
    return np.asarray(vgs_th_min_V, dtype=float) - np.asarray(k_vt_V_per_C) * (np.asarray(t_C) - 25.0)


def turn_off_bound(r_pullup_max_ohm, qg_C, vt_min_V) -> np.ndarray:
    """Upper bound on the turn-off time [s] through the pull-up:
    `t_off = R_pu_max Qg / Vt_min`.

    While the gate is above the lowest threshold, the pull-up (at its largest,
    `R_pu_max` [ohm]) carries at least `Vt_min / R_pu_max` [A]; to bring the
    gate below the threshold it removes no more than the total gate charge
    `Qg` [C] (charge balance, Q = I t, with the current at its least). A
    threshold at or below zero never lets the gate turn the switch off: inf.
    """
    vt = np.asarray(vt_min_V, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.asarray(r_pullup_max_ohm, dtype=float) * np.asarray(qg_C, dtype=float) / vt
    return np.where(vt > 0, t, np.where(np.isnan(vt), np.nan, np.inf))


def gate_leak(driver_off_A, r_pullup_max_ohm) -> np.ndarray:
    """How far [V] the driver's off-state current opens the gate while off:
    `V = I_off R_pu_max` (Ohm's law: the leakage flows through the pull-up)."""
    return np.asarray(driver_off_A, dtype=float) * np.asarray(r_pullup_max_ohm, dtype=float)


def held_off_margin(gate_leak_V, vt_min_hot_V) -> np.ndarray:
    """How far [V] the gate stays inside the held-off limit:
    `Vt_min(ambient.max) - 0.1 V - gate_leak_V` (models/README.md §10); the
    `held_off` check passes where it is not negative."""
    return np.asarray(vt_min_hot_V, dtype=float) - HELD_OFF_MARGIN_V - np.asarray(gate_leak_V, dtype=float)


def subthreshold_swing(t_C) -> np.ndarray:
    """Subthreshold swing [V/decade] at t_C [°C]: `S = 100 mV/dec (T + 273.15) / 298.15`.

    Below the threshold the drain current falls one decade for every S of
    gate drive, and S is proportional to the absolute temperature (it is
    n kT/q ln 10; about 100 mV/decade for a small power trench MOSFET at
    25 °C, from memory)."""
    return SWING_V_PER_DECADE_25C * (np.asarray(t_C, dtype=float) + KELVIN_OFFSET) / (25.0 + KELVIN_OFFSET)


def opened_leakage(idss_A, gate_leak_V, t_C) -> np.ndarray:
    """The switch's off-state current [A] with its gate opened by `gate_leak_V`
    [V]: `I = idss(T) 10^(gate_leak_V / S(T))`, idss_A [A] at t_C [°C]
    (the threshold is defined at 250 µA or 1 mA, so even far below it the
    channel conducts, one decade more per S of gate drive)."""
    return np.asarray(idss_A, dtype=float) * 10.0 ** (np.asarray(gate_leak_V, dtype=float)
                                                      / subthreshold_swing(t_C))
