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

from picker.design.requirements import Requirements, Role
from picker.engine import parallel
from picker.engine.checks import FAIL, OUTCOME, PASS, UNKNOWN  # noqa: F401
from picker.engine.parts import PartData, _data, catalogue_columns, points, values  # noqa: F401
from picker.engine.pass_switch import (PASS_SWITCH_CHECKS, PASS_SWITCH_FIGURES,  # noqa: F401
                                       PASS_SWITCH_RATINGS,
                                       pass_switch, pass_switch_columns)
from picker.engine.saturated_switch import (SWITCH_CHECKS, SWITCH_FIGURES, SWITCH_RATINGS,  # noqa: F401
                                            saturated_switch, saturated_switch_columns)
from picker.models import pricing

HOURS_PER_YEAR = 8766.0  # 365.25 days
BLOCK_ROWS = 65_536  # parts evaluated together (see `in_blocks`)
NOTE_FLAGS = {  # flag column -> note text
    "extrapolated": "extrapolated",
    "far_below_data": "far below data",
    "vbe_assumed": "vbe assumed",
    "below_first_break": "below first break",
    "not_guaranteed": "not guaranteed",
    "no_price": "no price",
    "eol": "eol",
    "nrnd": "nrnd",
}
# What each note (and each word a reason leans on) means: one sentence each,
# printed as a legend wherever it appears.
NOTE_MEANINGS = {
    "extrapolated": "evaluated outside the drives or currents its datasheet rates: below the "
                    "lowest rated drive on the safe side, above the highest as if driven at it "
                    "(picker/models/README.md §1, §6).",
    "vbe assumed": "the catalogue gives neither vbe_sat_max_V nor vbe_on_V, so a base-emitter "
                   "voltage of 0.75 V is assumed (picker/models/README.md §6).",
    "far below data": "the collector current is under a tenth of the lowest hFE point's, where "
                      "real gain falls faster than the data is continued (picker/models/README.md "
                      "§6).",
    "not guaranteed": "the datasheet's Vce(sat) holds at Ic/Ib = 10 and this circuit forces a "
                      "higher gain, so the figure is shown but not promised "
                      "(picker/models/README.md §6).",
    "thermal runaway": "no junction temperature below 1000 °C balances the part's heat, or its "
                       "channel saturates as it warms, so it has no on-state figures "
                       "(picker/models/README.md §3).",
    "channel saturates": "at this drive the channel cannot carry the load in its triode region "
                         "(2 K' I > Vov²), so the part has no on-state figures "
                         "(picker/models/README.md §1).",
    "below first break": "the build buys fewer parts than the smallest price break, so that "
                         "break's price is used (picker/models/README.md §7).",
    "no price": "the catalogue has no price for the part: it can be feasible but is not chosen "
                "(picker/models/README.md §7-§8).",
    "eol": "the catalogue marks the part end-of-life; the verdict is unchanged "
           "(picker/models/README.md §8).",
    "nrnd": "the catalogue marks the part not recommended for new designs; the verdict is "
            "unchanged (picker/models/README.md §8).",
}


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
    links: list = field(default_factory=list)  # engine.linked.LinkResult, one per linked pair
    on_drive_current_A: float = np.nan  # what the drive network draws while on (§9)


# -- evaluation --------------------------------------------------------------

def evaluate(catalog_df: pd.DataFrame, req: Requirements) -> DesignResult:
    """Evaluate every role of `req` over the catalogue and total the design;
    linked roles (models/README.md §10) are chosen together, pair by pair."""
    linked, links = {}, []
    if any(req.in_link(r) for r in req.roles):
        from picker.engine.linked import evaluate_links

        linked, links = evaluate_links(catalog_df, req)
    roles = [linked[role.name] if role.name in linked else evaluate_role(catalog_df, role, req)
             for role in req.roles]
    design = design_totals(req, roles)
    design.links = links
    return design


def evaluate_role(catalog_df: pd.DataFrame, role: Role, req: Requirements) -> RoleResult:
    """All catalogue parts of the role's kind: figures, checks, notes, rank. A
    linked role (models/README.md §10) is evaluated with its link: its parts
    against the other role's choice."""
    if req.in_link(role):
        from picker.engine.linked import evaluate_links

        return evaluate_links(catalog_df, req)[0][role.name]
    mask = (catalog_df["kind"] == role.kind).to_numpy(dtype=bool)
    parts = PartData(catalog_df, rows=None if mask.all() else np.flatnonzero(mask))
    checks, figures = role_checks(role)
    # Columns are gathered in a dict and made a DataFrame once: inserting
    # some 45 columns one by one costs more than all the models together.
    out = catalogue_columns(parts, PASS_SWITCH_RATINGS if role.is_pass_switch else SWITCH_RATINGS)
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
        if role.base_resistor_ohm == "auto":
            figures = figures + ("base_resistor_ohm",)
    if role.max_off_current_A is None:
        checks = tuple(c for c in checks if c != "off_current")
    return checks, figures


def _role_columns(parts: PartData, role: Role, req: Requirements, checks) -> dict:
    """Figures, check outcomes, price and verdict of `parts` (none of the
    columns `catalogue_columns` gives)."""
    columns = pass_switch_columns if role.is_pass_switch else saturated_switch_columns
    if not role.is_pass_switch and role.base_resistor_ohm == "auto":  # models/README.md §10
        from picker.engine.links import auto_base_columns as columns
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
    result.on_drive_current_A = on_drive_current(req, roles)
    if req.supply.capacity_Ah:
        result.drain_per_year_pct = off * HOURS_PER_YEAR / req.supply.capacity_Ah * 100.0
    return result


def on_drive_current(req: Requirements, roles: list[RoleResult]) -> float:
    """models/README.md §9: what the drive network draws while the product is on,
    from a full cell with each resistor at its low end: every gate pull-up's
    supply.max / R_pu_min and every base resistor's (drive - Vbe(ambient.max)) /
    Rb_min, times the parts per board. A role without a base resistor value, or
    without a choice, adds nothing."""
    from picker.engine.links import Series

    series = Series.of(req)
    total = 0.0
    for r in roles:
        c = r.choice
        if c is None:
            continue
        role, n = r.role, r.role.parts_per_board
        pullup = c.get("gate_pullup_ohm")
        if role.is_pass_switch and pullup is not None and np.isfinite(pullup):
            total += n * req.supply.max_V / (pullup * (1 - series.tol(role.gate_pullup_ohm)))
        if role.is_pass_switch:
            continue
        rb = c.get("base_resistor_ohm", role.base_resistor_ohm)
        if rb is None or not np.isfinite(float(rb)):
            continue
        drive = req.supply.max_V if role.base_drive_V is None else role.base_drive_V
        vbe_hot = float(c["vbe_cold_V"]) - 0.002 * (req.ambient.max_C - req.ambient.min_C)
        total += n * max(drive - vbe_hot, 0.0) / (float(rb) * (1 - series.tol(role.base_resistor_ohm)))
    return total


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
    doc = {
        "volume": design.requirements.volume,
        "roles": roles,
        "cost_per_board": design.cost_per_board,
        "off_current_A": design.off_current_A,
        "on_drive_current_A": design.on_drive_current_A,
        "drain_per_year_pct": design.drain_per_year_pct,
    }
    if design.links:
        from picker.engine.linked import links_json

        doc["links"] = links_json(design)
    return clean(doc)
