"""`picker review BOM.csv`: which transistor lines could be cheaper at this build
volume without giving anything up; the BOM file itself is never written.

The command parses options, calls `picker.review.bom` and `picker.review.propose`, and hands
the result to `picker.present.bom_review` for the renderer (table, CSV or JSON)."""

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
        help="Write a revised copy of the BOM with the proposals applied: a replaced line "
             "describes its new part, lines one part now serves are merged into one (refs and "
             "quantities combined), and a picker_change column says what each changed line "
             "was. Every other line and column is kept.")] = None,
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
    from picker.review.revised import check_revised, revised_bom
    from picker.errors import BomError, WriteRefused
    from picker.present.render import Report
    from picker.design.requirements import load_requirements
    from picker.present.bom_review import review_csv, review_json, review_report
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
        revised = revised_bom(bom, changes)
        problems = check_revised(bom, revised, changes)
        if problems:  # never hand a purchaser a BOM that lost something
            raise BomError(f"the revised BOM did not read back as planned: {problems[0]} "
                           f"({len(problems)} problem(s)); nothing written", file=str(out_path))
        try:
            write_atomic(out_path, revised, overwrite=force)
        except OSError as exc:
            if isinstance(exc, WriteRefused):
                raise
            raise WriteRefused(f"cannot write the revised BOM: {exc.strerror or exc}",
                               file=str(out_path)) from None
        merged = sum(c.drop for c in changes.values())
        say(f"wrote {out_path}: {len(changes) - merged} line(s) changed"
            + (f", {merged} merged into another line (its change column says what each was)"
               if merged else "") + ", every other line as it was")
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
