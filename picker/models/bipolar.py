"""Saturated small-signal bipolar switch (models/README.md §6, npn-switch and pnp-switch).

All voltages and currents are magnitudes. Functions broadcast over the
catalogue; NaN means unknown and propagates, except ``vbe25_V``, where NaN
means "no catalogue value" and VBE_ON_V is used (filled inside ``vbe_at``,
as the MOSFET temperature coefficients are in ``mosfet.py``).
"""

import numpy as np

from picker.models._defaults import or_default

VBE_ON_V = 0.65  # typical silicon base-emitter voltage at low current (models/README.md §6)
VBE_TC_V_PER_C = -0.002  # -2 mV/°C of a silicon junction (Horowitz & Hill)
HFE_TC_PER_C = 0.005  # gain rises about 0.5 %/°C (from memory)
VCE_SAT_FORCED_GAIN = 10  # datasheet Vce(sat) condition Ic/Ib = 10


def vbe_at(vbe25_V, t_C):
    """Base-emitter voltage [V] at t_C [°C]: ``Vbe(T) = Vbe25 - 2 mV/°C (T - 25)``.

    vbe25_V [V], NaN entries mean VBE_ON_V (0.65 V). Source: Horowitz & Hill,
    the -2 mV/°C of a silicon junction.
    """
    vbe25_V = or_default(vbe25_V, VBE_ON_V)
    return vbe25_V + VBE_TC_V_PER_C * (np.asarray(t_C, dtype=float) - 25.0)


def base_current(drive_V, vbe_V, rb_ohm):
    """Base current [A] through the base resistor: ``Ib = (drive - Vbe) / Rb``.

    drive_V [V], vbe_V [V], rb_ohm [ohm]. Zero where ``drive < Vbe`` (the
    junction is not forward biased); NaN where Rb is not positive (Ohm's law).
    """
    rb_ohm = np.asarray(rb_ohm, dtype=float)
    headroom_V = np.maximum(np.asarray(drive_V, dtype=float) - np.asarray(vbe_V, dtype=float), 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(rb_ohm > 0, headroom_V / rb_ohm, np.nan)


def _interp_rows(xp, fp, x, log):
    """Per-row interpolation through the finite points of (n, m) xp, fp at x (scalar or (n,)).

    Points need not be sorted. Outside the points: the end value. Returns
    ``(value, below)``: below is True where x is under the lowest point.
    Rows with no point give NaN, False. ``log``: interpolate in log-log.
    """
    xp, fp = np.broadcast_arrays(np.atleast_2d(np.asarray(xp, dtype=float)),
                                 np.atleast_2d(np.asarray(fp, dtype=float)))
    x = np.broadcast_to(np.asarray(x, dtype=float), xp.shape[:1])
    usable = np.isfinite(xp) & np.isfinite(fp)
    if log:
        usable &= (xp > 0) & (fp > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        order = np.argsort(np.where(usable, xp, np.inf), axis=1, kind="stable")
        xs = np.take_along_axis(np.where(usable, xp, np.inf), order, axis=1)
        fs = np.take_along_axis(fp, order, axis=1)
        n = usable.sum(axis=1)
        # which points lie at or below x: compared before any logarithm, which
        # could merge two currents one rounding step apart
        at_or_below = np.minimum((xs <= x[:, None]).sum(axis=1), n)
        if log:
            xs, x = np.log(xs), np.log(x)
        rows = np.arange(xs.shape[0])
        lo = np.maximum(at_or_below - 1, 0)
        hi = np.minimum(at_or_below, np.maximum(n - 1, 0))
        span = xs[rows, hi] - xs[rows, lo]
        frac = np.where(span > 0, (x - xs[rows, lo]) / span, 0.0)
        f_lo, f_hi = fs[rows, lo], fs[rows, hi]
        # ln f = ln f_lo + frac (ln f_hi - ln f_lo), written so an end point comes back exactly
        value = f_lo * (f_hi / f_lo) ** frac if log else f_lo + frac * (f_hi - f_lo)
    known = (n > 0) & ~np.isnan(x)
    return np.where(known, value, np.nan), known & (at_or_below == 0)


def hfe_at_current(ic_points_A, hfe_points, ic_A):
    """Minimum DC gain at collector current ic_A [A], from the ``hfe_min@<I>mA`` points.

    ic_points_A [A], hfe_points [-]: shape (n, m), NaN gaps, any order
    (ic_points_A may also be the (m,) column currents, shared by all parts);
    ic_A [A] scalar or (n,). Log-log interpolation between points:
    ``ln h = ln h1 + (ln Ic - ln I1) / (ln I2 - ln I1) * (ln h2 - ln h1)``
    (models/README.md §6). Below the lowest point: its value, ``extrapolated`` True;
    above the highest: its value, not flagged (models/README.md flags only below).
    No point: NaN. Returns ``(hfe, extrapolated)``.
    """
    return _interp_rows(ic_points_A, hfe_points, ic_A, log=True)


def hfe_at_temperature(hfe25, t_C):
    """Gain at t_C [°C]: ``hFE(T) = hFE25 (1 + 0.005 (T - 25))`` (about 0.5 %/°C, from memory)."""
    rise_C = np.asarray(t_C, dtype=float) - 25.0
    return np.asarray(hfe25, dtype=float) * (1.0 + HFE_TC_PER_C * rise_C)


def vce_sat_at_current(ic_points_A, vce_sat_V_points, ic_A):
    """Maximum Vce(sat) [V] at ic_A [A] from the ``vce_sat_mV@<I>mA`` points (Ic/Ib = 10).

    ic_points_A [A] (n, m) or shared (m,), vce_sat_V_points [V] (n, m); NaN gaps, any order.
    Linear in Ic between points, ``V = V1 + (Ic - I1) / (I2 - I1) (V2 - V1)``;
    the end value outside the points (models/README.md §6); NaN with no point.
    """
    return _interp_rows(ic_points_A, vce_sat_V_points, ic_A, log=False)[0]


def forced_gain(ic_A, ib_A):
    """Forced gain ``Ic / Ib`` [-] of the circuit; inf where Ib = 0, NaN where unknown."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(ic_A, dtype=float) / np.asarray(ib_A, dtype=float)


def vce_sat_guaranteed(ic_A, ib_A):
    """True where the datasheet Vce(sat) holds: forced gain ``Ic / Ib <= 10``.

    False where the forced gain is unknown (NaN); the caller reports that case
    as unknown from the NaN in ``forced_gain``.
    """
    return forced_gain(ic_A, ib_A) <= VCE_SAT_FORCED_GAIN


def saturation_overdrive(ib_A, hfe, ic_A):
    """Available over required base drive, ``Ib hFE / Ic`` [-].

    The ``saturation`` check passes where this is ``>= overdrive`` (default 2)
    at the cold corner (models/README.md §6). NaN where any input is unknown.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        available_A = np.asarray(ib_A, dtype=float) * np.asarray(hfe, dtype=float)
        return available_A / np.asarray(ic_A, dtype=float)
