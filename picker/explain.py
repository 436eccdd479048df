"""Words for the engine's numbers: why a part fails, and the `choose` report.

Only the rows that are shown are explained, so this runs over a handful of
candidates, not the catalogue.
"""

from __future__ import annotations

import math

import pandas as pd

from picker.engine import FAIL, PASS, DesignResult, RoleResult, notes
from picker.quantities import format_quantity as q
from picker.render import Column, Report, Section

# Lithium-ion self-discharge is a few percent a month (from memory, models.md §9).
SELF_DISCHARGE_PCT_PER_MONTH = (2.0, 3.0)

CAUTIONS = [
    "Cautions: a MOSFET's body diode conducts whenever the output is driven above the input "
    "(a charger, a second supply, a motor winding down): a pass switch does not block reverse "
    "current on its own.",
    "Lithium-ion cells can overheat, vent or burn when shorted, over-discharged or charged "
    "outside their limits: keep the cell's own protection circuit; a transistor near its Tj "
    "limit is hot enough to burn a finger.",
    "These figures come from catalogue data and simple models; verify the chosen parts on the "
    "bench at the temperature corners, and follow local codes and licensed engineering "
    "practice for anything safety-related.",
]


def _v(x: float, unit: str, digits: int = 3) -> str:
    return q(float(x), unit, digits) if x is not None and math.isfinite(float(x)) else "?"


def reasons(row: pd.Series, result: RoleResult, req) -> list[str]:
    """Why this candidate is not feasible: each failed check with by how much,
    then each check that could not be decided and what data it lacks."""
    role = result.role
    out: list[str] = []
    for check in result.checks:
        code = int(row[f"check_{check}"])
        if code == PASS:
            continue
        text = (_fail_text if code == FAIL else _unknown_text)(check, row, role, req)
        out.append(text)
    return out


def _fail_text(check: str, row: pd.Series, role, req) -> str:
    dv, di = req.margins.derate_v, req.margins.derate_i
    if check == "gate_drive":
        need = row["vt_cold_V"] + 0.1
        return (f"gate drive {_v(row['vgs_V'], 'V')} < {_v(need, 'V')} needed at the cold corner "
                f"(Vth max {_v(row['vt_cold_V'], 'V')} at {req.ambient.min_C:g} °C + 0.1 V)")
    if check == "drop":
        return (f"drop {_v(row['drop_V'], 'V')} > {_v(role.max_drop_V, 'V')} "
                f"at the {row['corner']} corner")
    if check == "tj":
        if not row["settled"]:
            return "thermal runaway: the junction temperature does not settle"
        return f"Tj {row['tj_C']:.0f} °C > {row['tj_limit_C']:.0f} °C limit"
    if check == "off_current":
        return (f"off current {_v(row['off_current_A'], 'A')} > "
                f"{_v(role.max_off_current_A, 'A')} at {req.ambient.max_C:g} °C")
    if check == "vds_rating":
        return _derated("Vds", row["vds_max_V"], dv, "V", f"{req.supply.max_V:g} V supply")
    if check == "vgs_rating":
        return _derated("Vgs", row["vgs_max_V"], dv, "V", f"{row['gate_swing_V']:g} V gate swing")
    if check == "id_rating":
        return _derated("Id", row["id_max_A"], di, "A", f"{_v(role.load_A, 'A')} load")
    if check == "saturation":
        return (f"Ib·hFE = {_v(row['ib_A'], 'A')} × {row['hfe']:.0f} = "
                f"{_v(row['ib_A'] * row['hfe'], 'A')} < {role.overdrive:g} × "
                f"{_v(role.collector_current_A, 'A')} at the cold corner")
    if check == "vce_sat":
        return f"Vce(sat) {_v(row['vce_sat_V'], 'V')} > {_v(role.max_vce_sat_V, 'V')}"
    if check == "vceo_rating":
        return _derated("Vceo", row["vceo_max_V"], dv, "V", f"{req.supply.max_V:g} V supply")
    if check == "ic_rating":
        return (f"Ic rating {_v(row['ic_max_A'], 'A')} × {di:g} < "
                f"{_v(role.collector_current_A, 'A')}")
    return f"{check} fails"


def _derated(name: str, rating: float, factor: float, unit: str, limit: str) -> str:
    """'Vds rating 20 V × 0.8 = 16 V < 24 V supply'."""
    return f"{name} rating {rating:g} {unit} × {factor:g} = {rating * factor:.3g} {unit} < {limit}"


_NEEDS = {
    "gate_drive": "vgs_th_max_V",
    "drop": "on-resistance points and vgs_th_max_V",
    "tj": "rth_ja_C/W, and tj_max_C or the role's max_tj",
    "off_current": "idss_uA / icbo_nA",
    "vds_rating": "vds_max_V", "vgs_rating": "vgs_max_V", "id_rating": "id_max_A",
    "saturation": "hfe_min points",
    "vce_sat": "vce_sat_mV points",
    "vceo_rating": "vceo_max_V", "ic_rating": "ic_max_A",
}


def _unknown_text(check: str, row: pd.Series, role, req) -> str:
    if check in ("drop", "tj") and int(row.get("check_gate_drive", PASS)) == FAIL:
        return f"{check} not evaluated: the gate is not driven on"
    if check == "vce_sat" and row.get("not_guaranteed", False):
        return (f"Vce(sat) not guaranteed: forced gain {row['forced_gain']:.0f} > 10, "
                "the datasheet condition")
    return f"{check} unknown: no {_NEEDS.get(check, 'data')}"


# -- the choose report ---------------------------------------------------------

def _role_heading(r: RoleResult, req) -> str:
    role = r.role
    refs = ", ".join(role.refs)
    quantity = req.volume * role.parts_per_board
    if role.is_pass_switch:
        drive = "supply" if role.gate_drive_V is None else _v(role.gate_drive_V, "V")
        what = (f"{_v(role.load_A, 'A')} load, drop ≤ {_v(role.max_drop_V, 'V')}, "
                f"gate drive {drive} − {_v(role.gate_drive_drop_V, 'V')}")
    else:
        drive = "supply" if role.base_drive_V is None else _v(role.base_drive_V, "V")
        what = (f"Ic {_v(role.collector_current_A, 'A')}, base {drive} through "
                f"{_v(role.base_resistor_ohm, 'ohm')}, overdrive {role.overdrive:g}")
    return (f"{role.name} ({role.use}, {refs}): {what}; "
            f"{quantity:,} parts for {req.volume:,} boards")


def _pass_columns() -> list[Column]:
    return [
        Column("rank", "#", numeric=True), Column("part"), Column("maker"), Column("package"),
        Column("unit_price", "unit price", numeric=True, digits=3),
        Column("cost", "cost/board", numeric=True, digits=3),
        Column("drop_V", "drop", unit="V"), Column("corner"),
        Column("drop_margin_V", "drop margin", unit="V"),
        Column("rds_on_ohm", "Rds(on)", unit="ohm"), Column("loss_W", "loss", unit="W"),
        Column("tj_C", "Tj °C", numeric=True, digits=3),
        Column("tj_margin_C", "Tj margin", numeric=True, digits=3),
        Column("off_current_A", "off current", unit="A"),
        Column("gate_margin_V", "gate margin", unit="V"),
        Column("lowest_supply", "lowest supply"),
        Column("notes"),
    ]


def _switch_columns() -> list[Column]:
    return [
        Column("rank", "#", numeric=True), Column("part"), Column("maker"), Column("package"),
        Column("unit_price", "unit price", numeric=True, digits=3),
        Column("cost", "cost/board", numeric=True, digits=3),
        Column("ib_A", "Ib cold", unit="A"), Column("hfe", "hFE cold", numeric=True, digits=3),
        Column("overdrive", "overdrive", numeric=True, digits=3),
        Column("lowest_supply", "lowest supply"),
        Column("vce_sat_V", "Vce(sat)", unit="V"), Column("off_current_A", "off current", unit="A"),
        Column("notes"),
    ]


def _lowest_supply(table: pd.DataFrame, r: RoleResult, req) -> pd.DataFrame | None:
    """headroom.lowest_supply for the rows shown (None without the catalogue rows)."""
    if r.catalog_df is None or table.empty:
        return None
    from picker import headroom

    return headroom.lowest_supply(r.catalog_df.loc[table.index], r.role, req)


def _lowest_cell(low: dict | None) -> str | None:
    """'2.911 V hot': the lowest working supply and the corner that sets it
    (`low`: one row of `headroom.lowest_supply`, as a dict)."""
    if low is None:
        return None
    from picker import headroom

    text = headroom.short(low)
    found = low["lowest_supply_status"] == "found"
    return f"{text} {low['lowest_supply_corner']}" if found else text


def _display_rows(table: pd.DataFrame, r: RoleResult,
                  low: pd.DataFrame | None = None) -> list[dict]:
    role = r.role
    lows = {} if low is None else dict(zip(low.index, low.to_dict("records")))
    rows = []
    # Records, not iterrows: a dict per row costs far less than a Series.
    for index, d in zip(table.index, table.to_dict("records")):
        d["notes"] = notes(d)
        d["lowest_supply"] = _lowest_cell(lows.get(index))
        if role.is_pass_switch:
            d["drop_margin_V"] = role.max_drop_V - d["drop_V"]
            d["tj_margin_C"] = d["tj_limit_C"] - d["tj_C"]
        rows.append(d)
    return rows


def choose_report(design: DesignResult, *, top: int = 5, show_all: bool = False) -> Report:
    """The table output of `picker choose`: per role the feasible parts ranked,
    the cheapest rejected parts with their reasons, the design summary and
    the cautions."""
    req = design.requirements
    sections: list[Section] = []
    for r in design.roles:
        feasible = r.feasible if show_all else r.feasible.head(top)
        columns = _pass_columns() if r.role.is_pass_switch else _switch_columns()
        caption = []
        if r.feasible.empty:
            caption.append(f"no feasible part among {len(r.table)} {r.role.kind} parts")
        elif len(r.feasible) > len(feasible):
            caption.append(f"{len(r.feasible) - len(feasible)} more feasible parts "
                           "(--top N or --all to see them)")
        rejected = r.cheapest_rejected(None if show_all else top)
        low = _lowest_supply(pd.concat([feasible, rejected]), r, req)  # one search for both
        sections.append(Section(_role_heading(r, req), columns, _display_rows(feasible, r, low),
                                caption=caption))
        rows = [{"part": row["part"], "package": row["package"], "cost": row["cost"],
                 "why": "; ".join(reasons(row, r, req) + _lowest_reason(low, index, r, req))}
                for index, row in rejected.iterrows()]
        if rows:
            sections.append(Section(
                f"  rejected {r.role.name}, cheapest first ({r.n_rejected} in all)",
                [Column("part"), Column("package"), Column("cost", "cost/board", numeric=True),
                 Column("why")], rows))
    return Report(sections, notes=summary_lines(design) + [""] + CAUTIONS)


def _lowest_reason(low: pd.DataFrame | None, index, r: RoleResult, req) -> list[str]:
    """For a part rejected on drive or drop: the supply it would need, where
    one is found (e.g. 'would meet 60 mV from 3.42 V up, at 45 °C')."""
    if low is None:
        return []
    from picker import headroom

    row = low.loc[index]
    if row["lowest_supply_status"] != "found" or row["lowest_supply_V"] <= req.supply.min_V:
        return []
    t_C = headroom.corner_temperature(req, row["lowest_supply_corner"])
    what = (f"would meet {_v(r.role.max_drop_V, 'V')}" if r.role.is_pass_switch
            else "would saturate")
    return [f"{what} from {headroom.format_V(row['lowest_supply_V'])} up, at {t_C:g} °C"]


def summary_lines(design: DesignResult) -> list[str]:
    req = design.requirements
    lines = ["Design summary:"]
    for r in design.roles:
        c = r.choice
        if c is None:
            lines.append(f"  {r.role.name}: no feasible part with a price")
        else:
            lines.append(f"  {r.role.name} ({', '.join(r.role.refs)}): {c['part']} "
                         f"({c['maker']}, {c['package']}), {c['cost']:.4g} per board")
    lines.append(f"  cost per board: {design.cost_per_board:.4g}"
                 + (f" (without {', '.join(design.missing)})" if design.missing else ""))
    lines.append(f"  off-state current: {_v(design.off_current_A, 'A')} at "
                 f"{req.ambient.max_C:g} °C")
    if design.drain_per_year_pct is not None:
        lo, hi = SELF_DISCHARGE_PCT_PER_MONTH
        lines.append(f"  drain: {design.drain_per_year_pct:.3g} % of the "
                     f"{req.supply.capacity_Ah:g} Ah cell a year, beside its own self-discharge "
                     f"of about {lo:g}-{hi:g} % a month (from memory)")
    return lines


def choose_csv(design: DesignResult, limit: int | None = None) -> tuple[list[Column], list[dict]]:
    """One row per candidate with its role, for scripts."""
    from picker.engine import OUTCOME, PASS_SWITCH_CHECKS, PASS_SWITCH_FIGURES, SWITCH_CHECKS, SWITCH_FIGURES

    figures = list(dict.fromkeys(PASS_SWITCH_FIGURES + SWITCH_FIGURES))
    checks = list(dict.fromkeys(PASS_SWITCH_CHECKS + SWITCH_CHECKS))
    columns = ([Column("role"), Column("use"), Column("rank", numeric=True), Column("part"),
                Column("maker"), Column("package"), Column("feasible"),
                Column("unit_price", numeric=True), Column("cost", numeric=True)]
               + [Column(f, numeric=f != "corner") for f in figures]
               + [Column(c) for c in checks] + [Column("notes"), Column("why")])
    rows = []
    for r in design.roles:
        table = r.table if limit is None else r.table.head(limit)
        for _, row in table.iterrows():
            d = {k: row.get(k) for k in ("rank", "part", "maker", "package", "feasible",
                                          "unit_price", "cost")}
            d.update(role=r.role.name, use=r.role.use)
            d.update({f: row.get(f) for f in r.figures})
            d.update({c: OUTCOME[int(row[f"check_{c}"])] for c in r.checks})
            d["notes"] = notes(row)
            d["why"] = "; ".join(reasons(row, r, design.requirements))
            rows.append(d)
    return columns, rows
