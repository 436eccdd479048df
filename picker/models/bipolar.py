"""Saturated small-signal bipolar switch (models/README.md §6, npn-switch and pnp-switch).

All voltages and currents are magnitudes. Functions broadcast over the
catalogue; NaN means unknown and propagates.
"""

from typing import NamedTuple

import numpy as np

VBE_ASSUMED_V = 0.75  # Vbe(sat) of a small-signal part near 10 mA, 0.7-0.85 V (from memory)
VBE_TC_V_PER_C = -0.002  # -2 mV/°C of a silicon junction (Horowitz & Hill)
HFE_TC_PER_C = 0.005  # gain rises about 0.5 %/°C (from memory)
VCE_SAT_FORCED_GAIN = 10  # datasheet Vce(sat) condition Ic/Ib = 10
FAR_BELOW = 0.1  # below this fraction of the lowest hFE point's current: 'far below data'
PULLDOWN_HOLD_V = 0.15  # a pull-down holds the base off while Icbo * Rpd stays below this


def vbe_25(vbe_sat_max_V, vbe_on_V):
    """``(Vbe_25 [V], assumed)``: the base-emitter voltage a saturated switch
    sits at, at 25 °C: the datasheet's maximum Vbe(sat) where given (at its
    own, usually higher, current: conservative at lower currents), else the
    typical Vbe(on), else VBE_ASSUMED_V (0.75 V) with ``assumed`` True
    (models/README.md §6). Both inputs [V], NaN for blank.
    """
    sat = np.asarray(vbe_sat_max_V, dtype=float)
    on = np.asarray(vbe_on_V, dtype=float)
    vbe = np.where(np.isfinite(sat), sat, on)
    assumed = ~np.isfinite(vbe)
    return np.where(assumed, VBE_ASSUMED_V, vbe), assumed


def vbe_at(vbe25_V, t_C):
    """Base-emitter voltage [V] at t_C [°C]: ``Vbe(T) = Vbe25 - 2 mV/°C (T - 25)``.

    Source: Horowitz & Hill, the -2 mV/°C of a silicon junction.
    """
    return np.asarray(vbe25_V, dtype=float) + VBE_TC_V_PER_C * (np.asarray(t_C, dtype=float) - 25.0)


def base_current(drive_V, vbe_V, rb_ohm, rpd_ohm=None):
    """Base current [A]: ``Ib = (drive - Vbe) / Rb - Vbe / Rpd`` (Ohm's law and
    Kirchhoff's current law at the base node).

    drive_V [V], vbe_V [V], rb_ohm [ohm] (the base resistor), rpd_ohm [ohm]
    (the base-emitter pull-down; None: none). Zero where the drive cannot
    forward-bias the junction against the pull-down (the network's open-circuit
    voltage ``drive Rpd / (Rb + Rpd)`` is at or below Vbe): the transistor is
    off. NaN where Rb is not positive.
    """
    rb_ohm = np.asarray(rb_ohm, dtype=float)
    vbe_V = np.asarray(vbe_V, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        ib_A = (np.asarray(drive_V, dtype=float) - vbe_V) / rb_ohm
        if rpd_ohm is not None:
            ib_A = ib_A - vbe_V / np.asarray(rpd_ohm, dtype=float)
        return np.where(rb_ohm > 0, np.maximum(ib_A, 0.0), np.nan)


class Along(NamedTuple):
    """A figure read along a datasheet curve, and where it left the points."""

    value: np.ndarray
    below: np.ndarray  # the current is under the lowest point
    above: np.ndarray  # the current is over the highest point
    lowest: np.ndarray  # the lowest point's condition (inf without a point)


def _interp_rows(xp, fp, x, log: bool, below: str | None, above: str | None) -> Along:
    """Per-row interpolation through the finite points of (n, m) xp, fp at x (scalar or (n,)).

    Points need not be sorted. Past an end, the value is continued along the
    end segment where `below` / `above` says so and the segment goes that
    way toward the end: "falls" (the value is lower at the end point than at
    its neighbour), "rises" (higher); elsewhere, and with one point, the end
    point's value is held. ``log``: in log-log. Rows with no point give NaN.
    """
    xp, fp = np.broadcast_arrays(np.atleast_2d(np.asarray(xp, dtype=float)),
                                 np.atleast_2d(np.asarray(fp, dtype=float)))
    x = np.broadcast_to(np.asarray(x, dtype=float), xp.shape[:1])
    usable = np.isfinite(xp) & np.isfinite(fp)
    if log:
        usable &= (xp > 0) & (fp > 0)
    rows = np.arange(xp.shape[0])
    with np.errstate(divide="ignore", invalid="ignore"):
        order = np.argsort(np.where(usable, xp, np.inf), axis=1, kind="stable")
        xs = np.take_along_axis(np.where(usable, xp, np.inf), order, axis=1)
        fs = np.take_along_axis(fp, order, axis=1)
        n = usable.sum(axis=1)
        last = np.maximum(n - 1, 0)
        # which points lie at or below x: compared before any logarithm, which
        # could merge two currents one rounding step apart
        at_or_below = np.minimum((xs <= x[:, None]).sum(axis=1), n)
        is_below = (n > 0) & (at_or_below == 0)
        is_above = (n > 0) & (x > xs[rows, last])
        lo = np.maximum(at_or_below - 1, 0)
        hi = np.minimum(at_or_below, last)
        two = n >= 2
        # The end segment, where the curve is continued past an end.
        lo = np.where(is_above & two, last - 1, lo)
        hi = np.where(is_below & two, 1, hi)
        f_lo, f_hi = fs[rows, lo], fs[rows, hi]
        end_low = np.where(is_below, f_lo < f_hi, f_hi < f_lo)  # lower at the end point
        goes = {"falls": end_low, "rises": ~end_low & (f_lo != f_hi), None: np.zeros_like(two)}
        extend = two & ((is_below & goes[below]) | (is_above & goes[above]))
        hold_lo = is_below & ~extend  # the lowest point's value
        hold_hi = is_above & ~extend  # the highest point's value
        f_lo = np.where(hold_hi, f_hi, f_lo)
        xl, xh = xs[rows, lo], xs[rows, hi]
        if log:
            xl, xh, xv = np.log(xl), np.log(xh), np.log(x)
        else:
            xv = x
        span = xh - xl
        frac = np.where((span > 0) & ~(hold_lo | hold_hi), (xv - xl) / span, 0.0)
        # ln f = ln f_lo + frac (ln f_hi - ln f_lo), written so an end point comes back exactly
        value = f_lo * (f_hi / f_lo) ** frac if log else f_lo + frac * (f_hi - f_lo)
    known = (n > 0) & ~np.isnan(x)
    return Along(np.where(known, value, np.nan), known & is_below, known & is_above,
                 np.where(n > 0, xs[:, 0], np.inf))


class Gain(NamedTuple):
    hfe: np.ndarray
    extrapolated: np.ndarray  # outside the points, but not far below them
    far_below: np.ndarray  # under FAR_BELOW times the lowest point's current


def hfe_at_current(ic_points_A, hfe_points, ic_A) -> Gain:
    """Minimum DC gain at collector current ic_A [A], from the ``hfe_min@<I>mA`` points.

    ic_points_A [A], hfe_points [-]: shape (n, m), NaN gaps, any order
    (ic_points_A may also be the (m,) column currents, shared by all parts);
    ic_A [A] scalar or (n,). Log-log interpolation between points:
    ``ln h = ln h1 + (ln Ic - ln I1) / (ln I2 - ln I1) * (ln h2 - ln h1)``.
    Gain falls toward both ends of a transistor's current range, so past an
    end the same line continues along the end segment where that segment
    falls toward the end, and the end point's value is held where it does not
    (models/README.md §6): ``extrapolated``. Under a tenth of the lowest
    point's current the gain falls faster than the segment says, and the note
    is ``far_below`` instead. No point: NaN.

    Worked example: 62 at 0.1 mA, 106 at 1 mA; at 20 µA the segment is
    continued: ``62 * (106/62) ** (ln(0.02/0.1) / ln(1/0.1)) = 62 * 0.6873
    = 42.6``, extrapolated; at 8 µA, under a tenth of 0.1 mA, far below data.
    """
    along = _interp_rows(ic_points_A, hfe_points, ic_A, log=True, below="falls", above="falls")
    with np.errstate(invalid="ignore"):
        far = along.below & (np.asarray(ic_A, dtype=float) < FAR_BELOW * along.lowest)
    return Gain(along.value, (along.below | along.above) & ~far, far)


def hfe_at_temperature(hfe25, t_C):
    """Gain at t_C [°C]: ``hFE(T) = hFE25 (1 + 0.005 (T - 25))`` (about 0.5 %/°C, from memory)."""
    rise_C = np.asarray(t_C, dtype=float) - 25.0
    return np.asarray(hfe25, dtype=float) * (1.0 + HFE_TC_PER_C * rise_C)


def vce_sat_at_current(ic_points_A, vce_sat_V_points, ic_A) -> Along:
    """Maximum Vce(sat) [V] at ic_A [A] from the ``vce_sat_mV@<I>mA`` points (Ic/Ib = 10).

    ic_points_A [A] (n, m) or shared (m,), vce_sat_V_points [V] (n, m); NaN gaps, any order.
    Linear in Ic between points, ``V = V1 + (Ic - I1) / (I2 - I1) (V2 - V1)``.
    Below the lowest point its value (Vce(sat) falls with the current:
    holding it is conservative); above the highest, continued along the
    highest segment where it rises toward the end, else held; ``above`` marks
    those (the note ``extrapolated``). NaN with no point.
    """
    return _interp_rows(ic_points_A, vce_sat_V_points, ic_A, log=False, below=None, above="rises")


def forced_gain(ic_A, ib_A):
    """Forced gain ``Ic / Ib`` [-] of the circuit; inf where Ib = 0, NaN where unknown."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.asarray(ic_A, dtype=float) / np.asarray(ib_A, dtype=float)


def vce_sat_guaranteed(ic_A, ib_A):
    """True where the datasheet Vce(sat) holds: forced gain ``Ic / Ib <= 10``.

    False where the forced gain is unknown (NaN) or the base is off (Ib = 0).
    """
    with np.errstate(invalid="ignore"):
        return forced_gain(ic_A, ib_A) <= VCE_SAT_FORCED_GAIN


def saturation_overdrive(ib_A, hfe, ic_A):
    """Available over required base drive, ``Ib hFE / Ic`` [-].

    The ``saturation`` check passes where this is ``>= overdrive`` (default 2)
    at the cold corner (models/README.md §6). NaN where any input is unknown.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        available_A = np.asarray(ib_A, dtype=float) * np.asarray(hfe, dtype=float)
        return available_A / np.asarray(ic_A, dtype=float)


def open_base_leakage(icbo_A, hfe_max):
    """Collector current [A] with the base open: ``Iceo = (1 + hFE) Icbo``.

    The collector-base leakage icbo_A [A] has nowhere to go but the emitter
    junction, where it is a base current and is amplified; hfe_max [-] is the
    datasheet's maximum gain (at the temperature asked), the worst case.
    Source: Sedra & Smith, *Microelectronic Circuits*, and Horowitz & Hill,
    the transistor's collector cutoff currents.

    Worked example: Icbo 10 nA at 25 °C doubles twice to 40 nA at 45 °C
    (§4); hFE max 400 at 25 °C is 400 * (1 + 0.005 * 20) = 440 at 45 °C;
    Iceo = (1 + 440) * 40 nA = 17.6 µA, over four hundred times the 40 nA a
    driven base lets through. A 1 MΩ pull-down holds the base at
    40 nA * 1 MΩ = 0.04 V < 0.15 V: the leakage flows out through it and the
    figure is Icbo, 40 nA; a 10 MΩ pull-down (0.4 V) does not: 17.6 µA.
    """
    return (1.0 + np.asarray(hfe_max, dtype=float)) * np.asarray(icbo_A, dtype=float)


def pulldown_holds(icbo_A, rpd_max_ohm):
    """True where a base-emitter pull-down rpd_max_ohm [ohm] (at its highest,
    +tol) carries the leakage icbo_A [A] away with under PULLDOWN_HOLD_V
    (0.15 V) across the junction: a hot junction already conducts nanoamps at
    0.3 V (models/README.md §6). False where the leakage is unknown.
    """
    with np.errstate(invalid="ignore"):
        return np.asarray(icbo_A, dtype=float) * rpd_max_ohm < PULLDOWN_HOLD_V
