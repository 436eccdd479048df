"""Words for the engine's numbers: why a part fails, and the `choose` report.

Only the rows that are shown are explained, so this runs over a handful of
candidates, not the catalogue.
"""

from __future__ import annotations

import pandas as pd

from picker.engine.evaluate import NOTE_MEANINGS, DesignResult, RoleResult, notes
from picker.engine.reasons import _v, reasons
from picker.present import links_view
from picker.present.render import Column, Report, Section

# Lithium-ion self-discharge is a few percent a month (from memory, models/README.md §9).
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


# -- the choose report ---------------------------------------------------------

def _role_heading(r: RoleResult, req) -> str:
    linked = links_view.heading(r, req)
    if linked is not None:
        return linked
    role = r.role
    refs = ", ".join(role.refs)
    quantity = req.volume * role.parts_per_board
    if role.is_pass_switch:
        drive = "supply" if role.gate_drive_V is None else _v(role.gate_drive_V, "V")
        what = (f"{_v(role.load_A, 'A')} load, drop ≤ {_v(role.max_drop_V, 'V')}, "
                f"gate drive {drive} − {_v(role.gate_drive_drop_V, 'V')}")
    else:
        drive = "supply" if role.base_drive_V is None else _v(role.base_drive_V, "V")
        rb = ("a chosen base resistor" if role.base_resistor_ohm == "auto"  # models/README.md §10
              else _v(role.base_resistor_ohm, 'ohm'))
        what = (f"Ic {_v(role.collector_current_A, 'A')}, base {drive} through "
                f"{rb}, overdrive {role.overdrive:g}")
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
    from picker.engine import headroom

    return headroom.lowest_supply(r.catalog_df.loc[table.index], r.role, req)


def _lowest_cell(low: dict | None) -> str | None:
    """'2.911 V hot': the lowest working supply and the corner that sets it
    (`low`: one row of `headroom.lowest_supply`, as a dict)."""
    if low is None:
        return None
    from picker.engine import headroom

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
        links_view.add_codes(d)
        if role.is_pass_switch:
            d["drop_margin_V"] = role.max_drop_V - d["drop_V"]
            d["tj_margin_C"] = d["tj_limit_C"] - d["tj_C"]
        rows.append(d)
    return rows


def legend(shown_notes, texts=()) -> list[str]:
    """What the notes that appear mean, one line each (NOTE_MEANINGS), for
    the notes shown in a table and the words the shown reasons use; nothing
    when none appears."""
    seen = set(shown_notes)
    text = " ".join(texts)
    lines = [f"  {note}: {meaning}" for note, meaning in NOTE_MEANINGS.items()
             if note in seen or note in text]
    return ["What the notes mean:", *lines] if lines else []


def choose_report(design: DesignResult, *, top: int = 5, show_all: bool = False) -> Report:
    """The table output of `picker choose`: per role the feasible parts ranked,
    the cheapest rejected parts with their reasons, the design summary and
    the cautions."""
    req = design.requirements
    sections: list[Section] = links_view.circuit_sections(design, reasons)
    shown_notes: list[str] = []
    shown_why: list[str] = []
    for r in design.roles:
        feasible = r.feasible if show_all else r.feasible.head(top)
        columns = _pass_columns() if r.role.is_pass_switch else _switch_columns()
        extra = links_view.extra_columns(r)
        if extra:  # the link's figures before the notes
            columns = columns[:-1] + extra + columns[-1:]
        caption = []
        if r.feasible.empty:
            caption.append(f"no feasible part among {len(r.table)} {r.role.kind} parts")
        elif len(r.feasible) > len(feasible):
            caption.append(f"{len(r.feasible) - len(feasible)} more feasible parts "
                           "(--top N or --all to see them)")
        rejected = r.cheapest_rejected(None if show_all else top)
        low = _lowest_supply(pd.concat([feasible, rejected]), r, req)  # one search for both
        shown = _display_rows(feasible, r, low)
        shown_notes += [n for d in shown for n in d["notes"]]
        sections.append(Section(_role_heading(r, req), columns, shown, caption=caption))
        rows = [{"part": row["part"], "package": row["package"], "cost": row["cost"],
                 "why": "; ".join(reasons(row, r, req) + _lowest_reason(low, index, r, req))}
                for index, row in rejected.iterrows()]
        shown_why += [row["why"] for row in rows]
        if rows:
            sections.append(Section(
                f"  rejected {r.role.name}, cheapest first ({r.n_rejected} in all)",
                [Column("part"), Column("package"), Column("cost", "cost/board", numeric=True),
                 Column("why")], rows))
    key = legend(shown_notes, shown_why)
    return Report(sections, notes=key + [""] * bool(key) + summary_lines(design) + [""] + CAUTIONS)


def _lowest_reason(low: pd.DataFrame | None, index, r: RoleResult, req) -> list[str]:
    """For a part rejected on drive or drop: the supply it would need, where
    one is found (e.g. 'would meet 60 mV from 3.42 V up, at 45 °C')."""
    if low is None:
        return []
    from picker.engine import headroom

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
    if design.on_drive_current_A == design.on_drive_current_A and design.on_drive_current_A > 0:
        lines.append(f"  drive network while on: {_v(design.on_drive_current_A, 'A')} from a full "
                     f"cell (pull-ups and base resistors at their low end), beside the loads")
    if design.drain_per_year_pct is not None:
        lo, hi = SELF_DISCHARGE_PCT_PER_MONTH
        lines.append(f"  drain: {design.drain_per_year_pct:.3g} % of the "
                     f"{req.supply.capacity_Ah:g} Ah cell a year, beside its own self-discharge "
                     f"of about {lo:g}-{hi:g} % a month (from memory)")
    return lines


def choose_csv(design: DesignResult, limit: int | None = None) -> tuple[list[Column], list[dict]]:
    """One row per candidate with its role, for scripts."""
    from picker.engine.evaluate import OUTCOME, PASS_SWITCH_CHECKS, PASS_SWITCH_FIGURES, SWITCH_CHECKS, SWITCH_FIGURES

    figures = list(dict.fromkeys(PASS_SWITCH_FIGURES + SWITCH_FIGURES
                                 + tuple(f for r in design.roles for f in r.figures)))
    checks = list(dict.fromkeys(PASS_SWITCH_CHECKS + SWITCH_CHECKS
                                + tuple(c for r in design.roles for c in r.checks)))
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
