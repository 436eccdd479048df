"""The joint choice of a linked pair and its two role tables (models/README.md §10).

`evaluate_link` runs the search of `engine.pairs` over the link's parts with
`engine.links.PairModel` as the judge, then evaluates each role's parts
against the other role's choice, so that each table reads as a role's table
always does (every part of the kind, feasible first), with the `pair` check
added: the other role's choice still works with this part.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from picker.catalog.quantities import resistor_code
from picker.design.requirements import Requirements, Role
from picker.engine.checks import FAIL, PASS
from picker.engine.evaluate import RoleResult, _price, rank, role_checks
from picker.engine.links import AUTO, Link, PairModel, Series, all_pass
from picker.engine.pairs import PairVerdict, cheapest_pair
from picker.engine.parts import PartData
from picker.engine.pass_switch import PASS_SWITCH_FIGURES
from picker.engine.saturated_switch import SWITCH_FIGURES

SWITCH_LINK_FIGURES = ("gate_pullup_ohm", "gate_leak_V", "t_off_s")
PARTNER_LINK_FIGURES = ("base_resistor_ohm", "base_pulldown_ohm", "latch_base_V")
# the other role's figures a row keeps, for the `pair` reason
OTHER = {"switch": ("vgs_V", "gate_leak_V", "gate_pullup_ohm", "off_current_A", "drop_V"),
         "partner": ("collector_current_A", "vce_sat_V", "latch_base_V", "ib_A", "base_resistor_ohm",
                     "base_pulldown_ohm")}


@dataclass
class LinkedRoleResult(RoleResult):
    """A role's table in a link: the role's parts with the other role's choice."""

    link: Link | None = None
    side: str = ""  # "switch" or "partner"
    other_checks: tuple[str, ...] = ()  # the other role's checks (the bits of other_fails)
    partner_part: str | None = None  # the other role's part these rows were evaluated with
    chosen_row: int | None = None  # position in frame of the pair's part


@dataclass
class LinkResult:
    """The chosen pair and the circuit's resistors and figures (None where no pair is
    feasible), for the screens, the JSON and the report."""

    link: Link
    switch: LinkedRoleResult
    partner: LinkedRoleResult
    pairs_evaluated: int = 0
    chosen: bool = False
    figures: dict = field(default_factory=dict)
    resistors: list[dict] = field(default_factory=list)
    pair_only: list[dict] = field(default_factory=list)  # cheaper parts that fail only `pair`


def _kind_rows(catalog_df: pd.DataFrame, role: Role) -> PartData:
    mask = (catalog_df["kind"] == role.kind).to_numpy(dtype=bool)
    return PartData(catalog_df, rows=None if mask.all() else np.flatnonzero(mask))


def _costs(parts: PartData, role: Role, req: Requirements) -> dict:
    out: dict = {}
    _price(out, parts, role, req)
    return out


def own_checks_ok(model: PairModel) -> tuple[np.ndarray, np.ndarray]:
    """(partner_ok, switch_ok): the parts that can be feasible with some partner,
    by the checks of their own that no partner changes (models/README.md §10,
    the joint choice). Necessary, not sufficient: the pair still decides."""
    link, req = model.link, model.req
    P, S = model.partner, model.switch
    n_p, n_s = len(P), len(S)
    # the partner: every check but those its collector current, drive, base
    # network and the switch decide
    p_idx = np.arange(n_p)
    s_any = np.zeros(n_p, dtype=np.int64) if n_s else None
    if n_s == 0 or n_p == 0:
        return np.zeros(n_p, bool), np.zeros(n_s, bool)
    out = model.evaluate(p_idx, s_any)["partner"]
    partner_ok = np.ones(n_p, bool)
    for c in ("vceo_rating",) + (("off_current",) if link.partner.max_off_current_A is not None else ()):
        partner_ok &= np.asarray(out[f"check_{c}"]) == PASS
    ic_pts, hfe = P.points("hfe_min")
    partner_ok &= np.isfinite(hfe).any(axis=1)
    if link.drives_gate:
        _, vce = P.points("vce_sat_mV")
        partner_ok &= np.isfinite(vce).any(axis=1)
    # the switch: with the best gate drive any partner could leave, the least
    # leaky partner, the smallest and largest pull-ups
    s_idx = np.arange(n_s)
    if link.drives_gate and partner_ok.any():
        _, vce = P.points("vce_sat_mV")
        best_vce = np.nanmin(np.where(partner_ok[:, None], vce, np.nan)) / 1000.0
        best_leak = np.nanmin(np.where(partner_ok, model.partner_off_A, np.nan))
    else:
        best_vce, best_leak = np.nan, np.nan
    sw_cols = model.evaluate(np.zeros(n_s, dtype=np.int64), s_idx)["switch"]  # for the ratings
    switch_ok = np.ones(n_s, bool)
    for c in ("vds_rating", "vgs_rating", "id_rating"):
        switch_ok &= np.asarray(sw_cols[f"check_{c}"]) == PASS
    if not link.drives_gate:
        return partner_ok, all_pass(sw_cols, model.switch_checks, n_s)
    from picker.engine.pass_switch import pass_switch_columns
    from picker.models import eseries, gate

    if not np.isfinite(best_vce):
        return partner_ok, np.zeros(n_s, bool)
    on = pass_switch_columns(S, link.switch, req, on_state_only=True, catalogue=False,
                             vgs_V=np.full(n_s, req.supply.min_V - best_vce))
    for c in ("gate_drive", "ohmic", "drop", "tj"):
        if f"check_{c}" in on:
            switch_ok &= np.asarray(on[f"check_{c}"]) == PASS
    if link.switch.max_off_current_A is not None:
        switch_ok &= ~(model.idss_hot_A > link.switch.max_off_current_A)  # opened leakage only grows
    series, pullup = model.series, link.switch.gate_pullup_ohm
    tol = series.tol(pullup)
    r_low = eseries.LOWEST_OHM if pullup == AUTO else float(pullup)
    r_high = series.max_ohm if pullup == AUTO else float(pullup)
    with np.errstate(invalid="ignore"):
        switch_ok &= gate.held_off_margin(gate.gate_leak(best_leak, r_low * (1 + tol)),
                                          model.vt_min_hot_V) >= 0
        if link.switch.max_turn_off_s is not None:
            switch_ok &= gate.turn_off_bound(r_low * (1 + tol), model.qg_C,
                                             model.vt_min_hot_V) <= link.switch.max_turn_off_s
        if link.switch.max_drive_current_A is not None:
            switch_ok &= req.supply.max_V / (r_high * (1 - tol)) <= link.switch.max_drive_current_A
    return partner_ok, switch_ok


def _reference(costs: dict, ok: np.ndarray) -> int:
    """The part a role's partner is shown with when no pair is feasible: the
    cheapest priced part that passes its own checks (else the cheapest priced,
    else the first)."""
    cost = np.asarray(costs["cost"], dtype=float)
    for mask in (ok & np.isfinite(cost), np.isfinite(cost)):
        if mask.any():
            rows = np.flatnonzero(mask)
            return int(rows[np.argmin(cost[rows])])
    return 0


def evaluate_link(catalog_df: pd.DataFrame, link: Link, req: Requirements, *,
                  fixed_switch: int | None = None) -> LinkResult:
    """The joint choice of `link` (or, with `fixed_switch`, the partner's choice with
    that switch part) and both role tables."""
    P, S = _kind_rows(catalog_df, link.partner), _kind_rows(catalog_df, link.switch)
    model = PairModel(link, req, P, S)
    p_cost, s_cost = _costs(P, link.partner, req), _costs(S, link.switch, req)
    partner_ok, switch_ok = own_checks_ok(model)
    evaluated = 0
    choice = None
    if fixed_switch is None and len(P) and len(S):
        def judge(p, s):
            out = model.evaluate(p, s)
            return PairVerdict(out["feasible"], out["switch"]["drop_V"], out["partner"]["vce_sat_V"])
        choice = cheapest_pair(p_cost["cost"], s_cost["cost"], judge,
                               driver_preferred=P.identity()["preferred"],
                               switch_preferred=S.identity()["preferred"],
                               driver_ok=partner_ok, switch_ok=switch_ok)
    if choice is not None:
        p_ref, s_ref, evaluated = choice.driver, choice.switch, choice.evaluated
    else:
        p_ref = _reference(p_cost, partner_ok)
        s_ref = fixed_switch if fixed_switch is not None else _reference(s_cost, switch_ok)
    sw_table = _table(model, "switch", np.full(len(S), p_ref), np.arange(len(S)), s_cost,
                      chosen=s_ref if choice is not None else None, catalog_df=catalog_df)
    pr_table = _table(model, "partner", np.arange(len(P)), np.full(len(P), s_ref), p_cost,
                      chosen=p_ref if choice is not None else None, catalog_df=catalog_df)
    if fixed_switch is not None:  # the partner's own choice, with that switch
        pr_table.chosen_row = None
    sw_table.partner_part = str(pr_table.frame["part"].iloc[p_ref]) if len(P) else None
    pr_table.partner_part = str(sw_table.frame["part"].iloc[s_ref]) if len(S) else None
    result = LinkResult(link, sw_table, pr_table, evaluated, choice is not None)
    if choice is not None:
        _summarise(result, model)
    return result


def _table(model: PairModel, side: str, p: np.ndarray, s: np.ndarray, costs: dict, *,
           chosen: int | None, catalog_df) -> LinkedRoleResult:
    link = model.link
    role = link.switch if side == "switch" else link.partner
    other_side = "partner" if side == "switch" else "switch"
    parts = model.switch if side == "switch" else model.partner
    out = model.evaluate(p, s, full=True)
    cols = dict(out[side])
    checks = (model.switch_checks if side == "switch" else model.partner_checks) + ("pair",)
    other_checks = model.partner_checks if side == "switch" else model.switch_checks
    other_ok = out[f"{other_side}_ok"]
    cols["check_pair"] = np.where(other_ok, np.int8(PASS), np.int8(FAIL))
    fails = np.zeros(len(p), dtype=np.int64)
    unknown = np.zeros(len(p), dtype=np.int64)
    for bit, c in enumerate(other_checks):
        code = np.asarray(out[other_side][f"check_{c}"])
        fails |= (code == FAIL).astype(np.int64) << bit
        unknown |= (code == -1).astype(np.int64) << bit
    cols["other_fails"] = fails
    cols["other_unknown"] = unknown
    for name in OTHER[other_side]:
        if name in out[other_side]:
            cols[f"other_{name}"] = np.broadcast_to(out[other_side][name], (len(p),))
    cols.update(costs)
    n = len(p)
    feasible = np.ones(n, bool)
    n_fail = np.zeros(n, np.int8)
    n_unknown = np.zeros(n, np.int8)
    for c in checks:
        code = np.asarray(cols[f"check_{c}"])
        feasible &= code == PASS
        n_fail += code == FAIL
        n_unknown += code == -1
    cols.update(feasible=feasible, n_fail=n_fail, n_unknown=n_unknown)
    frame = pd.DataFrame(cols, index=parts.index)
    order = rank(frame, role)
    if chosen is not None:  # the pair's part first (ties of §10 and §8 may differ)
        order = np.concatenate(([chosen], order[order != chosen]))
        frame["rank"] = np.argsort(order) + 1
    figures = (PASS_SWITCH_FIGURES + SWITCH_LINK_FIGURES if side == "switch"
               else SWITCH_FIGURES + PARTNER_LINK_FIGURES[:2] + (PARTNER_LINK_FIGURES[2:] if link.fed else ()))
    return LinkedRoleResult(role, frame, order, checks, figures, catalog_df, link=link, side=side,
                            other_checks=other_checks, chosen_row=chosen)


def _summarise(result: LinkResult, model: PairModel) -> None:
    """The chosen pair's circuit: resistor values, figures, and the cheaper parts
    that fail only as a pair."""
    link, series = result.link, model.series
    sw = result.switch.frame.iloc[result.switch.chosen_row]
    pr = result.partner.frame.iloc[result.partner.chosen_row]
    resistors = []

    def add(what: str, value, key: str, given) -> None:
        if value is None or not np.isfinite(value):
            return
        resistors.append({"what": what, "ohm": float(value), "series": series.name if given == AUTO else None,
                          "tolerance": series.tol(given), "auto": given == AUTO, "key": key})
    if link.drives_gate:
        add("gate pull-up", sw["gate_pullup_ohm"], "gate_pullup", link.switch.gate_pullup_ohm)
    add("base resistor", pr["base_resistor_ohm"], "base_resistor", link.partner.base_resistor_ohm)
    if link.partner.base_pulldown_ohm is not None:
        add("base pull-down", pr["base_pulldown_ohm"], "base_pulldown", link.partner.base_pulldown_ohm)
    result.resistors = resistors
    figures = {"cost": float(sw["cost"] + pr["cost"]), "vgs_V": float(sw["vgs_V"]),
               "drop_V": float(sw["drop_V"]), "collector_current_A": float(pr["collector_current_A"]),
               "vce_sat_V": float(pr["vce_sat_V"]), "ib_A": float(pr["ib_A"])}
    if link.drives_gate:
        figures.update(gate_leak_V=float(sw["gate_leak_V"]), held_off_margin_V=float(sw["held_off_margin_V"]),
                       t_off_s=float(sw["t_off_s"]), drive_current_A=float(sw["pullup_current_A"]))
    if link.fed:
        figures["latch_base_V"] = float(pr["latch_base_V"])
    result.figures = figures
    pair_only = []
    for table, label in ((result.switch, "switch"), (result.partner, "partner")):
        f = table.frame
        chosen_cost = float(f["cost"].iloc[table.chosen_row])
        mask = ((f["check_pair"] == FAIL) & (f["n_fail"] == 1) & (f["n_unknown"] == 0)
                & (f["cost"] < chosen_cost)).to_numpy()
        for pos in np.flatnonzero(mask)[np.argsort(f["cost"].to_numpy()[mask], kind="stable")]:
            pair_only.append({"side": label, "role": table.role.name, "row": int(pos),
                              "part": str(f["part"].iloc[pos]), "cost": float(f["cost"].iloc[pos])})
    result.pair_only = pair_only


# The last few designs' linked tables by their requirements, so that a role's
# parts can be tried at another supply with the circuit as chosen (`trial`).
_CONTEXT: dict = {}
_CONTEXT_SIZE = 8


def trial(parts: PartData, role: Role, req: Requirements, trial_req: Requirements, *,
          on_state_only: bool = True) -> dict | None:
    """A linked role's columns for `parts` (rows of the catalogue its design was
    evaluated over) under `trial_req` (another supply or ambient), each part with
    the other role's choice and with the resistors chosen for it at `req`: the
    circuit as built, tried at another cell voltage (engine.headroom). None when
    the design has not been evaluated (engine.evaluate)."""
    context = _CONTEXT.get(req)
    if context is None:
        return None
    catalog_df, tables = context
    table = tables.get(role.name)
    if table is None:
        return None
    link = table.link
    # by part number (unique in a catalogue): callers may hand over rows re-indexed
    names = pd.Index(table.frame["part"].astype(str))
    pos = names.get_indexer(pd.Index(np.asarray(parts.identity()["part"], dtype=str)))
    if (pos < 0).any():
        return None
    other = tables[(link.partner if table.side == "switch" else link.switch).name]
    other_ref = other.chosen_row if other.chosen_row is not None else int(
        np.flatnonzero(other.frame["part"].to_numpy() == table.partner_part)[0])
    P, S = _kind_rows(catalog_df, link.partner), _kind_rows(catalog_df, link.switch)
    n = len(pos)
    p, s = ((np.full(n, other_ref), pos) if table.side == "switch" else (pos, np.full(n, other_ref)))
    # one model row per trial row: the trial's ambient may differ row by row
    model = PairModel(link, trial_req, P.take(p), S.take(s))
    def column(frame, name, rows):
        return frame[name].to_numpy(dtype=float)[rows] if name in frame else np.full(n, np.nan)
    # each row's own resistors, and the other role's as they were chosen with that row
    if table.side == "switch":
        fixed = {"gate_pullup_ohm": column(table.frame, "gate_pullup_ohm", pos),
                 "base_resistor_ohm": column(table.frame, "other_base_resistor_ohm", pos),
                 "base_pulldown_ohm": column(table.frame, "other_base_pulldown_ohm", pos)}
    else:
        fixed = {"gate_pullup_ohm": column(table.frame, "other_gate_pullup_ohm", pos),
                 "base_resistor_ohm": column(table.frame, "base_resistor_ohm", pos),
                 "base_pulldown_ohm": column(table.frame, "base_pulldown_ohm", pos)}
    out = model.evaluate(np.arange(n), np.arange(n), full=True, fixed=fixed)
    return out[table.side]


def evaluate_links(catalog_df: pd.DataFrame, req: Requirements) -> tuple[dict, list[LinkResult]]:
    """Every link of the requirements: {role name: its LinkedRoleResult} and the
    LinkResults in file order. A switch in a second link (a further role fed from
    its output) keeps its first link's choice, and that role is chosen with it."""
    from picker.engine.links import links_of

    tables: dict = {}
    results: list[LinkResult] = []
    _CONTEXT[req] = (catalog_df, tables)
    while len(_CONTEXT) > _CONTEXT_SIZE:
        _CONTEXT.pop(next(iter(_CONTEXT)))
    for link in links_of(req):
        earlier = tables.get(link.switch.name)
        fixed = None if earlier is None else earlier.chosen_row
        if earlier is not None and fixed is None:
            fixed = int(earlier.order[0]) if len(earlier.order) else None
        result = evaluate_link(catalog_df, link, req, fixed_switch=fixed)
        tables.setdefault(link.switch.name, result.switch)
        tables[link.partner.name] = result.partner
        results.append(result)
    return tables, results


def links_json(design) -> list[dict]:
    """The links as data: the pair, its resistors and figures, the parts that fail
    only as a pair."""
    out = []
    for lr in design.links:
        link = lr.link
        item = {"switch": link.switch.name, "partner": link.partner.name,
                "drives_gate": link.drives_gate, "base_from_switch": link.fed,
                "pair": None, "resistors": [], "figures": {}, "pair_only": [],
                "pairs_evaluated": lr.pairs_evaluated}
        if lr.chosen:
            item["pair"] = {"switch": str(lr.switch.frame["part"].iloc[lr.switch.chosen_row]),
                            "partner": str(lr.partner.frame["part"].iloc[lr.partner.chosen_row])}
            item["resistors"] = [{"what": r["what"], "key": r["key"], "ohm": r["ohm"],
                                  "code": resistor_code(r["ohm"]), "series": r["series"],
                                  "tolerance": r["tolerance"], "chosen": r["auto"]} for r in lr.resistors]
            item["figures"] = dict(lr.figures)
            item["pair_only"] = [{"role": p["role"], "part": p["part"], "cost": p["cost"]}
                                 for p in lr.pair_only]
        out.append(item)
    return out
