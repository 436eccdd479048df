"""MOSFET on-resistance against gate drive and temperature (models/README.md §1-§2).

Model: ``R(Vg, T) = (R_fix + K / (Vg - Vt(T))) * (1 + a (T - 25))`` with
``Vt(T) = Vt25 - k_vt (T - 25)``. All voltages are magnitudes (a P-channel
part's -2.5 V drive is 2.5 V). Every function broadcasts over the catalogue:
arrays of shape (n_parts,) or (n_parts, n_points). NaN means unknown and
propagates, except in the temperature-coefficient overrides, where NaN means
"no override" and the default below is used (filled inside these functions).
"""

from dataclasses import dataclass

import numpy as np

from picker.models._defaults import or_default

K_VT_V_PER_C = 0.003  # threshold falls 3 mV/°C, low-voltage trench parts (from memory)
RDS_TC_PER_C = 0.005  # on-resistance rises 0.5 %/°C, about x1.5 at 125 °C (from memory)


@dataclass(frozen=True)
class OnResistanceFit:
    """Fitted ``R(Vg) = r_fix_ohm + k_ohm_V / (Vg - Vt)`` at 25 °C, one entry per part.

    ``r_fix_ohm`` [ohm] and ``k_ohm_V`` [ohm·V] are NaN where the fit is unknown
    (no point, no threshold, or a point at or below the threshold).
    ``lowest_drive_V`` [V] is the lowest datasheet drive (NaN with no point);
    evaluating below it is an extrapolation. ``n_points`` counts the usable points.
    """

    r_fix_ohm: np.ndarray
    k_ohm_V: np.ndarray
    lowest_drive_V: np.ndarray
    n_points: np.ndarray


def fit_on_resistance(drive_V, rds_ohm, vt_V) -> OnResistanceFit:
    """Fit ``R_i = R_fix + K x_i``, ``x_i = 1 / (V_i - Vt)``, per part, R_fix >= 0, K >= 0.

    drive_V [V], rds_ohm [ohm]: shape (n, m) (drive_V may also be the (m,)
    column drives, shared by all parts); a point counts where both are finite.
    vt_V [V]: shape (n,), the worst-case (maximum) threshold.

    Basis: the long-channel triode region, ``Id = k (Vgs - Vt) Vds`` at small
    Vds, so the channel is ``1 / (k (Vgs - Vt))`` (Sedra & Smith, MOSFET triode
    region); R_fix is the part that does not depend on the gate (models/README.md §1).

    - two or more points: closed-form least squares from masked sums
      ``n, Sx, Sxx, SR, SxR``: ``K = (n SxR - Sx SR) / (n Sxx - Sx^2)``,
      ``R_fix = (SR - K Sx) / n``. If ``R_fix < 0``: ``R_fix = 0``,
      ``K = SxR / Sxx`` (through the origin). If ``K < 0``: ``K = 0``,
      ``R_fix = SR / n``. Points all at one drive (``n Sxx - Sx^2 = 0``) are
      fitted through the origin, like one point.
    - one point: ``R_fix = 0``, ``K = R_1 (V_1 - Vt)`` (= SxR / Sxx).
    - no point, NaN threshold, or any point with ``V_i <= Vt``: NaN.
    """
    rds_ohm = np.atleast_2d(np.asarray(rds_ohm, dtype=float))
    drive_V = np.asarray(drive_V, dtype=float)
    vt_V = np.broadcast_to(np.asarray(vt_V, dtype=float), rds_ohm.shape[:1])
    n_parts, m = rds_ohm.shape
    # One point (column) at a time over all parts: the sums run down short rows,
    # which numpy does slowly; column by column they are plain vector adds, in
    # the same order, so the results are the same to the last bit.
    n = np.zeros(n_parts, dtype=np.int64)
    sx, sxx, sr, sxr = (np.zeros(n_parts) for _ in range(4))
    below_vt = np.zeros(n_parts, dtype=bool)
    lowest = np.full(n_parts, np.inf)
    with np.errstate(divide="ignore", invalid="ignore"):
        for j in range(m):
            v = drive_V[j] if drive_V.ndim == 1 else drive_V[:, j]
            r = rds_ohm[:, j]
            used = np.isfinite(v) & np.isfinite(r)
            below_vt |= used & ~(v > vt_V)  # a point at or below Vt: a catalogue error
            x = np.where(used, 1.0 / (v - vt_V), 0.0)  # garbage only in `bad` rows
            r = np.where(used, r, 0.0)
            if j == 0:
                n, sx, sxx, sr, sxr = used.astype(np.int64), x, x * x, r, x * r
            else:
                n, sx, sxx, sr, sxr = n + used, sx + x, sxx + x * x, sr + r, sxr + x * r
            lowest = np.where(used, np.minimum(lowest, v), lowest)
        bad = (n == 0) | np.isnan(vt_V) | below_vt
        k_origin = sxr / sxx
        den = n * sxx - sx * sx
        spread = (n >= 2) & (den > 1e-12 * n * sxx)
        k_free = (n * sxr - sx * sr) / den
        r_free = (sr - k_free * sx) / n
        mean_r = sr / n

    k_neg = spread & (k_free < 0)
    r_neg = spread & ~k_neg & (r_free < 0)
    free = spread & ~k_neg & ~r_neg
    k = np.where(free, k_free, np.where(k_neg, 0.0, k_origin))
    r_fix = np.where(free, r_free, np.where(k_neg, mean_r, 0.0))

    return OnResistanceFit(
        r_fix_ohm=np.where(bad, np.nan, r_fix),
        k_ohm_V=np.where(bad, np.nan, k),
        lowest_drive_V=np.where(n > 0, lowest, np.nan),
        n_points=n,
    )


def threshold_at(vt25_V, t_C, k_vt_V_per_C=K_VT_V_PER_C):
    """Gate threshold at temperature: ``Vt(T) = Vt25 - k_vt (T - 25)``.

    vt25_V [V] threshold at 25 °C; t_C [°C]; k_vt_V_per_C [V/°C], scalar or
    per part, NaN entries mean "use K_VT_V_PER_C". Source: models/README.md §2,
    3 mV/°C from memory.
    """
    k_vt = or_default(k_vt_V_per_C, K_VT_V_PER_C)
    return np.asarray(vt25_V, dtype=float) - k_vt * (np.asarray(t_C, dtype=float) - 25.0)


def on_resistance(vg_V, t_C, r_fix_ohm, k_ohm_V, vt25_V,
                  k_vt_V_per_C=K_VT_V_PER_C, rds_tc_per_C=RDS_TC_PER_C):
    """On-resistance at gate drive and junction temperature [ohm].

    ``R(Vg, T) = (R_fix + K / (Vg - Vt(T))) * (1 + a (T - 25))``, NaN where
    ``Vg <= Vt(T)`` (the channel is not on; the model says nothing there).

    vg_V [V] drive magnitude; t_C [°C] junction temperature; r_fix_ohm [ohm]
    and k_ohm_V [ohm·V] from ``fit_on_resistance``; vt25_V [V] the threshold
    the fit used (vgs_th_max_V); k_vt_V_per_C [V/°C] and rds_tc_per_C [1/°C]
    scalar or per part, NaN entries mean the default. Sources: Sedra & Smith,
    MOSFET triode region (the 1/(Vg - Vt) term); models/README.md §2 coefficients,
    from memory.
    """
    t_C = np.asarray(t_C, dtype=float)
    a = or_default(rds_tc_per_C, RDS_TC_PER_C)
    overdrive_V = np.asarray(vg_V, dtype=float) - threshold_at(vt25_V, t_C, k_vt_V_per_C)
    with np.errstate(divide="ignore", invalid="ignore"):
        r25 = np.asarray(r_fix_ohm, dtype=float) + np.asarray(k_ohm_V, dtype=float) / overdrive_V
    return np.where(overdrive_V > 0, r25 * (1.0 + a * (t_C - 25.0)), np.nan)


def heated_resistance(vg_V, r_fix_ohm, k_ohm_V, vt25_V,
                      k_vt_V_per_C=K_VT_V_PER_C, rds_tc_per_C=RDS_TC_PER_C) -> "HeatedResistance":
    """``on_resistance`` as a function of junction temperature alone, for the
    self-heating solve, which evaluates it many times at one gate drive.

    The same formula with the per-part constants folded once:
    ``R(T) = (R_fix + K / (c0 + k_vt T)) (b0 + a T)``, ``c0 = Vg - Vt25 - 25 k_vt``
    (the overdrive at 0 °C), ``b0 = 1 - 25 a``; NaN where the overdrive
    ``c0 + k_vt T <= 0``. Units and sources as ``on_resistance``; the results
    agree with it to rounding (a few parts in 10^16).
    """
    k_vt = or_default(k_vt_V_per_C, K_VT_V_PER_C)
    a = or_default(rds_tc_per_C, RDS_TC_PER_C)
    c0 = np.asarray(vg_V, dtype=float) - np.asarray(vt25_V, dtype=float) - 25.0 * k_vt
    return HeatedResistance(c0, k_vt, np.asarray(r_fix_ohm, dtype=float),
                            np.asarray(k_ohm_V, dtype=float), a, 1.0 - 25.0 * a)


@dataclass(frozen=True)
class HeatedResistance:
    """``R(T) = (r_fix + k / (c0 + k_vt T)) (b0 + a T)`` [ohm] per part (see
    `heated_resistance`); each constant a scalar or one value per part."""

    c0: object
    k_vt: object
    r_fix: object
    k: object
    a: object
    b0: object

    def __call__(self, t_C):
        """R [ohm] at junction temperatures t_C [°C], one per part."""
        t_C = np.asarray(t_C, dtype=float)
        overdrive_V = self.k_vt * t_C
        overdrive_V += self.c0
        with np.errstate(divide="ignore", invalid="ignore"):
            r_ohm = np.divide(self.k, overdrive_V)
        r_ohm += self.r_fix
        factor = self.a * t_C
        factor += self.b0
        r_ohm *= factor
        on = overdrive_V > 0
        if not on.all():
            r_ohm[~on] = np.nan  # the channel is off (or the overdrive unknown)
        return r_ohm

    def take(self, rows) -> "HeatedResistance":
        """The same for the parts `rows` (an index array, or a slice) only."""
        return HeatedResistance(*(v if np.ndim(v) == 0 else v[rows] for v in (
            self.c0, self.k_vt, self.r_fix, self.k, self.a, self.b0)))


def extrapolated(vg_V, lowest_drive_V):
    """True where the drive vg_V [V] is below the lowest datasheet drive lowest_drive_V [V].

    models/README.md §1: such a figure is still given, with the note ``extrapolated``.
    False where either is NaN.
    """
    return np.asarray(vg_V, dtype=float) < np.asarray(lowest_drive_V, dtype=float)
