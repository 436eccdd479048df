"""The engine: every catalogue part of a role's kind, evaluated at the corners.

For a role it takes the catalogue rows of the right kind, runs the models of
`picker.models` over all of them at once (models/README.md §5-§7), decides each check
(`pass`, `fail`, `unknown`), ranks the candidates (models/README.md §8) and totals the
design (§9). The result is a DataFrame per role in rank order; the JSON of the
interface specification, the reasons a part fails and the notes are built from
it on demand, for the rows that are shown.

Check outcomes are stored as small integers while evaluating 10⁵-10⁶ parts:
PASS = 1, FAIL = 0, UNKNOWN = -1.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
import pandas as pd

from picker.engine import parallel
from picker.catalog.load import points as _catalog_points
from picker.catalog.load import values as _catalog_values
from picker.models import bipolar, leakage, mosfet, pricing, thermal
from picker.models._defaults import or_default
from picker.design.requirements import Requirements, Role

PASS, FAIL, UNKNOWN = 1, 0, -1
OUTCOME = {PASS: "pass", FAIL: "fail", UNKNOWN: "unknown"}
GATE_HEADROOM_V = 0.1  # models/README.md §6: vgs must exceed Vt(Ta) by this much
HOURS_PER_YEAR = 8766.0  # 365.25 days
BLOCK_ROWS = 65_536  # parts evaluated together (see `in_blocks`)

# The numeric catalogue columns the models read (besides the '@' point families).
MODEL_NUMBERS = {"vds_max_V", "vgs_max_V", "id_max_A", "vgs_th_max_V", "vgs_th_tc_mV/C",
                 "rds_tc_pct/C", "idss_uA", "idss_hot_uA", "idss_hot_C", "vceo_max_V", "ic_max_A",
                 "vbe_on_V", "icbo_nA", "icbo_hot_nA", "icbo_hot_C", "rth_ja_C/W", "tj_max_C"}
PASS_SWITCH_CHECKS = ("gate_drive", "drop", "tj", "off_current", "vds_rating", "vgs_rating",
                      "id_rating")
SWITCH_CHECKS = ("saturation", "vce_sat", "off_current", "vceo_rating", "ic_rating")
PASS_SWITCH_FIGURES = ("vgs_V", "rds_on_ohm", "drop_V", "loss_W", "tj_C", "off_current_A", "corner")
SWITCH_FIGURES = ("ib_A", "hfe", "vce_sat_V", "off_current_A")
# Catalogue values a candidate row carries as they are (the reasons quote them).
PASS_SWITCH_RATINGS = ("vds_max_V", "vgs_max_V", "id_max_A", "vgs_th_max_V", "rth_ja_C/W", "tj_max_C")
SWITCH_RATINGS = ("vceo_max_V", "ic_max_A", "icbo_nA")
NOTE_FLAGS = {  # flag column -> note text
    "extrapolated": "extrapolated",
    "below_first_break": "below first break",
    "not_guaranteed": "not guaranteed",
    "no_price": "no price",
    "eol": "eol",
    "nrnd": "nrnd",
}


class PartData:
    """Catalogue rows as the models read them: each column turned into a float
    array once and kept, so repeated evaluations of the same parts (the
    lowest-supply search runs the engine some 40 times) pay for pandas once.

    `rows` (an index array or a slice of positions in `df`; None: every row)
    makes it the data of those parts only, read column by column as the
    models ask for it: the catalogue is never copied whole. `take(rows)` gives
    the same for a subset without going back to pandas."""

    def __init__(self, df: pd.DataFrame, memo: dict | None = None, rows=None) -> None:
        self.df = df
        self.rows = rows
        self.index = df.index if rows is None else df.index[rows]
        self._memo = memo if memo is not None else {}

    def __len__(self) -> int:
        return len(self.index)

    def __contains__(self, name: str) -> bool:
        return name in self.df

    def _get(self, key, make):
        if key not in self._memo:
            self._memo[key] = make()
        return self._memo[key]

    def _pick(self, column):
        """A whole-catalogue column cut down to these parts."""
        return column if self.rows is None else column[self.rows]

    def values(self, name: str) -> np.ndarray:
        return self._get(("values", name), lambda: self._pick(_catalog_values(self.df, name)))

    def points(self, prefix: str) -> tuple[np.ndarray, np.ndarray]:
        """A point family as `picker.catalog.load.points` gives it, but never zero
        columns wide: a catalogue without any such column (say, bipolar parts
        only, or no prices) gets one all-blank column, so the models see "no
        point" (unknown) instead of an empty array they cannot reduce."""
        def make():
            conditions, matrix = _catalog_points(self.df, prefix, self.values)
            if conditions.size == 0:
                return np.array([np.nan]), np.full((len(self), 1), np.nan)
            return conditions, matrix
        return self._get(("points", prefix), make)

    def identity(self) -> dict:
        """part, maker, package, preferred, status and the eol / nrnd flags."""
        def make():
            # Text columns stay in the catalogue's own arrays (no conversion
            # of a million strings); only the flags are computed.
            df, out = self.df, {}
            for name in ("part", "maker", "package", "status"):
                out[name] = self._pick(df[name].array if name in df
                                       else np.full(len(df), "", dtype=object))
            out["preferred"] = self._pick(df["preferred"].to_numpy(dtype=bool))
            out["eol"] = self._pick((df["status"] == "eol").to_numpy(dtype=bool))
            out["nrnd"] = self._pick((df["status"] == "nrnd").to_numpy(dtype=bool))
            return out
        return self._get(("identity",), make)

    def prefetch(self) -> None:
        """Every numeric column the models read as an array now (`take` then
        hands out slices of them)."""
        self.identity()
        for name in self.df.columns:
            if "@" in name or name in MODEL_NUMBERS:
                self.values(name)

    def fit(self) -> mosfet.OnResistanceFit:
        """The on-resistance fit (models/README.md §1) of these parts."""
        def make():
            drives_V, rds_mohm = self.points("rds_on_mohm")
            return mosfet.fit_on_resistance(drives_V, rds_mohm / 1000.0, self.values("vgs_th_max_V"))
        return self._get(("fit",), make)

    def take(self, rows) -> "PartData":
        """The same parts data for the parts at positions `rows` (an index
        array or a slice) of these."""
        memo = {}
        for key, value in self._memo.items():
            if key[0] == "values":
                memo[key] = value[rows]
            elif key[0] == "points":
                memo[key] = (value[0], value[1][rows])
            elif key[0] == "identity":
                memo[key] = {name: column[rows] for name, column in value.items()}
            elif key[0] == "fit":
                memo[key] = mosfet.OnResistanceFit(*(np.asarray(f)[rows] for f in (
                    value.r_fix_ohm, value.k_ohm_V, value.lowest_drive_V, value.n_points)))
        if self.rows is None:
            within = rows
        else:
            mine = self.rows if not isinstance(self.rows, slice) else np.arange(len(self.df))[self.rows]
            within = mine[rows]
        return PartData(self.df, memo, within)


def _data(parts) -> PartData:
    return parts if isinstance(parts, PartData) else PartData(parts)


def values(parts, name: str) -> np.ndarray:
    return _data(parts).values(name)


def points(parts, prefix: str) -> tuple[np.ndarray, np.ndarray]:
    return _data(parts).points(prefix)


def _check(ok: np.ndarray, known: np.ndarray) -> np.ndarray:
    """Outcome codes from a boolean test and where its inputs are known."""
    ok = np.asarray(ok, dtype=bool).astype(np.int8)  # PASS = 1, FAIL = 0
    return np.where(known, ok, np.int8(UNKNOWN))


def _limit_check(value: np.ndarray, limit: float, *, at_least: bool = False) -> np.ndarray:
    """value <= limit (or >= with at_least); unknown where value is NaN."""
    with np.errstate(invalid="ignore"):
        ok = value >= limit if at_least else value <= limit
    return _check(ok, np.isfinite(value))


@dataclass
class RoleResult:
    """One role's candidates, best first, and its choice.

    `frame` holds one row per candidate in catalogue order (with its `rank`);
    `order` lists its rows best first. The rank-ordered `table` is made on
    first use, so evaluating a million parts does not pay for reordering a
    million rows that nobody prints."""

    role: Role
    frame: pd.DataFrame
    order: np.ndarray
    checks: tuple[str, ...]
    figures: tuple[str, ...]
    catalog_df: pd.DataFrame | None = None  # the catalogue evaluated (its rows: frame's index)

    @cached_property
    def table(self) -> pd.DataFrame:
        """Every candidate, in rank order (models/README.md §8)."""
        return self.frame.take(self.order)

    def _ranked(self, rows: np.ndarray) -> pd.DataFrame:
        """The rows (positions in `frame`) selected by a mask over `order`."""
        return self.frame.take(self.order[rows])

    @property
    def choice(self) -> pd.Series | None:
        """The first feasible candidate with a price (models/README.md §8), or None."""
        ok = (self.frame["feasible"].to_numpy()[self.order]
              & np.isfinite(self.frame["cost"].to_numpy(dtype=float)[self.order]))
        if not ok.any():
            return None
        return self.frame.iloc[self.order[int(np.argmax(ok))]]

    @cached_property
    def feasible(self) -> pd.DataFrame:
        return self._ranked(self.frame["feasible"].to_numpy()[self.order])

    @cached_property
    def rejected(self) -> pd.DataFrame:
        return self._ranked(~self.frame["feasible"].to_numpy()[self.order])

    @property
    def n_rejected(self) -> int:
        return int(np.count_nonzero(~self.frame["feasible"].to_numpy()))

    def cheapest_rejected(self, limit: int | None = None) -> pd.DataFrame:
        """The rejected candidates cheapest first (no price last), equal costs
        by part number, then rank; only the first `limit` if given. On a large
        catalogue only the parts that can be among the first `limit` are
        sorted: those costing no more than the limit-th cheapest."""
        rows = self.order[~self.frame["feasible"].to_numpy()[self.order]]  # rank order
        cost = np.nan_to_num(self.frame["cost"].to_numpy(dtype=float)[rows], nan=np.inf)
        if limit is not None and limit < rows.size:
            keep = cost <= np.partition(cost, limit - 1)[limit - 1]
            rows, cost = rows[keep], cost[keep]
        part = self.frame["part"].to_numpy(dtype=object)[rows]
        rows = rows[np.lexsort((part, cost))]  # stable: equal keys stay in rank order
        return self.frame.take(rows if limit is None else rows[:limit])


@dataclass
class DesignResult:
    requirements: Requirements
    roles: list[RoleResult]
    cost_per_board: float = np.nan
    off_current_A: float = np.nan
    drain_per_year_pct: float | None = None
    missing: list[str] = field(default_factory=list)  # roles with no choice


# -- evaluation --------------------------------------------------------------

def evaluate(catalog_df: pd.DataFrame, req: Requirements) -> DesignResult:
    """Evaluate every role of `req` over the catalogue and total the design."""
    roles = [evaluate_role(catalog_df, role, req) for role in req.roles]
    return design_totals(req, roles)


def evaluate_role(catalog_df: pd.DataFrame, role: Role, req: Requirements) -> RoleResult:
    """All catalogue parts of the role's kind: figures, checks, notes, rank."""
    mask = (catalog_df["kind"] == role.kind).to_numpy(dtype=bool)
    parts = PartData(catalog_df, rows=None if mask.all() else np.flatnonzero(mask))
    checks, figures = role_checks(role)
    # Columns are gathered in a dict and made a DataFrame once: inserting
    # some 45 columns one by one costs more than all the models together.
    out = catalogue_columns(parts, role)
    out.update(in_blocks(parts, lambda block: _role_columns(block, role, req, checks)))
    # A small table is consolidated (later selections are faster); a large one
    # is not copied at all (the arrays are fresh): copying 10^6 rows x 45
    # columns costs more than evaluating them.
    frame = pd.DataFrame(out, index=parts.index, copy=len(parts) < 100_000)
    order = rank(frame, role)
    return RoleResult(role, frame, order, checks, figures, catalog_df)


def role_checks(role: Role) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The checks that decide the role (those its requirements ask for) and
    the figures reported for it."""
    if role.is_pass_switch:
        checks, figures = PASS_SWITCH_CHECKS, PASS_SWITCH_FIGURES
    else:
        checks, figures = SWITCH_CHECKS, SWITCH_FIGURES
        if role.max_vce_sat_V is None:
            checks = tuple(c for c in checks if c != "vce_sat")
    if role.max_off_current_A is None:
        checks = tuple(c for c in checks if c != "off_current")
    return checks, figures


def _role_columns(parts: PartData, role: Role, req: Requirements, checks) -> dict:
    """Figures, check outcomes, price and verdict of `parts` (none of the
    columns `catalogue_columns` gives)."""
    columns = pass_switch_columns if role.is_pass_switch else saturated_switch_columns
    out = columns(parts, role, req, catalogue=False)
    _price(out, parts, role, req)
    # Column by column: a reduction along a short row axis is slow in numpy.
    feasible = np.ones(len(parts), dtype=bool)
    n_fail = np.zeros(len(parts), dtype=np.int8)  # a handful of checks
    n_unknown = np.zeros(len(parts), dtype=np.int8)
    for c in checks:
        code = np.asarray(out[f"check_{c}"])
        feasible &= code == PASS
        n_fail += code == FAIL
        n_unknown += code == UNKNOWN
    out["feasible"] = feasible
    out["n_fail"] = n_fail
    out["n_unknown"] = n_unknown
    return out


def in_blocks(parts: PartData, columns) -> dict:
    """``columns(parts)`` (a dict of per-part arrays, or of scalars that are
    the same for every part) computed BLOCK_ROWS parts at a time, on the
    CPU's cores (`picker.engine.parallel`), and joined.

    The result is the same as one call over all parts; the time is not: numpy
    makes a fresh array for every step of a formula, and on 10^6 parts each
    is 8 MB, well past the CPU caches, and new memory the system must map.
    On blocks of 65,536 parts the arrays stay in the cache and their memory
    is reused.
    """
    n = len(parts)
    if n <= 2 * BLOCK_ROWS:
        return columns(parts)
    parts.prefetch()  # the blocks slice the arrays: no pandas per block
    # One part first, for the columns' names and types: each thread then
    # writes its block straight into the joined columns.
    sample = columns(parts.take(slice(0, 1)))
    joined = {name: np.empty(n, dtype=_codes(value).dtype)
              for name, value in sample.items() if np.ndim(value)}

    def fill(lo: int) -> None:
        block = columns(parts.take(slice(lo, min(n, lo + BLOCK_ROWS))))
        for name, target in joined.items():
            value = _codes(block[name])
            if value.dtype != target.dtype:  # e.g. text of another width: never cut it short
                raise TypeError(f"column {name}: {value.dtype} in a block, {target.dtype} in the first")
            target[lo:lo + BLOCK_ROWS] = value

    parallel.map_blocks(fill, list(range(0, n, BLOCK_ROWS)))
    out = {}
    for name, value in sample.items():
        if isinstance(value, pd.Categorical):
            out[name] = pd.Categorical.from_codes(joined[name], dtype=value.dtype)
        else:  # a scalar is a figure the same for every part (vgs_V, quantity, ...)
            out[name] = joined.get(name, value)
    return out


def _codes(value):
    """A column's values as a numpy array (a categorical's codes)."""
    return value.codes if isinstance(value, pd.Categorical) else np.asarray(value)


def catalogue_columns(parts: PartData, role: Role) -> dict:
    """The columns a candidate row carries from the catalogue as they are:
    part, maker, package, preferred, status, the eol / nrnd flags and the
    ratings of the role's kind (a fresh dict)."""
    out = dict(parts.identity())
    for name in PASS_SWITCH_RATINGS if role.is_pass_switch else SWITCH_RATINGS:
        out[name] = values(parts, name)
    return out


def pass_switch(parts, role: Role, req: Requirements) -> pd.DataFrame:
    """models/README.md §6, high-side-pmos and low-side-nmos, at both corners (§5):
    one row per part (index of `parts`, a DataFrame or PartData), no price,
    no rank."""
    parts = _data(parts)
    return pd.DataFrame(pass_switch_columns(parts, role, req), index=parts.index)


def pass_switch_columns(parts, role: Role, req: Requirements, *,
                        on_state_only: bool = False, catalogue: bool = True) -> dict:
    """`pass_switch` as a dict of arrays (no DataFrame made). `on_state_only`
    stops after the checks the supply can change (gate drive, drop, Tj): all
    the lowest-supply search needs. `catalogue=False` leaves out the columns
    `catalogue_columns` gives."""
    parts = _data(parts)
    out = catalogue_columns(parts, role) if catalogue else {}
    load_A = role.load_A
    vt25_V = values(parts, "vgs_th_max_V")
    fit = parts.fit()
    # Per-part coefficients, or the model's default where the catalogue has
    # none (a plain number when no part overrides it: nothing to index then).
    k_vt = or_default(np.abs(values(parts, "vgs_th_tc_mV/C")) / 1000.0, mosfet.K_VT_V_PER_C)
    a = or_default(values(parts, "rds_tc_pct/C") / 100.0, mosfet.RDS_TC_PER_C)
    rth = values(parts, "rth_ja_C/W")
    drive_V = req.supply.min_V if role.gate_drive_V is None else role.gate_drive_V
    vgs_V = drive_V - role.gate_drive_drop_V

    resistance = mosfet.heated_resistance(vgs_V, fit.r_fix_ohm, fit.k_ohm_V, vt25_V, k_vt, a)

    corners = {}
    for corner, ta_C in (("cold", req.ambient.min_C), ("hot", req.ambient.max_C)):
        if corner == "hot" and np.array_equal(ta_C, req.ambient.min_C):
            corners["hot"] = corners["cold"]  # one ambient (the lowest-supply search): same figures
            break
        vt_V = mosfet.threshold_at(vt25_V, ta_C, k_vt)
        tj_C, converged = thermal.solve_junction_temperature(ta_C, load_A, rth, resistance)
        tj_C = np.broadcast_to(tj_C, vt25_V.shape)
        rds = resistance(tj_C)
        corners[corner] = dict(vt_V=vt_V, gate_ok=vgs_V >= vt_V + GATE_HEADROOM_V, tj_C=tj_C,
                               converged=np.broadcast_to(converged, vt25_V.shape), rds=rds)
    cold, hot = corners["cold"], corners["hot"]

    gate_known = np.isfinite(vt25_V)
    gate_ok = cold["gate_ok"] & hot["gate_ok"]
    out["check_gate_drive"] = _check(gate_ok, gate_known)
    on = gate_known & gate_ok  # where the gate check fails, on-state figures are null
    out["vgs_V"] = vgs_V
    out["vt_cold_V"] = cold["vt_V"]
    out["gate_margin_V"] = vgs_V - (np.maximum(cold["vt_V"], hot["vt_V"]) + GATE_HEADROOM_V)

    hot_worse = np.nan_to_num(hot["rds"], nan=-np.inf) > np.nan_to_num(cold["rds"], nan=-np.inf)
    rds = np.where(on, np.fmax(cold["rds"], hot["rds"]), np.nan)
    out["rds_on_ohm"] = rds
    out["drop_V"] = load_A * rds
    out["drop_cold_V"] = np.where(on, load_A * cold["rds"], np.nan)
    out["drop_hot_V"] = np.where(on, load_A * hot["rds"], np.nan)
    out["loss_W"] = load_A ** 2 * rds
    out["corner"] = pd.Categorical.from_codes(  # 'cold' / 'hot'; NaN where no drop is known
        np.where(np.isfinite(rds), hot_worse.astype(np.int8), -1), categories=["cold", "hot"])
    out["check_drop"] = _limit_check(out["drop_V"], role.max_drop_V)

    # Junction temperature: the worse corner (the hot one, as Ta is higher).
    tj_C = np.where(on, np.fmax(cold["tj_C"], hot["tj_C"]), np.nan)
    has_rth = np.isfinite(rth)
    out["tj_C"] = np.where(has_rth, tj_C, np.nan)
    settled = cold["converged"] & hot["converged"]
    tj_limit_C = _tj_limit(values(parts, "tj_max_C"), role.max_tj_C, req.margins.tj_margin_C)
    out["tj_limit_C"] = tj_limit_C
    with np.errstate(invalid="ignore"):
        tj_ok = settled & (tj_C <= tj_limit_C)
    # Runaway fails whatever the limit (models/README.md §3: "No convergence ... fails"),
    # so it is decided even where neither limit is known.
    known = has_rth & on & np.isfinite(fit.k_ohm_V) & (np.isfinite(tj_limit_C) | ~settled)
    out["check_tj"] = _check(tj_ok, known)
    out["extrapolated"] = on & mosfet.extrapolated(vgs_V, fit.lowest_drive_V)
    if on_state_only:
        return out

    idss_A = values(parts, "idss_uA") * 1e-6
    out["off_current_A"] = leakage.leakage_at(idss_A, req.ambient.max_C,
                                              values(parts, "idss_hot_uA") * 1e-6,
                                              values(parts, "idss_hot_C"))
    if role.max_off_current_A is not None:
        out["check_off_current"] = _limit_check(out["off_current_A"],
                                                role.max_off_current_A)
    derate_v, derate_i = req.margins.derate_v, req.margins.derate_i
    # The gate swings the whole rail when it turns on (models/README.md §6); a gate
    # drive above the rail swings that much instead.
    gate_swing_V = max(req.supply.max_V, role.gate_drive_V or 0.0)
    out["gate_swing_V"] = gate_swing_V
    out["settled"] = settled
    out["check_vds_rating"] = _limit_check(values(parts, "vds_max_V") * derate_v,
                                           req.supply.max_V, at_least=True)
    out["check_vgs_rating"] = _limit_check(values(parts, "vgs_max_V") * derate_v,
                                           gate_swing_V, at_least=True)
    out["check_id_rating"] = _limit_check(values(parts, "id_max_A") * derate_i, load_A,
                                          at_least=True)
    return out


def _tj_limit(tj_max_C: np.ndarray, role_max_C: float | None, margin_C: float) -> np.ndarray:
    """min(role max_tj, tj_max_C - margin), either alone where the other is unknown."""
    part_limit = tj_max_C - margin_C
    if role_max_C is None:
        return part_limit
    return np.fmin(part_limit, role_max_C)


def saturated_switch(parts, role: Role, req: Requirements) -> pd.DataFrame:
    """models/README.md §6, npn-switch and pnp-switch: saturation at the cold corner;
    one row per part (index of `parts`, a DataFrame or PartData), no price,
    no rank."""
    parts = _data(parts)
    return pd.DataFrame(saturated_switch_columns(parts, role, req), index=parts.index)


def saturated_switch_columns(parts, role: Role, req: Requirements, *,
                             on_state_only: bool = False, catalogue: bool = True) -> dict:
    """`saturated_switch` as a dict of arrays (no DataFrame made).
    `on_state_only` stops after the saturation check (all the lowest-supply
    search needs); `catalogue` as `pass_switch_columns`."""
    parts = _data(parts)
    out = catalogue_columns(parts, role) if catalogue else {}
    ic_A = role.collector_current_A
    cold_C = req.ambient.min_C
    drive_V = req.supply.min_V if role.base_drive_V is None else role.base_drive_V
    vbe_V = bipolar.vbe_at(values(parts, "vbe_on_V"), cold_C)
    ib_A = bipolar.base_current(drive_V, vbe_V, role.base_resistor_ohm)
    ic_points_mA, hfe_points = points(parts, "hfe_min")
    hfe25, below_points = bipolar.hfe_at_current(ic_points_mA / 1000.0, hfe_points, ic_A)
    hfe = bipolar.hfe_at_temperature(hfe25, cold_C)
    out["vbe_cold_V"] = vbe_V
    out["ib_A"] = ib_A
    out["hfe"] = hfe
    overdrive = bipolar.saturation_overdrive(ib_A, hfe, ic_A)
    out["overdrive"] = overdrive
    out["check_saturation"] = _limit_check(overdrive, role.overdrive, at_least=True)
    out["extrapolated"] = below_points
    if on_state_only:
        return out

    sat_points_mA, sat_mV = points(parts, "vce_sat_mV")
    vce_sat_V = bipolar.vce_sat_at_current(sat_points_mA / 1000.0, sat_mV / 1000.0, ic_A)
    gain = bipolar.forced_gain(ic_A, ib_A)
    guaranteed = bipolar.vce_sat_guaranteed(ic_A, ib_A)
    out["vce_sat_V"] = vce_sat_V
    out["forced_gain"] = gain
    out["not_guaranteed"] = np.isfinite(vce_sat_V) & ~guaranteed
    if role.max_vce_sat_V is not None:
        with np.errstate(invalid="ignore"):
            ok = vce_sat_V <= role.max_vce_sat_V
        out["check_vce_sat"] = _check(ok, np.isfinite(vce_sat_V) & guaranteed)

    icbo_A = values(parts, "icbo_nA") * 1e-9
    out["off_current_A"] = leakage.leakage_at(icbo_A, req.ambient.max_C,
                                              values(parts, "icbo_hot_nA") * 1e-9,
                                              values(parts, "icbo_hot_C"))
    if role.max_off_current_A is not None:
        out["check_off_current"] = _limit_check(out["off_current_A"],
                                                role.max_off_current_A)
    out["check_vceo_rating"] = _limit_check(values(parts, "vceo_max_V") * req.margins.derate_v,
                                            req.supply.max_V, at_least=True)
    out["check_ic_rating"] = _limit_check(values(parts, "ic_max_A") * req.margins.derate_i,
                                          ic_A, at_least=True)
    return out


def _price(out: dict, parts: PartData, role: Role, req: Requirements) -> None:
    """models/README.md §7: unit price at the quantity bought, cost per board."""
    breaks, prices = points(parts, "price")
    quantity = req.volume * role.parts_per_board
    unit, below = pricing.unit_price_at(breaks, prices, quantity)
    out["quantity"] = quantity
    out["unit_price"] = unit
    out["cost"] = unit * role.parts_per_board
    out["below_first_break"] = below
    out["no_price"] = ~np.isfinite(unit)


def rank(out: pd.DataFrame, role: Role) -> np.ndarray:
    """models/README.md §8: feasible by cost, then preferred first, then drop (or
    Vce(sat)); then feasible parts with no price (preferred, then drop); then
    the rest, fewest failed checks first. Remaining ties keep catalogue
    order. Adds a `rank` column to `out` (1 = best) and returns the row
    positions best first."""
    feasible = out["feasible"].to_numpy(dtype=bool)
    cost = np.nan_to_num(out["cost"].to_numpy(dtype=float), nan=np.inf)
    priced = np.isfinite(cost)
    figure = np.nan_to_num(out["drop_V" if role.is_pass_switch else "vce_sat_V"]
                           .to_numpy(dtype=float), nan=np.inf)
    not_preferred = ~out["preferred"].to_numpy(dtype=bool)
    chosen = np.flatnonzero(feasible & priced)
    unpriced = np.flatnonzero(feasible & ~priced)
    rest = np.flatnonzero(~feasible)
    # np.lexsort: the last key first; every sort is stable, so ties keep row order
    chosen = chosen[np.lexsort((figure[chosen], not_preferred[chosen], cost[chosen]))]
    unpriced = unpriced[np.lexsort((figure[unpriced], not_preferred[unpriced]))]
    # most parts are here; n_fail is int8, which numpy sorts stably by radix
    rest = rest[np.argsort(out["n_fail"].to_numpy()[rest], kind="stable")]
    order = np.concatenate((chosen, unpriced, rest))
    rank_of_row = np.empty(len(order), dtype=np.int64)
    rank_of_row[order] = np.arange(1, len(order) + 1)
    out["rank"] = rank_of_row
    return order


def design_totals(req: Requirements, roles: list[RoleResult]) -> DesignResult:
    """models/README.md §9: cost per board, total off-state current, drain per year."""
    result = DesignResult(req, roles)
    cost, off = 0.0, 0.0
    for r in roles:
        choice = r.choice
        if choice is None:
            result.missing.append(r.role.name)
            continue
        cost += float(choice["cost"])
        off += float(choice["off_current_A"]) * r.role.parts_per_board
    result.cost_per_board = cost
    result.off_current_A = off
    if req.supply.capacity_Ah:
        result.drain_per_year_pct = off * HOURS_PER_YEAR / req.supply.capacity_Ah * 100.0
    return result


# -- presenting one candidate --------------------------------------------------

def notes(row) -> list[str]:
    """The notes of a candidate (a row as a Series or a dict)."""
    return [text for flag, text in NOTE_FLAGS.items() if bool(row.get(flag, False))]


def candidate_json(row: pd.Series, result: RoleResult) -> dict:
    """One candidate as the interface specification writes it."""
    figures = {name: row.get(name) for name in result.figures}
    return {
        "part": row["part"], "maker": row["maker"], "package": row["package"],
        "feasible": bool(row["feasible"]),
        "unit_price": row["unit_price"], "cost": row["cost"],
        "figures": figures,
        "checks": {c: OUTCOME[int(row[f"check_{c}"])] for c in result.checks},
        "notes": notes(row),
    }


def design_json(design: DesignResult, *, limit: int | None = None) -> dict:
    """The whole answer in the JSON of the interface specification."""
    from picker.cells import clean

    roles = []
    for r in design.roles:
        table = r.table if limit is None else r.table.head(limit)
        choice = r.choice
        roles.append({
            "name": r.role.name, "use": r.role.use, "refs": list(r.role.refs),
            "choice": None if choice is None else choice["part"],
            "candidates": [candidate_json(row, r) for _, row in table.iterrows()],
        })
    return clean({
        "volume": design.requirements.volume,
        "roles": roles,
        "cost_per_board": design.cost_per_board,
        "off_current_A": design.off_current_A,
        "drain_per_year_pct": design.drain_per_year_pct,
    })
