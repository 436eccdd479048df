"""Every catalogue part of one kind as arrays the drop-in screen compares
(`KindParts`), the review's options, and which packages count as one."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from picker.catalog import columns as cols
from picker.catalog.load import normalise_part, points, values
from picker.errors import UsageError
from picker.models import bipolar, leakage, mosfet, pricing
from picker.review.match import CONFIRM_AT, TAKE_AT

DEFAULT_VOLUME = 1000  # boards per build when neither --volume nor a requirement file says
REL_TOL = 1e-9  # comparisons of equal figures are not spoiled by float rounding


@dataclass(frozen=True)
class Options:
    volume: int = DEFAULT_VOLUME
    packages_ok: tuple[tuple[str, ...], ...] = ()  # groups of interchangeable packages
    include_nrnd: bool = False  # may a not-recommended part be proposed
    take_at: float = TAKE_AT
    confirm_at: float = CONFIRM_AT

    def __post_init__(self) -> None:
        if not (isinstance(self.volume, (int, np.integer)) and self.volume >= 1):
            raise UsageError(f"--volume must be a whole number of boards, 1 or more (got {self.volume})")


def package_key(name) -> str:
    """'SOT-23' and 'sot23' are one outline: case and punctuation ignored."""
    return normalise_part(str(name)) if isinstance(name, str) else ""


def package_groups(groups) -> dict[str, set[str]]:
    """package key -> every key equivalent to it (groups sharing a name merge)."""
    merged: list[set[str]] = []
    for group in groups:
        keys = {package_key(p) for p in group if package_key(p)}
        if not keys:
            continue
        for other in [m for m in merged if m & keys]:
            keys |= other
            merged.remove(other)
        merged.append(keys)
    return {k: m for m in merged for k in m}


# -- the drop-in screen, per kind -------------------------------------------------------

@dataclass(frozen=True)
class Criterion:
    label: str  # 'Rds(on) at 2.5 V'
    unit: str  # for the explanation: 'mΩ'
    higher_is_better: bool


class KindParts:
    """Every catalogue part of one kind, as arrays the drop-in screen compares.

    For each criterion two columns: the incumbent's value (its datasheet
    figure, NaN without one) and every candidate's comparable value. They
    differ for the point families: a candidate is compared at the incumbent's
    conditions, by its own datasheet value where it has a point there, else:

    - Rds(on): its fitted curve ``R = R_fix + K / (Vg - Vt)`` (models/README.md §1,
      `mosfet.fit_on_resistance`, Vt = vgs_th_max_V) at the incumbent's drive,
      compared with the incumbent's *datasheet* value at that drive (a
      guarantee is compared with a guarantee or the model's estimate of one,
      not two estimates). Below the candidate's lowest datasheet drive the
      curve is an extrapolation and the candidate counts as lacking the data.
      Above its highest drive the curve is used when it rests on two or more
      points; a one-point curve (all channel, R_fix = 0) overstates the fall
      with drive, so there the point's own value is used, a bound that holds
      because R only falls as the drive rises.
    - hFE (log-log) and Vce(sat) (linear), models/README.md §6: interpolated only
      between the candidate's own points; outside them it lacks the data
      (what the method continues past the points is an estimate, not a
      guarantee to compare with one).
    - leakage at 25 °C: a zero is read as blank (models/README.md §4); the hot
      point through the method's own rule (a falling hot point left out).
    """

    def __init__(self, df: pd.DataFrame, positions: np.ndarray, kind: str) -> None:
        sub = df.iloc[positions]
        self.kind = kind
        self.positions = positions  # into the catalogue DataFrame
        self.labels = sub.index
        self.n = len(sub)
        self.part = sub["part"].astype(str).to_numpy()
        self.maker = (sub["maker"].astype(str) if "maker" in sub else pd.Series([""] * self.n)).to_numpy()
        raw_pkg = sub["package"].astype(str) if "package" in sub else pd.Series([""] * self.n)
        self.package = raw_pkg.to_numpy()
        self.package_key = raw_pkg.str.casefold().str.replace(r"[^0-9a-z]", "", regex=True).to_numpy()
        self.preferred = (sub["preferred"].to_numpy(dtype=bool) if "preferred" in sub
                          else np.zeros(self.n, dtype=bool))
        self.status = sub["status"].astype(str).to_numpy() if "status" in sub else np.full(self.n, "active")
        self.breaks, self.prices = points(sub, "price")
        self._price_cache: dict[float, np.ndarray] = {}
        crit: list[tuple[Criterion, np.ndarray, np.ndarray]] = []

        def plain(label, name, unit, higher):
            v = values(sub, name)
            crit.append((Criterion(label, unit, higher), v, v))

        def leak(label, name, unit):
            # A zero leakage figure is read as blank (models/README.md §4): it
            # would otherwise beat every real figure.
            v = values(sub, name)
            v = np.where(v == 0, np.nan, v)
            crit.append((Criterion(label, unit, False), v, v))

        if kind in cols.MOSFET_KINDS:
            for label, name, unit in (("Vds rating", "vds_max_V", "V"), ("Vgs rating", "vgs_max_V", "V"),
                                      ("Id rating", "id_max_A", "A"), ("Tj max", "tj_max_C", "°C")):
                plain(label, name, unit, True)
            plain("Vgs(th) max", "vgs_th_max_V", "V", False)
            leak("Idss", "idss_uA", "µA")
            drives, rds = points(sub, "rds_on_mohm")
            vt = values(sub, "vgs_th_max_V")
            fit = mosfet.fit_on_resistance(drives, rds, vt)
            finite = np.isfinite(rds)
            highest = np.max(np.where(finite, drives, -np.inf), axis=1) if rds.size else np.zeros(0)
            single = np.nanmax(np.where(finite, rds, np.nan), axis=1) if rds.size else np.zeros(0)
            for j, drive in enumerate(drives):
                fitted = mosfet.on_resistance(drive, 25.0, fit.r_fix_ohm, fit.k_ohm_V, vt)
                fitted = np.where((drive > highest) & (fit.n_points == 1), single, fitted)
                fitted = np.where(drive >= fit.lowest_drive_V, fitted, np.nan)
                cand = np.where(finite[:, j], rds[:, j], fitted)
                crit.append((Criterion(f"Rds(on) at {drive:g} V", "mΩ", False), rds[:, j], cand))
            self.hot = ("Idss", "µA", values(sub, "idss_uA"), values(sub, "idss_hot_uA"),
                        values(sub, "idss_hot_C"))
        else:
            for label, name, unit in (("Vceo rating", "vceo_max_V", "V"), ("Ic rating", "ic_max_A", "A"),
                                      ("Tj max", "tj_max_C", "°C")):
                plain(label, name, unit, True)
            leak("Icbo", "icbo_nA", "nA")
            # A saturated switch's base sits at Vbe(sat): a higher one leaves less
            # base current; a higher maximum gain lets an open base leak more
            # (models/README.md §6).
            plain("Vbe(sat) max", "vbe_sat_max_V", "V", False)
            plain("hFE max", "hfe_max", "", False)
            for prefix, label, unit, higher, log in (("hfe_min", "hFE", "", True, True),
                                                     ("vce_sat_mV", "Vce(sat)", "mV", False, False)):
                currents, data = points(sub, prefix)
                finite = np.isfinite(data)
                low = np.min(np.where(finite, currents, np.inf), axis=1) if data.size else np.zeros(0)
                high = np.max(np.where(finite, currents, -np.inf), axis=1) if data.size else np.zeros(0)
                for j, current in enumerate(currents):
                    if log:
                        between = bipolar.hfe_at_current(currents, data, current)[0]
                    else:
                        between = bipolar.vce_sat_at_current(currents, data, current).value
                    inside = (current >= low) & (current <= high)
                    cand = np.where(finite[:, j], data[:, j], np.where(inside, between, np.nan))
                    crit.append((Criterion(f"{label} at {current:g} mA", unit, higher), data[:, j], cand))
            self.hot = ("Icbo", "nA", values(sub, "icbo_nA"), values(sub, "icbo_hot_nA"),
                        values(sub, "icbo_hot_C"))
        plain("θJA", "rth_ja_C/W", "°C/W", False)
        self.criteria = [c for c, _, _ in crit]
        self.inc = np.column_stack([i for _, i, _ in crit])
        self.cand = np.column_stack([c for _, _, c in crit])
        self.higher = np.array([c.higher_is_better for c in self.criteria])
        self.cand_by_column = np.ascontiguousarray(self.cand.T)  # one contiguous row per figure
        self._package_names, self._package_code = np.unique(self.package_key, return_inverse=True)
        self._status_names, self._status_code = np.unique(self.status, return_inverse=True)
        self._allowed_cache: dict[tuple, np.ndarray] = {}

    def price_at(self, quantity: float) -> np.ndarray:
        """Unit price of every part at `quantity` bought (models/README.md §7), cached."""
        if quantity not in self._price_cache:
            self._price_cache[quantity] = pricing.unit_price_at(self.breaks, self.prices, quantity)[0]
        return self._price_cache[quantity]

    def allowed(self, incumbent: int, options: Options, groups: dict[str, set[str]]) -> np.ndarray:
        """Parts in a package the engineer accepts for this incumbent and of a status
        that may be proposed (active; nrnd with include_nrnd; never eol). Cached:
        lines share their packages."""
        key = self.package_key[incumbent]
        cache = (key, options.include_nrnd, id(groups))
        if cache not in self._allowed_cache:
            accepted = groups.get(key, {key}) if key else set()
            statuses = ("active", "nrnd") if options.include_nrnd else ("active",)
            pkg_ok = np.array([k in accepted for k in self._package_names], dtype=bool)
            status_ok = np.array([s in statuses for s in self._status_names], dtype=bool)
            self._allowed_cache[cache] = pkg_ok[self._package_code] & status_ok[self._status_code]
        return self._allowed_cache[cache]

    def drop_in(self, incumbent: int, among: np.ndarray | None = None) -> np.ndarray:
        """True where a part is at least as good as the incumbent on every rating
        and figure the incumbent has data for (package and status apart: see
        `allowed`). Missing data where the incumbent has some fails. `among`
        (bool per part): only these are compared, the rest are False."""
        rows = np.arange(self.n) if among is None else np.flatnonzero(among)
        inc = self.inc[incumbent]
        ok = np.ones(rows.size, dtype=bool)
        cand = self.cand_by_column
        with np.errstate(invalid="ignore"):
            for j in np.flatnonzero(np.isfinite(inc)):  # a loop over figures, not parts
                column = cand[j] if among is None else cand[j][rows]
                if self.higher[j]:
                    ok &= column >= inc[j] - REL_TOL * abs(inc[j])
                else:
                    ok &= column <= inc[j] + REL_TOL * abs(inc[j])
        ok &= self._hot_ok(incumbent, rows)
        if among is None:
            return ok
        out = np.zeros(self.n, dtype=bool)
        out[rows] = ok
        return out

    def _hot_ok(self, incumbent: int, rows: np.ndarray) -> np.ndarray:
        """Where the incumbent gives a second leakage point (I_hot at T_hot), a
        candidate needs one too, and its two-point exponential (models/README.md §4) at
        T_hot must not exceed I_hot."""
        _, _, i25, hot, hot_c = self.hot
        if not (np.isfinite(hot[incumbent]) and np.isfinite(hot_c[incumbent])):
            return np.ones(rows.size, dtype=bool)
        i25, hot_r, hot_c_r = i25[rows], hot[rows], hot_c[rows]
        cand = leakage.leakage_at(i25, hot_c[incumbent], hot_r, hot_c_r)
        with np.errstate(invalid="ignore"):
            return np.isfinite(hot_r) & np.isfinite(hot_c_r) & (cand <= hot[incumbent] * (1 + REL_TOL))

    def why_not(self, incumbent: int, candidate: int) -> str:
        """The first figure on which `candidate` is worse than the incumbent, in words."""
        for j, c in enumerate(self.criteria):
            ref, got = self.inc[incumbent, j], self.cand[candidate, j]
            if not math.isfinite(ref):
                continue
            unit = f" {c.unit}" if c.unit else ""
            if not math.isfinite(got):
                return f"no {c.label}"
            worse = got < ref * (1 - REL_TOL) if c.higher_is_better else got > ref * (1 + REL_TOL)
            if worse:
                return f"{c.label} {got:.3g}{unit} {'<' if c.higher_is_better else '>'} {ref:.3g}{unit}"
        if not self._hot_ok(incumbent, np.array([candidate]))[0]:
            label, unit, _, hot, hot_c = self.hot
            return f"{label} at {hot_c[incumbent]:g} °C above {hot[incumbent]:g} {unit} (or no hot figure)"
        return ""
