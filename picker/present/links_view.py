"""Linked roles on the screen (models/README.md §10): the pair shown as one
circuit, its resistors as a designer writes them, its margins, and the cheaper
parts that fail only as a pair; the headings and extra columns of the two role
tables; the links in the JSON."""

from __future__ import annotations

import math

from picker.catalog.quantities import format_quantity, resistor_code
from picker.present.render import Column, Section


def _v(x, unit: str, digits: int = 3) -> str:
    try:
        x = float(x)
    except (TypeError, ValueError):
        return "?"
    return format_quantity(x, unit, digits) if math.isfinite(x) else "?"


def refs(role) -> str:
    return ", ".join(role.refs)


def resistor_text(r: dict) -> str:
    """'470k (E24, 5 %, chosen)' or '1M (as given, 5 %)'."""
    tol = f"{r['tolerance'] * 100:.3g} %" if r["tolerance"] else "exact"
    how = f"{r['series']}, {tol}, chosen" if r["auto"] else f"as given, {tol}"
    return f"{resistor_code(r['ohm'])} ({how})"


def heading(r, req) -> str | None:
    """The heading of a linked role's table, or None for a role of its own."""
    link = getattr(r, "link", None)
    if link is None:
        return None
    role = r.role
    quantity = req.volume * role.parts_per_board
    other = link.partner if r.side == "switch" else link.switch
    if r.side == "switch":
        gate = (f"gate pulled by {other.name} ({refs(other)}) against a "
                f"{'chosen' if role.gate_pullup_ohm == 'auto' else resistor_code(role.gate_pullup_ohm)} pull-up"
                if link.drives_gate else "gate drive as given")
        what = f"{_v(role.load_A, 'A')} load, drop ≤ {_v(role.max_drop_V, 'V')}, {gate}"
    else:
        ic = ("Ic what the gate pull-up draws" if link.drives_gate
              else f"Ic {_v(role.collector_current_A, 'A')}")
        base = f"base fed from {other.name}'s output" if link.fed else "base drive as given"
        what = f"{ic}, {base}, overdrive {role.overdrive:g}"
    with_part = f"; shown with {other.name} = {r.partner_part}" if r.partner_part else ""
    return (f"{role.name} ({role.use}, {refs(role)}): {what}{with_part}; "
            f"{quantity:,} parts for {req.volume:,} boards")


def extra_columns(r) -> list[Column]:
    """The link's figures beside a linked role's usual columns."""
    link = getattr(r, "link", None)
    if link is None:
        return []
    if r.side == "switch":
        cols = [Column("vgs_V", "gate drive", unit="V")]
        if link.drives_gate:
            cols += [Column("gate_pullup_code", "pull-up"), Column("held_off_margin_V", "held-off margin", unit="V"),
                     Column("t_off_s", "turn-off ≤", unit="s")]
        return cols
    cols = [Column("collector_current_A", "Ic", unit="A"), Column("base_resistor_code", "Rb")]
    if link.partner.base_pulldown_ohm is not None:
        cols.append(Column("base_pulldown_code", "Rpd"))
    if link.fed:
        cols.append(Column("latch_base_V", "base while off", unit="V"))
    return cols


def add_codes(row: dict) -> None:
    """The resistor values of a displayed row, written as a designer writes them."""
    for name in ("gate_pullup", "base_resistor", "base_pulldown"):
        value = row.get(f"{name}_ohm")
        if value is not None:
            try:
                ok = math.isfinite(float(value))
            except (TypeError, ValueError):
                ok = False
            row[f"{name}_code"] = resistor_code(float(value)) if ok else None


def circuit_sections(design, reasons) -> list[Section]:
    """One section per link: the pair and its circuit, then the cheaper parts that
    fail only as a pair (with the reason). `reasons(row, result, req)` gives a
    row's reasons (engine.reasons.reasons)."""
    req = design.requirements
    out = []
    for lr in design.links:
        link = lr.link
        sw, pr = link.switch, link.partner
        kind = ("soft-latch switch" if link.drives_gate and link.fed
                else "switch and gate driver" if link.drives_gate else "switch and a base it feeds")
        title = (f"{sw.name} ({refs(sw)}) and {pr.name} ({refs(pr)}) as one circuit: {kind}"
                 + (f" ({lr.pairs_evaluated:,} pairs judged)" if lr.chosen else ""))
        rows = []
        if not lr.chosen:
            rows.append({"item": "pair", "value": "no feasible pair: each role below is shown with "
                         "the other's cheapest part that passes its own checks"})
            out.append(Section(title, [Column("item"), Column("value")], rows))
            continue
        s_row = lr.switch.frame.iloc[lr.switch.chosen_row]
        p_row = lr.partner.frame.iloc[lr.partner.chosen_row]
        f = lr.figures
        rows.append({"item": f"{refs(sw)} {sw.name}", "value": f"{s_row['part']} ({s_row['maker']}, "
                     f"{s_row['package']}), {s_row['cost']:.4g} per board"})
        rows.append({"item": f"{refs(pr)} {pr.name}", "value": f"{p_row['part']} ({p_row['maker']}, "
                     f"{p_row['package']}), {p_row['cost']:.4g} per board"})
        rows.append({"item": "pair cost", "value": f"{f['cost']:.4g} per board"})
        for r in lr.resistors:
            rows.append({"item": r["what"], "value": resistor_text(r)})
        if link.drives_gate:
            rows.append({"item": "gate drive", "value":
                         f"{_v(f['vgs_V'], 'V')} from a {req.supply.min_V:g} V cell at "
                         f"{req.ambient.min_C:g} °C ({refs(pr)}'s Vce(sat) {_v(f['vce_sat_V'], 'V')} at "
                         f"Ic {_v(f['collector_current_A'], 'A')}); drop {_v(f['drop_V'], 'V')}"})
            rows.append({"item": "held off", "value":
                         f"{refs(pr)}'s leakage opens the gate {_v(f['gate_leak_V'], 'V')} at "
                         f"{req.ambient.max_C:g} °C; margin {_v(f['held_off_margin_V'], 'V')} below "
                         f"Vth min − 0.1 V"})
            limit = sw.max_turn_off_s
            t_off = (f"≤ {_v(f['t_off_s'], 's')} through the pull-up (gate-charge bound)"
                     if math.isfinite(f["t_off_s"]) else "not known: no qg_nC points for the switch")
            rows.append({"item": "turn-off", "value":
                         t_off + (f"; limit {_v(limit, 's')}" if limit is not None else "")})
            limit = sw.max_drive_current_A
            rows.append({"item": "drive current", "value":
                         f"{_v(f['drive_current_A'], 'A')} through the pull-up from a full cell"
                         + (f"; limit {_v(limit, 'A')}" if limit is not None else "")})
        if link.fed:
            rows.append({"item": "base while off", "value":
                         f"{_v(f['latch_base_V'], 'V')} at {req.ambient.max_C:g} °C with "
                         f"{refs(sw)}'s leakage (stays off at or below 0.15 V)"})
        out.append(Section(title, [Column("item"), Column("value")], rows))
        if lr.pair_only:
            near = []
            for item in lr.pair_only:
                table = lr.switch if item["side"] == "switch" else lr.partner
                row = table.frame.iloc[item["row"]]
                near.append({"role": item["role"], "part": item["part"], "cost": item["cost"],
                             "why": "; ".join(reasons(row, table, req))})
            out.append(Section(f"  cheaper parts that fail only as a pair ({len(near)})",
                               [Column("role"), Column("part"), Column("cost", "cost/board", numeric=True),
                                Column("why")], near))
    return out


def latch_chart(catalog_df, design, link_result, points: int = 81):
    """The linked pair's margins across the cell's range (models/README.md §10): the
    chosen pair, as built (resistors fixed), at each supply from below the empty
    cell to above the full one, each margin as a share of its limit (positive:
    the check passes), the worse of the two corners: the switch's drop and gate
    drive, the driver's saturation and (for a gate driver) its forced gain, and
    the off-state margins, which the cell's voltage does not move."""
    import numpy as np

    from picker.engine import headroom
    from picker.present import plot

    req = design.requirements
    lr = link_result
    link = lr.link
    sw_row = lr.switch.frame.iloc[lr.switch.chosen_row]
    pr_row = lr.partner.frame.iloc[lr.partner.chosen_row]
    grid = plot.supply_grid(req, None, points)
    sw_parts = catalog_df.loc[[sw_row.name]]
    pr_parts = catalog_df.loc[[pr_row.name]]
    lines: dict[str, np.ndarray] = {}

    def worst(name, values):
        lines[name] = np.fmin(lines.get(name, np.inf), values)
    for corner in headroom.CORNERS:
        t_C = headroom.corner_temperature(req, corner)
        sw = headroom.at_supply(sw_parts.iloc[np.zeros(len(grid), int)].reset_index(drop=True),
                                link.switch, req, grid, t_C)
        pr = headroom.at_supply(pr_parts.iloc[np.zeros(len(grid), int)].reset_index(drop=True),
                                link.partner, req, grid, t_C)
        with np.errstate(invalid="ignore", divide="ignore"):
            worst(f"{refs(link.switch)} drop", 1 - sw["drop_V"].to_numpy(float) / link.switch.max_drop_V)
            need = sw["vgs_V"].to_numpy(float) - sw["gate_margin_V"].to_numpy(float)
            worst(f"{refs(link.switch)} gate drive", sw["gate_margin_V"].to_numpy(float) / need)
            worst(f"{refs(link.partner)} saturation", pr["overdrive"].to_numpy(float) / link.partner.overdrive - 1)
            if link.drives_gate:
                worst(f"{refs(link.partner)} forced gain ≤ 10", 1 - pr["forced_gain"].to_numpy(float) / 10.0)
    if link.drives_gate:
        limit = float(sw_row["vt_min_hot_V"]) - 0.1
        lines[f"{refs(link.switch)} held off (flat)"] = np.full(len(grid), float(sw_row["held_off_margin_V"]) / limit)
    if link.fed:
        lines[f"{refs(link.partner)} base while off (flat)"] = np.full(len(grid), 1 - float(pr_row["latch_base_V"]) / 0.15)
    # shown between -100 % and +150 %: far past either, the line says no more
    series = [plot.Series(name, grid.copy(), np.clip(100.0 * np.where(np.isfinite(y), y, np.nan),
                                                     -100.0, 150.0), i, "fit", name)
              for i, (name, y) in enumerate(lines.items())]
    chart = plot.Chart("latch", f"{link.switch.name} and {link.partner.name}: "
                       f"{sw_row['part']} with {pr_row['part']}, margins against the cell's voltage",
                       "supply (V)", "margin (% of the limit)", series, hlines=[(0.0, "limit")],
                       vlines=[(req.supply.min_V, f"cell empty {req.supply.min_V:g} V"),
                               (req.supply.max_V, f"cell full {req.supply.max_V:g} V")])
    chart.notes.append("the resistors as chosen at the empty cell; each line the worse corner, "
                       "drawn from -100 % to +150 %; a gap: the figure is unknown there")
    return chart
