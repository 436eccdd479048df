"""The design review as one document, before it is written as HTML or Markdown.

`build` gathers what a colleague needs to check a choice without running
picker: the design's inputs and where each came from, the catalogue's
identity, the date and picker's version, per role the choice, the runners-up,
every check (with its margin where the output carries one), the near misses
and why they fail, the curves across the cell's range at both corners, the
design totals, the BOM review when there is one, and the cautions.

Every number comes from the engine's own output (the JSON document of
`picker choose`, the engine's rows, `headroom`, `plot`); this module only
selects and labels. `report_html` and `report_md` write the document.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from importlib import resources

from picker.engine import headroom
from picker.engine.evaluate import DesignResult, RoleResult
from picker.engine.reasons import _v, reasons
from picker.present import plot
from picker.present.explain import (CAUTIONS, SELF_DISCHARGE_PCT_PER_MONTH, _lowest_reason,
                                    _role_heading)
from picker.present.render import Column, Report, table_cell

CURVE_PARTS = 3  # parts drawn in a role's chart
MAX_WARNINGS = 50  # catalogue warnings listed (the rest counted)
LINK_CHECKS = ("held_off", "turn_off", "drive_current", "pair", "latch_off")  # §10
UNIT_OF_SUFFIX = {"_V": "V", "_A": "A", "_W": "W", "_ohm": "ohm", "_s": "s", "_F": "F"}
FIGURE_HEADERS = {"vgs_V": "Vgs", "rds_on_ohm": "Rds(on)", "drop_V": "drop", "loss_W": "loss",
                  "tj_C": "Tj °C", "off_current_A": "off current", "corner": "corner",
                  "ib_A": "Ib", "hfe": "hFE", "vce_sat_V": "Vce(sat)"}


@dataclass
class RoleBlock:
    name: str
    heading: str
    use: str
    refs: list[str]
    choice: str | None
    choice_row: dict | None
    finalists: list[dict]        # JSON candidates, best first (the choice first)
    columns: list[Column]        # for the finalists table
    checks: list[dict]           # {"check", <part>: "pass +1.2 mV", ...}, one per check
    near: list[dict]             # rejected, cheapest first: part, package, cost, why
    n_candidates: int
    n_feasible: int
    curve_svg: str | None
    curve_chart: plot.Chart | None
    lowest: list[str]            # "PART: sentence" for the parts drawn
    pair: dict | None = None     # linked roles (models/README.md §10), when the output has them


@dataclass
class ReportDoc:
    title: str
    made: str
    version: str
    method: str
    design_source: str
    inputs: list
    catalogue: dict
    summary: list[dict]
    totals: list[tuple[str, str]]
    roles: list[RoleBlock]
    review: Report | None = None
    review_source: str | None = None
    cautions: list[str] = field(default_factory=list)


def method_name() -> str:
    """'method v2': from the first heading of the method document picker ships."""
    try:
        first = resources.files("picker.models").joinpath("README.md").read_text("utf-8")
        title = first.split("\n", 1)[0]
        return title[title.index("(") + 1:title.index(")")] if "(" in title else title.lstrip("# ")
    except (OSError, ValueError):
        return "see picker/models/README.md"


def figure_column(name: str) -> Column:
    """A table column for a JSON figure, its unit read from the name's suffix."""
    header = FIGURE_HEADERS.get(name, name.replace("_", " "))
    for suffix, unit in UNIT_OF_SUFFIX.items():
        if name.endswith(suffix):
            return Column(name, header if name in FIGURE_HEADERS else name[: -len(suffix)]
                          .replace("_", " "), unit=unit)
    return Column(name, header, numeric=name != "corner", digits=3)


def margin_text(margin: dict | float | None) -> str:
    """'+1.24 mV' from a margin of the output ({"margin": 0.00124, "unit": "V"})."""
    if margin is None:
        return ""
    value, unit = (margin.get("margin"), margin.get("unit")) if isinstance(margin, dict) else (margin, None)
    if value is None:
        return ""
    text = table_cell(float(value), Column("m", unit=unit if unit not in (None, "", "1", "°C", "degC") else None))
    if unit in ("°C", "degC"):
        text += " °C"
    return ("+" if float(value) >= 0 else "") + text if not text.startswith("-") else text


def build(design: DesignResult, doc: dict, *, inputs: list, catalogue: dict, made: str,
          version: str, top: int = 5, review: Report | None = None,
          review_source: str | None = None) -> ReportDoc:
    """The review document of one evaluated design (`doc`: its JSON)."""
    req = design.requirements
    roles = [_role(r, d, req, top, i) for i, (r, d) in enumerate(zip(design.roles, doc["roles"]))]
    for block in roles:
        block.pair = pair_block(block, {b.name: b for b in roles}, design)
    summary = []
    for block in roles:
        c = block.choice_row
        summary.append({"role": block.name, "use": block.use, "refs": ", ".join(block.refs),
                        "choice": block.choice or "none feasible",
                        "maker": c["maker"] if c else None, "package": c["package"] if c else None,
                        "unit_price": c["unit_price"] if c else None, "cost": c["cost"] if c else None,
                        "feasible": f"{block.n_feasible} of {block.n_candidates}"})
    quick = req.source in ("", "command line")
    name = "quick question" if quick else req.source.replace("\\", "/").rsplit("/", 1)[-1]
    return ReportDoc(f"Design review: {name}", made, version, method_name(), req.source,
                     inputs, catalogue, summary, totals(design), roles, review, review_source,
                     list(CAUTIONS))


def totals(design: DesignResult) -> list[tuple[str, str]]:
    req = design.requirements
    out = [("boards a build", f"{req.volume:,}"),
           ("cost per board", f"{design.cost_per_board:.4g}"
            + (f" (without {', '.join(design.missing)})" if design.missing else "")),
           ("cost per build", f"{design.cost_per_board * req.volume:,.2f}"),
           ("off-state current", f"{_v(design.off_current_A, 'A')} at {req.ambient.max_C:g} °C")]
    if design.drain_per_year_pct is not None:
        lo, hi = SELF_DISCHARGE_PCT_PER_MONTH
        out.append(("drain on the cell", f"{design.drain_per_year_pct:.3g} % of "
                    f"{req.supply.capacity_Ah:g} Ah a year (the cell's own self-discharge is about "
                    f"{lo:g}-{hi:g} % a month, from memory)"))
    return out


def _role(r: RoleResult, d: dict, req, top: int, index: int) -> RoleBlock:
    candidates = d["candidates"]
    feasible = [c for c in candidates if c["feasible"]]
    finalists = feasible[:top]
    choice_row = next((c for c in candidates if c["part"] == d["choice"]), None)
    figures = list(candidates[0]["figures"]) if candidates else list(r.figures)
    columns = ([Column("rank", "#", numeric=True), Column("part"), Column("maker"),
                Column("package"), Column("unit_price", "unit price", numeric=True),
                Column("cost", "cost/board", numeric=True)]
               + [figure_column(f) for f in figures] + [Column("lowest", "lowest supply"),
                                                        Column("notes")])
    shown = finalists or candidates[:min(top, CURVE_PARTS)]
    rows_by_part = dict(zip(r.table["part"].astype(str), r.table.index))
    drawn_index = [rows_by_part[c["part"]] for c in shown[:CURVE_PARTS]]
    all_index = [rows_by_part[c["part"]] for c in shown]
    rejected = r.cheapest_rejected(top)
    searched = all_index + [i for i in rejected.index if i not in all_index]  # one search for both
    low = headroom.lowest_supply(r.catalog_df.loc[searched], r.role, req) if searched else None
    lows = {} if low is None else dict(zip(r.catalog_df.loc[searched, "part"].astype(str),
                                           low.to_dict("records")))
    table_rows = []
    for rank, c in enumerate(finalists, 1):
        row = {"rank": rank, **{k: v for k, v in c.items() if k not in ("figures", "checks", "margins")},
               **c["figures"]}
        row["lowest"] = headroom.short(lows[c["part"]]) if c["part"] in lows else None
        table_rows.append(row)
    checks = []
    for check in (list(candidates[0]["checks"]) if candidates else list(r.checks)):
        row = {"check": check}
        for c in shown:
            outcome = c["checks"].get(check, "")
            row[c["part"]] = (outcome + " " + margin_text(c.get("margins", {}).get(check))).strip()
        checks.append(row)
    near = []
    for index, row in rejected.iterrows():
        why = reasons(row, r, req) + _lowest_reason(low, index, r, req)
        near.append({"part": row["part"], "maker": row["maker"], "package": row["package"],
                     "cost": row["cost"], "why": "; ".join(why)})
    chart = svg_text = None
    lowest = []
    if drawn_index:
        parts = r.catalog_df.loc[drawn_index]
        drawn_low = low.loc[drawn_index] if low is not None else None
        chart = plot.supply_chart(parts, r.role, req, drawn_low)
        from picker.present.svg import chart_svg

        svg_text = chart_svg(chart, ident=f"role{index}")
        lowest = [f"{name}: {headroom.describe(lows[name], r.role, req)}"
                  for name in parts["part"].astype(str) if name in lows]
    return RoleBlock(r.role.name, _role_heading(r, req), r.role.use, list(r.role.refs), d["choice"],
                     choice_row, table_rows, columns, checks, near, len(candidates),
                     len(feasible), svg_text, chart, lowest)


def pair_block(block: RoleBlock, blocks: dict[str, RoleBlock], design: DesignResult) -> dict | None:
    """Two linked roles shown together (models/README.md §10): the pair of
    parts, the resistor values chosen with them and the circuit's checks with
    their margins. None for a role that drives no other, or while the output
    carries no linked figures for it."""
    role = next(r.role for r in design.roles if r.role.name == block.name)
    partner = getattr(role, "gate_driver", None) or getattr(role, "base_from", None)
    if not partner or partner not in blocks or block.choice_row is None:
        return None
    other = blocks[partner]
    resistors = []
    for b in (block, other):
        if b.choice_row is None:
            continue
        for name, value in b.choice_row["figures"].items():
            if name.endswith("_ohm") and name != "rds_on_ohm" and value is not None:
                resistors.append({"role": b.name, "resistor": name[:-4].replace("_", " "),
                                  "value": table_cell(value, Column(name, unit="ohm"))})
    circuit = []
    for b in (block, other):
        if b.choice_row is None:
            continue
        for check in LINK_CHECKS:
            if check in b.choice_row["checks"]:
                circuit.append({"role": b.name, "check": check,
                                "outcome": b.choice_row["checks"][check],
                                "margin": margin_text(b.choice_row.get("margins", {}).get(check))})
    if not resistors and not circuit:
        return None
    return {"roles": [block.name, other.name], "parts": [block.choice, other.choice],
            "resistors": resistors, "circuit": circuit}


def catalogue_identity(*, path: str, source: str, content_hash: str, part_count: int,
                       rows_read: int, left_out: list[int], warnings: list) -> dict:
    """The catalogue as the report names it; at most MAX_WARNINGS warnings listed."""
    return {"path": path, "source": source, "content_hash": content_hash,
            "part_count": part_count, "rows_read": rows_read, "left_out": list(left_out),
            "warnings": [str(w) for w in warnings[:MAX_WARNINGS]],
            "warnings_total": len(warnings)}

