"""`picker catalog import` and `picker catalog add`: bring parts into the catalogue.

Both go through the same path (picker.catalog.importer / picker.catalog.merge):
values converted to the catalogue's units, compared with the catalogue,
checked with the catalogue loader, written atomically with a `.bak`.
"""

import os
from typing import Annotated, List, Optional

import typer

from picker.cli import catalog_app
from picker.cli.common import FormatOpt, Fmt, emit, say
from picker.errors import CatalogError, MappingError, UsageError

IntoOpt = Annotated[Optional[str], typer.Option(
    "--into", "-i", metavar="CATALOG",
    help="Catalogue CSV to bring the parts into. Default: $PICKER_CATALOG (never the bundled "
         "demo).")]
UpdateOpt = Annotated[bool, typer.Option(
    "--update", help="Write imported values over catalogue values that differ (default: keep "
                     "the catalogue's and list every difference).")]
FillOpt = Annotated[bool, typer.Option(
    "--fill-blanks", help="Write imported values only where the catalogue's cell is blank.")]
AddColumnsOpt = Annotated[bool, typer.Option(
    "--add-columns", help="Add columns the catalogue lacks at the end of the header; every "
                          "existing row then gets empty trailing fields.")]
DryRunOpt = Annotated[bool, typer.Option(
    "--dry-run", "-n", help="Show what would change; write nothing to the catalogue.")]


def _into(path: str | None) -> str:
    path = path or os.environ.get("PICKER_CATALOG", "").strip()
    if not path:
        raise UsageError("name the catalogue to write with --into CATALOG (or set "
                         "$PICKER_CATALOG); picker never writes into its bundled demo")
    return path


def _exists(path: str) -> None:
    if not os.path.exists(path):
        raise CatalogError("no such catalogue file; check the path (to start a new catalogue, "
                           "write its header line first, e.g. part,maker,kind,package)", file=path)


@catalog_app.command("import")
def import_table(
    raw: Annotated[str, typer.Argument(help="The raw parameter table: CSV, semicolon or tab "
                                            "separated, one part a row.")],
    into: IntoOpt = None,
    map_file: Annotated[Optional[str], typer.Option(
        "--map", metavar="TOML",
        help="Mapping file: a [columns] table of \"raw header\" = \"catalogue column\" lines "
             "(\"\" leaves a header out); it overrides the proposed mapping (an example is above).")] = None,
    save_map: Annotated[Optional[str], typer.Option(
        "--save-map", metavar="TOML",
        help="Write the mapping used as a mapping file, to edit and pass with --map for the "
             "next table from the same source (written even with --dry-run).")] = None,
    update: UpdateOpt = False,
    fill: FillOpt = False,
    add_columns: AddColumnsOpt = False,
    skip_bad: Annotated[bool, typer.Option(
        "--skip-bad-rows", help="Bring in the rows that read cleanly and list the others "
                                "(default: write nothing while any cell does not read).")] = False,
    kind: Annotated[Optional[str], typer.Option(
        "--kind", "-k", help="pmos, nmos, npn or pnp, for a table with no type column.")] = None,
    maker: Annotated[Optional[str], typer.Option(
        "--maker", help="Maker for a table with no maker column.")] = None,
    min_score: Annotated[float, typer.Option(
        "--min-score", min=0, max=100,
        help="Headers scoring below this (0-100) are left unmapped and listed.")] = 80.0,
    dry_run: DryRunOpt = False,
    fmt: FormatOpt = Fmt.table,
) -> None:
    """Bring a supplier's or maker's parameter table into the catalogue.

    Headers are read by the names datasheets and the standards give each
    quantity: the parameter names and letter symbols of IEC 60747-8 and
    IEC 60747-7 and JEDEC (V(BR)DSS, VGS(th), RDS(on), IDSS, hFE, VCE(sat),
    ICBO, RθJA), or plain English ("continuous drain current"), with the unit
    and the conditions in the header ("RDS(on) max at VGS = -2.5 V (Ω)").

    Any other header, a supplier's own spelling for instance, is named in a
    mapping file passed with --map; --save-map writes the mapping used, ready
    to edit. A mapping file is TOML, one [columns] table:

    \b
        [columns]
        "Ron 2V5 (mΩ)" = "rds_on_mohm@2.5V"     # raw header = catalogue column
        "Vth window" = "vgs_th_min_V..vgs_th_max_V"   # a min ~ max range
        "Leak (nA)" = { column = "idss_uA", unit = "nA" }  # unit of bare numbers
        "Reel colour" = ""                      # "" leaves the header out

    Prints the proposed header mapping with scores, every cell that does not
    read (file:line:column), every difference with parts already in the
    catalogue, and the counts. Exit 0 when done, 2 when nothing was written
    because of bad input."""
    from picker.catalog.importer import load_mapping, mapping_toml, propose_mapping
    from picker.catalog.import_rows import read_rows
    from picker.catalog.merge import plan_merge
    from picker.safe_io import write_atomic
    from picker.catalog.tabular import read_table

    target = _into(into)
    _exists(target)
    if kind is not None and kind.lower() not in ("pmos", "nmos", "npn", "pnp"):
        raise UsageError(f"--kind {kind}: expected pmos, nmos, npn or pnp")
    overrides = load_mapping(map_file) if map_file else {}
    table = read_table(raw, error=CatalogError, what="raw table")
    matches = propose_mapping(table.header, overrides, min_score)
    notes = [f"{map_file}: '{k}' matches no header of this table" for k in overrides
             if " ".join(k.split()).casefold() not in
             {" ".join(h.split()).casefold() for h in table.header}]
    unread = [m for m in matches if m.target is None and m.how == "vocabulary"
              and m.raw.strip() and m.score < min_score]
    if unread:
        names = ", ".join(f"'{' '.join(m.raw.split())[:40]}'" for m in unread[:6])
        notes.append(f"{len(unread)} header(s) not read: {names}"
                     f"{', ...' if len(unread) > 6 else ''}; to bring them in, name their "
                     "columns in a mapping file and pass it with --map (--save-map writes one "
                     "to start from; 'picker catalog import --help' shows the format)")
    if save_map:
        write_atomic(save_map, mapping_toml(matches, os.path.basename(raw)).encode("utf-8"),
                     overwrite=True, backup=True)
        notes.append(f"mapping saved to {save_map}; edit it and pass it with --map next time")
    mapped = {c for m in matches if m.target for c in m.target.columns}
    say(f"raw table {raw}: {len(table.lines)} rows, {len(table.header)} columns, "
        f"{sum(m.target is not None for m in matches)} mapped")
    if "part" not in mapped:
        emit(_report(matches, None, notes), fmt)
        raise MappingError("no column maps to the part number; name it with --map "
                           "(\"Your header\" = \"part\")", file=raw, line=table.header_line)
    rows, problems = read_rows(table, matches, kind=kind and kind.lower(), maker=maker)
    plan = plan_merge(target, rows, update=update, fill=fill, add_columns=add_columns,
                      raw_path=raw)
    plan.problems[:0] = problems
    notes += [n for r in rows for n in r.notes]
    _finish(plan, matches, notes, fmt, dry_run, blocked=bool(problems) and not skip_bad)


def _finish(plan, matches, notes, fmt: Fmt, dry_run: bool, blocked: bool) -> None:
    """Write (unless dry run or refused), then render; bad input exits 2."""
    from picker.catalog.merge import write_plan

    refused = plan.after is None or blocked
    written, backup = False, None
    if plan.new_columns and plan.after is not None:
        notes.append(f"new columns {', '.join(plan.new_columns)} added at the end: every row "
                     "of the catalogue gains empty trailing fields")
    if refused:
        outcome = f"nothing written to {plan.path}"
    elif dry_run:
        outcome = f"dry run: nothing written to {plan.path}"
    elif plan.after == plan.before:
        kept = plan.parts_with("kept")
        outcome = f"nothing to write to {plan.path}" + (
            f": the catalogue's values of {kept} part(s) were kept (--update replaces them)"
            if kept else ": it holds all of this already")
    else:
        backup, removed = write_plan(plan)
        written = True
        notes += [f"removed a temporary file left by an interrupted write: {p}" for p in removed]
        outcome = f"wrote {plan.path}" + (f"; the previous version is {backup}" if backup else "")
    if not refused and (plan.appended or any(c.action != "kept" for c in plan.changes)):
        notes.append("values come from the raw table as given: check ratings against the "
                     "maker's current datasheet before a design relies on them")
    notes.append(outcome)
    emit(_report(matches, plan, notes, written, backup), fmt)
    if refused:
        errors = plan.errors
        if not errors:
            raise CatalogError("nothing written", file=plan.path)
        first = errors[0]
        hint = ("fix the cells or the mapping, or pass --skip-bad-rows to bring in the rows "
                "that read" if blocked else "fix them and run again")
        raise CatalogError(f"{first.message} ({len(errors)} problem(s) in all, listed above; "
                           f"nothing written: {hint})", file=first.file, line=first.line,
                           column=first.column)


def _report(matches, plan, notes, written=False, backup=None):
    from picker.present.render import Column, Report, Section

    sections = []
    if matches:
        rows = [{"section": "mapping", "position": m.position, "header": m.raw,
                 "column": m.target.name if m.target else None,
                 "conversion": m.target.conversion() if m.target else "",
                 "score": m.score, "how": m.how,
                 "note": m.note or (f"also sets {', '.join(f'{c}={v:g}' for c, v in m.target.constants)}"
                                    if m.target and m.target.constants else "")}
                for m in matches]
        sections.append(Section("Header mapping", [
            Column("position", "#", numeric=True), Column("header", "raw header"),
            Column("column", "catalogue column"), Column("conversion"),
            Column("score", numeric=True, digits=3), Column("how"), Column("note")], rows))
    if plan is None:
        return Report(sections, notes=notes, data={"mapping": sections[0].rows if sections else [],
                                                   "notes": notes, "written": False})
    problems = [{"section": "problem", "file": p.file, "line": p.line, "position": p.column,
                 "column": p.column_name, "severity": p.severity, "message": p.message}
                for p in plan.problems]
    if problems:
        sections.append(Section("Problems (nothing is guessed)", [], [],
                                caption=[str(p) for p in plan.problems]))
    changes = [{"section": "change", "part": c.part, "column": c.column,
                "catalogue": c.catalogue, "imported": c.imported, "action": c.action,
                "line": c.line, "raw_line": c.raw_line} for c in plan.changes]
    if changes:
        sections.append(Section("Parts already in the catalogue, field by field", [
            Column("part"), Column("column"), Column("catalogue"), Column("imported"),
            Column("action"), Column("line", "catalogue line", numeric=True),
            Column("raw_line", "raw line", numeric=True)], changes))
    appended = [{"section": "append", **a} for a in plan.appended]
    if appended:
        sections.append(Section("New parts" + (" (appended)" if written else " (would be appended)"), [
            Column("part"), Column("kind"), Column("maker"),
            Column("line", "catalogue line", numeric=True),
            Column("raw_line", "raw line", numeric=True)], appended))
    counts = {"appended": len(plan.appended), "identical_skipped": len(plan.identical),
              "conflicts_kept": plan.parts_with("kept"), "updated": plan.parts_with("updated"),
              "filled": plan.parts_with("filled"), "rows_with_errors": len(plan.held_back),
              "new_columns": len(plan.new_columns)}
    sections.append(Section("Counts", [Column(k, k.replace("_", " "), numeric=True)
                                       for k in counts], [{"section": "counts", **counts}]))
    data = {"catalogue": plan.path, "mapping": sections[0].rows if matches else [],
            "problems": problems, "changes": changes, "appended": plan.appended,
            "identical": plan.identical, "held_back_lines": plan.held_back,
            "new_columns": plan.new_columns, "counts": counts, "notes": notes,
            "written": written, "backup": str(backup) if backup else None}
    csv_rows = [r for s in sections for r in s.rows] + problems
    numbers = {"position", "score", "line", "raw_line", *counts}
    csv_columns = [Column(k, numeric=k in numbers)
                   for k in dict.fromkeys(k for r in csv_rows for k in r)]
    return Report(sections, notes=notes, data=data, csv_columns=csv_columns, csv_rows=csv_rows)


def _point(option: str, prefix: str, text: str, example: str) -> tuple[str, str, str]:
    """'45mohm@2.5V' -> (option, 'rds_on_mohm@2.5V', '45mohm')."""
    value, at, condition = text.rpartition("@")
    if not at or not value.strip() or not condition.strip():
        raise UsageError(f"{option} '{text}': write VALUE@CONDITION, e.g. {option} {example}")
    return option, f"{prefix}@{condition.strip()}", value.strip()


@catalog_app.command("add")
def add(
    part: Annotated[str, typer.Option("--part", help="Maker's part number.")],
    kind: Annotated[str, typer.Option("--kind", "-k", help="pmos, nmos, npn or pnp "
                                                           "(or P-channel, PNP...).")],
    maker: Annotated[Optional[str], typer.Option("--maker")] = None,
    package: Annotated[Optional[str], typer.Option("--package", help="e.g. SOT-23.")] = None,
    status: Annotated[Optional[str], typer.Option("--status", help="active, nrnd or eol.")] = None,
    preferred: Annotated[Optional[str], typer.Option("--preferred", help="yes or no.")] = None,
    vds: Annotated[Optional[str], typer.Option("--vds", help="Drain-source rating, e.g. 20V.")] = None,
    vgs: Annotated[Optional[str], typer.Option("--vgs", help="Gate-source rating, e.g. 8V.")] = None,
    id_max: Annotated[Optional[str], typer.Option("--id", help="Continuous drain current, e.g. 4.2A.")] = None,
    vth: Annotated[Optional[str], typer.Option("--vth", help="Gate threshold min..max, e.g. 0.45..1V.")] = None,
    vth_typ: Annotated[Optional[str], typer.Option("--vth-typ", help="Gate threshold, typical.")] = None,
    rds_on: Annotated[Optional[List[str]], typer.Option(
        "--rds-on", help="Max on-resistance at a gate drive, e.g. 45mohm@2.5V (repeatable).")] = None,
    idss: Annotated[Optional[str], typer.Option("--idss", help="Max drain leakage at 25 °C, e.g. 1uA.")] = None,
    vceo: Annotated[Optional[str], typer.Option("--vceo", help="Collector-emitter rating.")] = None,
    ic_max: Annotated[Optional[str], typer.Option("--ic", help="Collector current rating.")] = None,
    hfe: Annotated[Optional[List[str]], typer.Option(
        "--hfe", help="Min DC gain at a collector current, e.g. 200@10mA (repeatable).")] = None,
    vce_sat: Annotated[Optional[List[str]], typer.Option(
        "--vce-sat", help="Max Vce(sat) at Ic (Ic/Ib = 10), e.g. 250mV@100mA (repeatable).")] = None,
    vbe: Annotated[Optional[str], typer.Option("--vbe", help="Base-emitter voltage, typical.")] = None,
    icbo: Annotated[Optional[str], typer.Option("--icbo", help="Max collector cutoff current, e.g. 15nA.")] = None,
    rth: Annotated[Optional[str], typer.Option("--rth", help="Junction-to-ambient, e.g. 280C/W.")] = None,
    tj_max: Annotated[Optional[str], typer.Option("--tj-max", help="Max junction temperature, e.g. 150.")] = None,
    price: Annotated[Optional[List[str]], typer.Option(
        "--price", help="Unit price at a quantity break, e.g. 0.061@1000 (repeatable).")] = None,
    notes_text: Annotated[Optional[str], typer.Option("--notes")] = None,
    set_: Annotated[Optional[List[str]], typer.Option(
        "--set", metavar="COLUMN=VALUE", help="Any catalogue column, e.g. idss_hot_uA=10 "
                                              "(repeatable).")] = None,
    into: IntoOpt = None,
    update: UpdateOpt = False,
    fill: FillOpt = False,
    add_columns: AddColumnsOpt = False,
    dry_run: DryRunOpt = False,
    fmt: FormatOpt = Fmt.table,
) -> None:
    """Add one part by hand: the same checks and safe write as an import.

    A part already in the catalogue with other values is listed field by field
    and kept unless --update."""
    from picker.catalog.import_rows import row_from_options
    from picker.catalog.merge import plan_merge

    target = _into(into)
    _exists(target)
    fields = [("--part", "part", part), ("--kind", "kind", kind)]
    singles = [("--maker", "maker", maker), ("--package", "package", package),
               ("--status", "status", status), ("--preferred", "preferred", preferred),
               ("--vds", "vds_max_V", vds), ("--vgs", "vgs_max_V", vgs), ("--id", "id_max_A", id_max),
               ("--vth", "vgs_th_min_V..vgs_th_max_V", vth), ("--vth-typ", "vgs_th_typ_V", vth_typ),
               ("--idss", "idss_uA", idss), ("--vceo", "vceo_max_V", vceo), ("--ic", "ic_max_A", ic_max),
               ("--vbe", "vbe_on_V", vbe), ("--icbo", "icbo_nA", icbo), ("--rth", "rth_ja_C/W", rth),
               ("--tj-max", "tj_max_C", tj_max), ("--notes", "notes", notes_text)]
    fields += [f for f in singles if f[2] is not None]
    fields += [_point("--rds-on", "rds_on_mohm", t, "45mohm@2.5V") for t in rds_on or []]
    fields += [_point("--hfe", "hfe_min", t, "200@10mA") for t in hfe or []]
    fields += [_point("--vce-sat", "vce_sat_mV", t, "250mV@100mA") for t in vce_sat or []]
    fields += [_point("--price", "price", t, "0.061@1000") for t in price or []]
    for item in set_ or []:
        column, eq, value = item.partition("=")
        if not eq or not column.strip():
            raise UsageError(f"--set '{item}': write COLUMN=VALUE, e.g. --set idss_hot_C=85")
        fields.append(("--set " + column.strip(), column.strip(), value))
    columns = [f[1] for f in fields]
    repeated = {c for c in columns if columns.count(c) > 1}
    if repeated:
        raise UsageError(f"{', '.join(sorted(repeated))} given twice; give each value once")
    row, problems = row_from_options(fields)
    if problems:
        for p in problems[1:]:
            say(f"Error: {p.message}")
        raise UsageError(problems[0].message + (f" ({len(problems)} problems in all)"
                                                if len(problems) > 1 else ""))
    plan = plan_merge(target, [row], update=update, fill=fill, add_columns=add_columns,
                      raw_path="command line")
    notes = []
    if plan.identical:
        notes.append(f"'{row.part}' is already in the catalogue with the same values")
    _finish(plan, None, notes, fmt, dry_run, blocked=False)
