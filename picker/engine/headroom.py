"""The lowest working supply: how far down the cell each part still does its job.

As a lithium-ion cell runs down, a switch whose gate (or base) is driven from
the cell gets less drive: a MOSFET's on-resistance rises, a bipolar switch's
base current falls. For each candidate this module finds the lowest supply
voltage at which the part still passes the role's supply-dependent checks, at
each ambient corner:

- pass switches (high-side-pmos, low-side-nmos): `gate_drive`, `ohmic`,
  `drop`, and `tj` where it can be decided (picker/models/README.md §1, §6,
  §3); below the depth limit of §1 no figure exists, so the part does not
  work there either;
- saturated switches (npn-switch, pnp-switch): `saturation` (models/README.md §6).

The figure is the engine's own answer, not a second model: each trial runs
`engine.pass_switch` (or `engine.saturated_switch`) with the supply minimum
replaced by one trial voltage per part and both ambient corners set to the
corner being solved, so the fit, the temperature coefficients, self-heating
and the gate-drive rule are exactly those `picker choose` uses.

Method: a vectorised multi-point bracket search over every part at once. A
part is first tried at the top of the search range (`SEARCH_TOP_FACTOR` x
supply.max); for the parts that work there the bracket runs from 0 V (nothing
conducts) to that top. Each pass tries k - 1 equally spaced voltages inside
every part's bracket in one engine evaluation (the parts repeated side by
side) and keeps the stretch between the last one that fails and the first one
that works, until the bracket is narrower than `tol_V` (default 10 µV: with
k = 32, four passes over 8.4 V; k falls to 2, plain bisection, when the parts
are so many that the trials would not fit in `TRIAL_ROWS`). The figure
reported is the upper end of the final bracket: a voltage at which the engine
says the part works, at most `tol_V` above one at which it does not. The
search needs only that working is monotone in the supply (more supply, more
drive, never less); it holds in the models of models/README.md, as the on-resistance
falls and the base current rises with the drive at every temperature.

What the figure means when the drive does not come from the cell: with a
fixed `gate_drive` (or `base_drive`) voltage, nothing the models compute
depends on the supply minimum, so a part either works at every supply (status
`any`: the switch puts no lower limit on the cell; the load's own needs set
it) or at none (status `never`). Both are reported without a voltage.

Status per corner and overall (`lowest_supply_status`):

- `found`: `lowest_supply_V` holds the voltage; `lowest_supply_limit` names
  what stops it just below (`gate_drive`, `ohmic`, `figures` (no figure
  below the depth limit), `drop`, `tj`, `saturation`);
- `any`: fixed drive, and the part works;
- `never`: the part fails at the top of the search range, or (fixed drive) at
  any supply; `lowest_supply_limit` names the failing check;
- `unknown`: the data to decide is missing (no threshold, no on-resistance
  points, no gain points).

The overall figure is the worse corner: the engine's checks at the supply
minimum pass for every supply at or above it.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Callable

import numpy as np
import pandas as pd

from picker.engine import evaluate as engine
from picker.engine.evaluate import FAIL, PASS, UNKNOWN
from picker.design.requirements import Ambient, Requirements, Role

TOL_V = 1e-5  # the search stops when the bracket is narrower than this (10 µV)
MAX_SECTIONS = 32  # each pass tries 31 voltages per part inside its bracket ...
TRIAL_ROWS = 65_536  # ... while a pass evaluates at most this many rows
SEARCH_TOP_FACTOR = 2.0  # the search runs from 0 V up to this times supply.max
STATUSES = ("found", "any", "never", "unknown")
CORNERS = ("cold", "hot")


def supply_driven(role: Role) -> bool:
    """True where the role's drive comes from the cell ("supply")."""
    return (role.gate_drive_V if role.is_pass_switch else role.base_drive_V) is None


def search_top_V(req: Requirements) -> float:
    return SEARCH_TOP_FACTOR * req.supply.max_V


def corner_temperature(req: Requirements, corner: str) -> float:
    return req.ambient.min_C if corner == "cold" else req.ambient.max_C


def at_supply(parts: pd.DataFrame, role: Role, req: Requirements, supply_V,
              ambient_C: float) -> pd.DataFrame:
    """The engine's evaluation of `parts` with the supply minimum set to
    `supply_V` [V] (a scalar, or one value per part) and both ambient corners
    set to `ambient_C` [°C], so every figure is that corner's.

    Rows keep the order and index of `parts`; the columns are those of
    `engine.pass_switch` / `engine.saturated_switch` (no price, no rank).
    Off-state figures come out at `ambient_C` too.
    """
    data = engine.PartData(parts) if isinstance(parts, pd.DataFrame) else parts
    return pd.DataFrame(_trial(data, role, req, supply_V, ambient_C, everything=True),
                        index=data.index)


def _trial(data, role: Role, req: Requirements, supply_V, ambient_C: float, *,
           everything: bool = False) -> dict:
    """`at_supply` as a dict of arrays, over prepared `engine.PartData`; only
    the supply-dependent checks unless `everything`."""
    trial = dataclasses.replace(
        req, supply=dataclasses.replace(req.supply, min_V=supply_V),
        ambient=Ambient(ambient_C, ambient_C))
    if req.in_link(role) or "auto" in (role.base_resistor_ohm, role.base_pulldown_ohm):
        return _linked_trial(data, role, req, trial, everything)
    evaluate = engine.pass_switch_columns if role.is_pass_switch else engine.saturated_switch_columns
    return evaluate(data, role, trial, on_state_only=not everything)


def _linked_trial(data, role: Role, req: Requirements, trial: Requirements, everything: bool) -> dict:
    """A linked role (models/README.md §10) tried with the circuit as chosen: the other
    role's part and the resistors fixed, the cell at the trial voltage. A role of
    its own with an "auto" resistor keeps the value chosen at the real supply."""
    from picker.engine import linked

    if req.in_link(role):
        out = linked.trial(data, role, req, trial, on_state_only=not everything)
        if out is None:
            from picker.errors import UsageError

            raise UsageError(f"role '{role.name}' is linked: evaluate its design first")
        return out
    from picker.engine.links import auto_base_columns

    chosen = auto_base_columns(data, role, req, catalogue=False)["base_resistor_ohm"]
    return auto_base_columns(data, role, trial, catalogue=everything, on_state_only=not everything,
                             base_resistor_ohm=chosen)


def verdict(table: pd.DataFrame, role: Role) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(works, limit, unknown) per row of an `at_supply` table.

    works: the supply-dependent checks pass (pass switch: gate_drive and drop
    pass and tj does not fail; switch: saturation passes). limit: the first of
    those checks that does not pass ('' where all pass). unknown: the data to
    decide is missing.
    """
    n = len(table) if isinstance(table, pd.DataFrame) else len(table["part"])
    if role.is_pass_switch:
        gate = np.asarray(table["check_gate_drive"])
        drop = np.asarray(table["check_drop"])
        tj = np.asarray(table["check_tj"])
        ohmic = np.asarray(table["check_ohmic"])
        works = (gate == PASS) & (drop == PASS) & (tj != FAIL)
        # below the drive that works: the gate, the channel saturating, no
        # figure at all (the depth limit of §1), the drop or the junction
        limit = np.where(gate != PASS, "gate_drive",
                         np.where(ohmic == FAIL, "ohmic",
                                  np.where(drop == UNKNOWN, "figures",
                                           np.where(drop != PASS, "drop",
                                                    np.where(tj == FAIL, "tj", "")))))
        unknown = (gate == UNKNOWN) | ((gate == PASS) & (drop == UNKNOWN))
    else:
        sat = np.asarray(table["check_saturation"])
        works = sat == PASS
        limit = np.where(works, "", "saturation")
        unknown = sat == UNKNOWN
    return works.reshape(n), limit.astype(object).reshape(n), unknown.reshape(n)


def solve_corner(parts: pd.DataFrame, role: Role, req: Requirements, corner: str, *,
                 tol_V: float = TOL_V,
                 on_step: Callable[[], None] | None = None) -> pd.DataFrame:
    """Lowest working supply of every part at one corner ('cold' or 'hot').

    Returns a DataFrame indexed like `parts` with `V` (NaN unless found),
    `status` and `limit` (see the module docstring).
    """
    V, status, limit = _solve(engine.PartData(parts), role, req, corner_temperature(req, corner),
                              tol_V, on_step or (lambda: None))
    return pd.DataFrame({"V": V, "status": status, "limit": limit}, index=parts.index)


def _solve(data, role: Role, req: Requirements, ta_C, tol_V: float, step):
    """(V, status, limit) arrays for every row of `data` (engine.PartData) at
    ambient `ta_C` (a scalar, or one temperature per row: both corners can be
    solved in one pass over the parts stacked twice)."""
    n = len(data)
    V = np.full(n, np.nan)
    status = np.full(n, "unknown", dtype=object)
    limit = np.full(n, "", dtype=object)
    if n == 0:
        return V, status, limit
    if not supply_driven(role):
        works, why, unknown = verdict(_trial(data, role, req, req.supply.min_V, ta_C), role)
        step()
        return V, np.where(works, "any", np.where(unknown, "unknown", "never")), \
            np.where(works | unknown, "", why)

    top = search_top_V(req)
    works, why, unknown = verdict(_trial(data, role, req, top, ta_C), role)
    step()
    status = np.where(works, "found", np.where(unknown, "unknown", "never")).astype(object)
    limit = np.where(works | unknown, "", why).astype(object)
    active = np.flatnonzero(works)
    if active.size == 0:
        return V, status, limit
    m = active.size
    k = sections(n)  # from all rows, so `evaluations` can tell the count beforehand
    fractions = np.arange(1, k) / k  # the k - 1 trial points inside each bracket
    rows = np.repeat(np.arange(m), k - 1)  # every part k - 1 times, side by side
    trials = data.take(active[rows])
    trial_ta = ta_C if np.ndim(ta_C) == 0 else np.asarray(ta_C)[active[rows]]
    lo = np.zeros(m)
    hi = np.full(m, top)
    lo_limit = np.full(m, "", dtype=object)
    each = np.arange(m)
    for _ in range(passes_for(top, tol_V, k)):
        v = lo[:, None] + (hi - lo)[:, None] * fractions  # (m, k - 1), ascending
        ok, why, _ = verdict(_trial(trials, role, req, v.ravel(), trial_ta), role)
        ok, why = ok.reshape(m, k - 1), why.reshape(m, k - 1)
        # Working is monotone in the supply: the first trial point that works
        # is the new top of the bracket, the one before it the new bottom.
        first = np.where(ok.any(axis=1), ok.argmax(axis=1), k - 1)  # k - 1: none works
        below = first - 1
        hi = np.where(first < k - 1, v[each, np.minimum(first, k - 2)], hi)
        lo = np.where(below >= 0, v[each, np.maximum(below, 0)], lo)
        lo_limit = np.where(below >= 0, why[each, np.maximum(below, 0)], lo_limit)
        step()
    V[active] = hi
    limit[active] = lo_limit
    return V, status, limit


def sections(n_parts: int) -> int:
    """Into how many equal parts each pass cuts a part's bracket: up to
    MAX_SECTIONS, as long as the trials of one pass (n_parts x (sections - 1))
    stay within TRIAL_ROWS; 2 (bisection) for very many parts."""
    return int(max(2, min(MAX_SECTIONS, TRIAL_ROWS // max(n_parts, 1) + 1)))


def passes_for(top_V: float, tol_V: float, k: int = 2) -> int:
    """Passes that cut a bracket of width top_V into k parts each time until it
    is narrower than tol_V."""
    return max(1, math.ceil(math.log(top_V / tol_V) / math.log(k) - 1e-9))


def evaluations(role: Role, req: Requirements, tol_V: float = TOL_V, n_parts: int = 1) -> int:
    """How many engine evaluations `lowest_supply` makes for `n_parts` parts
    (for a progress bar): both corners are solved together, the parts stacked
    twice."""
    if not supply_driven(role):
        return 1
    return 1 + passes_for(search_top_V(req), tol_V, sections(2 * n_parts))


def lowest_supply(parts: pd.DataFrame, role: Role, req: Requirements, *,
                  tol_V: float = TOL_V,
                  on_step: Callable[[], None] | None = None) -> pd.DataFrame:
    """The lowest working supply of every part, per corner and overall.

    `parts`: catalogue rows of the role's kind. Returns a DataFrame indexed
    like `parts` with, per corner c in (cold, hot), `lowest_supply_c_V`,
    `lowest_supply_c_status`, `lowest_supply_c_limit`, and overall
    `lowest_supply_V`, `lowest_supply_status`, `lowest_supply_limit`,
    `lowest_supply_corner` (the corner that sets it). `on_step` is called
    after each engine evaluation (`evaluations()` in all).
    """
    n = len(parts)
    data = engine.PartData(parts)
    both = data.take(np.concatenate([np.arange(n), np.arange(n)]))
    ta_C = np.concatenate([np.full(n, req.ambient.min_C), np.full(n, req.ambient.max_C)])
    V, status, limit = _solve(both, role, req, ta_C, tol_V, on_step or (lambda: None))
    out: dict = {}
    for i, c in enumerate(CORNERS):
        part = slice(i * n, (i + 1) * n)
        out[f"lowest_supply_{c}_V"] = V[part]
        out[f"lowest_supply_{c}_status"] = status[part]
        out[f"lowest_supply_{c}_limit"] = limit[part]
    cs, hs = status[:n], status[n:]
    cv, hv = V[:n], V[n:]
    # The worse corner: never > unknown > found (the higher voltage) > any.
    rank = {"any": 0, "found": 1, "unknown": 2, "never": 3}
    cr = np.array([rank[x] for x in cs], dtype=int)
    hr = np.array([rank[x] for x in hs], dtype=int)
    both_found = (cs == "found") & (hs == "found")
    higher = np.nan_to_num(hv, nan=-np.inf) > np.nan_to_num(cv, nan=-np.inf)
    hot_worse = np.where(both_found, higher, hr > cr)
    out["lowest_supply_V"] = np.where(hot_worse, hv, cv).astype(float)
    out["lowest_supply_status"] = np.where(hot_worse, hs, cs)
    out["lowest_supply_limit"] = np.where(hot_worse, limit[n:], limit[:n])
    out["lowest_supply_corner"] = np.where(hot_worse, "hot", "cold")
    return pd.DataFrame(out, index=parts.index)


# -- words -------------------------------------------------------------------------

def shown_V(value: float) -> float:
    """A lowest-supply voltage rounded *up* to the millivolt, as it is shown: a
    figure rounded down would claim the part works where it does not."""
    return math.ceil(value * 1000.0 - 1e-9) / 1000.0


def format_V(value: float) -> str:
    from picker.catalog.quantities import format_quantity

    return format_quantity(shown_V(value), "V", 4)


def _requirement(role: Role) -> str:
    from picker.catalog.quantities import format_quantity as q

    if role.is_pass_switch:
        return f"{q(role.max_drop_V, 'V')}"
    if role.collector_current_A is None:  # a gate driver: its current is the pull-up's (§10)
        return f"Ib·hFE ≥ {role.overdrive:g} × the pull-up's current"
    return f"Ib·hFE ≥ {role.overdrive:g} × {q(role.collector_current_A, 'A')}"


_BELOW = {"gate_drive": "the gate is no longer driven on", "drop": "the drop is over the limit",
          "ohmic": "the channel saturates at the load",
          "figures": "the drive is too far below the datasheet's rated drives for any figure",
          "tj": "the junction runs over its limit", "saturation": "the base drive is too weak"}


def describe(row, role: Role, req: Requirements, corner: str | None = None) -> str:
    """One sentence for a part's lowest working supply (overall, or one corner).

    `row`: a mapping with the columns `lowest_supply` returns.
    """
    suffix = "" if corner is None else f"_{corner}"
    status = row[f"lowest_supply{suffix}_status"]
    limit = row[f"lowest_supply{suffix}_limit"]
    if corner is None:
        corner = row["lowest_supply_corner"]
    t_C = corner_temperature(req, corner)
    meets = (f"meets {_requirement(role)}" if role.is_pass_switch
             else f"saturates ({_requirement(role)})")
    drive = "gate" if role.is_pass_switch else "base"
    if status == "found":
        v = row[f"lowest_supply{suffix}_V"]
        if shown_V(v) > req.supply.min_V:
            return (f"{meets} only from {format_V(v)} up at {t_C:g} °C, above the "
                    f"{req.supply.min_V:g} V of an empty cell")
        text = f"{meets} down to {format_V(v)} at {t_C:g} °C"
        return text + (f"; below it {_BELOW[limit]}" if limit in _BELOW else "")
    if status == "any":
        return (f"{meets} at any supply: the {drive} drive is a fixed voltage, so the cell's "
                "voltage does not matter")
    if status == "never":
        where = (f"at any supply up to {format_V(search_top_V(req))}" if supply_driven(role)
                 else f"at any supply (the {drive} drive is a fixed voltage)")
        what = f"meet {_requirement(role)}" if role.is_pass_switch else "saturate"
        return f"does not {what} {where} at {t_C:g} °C ({limit} fails)"
    return "lowest working supply unknown: data missing"


def short(row, corner: str | None = None) -> str:
    """The figure as a table cell: '2.785 V', 'any', 'never', '?'."""
    suffix = "" if corner is None else f"_{corner}"
    status = row[f"lowest_supply{suffix}_status"]
    if status == "found":
        return format_V(row[f"lowest_supply{suffix}_V"])
    return {"any": "any", "never": "never"}.get(status, "?")


def sort_value(row, corner: str | None = None) -> float:
    """The figure as a number to compare (lower is better): any -> 0, never -> inf."""
    suffix = "" if corner is None else f"_{corner}"
    status = row[f"lowest_supply{suffix}_status"]
    if status == "found":
        return float(row[f"lowest_supply{suffix}_V"])
    return {"any": 0.0, "never": math.inf}.get(status, math.nan)


def to_json(row, corner: str | None = None) -> dict:
    """The figure for the JSON of lineup/curve: voltage (null unless found), status, limit."""
    suffix = "" if corner is None else f"_{corner}"
    v = row[f"lowest_supply{suffix}_V"]
    out = {"V": None if not np.isfinite(v) else float(v),
           "status": row[f"lowest_supply{suffix}_status"],
           "limit": row[f"lowest_supply{suffix}_limit"] or None}
    if not suffix:
        out["corner"] = row["lowest_supply_corner"]
    return out
