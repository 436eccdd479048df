"""`picker catalog ...`: check, browse."""

from typing import Annotated, List, Optional

import typer

from picker.cli import catalog_app
from picker.cli.common import CatalogOpt, FormatOpt, Fmt, StrictOpt, emit, open_catalog, say


@catalog_app.command("check")
def check(
    file: Annotated[Optional[str], typer.Argument(
        help="Catalogue CSV to check. Default: as --catalog would choose.")] = None,
    fmt: FormatOpt = Fmt.table,
) -> None:
    """Check a catalogue: every error and warning with its line and column.

    Exit 0 when there is no error (warnings are printed), 2 when there is any.
    """
    from picker.catalog.load import load_catalog
    from picker.present.render import Column, Report, Section

    catalog = load_catalog(file)
    say(f"checked {catalog.path} ({catalog.source}): {catalog.rows_read} rows, "
        f"{len(catalog.errors)} errors, {len(catalog.warnings)} warnings")
    rows = [{"file": p.file, "line": p.line, "column": p.column, "column_name": p.column_name,
             "severity": p.severity, "message": p.message} for p in catalog.problems]
    columns = [Column("file"), Column("line", numeric=True), Column("column", numeric=True),
               Column("column_name"), Column("severity"), Column("message")]
    lines = [str(p) for p in catalog.problems]
    if not catalog.errors:
        lines.append(f"{catalog.path}: no errors; {len(catalog.df)} parts usable")
    emit(Report([Section(None, [], [], caption=lines)] if fmt is Fmt.table
                else [Section(None, columns, rows)]), fmt)
    if catalog.errors:
        raise typer.Exit(2)


@catalog_app.command("show")
def show(
    parts: Annotated[Optional[List[str]], typer.Argument(help="Part numbers to show (all if none).")] = None,
    kind: Annotated[Optional[List[str]], typer.Option("--kind", "-k", help="pmos, nmos, npn or pnp (repeatable).")] = None,
    package: Annotated[Optional[List[str]], typer.Option("--package", "-p", help="Outline, e.g. SOT-23 (repeatable).")] = None,
    text: Annotated[Optional[str], typer.Option("--text", "-t", help="Text found in part, maker, package or notes.")] = None,
    wide: Annotated[bool, typer.Option("--wide", "-w", help="Every column in the table, not just the key figures.")] = False,
    catalog_path: CatalogOpt = None,
    strict: StrictOpt = False,
    fmt: FormatOpt = Fmt.table,
) -> None:
    """Browse the catalogue: one row a part, filtered by kind, package and text.

    CSV and JSON carry every column, in the catalogue's own units."""
    from picker.catalog.load import select
    from picker.present.render import Report, Section

    catalog = open_catalog(catalog_path, strict)
    found = select(catalog.df, parts=parts or [], kinds=kind or [], packages=package or [],
                   text=text)
    rows = found.to_dict("records")
    columns = _show_columns(found, every=fmt is not Fmt.table, wide=wide)
    caption = [f"{len(found)} of {len(catalog.df)} parts"] if fmt is Fmt.table else []
    emit(Report([Section(None, columns, rows, caption=caption)]), fmt)


# Shown in a terminal table unless --wide: what an engineer scans first.
_KEY_COLUMNS = ("part", "maker", "kind", "package", "status", "preferred", "vds_max_V",
                "id_max_A", "vgs_th_max_V", "rds_on_mohm", "idss_uA", "vceo_max_V", "ic_max_A",
                "hfe_min", "vce_sat_mV", "icbo_nA", "rth_ja_C/W", "price")


def _show_columns(df, every: bool, wide: bool):
    """Every column for CSV/JSON (so the catalogue round-trips); for a table,
    the key columns (all with --wide) that have a value in the rows shown."""
    from picker.catalog import columns as cols
    from picker.present.render import Column

    out = []
    for name in df.columns:
        try:
            unit, _ = cols.spec_of(name)
        except KeyError:
            unit = None
        if not every:
            if not wide and name.split("@")[0] not in _KEY_COLUMNS:
                continue
            if df[name].replace("", None).isna().all():
                continue
        header = name if every else cols.short_header(name)
        out.append(Column(name, header, numeric=unit is not None))
    return out
