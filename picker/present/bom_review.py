"""The BOM review in words and rows: one document for JSON, the CSV rows and
the tables (`picker review`, and the review section of a design report).

Everything here reads a `picker.review.propose.Review`; nothing computes a
saving of its own."""

from __future__ import annotations

import math
import re

PRICE_BASIS = ("costs use the catalogue's unit price at the build quantity (volume x qty per "
               "board, at the largest price break reached) for the incumbent and the proposal "
               "alike; the BOM's own unit price is shown as 'BOM price' and not used")
CAUTION = ("A replacement changes every board built: read the proposed part's current datasheet, "
           "check its pinout and footprint, and test samples at the temperature corners before "
           "the build; catalogue data is only as good as its source.")


def compact_refs(refs) -> str:
    """['Q4', 'Q5', 'Q6', 'Q7', 'Q9'] -> 'Q4-Q7, Q9' (runs of three or more)."""
    out, run = [], []

    def flush():
        if len(run) >= 3:
            out.append(f"{run[0][0]}{run[0][1]}-{run[-1][0]}{run[-1][1]}")
        else:
            out.extend(f"{p}{n}" for p, n in run)
        run.clear()

    for ref in refs:
        m = re.match(r"^([A-Za-z_]+)([0-9]{1,18})$", ref)  # (int() refuses over 4,300 digits)
        if m and run and run[-1][0] == m.group(1) and run[-1][1] + 1 == int(m.group(2)):
            run.append((m.group(1), int(m.group(2))))
            continue
        flush()
        if m:
            run.append((m.group(1), int(m.group(2))))
        else:
            out.append(ref)
    flush()
    return ", ".join(out)


def _money(x, places: int = 6):
    return round(float(x), places) if x is not None and math.isfinite(float(x)) else None


def line_row(r, volume: int) -> dict:
    """One BOM line of the review as plain values (JSON, CSV and the table)."""
    m = r.match
    found = m is not None and m.found
    changed = r.status in ("proposal", "fix")
    saving = r.saving if changed else (0.0 if r.status == "kept" else math.nan)
    return {
        "line": r.line.line, "refs": compact_refs(r.line.refs), "qty": r.qty,
        "bom_part": r.line.part, "bom_maker": r.line.maker, "category": r.category,
        "part": r.part or None, "score": m.score if found else None,
        "match": m.how if found else None, "confirm": bool(found and m.status == "confirm"),
        "kind": r.kind or None, "package": r.package or None,
        "unit_now": _money(r.unit_now), "bom_price": _money(r.line.bom_price),
        "status": r.status, "roles": list(r.roles),
        "proposal": r.proposal or None, "proposal_maker": r.proposal_maker or None,
        "proposal_package": r.proposal_package or None,
        "unit_after": _money(r.unit_after) if r.status in ("proposal", "fix", "kept") else None,
        "qualifying": r.qualifying if r._mask is not None else None,
        "saving_per_board": _money(saving), "saving_per_build": _money(saving * volume, 4),
        "note": r.note,
    }


def group_row(g, rv, applied: bool = True) -> dict:
    """One consolidation (or alternative) as plain values."""
    by_row = {r.line.row: r for r in rv.lines}
    rows = [by_row[x] for x in g.rows]
    v = rv.options.volume
    return {
        "kind": g.kind, "part": g.part, "maker": g.maker, "package": g.package,
        "lines": [r.line.line for r in rows],
        "refs": compact_refs([ref for r in rows for ref in r.line.refs]),
        "replaces": sorted({r.part for r in rows}), "parts_per_board": g.units,
        "quantity": g.units * v, "unit_price": _money(g.unit_price),
        "cost_per_board_now": _money(g.cost_now),
        "cost_per_board_line_by_line": _money(g.cost_line_by_line),
        "cost_per_board_after": _money(g.cost),
        "saving_per_board": _money(g.cost_now - g.cost),
        "saving_beyond_line_proposals": _money(g.cost_line_by_line - g.cost),
        "saving_per_build": _money((g.cost_now - g.cost) * v, 4),
        "lines_removed": g.lines_removed, "applied": applied,
    }


def _totals(rv) -> dict:
    t = rv.totals()
    return {k: (_money(x, 4 if k.endswith("build") else 6) if isinstance(x, float) else x)
            for k, x in t.items()}


def review_json(rv) -> dict:
    """The review as one JSON document."""
    from picker.cells import clean

    return clean({
        "bom": rv.bom.path, "volume": rv.options.volume, "volume_source": rv.volume_source,
        "price_basis": PRICE_BASIS,
        "columns": {k: rv.bom.header[p] for k, p in rv.bom.columns.items()},
        "thresholds": {"take_at": rv.options.take_at, "confirm_at": rv.options.confirm_at},
        "findings": rv.findings,
        "lines": [line_row(r, rv.options.volume) for r in rv.lines],
        "consolidation": [group_row(g, rv) for g in rv.groups],
        "alternatives": [group_row(g, rv, False) for g in rv.alternatives],
        "totals": _totals(rv),
        "warnings": [str(w) for w in rv.warnings],
    })


def _why(row: dict) -> str:
    status = row["status"]
    if status == "proposal":
        what = f"feasible for {', '.join(row['roles'])}" if row["roles"] else "drop-in"
        return f"{what}; {row['qualifying']} part(s) qualify"
    if status in ("kept", "fix", "no fix", "no price") and row["note"]:
        return ("FIX: " if status == "fix" else "") + row["note"]
    return {"other": "not a transistor: carried through", "not fitted": "qty 0: not fitted",
            "not in catalogue": "not in catalogue: no alternative"}.get(status, status)


def review_report(rv, *, all_lines: bool = False):
    """Findings first, then one row per transistor line, consolidation, totals, notes."""
    from picker.present.explain import CAUTIONS
    from picker.present.render import Column, Report, Section

    v = rv.options.volume
    money = dict(numeric=True, digits=6)
    sections = []
    if rv.findings:
        sections.append(Section("Findings (check these first)",
                                [Column("line", numeric=True), Column("refs"), Column("part"),
                                 Column("finding")],
                                [dict(f, refs=compact_refs(f["refs"])) for f in rv.findings]))
    rows, bold = [], set()
    for r in rv.lines:
        if r.category != "transistor" and not all_lines:
            continue
        row = line_row(r, v)
        row["shown_part"] = (row["part"] or "–") + (" ?" if row["confirm"] else "")
        row["why"] = _why(row)
        if row["status"] in ("proposal", "fix"):
            bold.add((len(rows), "proposal"))
        rows.append(row)
    others = sum(1 for r in rv.lines if r.category != "transistor")
    caption = []
    if others and not all_lines:
        caption.append(f"{others} other line(s) carried through unchanged (not transistors, or "
                       "not fitted); --all-lines shows them")
    if any(row["confirm"] for row in rows):
        caption.append("'?': matched by a similar part number; confirm it (see the notes below)")
    line_cols = ([Column("line", numeric=True), Column("refs"), Column("qty", numeric=True),
                  Column("bom_part", "BOM part"), Column("shown_part", "catalogue part"),
                  Column("score", numeric=True, digits=4), Column("unit_now", "now", **money)]
                 + ([Column("bom_price", "BOM price", **money)] if "price" in rv.bom.columns else [])
                 + [Column("proposal"), Column("unit_after", "after", **money),
                    Column("saving_per_board", "saving/board", **money),
                    Column("saving_per_build", "saving/build", **money), Column("why")])
    sections.append(Section(f"Transistor lines at {v:,} boards a build", line_cols, rows,
                            caption=caption, bold=bold))
    group_cols = [Column("part"), Column("package"), Column("refs"), Column("replaces"),
                  Column("parts_per_board", "parts/board", numeric=True),
                  Column("unit_price", "unit price", **money),
                  Column("saving_per_board", "saving/board", **money),
                  Column("saving_beyond_line_proposals", "beyond line proposals", **money),
                  Column("saving_per_build", "saving/build", **money),
                  Column("lines_removed", "lines removed", numeric=True)]
    if rv.groups:
        sections.append(Section("Consolidation: one part for several lines (in the totals)",
                                group_cols, [group_row(g, rv) for g in rv.groups]))
    if rv.alternatives:
        sections.append(Section("Also possible: one part for every line of a kind (not in the "
                                "totals)", group_cols, [group_row(g, rv, False) for g in rv.alternatives]))
    t = _totals(rv)
    total_rows = [
        {"what": "transistor lines now", "per_board": t["cost_per_board_now"]},
        {"what": "after line proposals", "per_board": t["cost_per_board_line_by_line"]},
        {"what": "after consolidation", "per_board": t["cost_per_board_after"]},
        {"what": "saving", "per_board": t["saving_per_board"]},
    ]
    for row in total_rows:
        row["per_build"] = _money(row["per_board"] * v, 2) if row["per_board"] is not None else None
    total_rows[-1]["per_build"] = t["saving_per_build"]
    caption = [f"{t['lines_costed']} transistor line(s) costed"
               + (f"; {t['lines_not_costed']} not costed (not in the catalogue, or no price)"
                  if t["lines_not_costed"] else "")
               + (f"; {t['lines_removed']} BOM line(s) fewer" if t["lines_removed"] else "")]
    caption.append(f"volume: {rv.volume_source}")
    sections.append(Section(f"Totals at {v:,} boards a build",
                            [Column("what"), Column("per_board", "per board", **money),
                             Column("per_build", "per build", **money)], total_rows,
                            caption=caption))
    notes = ["Prices: " + PRICE_BASIS + "."] + [str(w) for w in rv.warnings]
    notes += ["", CAUTION] + CAUTIONS
    return Report(sections, notes=notes, data=review_json(rv))


def review_csv(rv):
    """Every line, the consolidation and the totals in one table with a `section` column."""
    from picker.present.render import Column

    v = rv.options.volume
    rows = [dict(line_row(r, v), section="line") for r in rv.lines]
    for g, applied in [(g, True) for g in rv.groups] + [(g, False) for g in rv.alternatives]:
        row = group_row(g, rv, applied)
        row.update(section="consolidation" if applied else "alternative",
                   lines=" ".join(map(str, row["lines"])), replaces=" ".join(row["replaces"]))
        rows.append(row)
    t = _totals(rv)
    rows.append({"section": "totals", "volume": v, "cost_per_board_now": t["cost_per_board_now"],
                 "cost_per_board_after": t["cost_per_board_after"],
                 "saving_per_board": t["saving_per_board"],
                 "saving_per_build": t["saving_per_build"], "lines_removed": t["lines_removed"]})
    text = ["section", "line", "lines", "refs", "qty", "bom_part", "bom_maker", "category", "part",
            "match", "confirm", "kind", "package", "status", "proposal", "proposal_maker",
            "proposal_package", "replaces", "note"]
    numbers = ["score", "unit_now", "bom_price", "unit_after", "unit_price", "qualifying",
               "parts_per_board", "quantity", "volume", "cost_per_board_now",
               "cost_per_board_after", "saving_per_board", "saving_per_build", "lines_removed"]
    return [Column(k, numeric=k in ("line", "qty")) for k in text] + \
        [Column(k, numeric=True) for k in numbers], rows
