"""MOSFET on-resistance, its drop at the load, and temperature
(picker/models/README.md §1-§2).

Small-signal model: ``R(Vg, T) = (R_fix + K / (Vg - Vt(T))) m(T)`` with
``Vt(T) = Vt25 - k_vt (T - 25)`` and ``m(T) = 1 + a (T - 25)``; at the load
current the channel follows the whole triode law (`Channel`). All voltages
are magnitudes (a P-channel part's -2.5 V drive is 2.5 V). Every function
broadcasts over the catalogue: arrays of shape (n_parts,) or (n_parts,
n_points). NaN means unknown and propagates, except in the temperature-
coefficient overrides, where NaN means "no override" and the default is used
(filled inside these functions).
"""

from dataclasses import dataclass

import numpy as np

from picker.models._defaults import or_default

K_VT_V_PER_C = 0.003  # threshold falls at least 3 mV/°C (low-voltage trench parts, from memory)
K_VT_PER_C_OF_VTH = 0.003  # ... or 0.3 % of vgs_th_max_V per °C where larger (from memory)
RDS_TC_PER_C = 0.005  # on-resistance rises 0.5 %/°C, about x1.5 at 125 °C (from memory)
EXTRAPOLATION = ("conservative", "fit", "none")  # [margins] extrapolation, §1


@dataclass(frozen=True)
class OnResistanceFit:
    """Fitted ``R(Vg) = r_fix_ohm + k_ohm_V / (Vg - Vt)`` at 25 °C, one entry per part.

    ``r_fix_ohm`` [ohm] (already lifted onto the data) and ``k_ohm_V``
    [ohm·V] are NaN where the fit is unknown (no usable point, no threshold).
    ``lowest_drive_V`` / ``highest_drive_V`` [V] are the lowest and highest
    usable datasheet drives (V_lo, V_hi; NaN with none). ``n_points`` counts
    the usable points, ``left_out`` the points at or below the threshold.
    """

    r_fix_ohm: np.ndarray
    k_ohm_V: np.ndarray
    lowest_drive_V: np.ndarray
    highest_drive_V: np.ndarray
    n_points: np.ndarray
    left_out: np.ndarray

    def take(self, rows) -> "OnResistanceFit":
        return OnResistanceFit(*(np.asarray(f)[rows] for f in (
            self.r_fix_ohm, self.k_ohm_V, self.lowest_drive_V, self.highest_drive_V,
            self.n_points, self.left_out)))


def fit_on_resistance(drive_V, rds_ohm, vt_V) -> OnResistanceFit:
    """Fit ``R_i = R_fix + K x_i``, ``x_i = 1 / (V_i - Vt)``, per part, R_fix >= 0,
    K >= 0, then lift R_fix so the curve is nowhere below a point.

    drive_V [V], rds_ohm [ohm]: shape (n, m) (drive_V may also be the (m,)
    column drives, shared by all parts); a point counts where both are finite
    and ``V_i > Vt``. vt_V [V]: shape (n,), the worst-case (maximum) threshold.

    Basis: the long-channel triode region, ``Id = k (Vgs - Vt) Vds`` at small
    Vds, so the channel is ``1 / (k (Vgs - Vt))`` (Sedra & Smith, MOSFET triode
    region); R_fix is the part that does not depend on the gate
    (picker/models/README.md §1).

    - a point with ``V_i <= Vt`` is left out (the catalogue check warns).
    - two or more points: closed-form least squares from masked sums
      ``n, Sx, Sxx, SR, SxR``: ``K = (n SxR - Sx SR) / (n Sxx - Sx^2)``,
      ``R_fix = (SR - K Sx) / n``. If ``R_fix < 0``: ``R_fix = 0``,
      ``K = SxR / Sxx`` (through the origin). If ``K < 0``: ``K = 0``,
      ``R_fix = SR / n``. Points all at one drive are fitted through the
      origin, like one point.
    - one point: ``R_fix = 0``, ``K = R_1 (V_1 - Vt)`` (= SxR / Sxx).
    - lift: ``R_fix += max(0, max_i (R_i - R_fit(V_i)))``.
    - no usable point, or NaN threshold: NaN.
    """
    rds_ohm = np.atleast_2d(np.asarray(rds_ohm, dtype=float))
    drive_V = np.asarray(drive_V, dtype=float)
    vt_V = np.broadcast_to(np.asarray(vt_V, dtype=float), rds_ohm.shape[:1])
    n_parts, m = rds_ohm.shape
    # One point (column) at a time over all parts: the sums run down short rows,
    # which numpy does slowly; column by column they are plain vector adds.
    n = np.zeros(n_parts, dtype=np.int64)
    sx, sxx, sr, sxr = (np.zeros(n_parts) for _ in range(4))
    left_out = np.zeros(n_parts, dtype=np.int64)
    lowest = np.full(n_parts, np.inf)
    highest = np.full(n_parts, -np.inf)
    columns = []
    with np.errstate(divide="ignore", invalid="ignore"):
        for j in range(m):
            v = drive_V[j] if drive_V.ndim == 1 else drive_V[:, j]
            r = rds_ohm[:, j]
            given = np.isfinite(v) & np.isfinite(r)
            used = given & (v > vt_V)
            left_out += given & ~used & np.isfinite(vt_V)
            x = np.where(used, 1.0 / (v - vt_V), 0.0)
            r = np.where(used, r, 0.0)
            columns.append((used, x, r))
            n, sx, sxx, sr, sxr = n + used, sx + x, sxx + x * x, sr + r, sxr + x * r
            lowest = np.where(used, np.minimum(lowest, v), lowest)
            highest = np.where(used, np.maximum(highest, v), highest)
        bad = (n == 0) | np.isnan(vt_V)
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
    lift = np.zeros(n_parts)
    for used, x, r in columns:  # the curve raised onto the highest point above it
        above = r - (r_fix + k * x)
        above = np.where(above > 1e-12 * r, above, 0.0)  # not a rounding step of the fit
        lift = np.where(used, np.maximum(lift, above), lift)
    r_fix = r_fix + lift

    return OnResistanceFit(
        r_fix_ohm=np.where(bad, np.nan, r_fix),
        k_ohm_V=np.where(bad, np.nan, k),
        lowest_drive_V=np.where(n > 0, lowest, np.nan),
        highest_drive_V=np.where(n > 0, highest, np.nan),
        n_points=n,
        left_out=left_out,
    )


def default_k_vt(vt25_V):
    """The default threshold coefficient [V/°C]: ``max(3 mV/°C, 0.3 % of Vt25 per °C)``
    (picker/models/README.md §2, both from memory): 3 mV/°C for a 1 V part,
    6 mV/°C for a 2 V part. NaN Vt25 gives 3 mV/°C."""
    return np.fmax(K_VT_V_PER_C, K_VT_PER_C_OF_VTH * np.asarray(vt25_V, dtype=float))


def k_vt_of(column_mV_per_C, vt25_V):
    """Per-part threshold coefficient [V/°C]: the catalogue's ``vgs_th_tc_mV/C``
    (a fall per °C; its sign is read either way, as datasheets print it
    negative) or, where blank, `default_k_vt`."""
    override = np.abs(np.asarray(column_mV_per_C, dtype=float)) / 1000.0
    if np.isnan(override).all():
        return default_k_vt(vt25_V)
    return np.where(np.isnan(override), default_k_vt(vt25_V), override)


def threshold_at(vt25_V, t_C, k_vt_V_per_C=None):
    """Gate threshold at temperature: ``Vt(T) = Vt25 - k_vt (T - 25)`` [V].

    vt25_V [V] threshold at 25 °C; t_C [°C]; k_vt_V_per_C [V/°C], scalar or
    per part (None, or NaN entries: `default_k_vt`). Source:
    picker/models/README.md §2.
    """
    default = default_k_vt(vt25_V)
    k_vt = default if k_vt_V_per_C is None else np.where(
        np.isnan(np.asarray(k_vt_V_per_C, dtype=float)), default, k_vt_V_per_C)
    return np.asarray(vt25_V, dtype=float) - k_vt * (np.asarray(t_C, dtype=float) - 25.0)


def on_resistance(vg_V, t_C, r_fix_ohm, k_ohm_V, vt25_V,
                  k_vt_V_per_C=None, rds_tc_per_C=RDS_TC_PER_C):
    """The fitted small-signal law at gate drive and junction temperature [ohm].

    ``R(Vg, T) = (R_fix + K / (Vg - Vt(T))) * (1 + a (T - 25))``, NaN where
    ``Vg <= Vt(T)``. No clamp and no extrapolation rule: `small_signal` applies
    those. Units as `fit_on_resistance`; k_vt_V_per_C [V/°C] and
    rds_tc_per_C [1/°C] scalar or per part, NaN (or None) meaning the default.
    Sources: Sedra & Smith, MOSFET triode region; picker/models/README.md §2.
    """
    t_C = np.asarray(t_C, dtype=float)
    a = or_default(rds_tc_per_C, RDS_TC_PER_C)
    overdrive_V = np.asarray(vg_V, dtype=float) - threshold_at(vt25_V, t_C, k_vt_V_per_C)
    with np.errstate(divide="ignore", invalid="ignore"):
        r25 = np.asarray(r_fix_ohm, dtype=float) + np.asarray(k_ohm_V, dtype=float) / overdrive_V
    return np.where(overdrive_V > 0, r25 * (1.0 + a * (t_C - 25.0)), np.nan)


# -- the channel at one drive: extrapolation, clamp and the whole triode law --------------

@dataclass(frozen=True)
class Channel:
    """A part's on-state at one gate drive, as a function of junction temperature.

    With ``d = T - 25`` [°C]:

    - overdrive ``Vov(T) = vov25 + k_vt d`` [V] (``vov25 = Vg_eff - Vt25``);
    - channel coefficient ``K'(T) = (n25 + n1 d)(1 + a d)`` [ohm·V];
    - fixed part ``R_s(T) = rs25 (1 + a d)`` [ohm];
    - ``drop(T) = I R_s + Vov - sqrt(Vov^2 - 2 K' I)`` [V], the whole triode law
      (Sedra & Smith: ``Id = k (Vov Vds - Vds^2 / 2)``), NaN where the channel
      saturates (``2 K' I >= Vov^2``) or is off.

    Inside the rated drives (and with ``extrapolation = "fit"``) ``n25 = K``,
    ``n1 = 0``, ``rs25 = R_fix``; under conservative extrapolation all of the
    resistance at V_lo is channel, ``N(T) = R_fix (V_lo - Vt(T)) + K``, so
    ``n25 = R_fix (V_lo - Vt25) + K``, ``n1 = R_fix k_vt`` and ``rs25 = 0``
    (picker/models/README.md §1). Each constant a scalar or one value per part.
    """

    vov25: object
    k_vt: object
    n25: object
    n1: object
    rs25: object
    a: object

    def take(self, rows) -> "Channel":
        """The same for the parts `rows` (an index array, or a slice) only."""
        return Channel(*(v if np.ndim(v) == 0 else np.asarray(v)[rows] for v in (
            self.vov25, self.k_vt, self.n25, self.n1, self.rs25, self.a)))

    def terms(self, t_C):
        """(Vov [V], K' [ohm·V], R_s [ohm]) at junction temperatures t_C [°C]."""
        d = np.asarray(t_C, dtype=float) - 25.0
        m = 1.0 + self.a * d
        return self.vov25 + self.k_vt * d, (self.n25 + self.n1 * d) * m, self.rs25 * m

    def small_signal_ohm(self, t_C):
        """``R_s + K' / Vov`` [ohm]: the drop per ampere as the current tends to 0."""
        vov, kch, rs = self.terms(t_C)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(vov > 0, rs + kch / vov, np.nan)

    def max_current_A(self, t_C):
        """The largest current the channel carries in its triode region,
        ``Vov^2 / (2 K')`` [A] (the `ohmic` boundary); NaN where it is off."""
        vov, kch, _ = self.terms(t_C)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(vov > 0, vov * vov / (2.0 * kch), np.nan)

    def drop(self, t_C, current_A):
        """Drop [V] at junction temperature t_C [°C] and current current_A [A].

        ``V_ch = Vov - sqrt(Vov^2 - 2 K' I)`` is computed as
        ``2 K' I / (Vov + sqrt(Vov^2 - 2 K' I))`` (the same number, without the
        cancellation at small currents). NaN where the channel saturates or is off.
        """
        return self.drop_and_slope(t_C, current_A, slope=False)[0]

    def drop_and_slope(self, t_C, current_A, slope: bool = True):
        """(drop [V], d drop / dT [V/°C]) at t_C [°C], current_A [A].

        ``d drop/dT = I rs25 a + Vov' (1 - Vov / S) + u' / S`` with
        ``S = sqrt(Vov^2 - 2u)``, ``u = K' I``, ``Vov' = k_vt``,
        ``u' = I (n1 (1 + a d) + (n25 + n1 d) a)``. The slope is None unless asked.
        """
        t_C = np.asarray(t_C, dtype=float)
        i = np.asarray(current_A, dtype=float)
        d = t_C - 25.0
        m = self.a * d
        m += 1.0
        vov = self.k_vt * d
        vov += self.vov25
        n = self.n1 * d
        n += self.n25
        u = n * m
        u *= i  # K' I
        s2 = vov * vov
        s2 -= 2.0 * u
        # exactly at the boundary rounding may leave -1e-17: that is still the boundary
        ok = (s2 >= -1e-12 * vov * vov) & (vov > 0)
        with np.errstate(invalid="ignore", divide="ignore"):
            s = np.sqrt(np.maximum(s2, 0.0))
            ch = vov + s
            np.divide(2.0 * u, ch, out=ch)
        drop = self.rs25 * m
        drop *= i
        drop += ch
        if not ok.all():
            drop = np.where(ok, drop, np.nan)
        if not slope:
            return drop, None
        with np.errstate(invalid="ignore", divide="ignore"):
            du = self.n1 * m
            du += n * self.a
            du *= i
            grad = vov / s
            np.subtract(1.0, grad, out=grad)
            grad *= self.k_vt
            grad += du / s
            grad += i * self.rs25 * self.a
        return drop, grad

    def saturation_temperature(self, ta_C, current_A):
        """The lowest junction temperature T >= ta_C [°C] at which the channel
        saturates at current_A [A] (``2 K'(T) I >= Vov(T)^2``): ta_C where it
        already does there, inf where it never does.

        ``q(T) = Vov^2 - 2 I K'`` is a quadratic in ``d = T - 25``:
        ``A d^2 + B d + C`` with ``A = k_vt^2 - 2 I n1 a``,
        ``B = 2 vov25 k_vt - 2 I (n25 a + n1)``, ``C = vov25^2 - 2 I n25``; the
        answer is its first root above the ambient where it is positive there.
        """
        i = np.asarray(current_A, dtype=float)
        d0 = np.asarray(ta_C, dtype=float) - 25.0
        qa = self.k_vt * self.k_vt - 2.0 * i * self.n1 * self.a
        qb = 2.0 * self.vov25 * self.k_vt - 2.0 * i * (self.n25 * self.a + self.n1)
        qc = self.vov25 * self.vov25 - 2.0 * i * self.n25
        qa, qb, qc, d0 = np.broadcast_arrays(qa, qb, qc, d0)
        vov0 = self.vov25 + self.k_vt * d0
        already = (qa * d0 * d0 + qb * d0 + qc <= 0) | ~(vov0 > 0)
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            disc = qb * qb - 4.0 * qa * qc
            root = np.sqrt(np.where(disc >= 0, disc, np.nan))
            # the two roots, written so that neither loses digits to cancellation
            qq = -0.5 * (qb + np.copysign(root, qb))
            r1, r2 = qq / qa, qc / qq
            linear = np.abs(qa) <= 1e-12 * (np.abs(qb) + np.abs(qc)) + 1e-300
            r_lin = -qc / qb
        big = np.inf
        r1 = np.where(np.isfinite(r1) & (r1 > d0), r1, big)
        r2 = np.where(np.isfinite(r2) & (r2 > d0), r2, big)
        r_lin = np.where(np.isfinite(r_lin) & (r_lin > d0), r_lin, big)
        first = np.where(linear, r_lin, np.minimum(r1, r2))
        out = np.where(already, d0, first) + 25.0
        return np.where(np.isnan(qa + qb + qc + d0), np.nan, out)


@dataclass(frozen=True)
class ChannelPower:
    """``P(T) = I drop(T)`` [W] and ``dP/dT`` [W/°C] of a `Channel` carrying
    current_A [A] (scalar or per part): what the self-heating solve asks for."""

    channel: Channel
    current_A: object

    def __call__(self, t_C):
        drop, slope = self.channel.drop_and_slope(t_C, self.current_A)
        return drop * self.current_A, slope * self.current_A

    def take(self, rows) -> "ChannelPower":
        i = self.current_A if np.ndim(self.current_A) == 0 else np.asarray(self.current_A)[rows]
        return ChannelPower(self.channel.take(rows), i)


@dataclass(frozen=True)
class Drive:
    """Where a drive stands against a part's rated drives (picker/models/README.md §1).

    ``vg_eff_V``: the drive the resistance is evaluated at, ``min(Vg, V_hi)``;
    ``below`` / ``above``: Vg under V_lo / over V_hi (the note ``extrapolated``);
    ``usable``: a figure may be given at all (a fit exists, and not
    ``extrapolation = "none"`` below V_lo); the depth limit is per corner
    (`depth_limit_V`)."""

    vg_eff_V: np.ndarray
    below: np.ndarray
    above: np.ndarray
    usable: np.ndarray


def channel_at_drive(vg_V, fit: OnResistanceFit, vt25_V, k_vt_V_per_C, rds_tc_per_C,
                     extrapolation: str = "conservative") -> tuple[Channel, Drive]:
    """The `Channel` of every part at the gate drive vg_V [V] (scalar or per
    part), and where that drive stands (`Drive`).

    fit from `fit_on_resistance`; vt25_V [V] the threshold it used;
    k_vt_V_per_C [V/°C] per part (`k_vt_of`); rds_tc_per_C [1/°C], NaN the
    default; extrapolation one of EXTRAPOLATION. Above V_hi the drive is taken
    as V_hi; below V_lo per the mode (picker/models/README.md §1).
    """
    if extrapolation not in EXTRAPOLATION:
        raise ValueError(f"extrapolation must be one of {', '.join(EXTRAPOLATION)}")
    vg_V = np.asarray(vg_V, dtype=float)
    vt25_V = np.asarray(vt25_V, dtype=float)
    a = or_default(rds_tc_per_C, RDS_TC_PER_C)
    v_lo, v_hi = fit.lowest_drive_V, fit.highest_drive_V
    vg_eff = np.where(vg_V > v_hi, v_hi, vg_V)
    below = vg_V < v_lo
    above = vg_V > v_hi
    r_fix, k = fit.r_fix_ohm, fit.k_ohm_V
    fitted = np.isfinite(k) & np.isfinite(vt25_V)
    usable = fitted
    if extrapolation == "conservative" and below.any():
        n25 = np.where(below, r_fix * (v_lo - vt25_V) + k, k)
        n1 = np.where(below, r_fix * k_vt_V_per_C, 0.0)
        rs25 = np.where(below, 0.0, r_fix)
    else:
        n25, n1, rs25 = k, 0.0, r_fix
        if extrapolation == "none":
            usable = usable & ~below
    channel = Channel(vg_eff - vt25_V, k_vt_V_per_C, n25, n1, rs25, a)
    return channel, Drive(vg_eff, below & fitted, above & fitted, usable)


def depth_limit_V(lowest_drive_V, vt_V):
    """Below ``(V_lo + Vt(Ta)) / 2`` [V], half-way from the lowest rated drive
    to the threshold at the corner's ambient, no figure is given in any mode
    (picker/models/README.md §1)."""
    return 0.5 * (np.asarray(lowest_drive_V, dtype=float) + np.asarray(vt_V, dtype=float))


def small_signal(vg_V, t_C, fit: OnResistanceFit, vt25_V, k_vt_V_per_C=None,
                 rds_tc_per_C=RDS_TC_PER_C, extrapolation: str = "conservative"):
    """On-resistance [ohm] as picker uses it at a small current: the fit with
    §1's clamp above V_hi, the extrapolation rule below V_lo and the depth
    limit (at the threshold of t_C [°C]); NaN where no figure is given.
    vg_V [V] may be a grid (broadcast against the parts)."""
    vt25_V = np.asarray(vt25_V, dtype=float)
    k_vt = default_k_vt(vt25_V) if k_vt_V_per_C is None else k_vt_V_per_C
    channel, drive = channel_at_drive(vg_V, fit, vt25_V, k_vt, rds_tc_per_C, extrapolation)
    deep = drive.vg_eff_V < depth_limit_V(fit.lowest_drive_V, threshold_at(vt25_V, t_C, k_vt))
    return np.where(drive.usable & ~deep, channel.small_signal_ohm(t_C), np.nan)
