"""`picker review BOM.csv`: which transistor lines could be cheaper at this build
volume without giving anything up; the BOM file itself is never written.

The command parses options, calls `picker.review.bom` and `picker.review.propose`, and turns
the result into one `Report` for the renderer (table, CSV or JSON)."""

import math
import os
import re
from pathlib import Path
from typing import Annotated, List, Optional

import typer

from picker.cli import app
from picker.cli.common import CatalogOpt, FormatOpt, Fmt, StrictOpt, emit, open_catalog, say
from picker.errors import UsageError

_MATCH = "Matching BOM lines to the catalogue"
_ALT = "Alternatives"


@app.command("review")
def review(
    bom_path: Annotated[str, typer.Argument(metavar="BOM.csv", help="Bill of materials (CSV); only read, never written.")],
    requirements: Annotated[Optional[str], typer.Option(
        "--requirements", "-R", metavar="REQ.toml",
        help="Requirement file: lines named by a role's refs get the cheapest part feasible for "
             "the role, and an incumbent that fails its role is reported first.")] = None,
    catalog_path: CatalogOpt = None,
    strict: StrictOpt = False,
    fmt: FormatOpt = Fmt.table,
    volume: Annotated[Optional[str], typer.Option(
        "--volume", metavar="N", help="Boards per build (default: the requirement file's "
        "build.volume, else 1000).")] = None,
    column: Annotated[Optional[List[str]], typer.Option(
        "--column", metavar="FIELD=HEADER", rich_help_panel=_MATCH,
        help="Name a BOM column picker does not recognise: FIELD is refs, qty, part, "
             "description, maker or price; HEADER the column's header (or its number). Repeatable.")] = None,
    take_at: Annotated[float, typer.Option(
        "--take-at", metavar="SCORE", min=0, max=100, rich_help_panel=_MATCH,
        help="Match score (0-100) from which a part number is taken without asking.")] = 95.0,
    confirm_at: Annotated[float, typer.Option(
        "--confirm-at", metavar="SCORE", min=0, max=100, rich_help_panel=_MATCH,
        help="Match score from which a part number is taken but marked to confirm; below it "
             "the line is not in the catalogue.")] = 80.0,
    package_ok: Annotated[Optional[List[str]], typer.Option(
        "--package-ok", metavar="PKG,PKG,...", rich_help_panel=_ALT,
        help="Packages you accept as interchangeable, e.g. SOT-23,SOT-23-3 (repeatable; "
             "default: the incumbent's own package only).")] = None,
    include_nrnd: Annotated[bool, typer.Option(
        "--include-nrnd", rich_help_panel=_ALT,
        help="Also propose parts marked nrnd (never eol).")] = False,
    all_lines: Annotated[bool, typer.Option(
        "--all-lines", help="Show every BOM line in the table, not only the transistors.")] = False,
    write_bom: Annotated[Optional[str], typer.Option(
        "--write-bom", metavar="OUT.csv",
        help="Write a revised copy of the BOM with the proposals applied and a picker_change "
             "column; every original line and column is kept.")] = None,
    force: Annotated[bool, typer.Option(
        "--force", help="Let --write-bom replace an existing file (its old version is kept as .bak).")] = False,
) -> None:
    """Review a BOM for cheaper transistors at the build volume: per line the
    cheapest drop-in (or, with --requirements, the cheapest part feasible for
    the line's role), parts that could serve several lines, and the totals.

    Exit 0 when something was found, 1 when there is nothing to propose,
    2 on bad input.
    """
    from picker.review.bom import read_bom
    from picker.review.revised import revised_bom
    from picker.errors import BomError, WriteRefused
    from picker.present.render import Report
    from picker.design.requirements import load_requirements
    from picker.review.propose import DEFAULT_VOLUME, Options, review as run_review
    from picker.safe_io import write_atomic
    from picker.catalog.tabular import read_bytes

    if confirm_at > take_at:
        raise UsageError(f"--confirm-at ({confirm_at:g}) must not be above --take-at ({take_at:g})")
    overrides = _column_overrides(column or [])
    groups = tuple(tuple(p.strip() for p in text.split(",") if p.strip()) for text in package_ok or [])
    if any(not g for g in groups):
        raise UsageError("--package-ok: give package names separated by commas, e.g. SOT-23,SOT-23-3")
    out_path = _check_out(bom_path, write_bom, force)
    wanted_volume = _volume(volume) if volume is not None else None
    data = read_bytes(bom_path, BomError, "BOM")
    bom = read_bom(bom_path, columns=overrides, data=data)
    req = load_requirements(requirements) if requirements else None
    if wanted_volume is not None:
        n, source = wanted_volume, "--volume"
    elif req is not None:
        n, source = req.volume, f"build.volume of {requirements}"
    else:
        n, source = DEFAULT_VOLUME, "assumed"
        say(f"assumed: {DEFAULT_VOLUME} boards a build (set it with --volume)")
    options = Options(volume=n, packages_ok=groups, include_nrnd=include_nrnd,
                      take_at=take_at, confirm_at=confirm_at)
    catalog = open_catalog(catalog_path, strict)
    rv = run_review(bom, catalog.df, options, req, volume_source=source)
    if out_path is not None:
        changes = rv.changes()
        try:
            write_atomic(out_path, revised_bom(bom, changes), overwrite=force)
        except OSError as exc:
            if isinstance(exc, WriteRefused):
                raise
            raise WriteRefused(f"cannot write the revised BOM: {exc.strerror or exc}",
                               file=str(out_path)) from None
        say(f"wrote {out_path}: {len(changes)} line(s) changed, every other line as it was")
    if fmt is not Fmt.table:
        for w in rv.warnings:
            say(str(w))
    if fmt is Fmt.json:
        emit(Report([], data=review_json(rv)), fmt)
    elif fmt is Fmt.csv:
        columns, rows = review_csv(rv)
        emit(Report([], csv_columns=columns, csv_rows=rows), fmt)
    else:
        emit(review_report(rv, all_lines=all_lines), fmt)
    if not rv.found_anything:
        costed = rv.totals()["lines_costed"]
        say("nothing to propose: " + ("every costed transistor line is already the cheapest part "
                                      "that qualifies" if costed else
                                      "no transistor line of the BOM was found in the catalogue"))
        raise typer.Exit(1)


def _column_overrides(items: list[str]) -> dict[str, str]:
    out = {}
    for item in items:
        name, sep, header = item.partition("=")
        if not sep or not name.strip() or not header.strip():
            raise UsageError(f"--column {item}: write FIELD=HEADER, e.g. --column part=MPN")
        out[name.strip().lower()] = header.strip()
    return out


def _volume(text: str) -> int:
    cleaned = re.sub(r"[\s_,]", "", text)
    # ASCII digits only: str.isdigit() accepts '²', which int() refuses; and a
    # bound on the length (int() refuses over 4,300 digits)
    if not re.fullmatch(r"[0-9]{1,12}", cleaned) or int(cleaned) < 1:
        raise UsageError(f"--volume {text[:40]}: give a whole number of boards, e.g. --volume 5000")
    return int(cleaned)


def _check_out(bom_path: str, write_bom: str | None, force: bool) -> Path | None:
    """The revised BOM's path; never the BOM itself, never over a file without --force."""
    from picker.errors import WriteRefused

    if write_bom is None:
        return None
    out = Path(write_bom)
    same = os.path.abspath(out) == os.path.abspath(bom_path)
    try:
        same = same or (out.exists() and Path(bom_path).exists() and out.samefile(bom_path))
    except OSError:
        pass
    if same:
        raise WriteRefused("--write-bom names the BOM being reviewed; picker never writes its "
                           "input: give another file name", file=str(out))
    if out.exists() and not force:
        raise WriteRefused("the file exists; choose another name or pass --force", file=str(out))
    return out


# -- presenting the review -------------------------------------------------------------------

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
