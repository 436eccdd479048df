"""`picker report REQ.toml -o design-review.html`: the design review as one
file to share (HTML, or Markdown for a `.md` name)."""

import os
from pathlib import Path
from typing import Annotated, Optional

import typer

from picker.cli import app
from picker.cli.common import CatalogOpt, StrictOpt, open_catalog, say
from picker.errors import UsageError, WriteRefused

FORMATS = {".html": "html", ".htm": "html", ".md": "markdown", ".markdown": "markdown"}


@app.command("report")
def report(
    requirements: Annotated[str, typer.Argument(metavar="REQUIREMENTS.toml",
                                                help="Requirement file of the design.")],
    output: Annotated[str, typer.Option(
        "--output", "-o", metavar="FILE",
        help="The file to write: .html (one self-contained page) or .md (Markdown).")],
    bom: Annotated[Optional[str], typer.Option(
        "--bom", metavar="BOM.csv", help="Add the cost-down review of this BOM (only read).")] = None,
    catalog_path: CatalogOpt = None,
    strict: StrictOpt = False,
    top: Annotated[int, typer.Option("--top", "-n", min=1, max=20,
                                     help="Runners-up and near misses shown per role.")] = 5,
    force: Annotated[bool, typer.Option(
        "--force", help="Replace an existing file (its old version is kept as .bak).")] = False,
) -> None:
    """Write a design review to share: the design's inputs and where each came
    from, the catalogue's identity, per role the choice, the runners-up, every
    check, the near misses and the curves across the cell's range, the totals,
    the cautions; with --bom also the BOM's cost-down review. One file with
    nothing to fetch: it opens anywhere, prints one role a page.

    Exit 0 when every role has a feasible part, 1 when some role has none (the
    report is written either way), 2 on bad input.
    """
    import picker
    from picker.api.catalog import Catalog
    from picker.catalog.load import resolve_catalog
    from picker.safe_io import write_atomic

    fmt = FORMATS.get(Path(output).suffix.lower())
    if fmt is None:
        raise UsageError(f"--output {output}: name a .html or a .md file (the suffix sets the "
                         "format)")
    inputs = [("the requirement file", requirements), ("the BOM", bom),
              ("the catalogue", resolve_catalog(catalog_path)[0])]
    target = _check_target(output, force=force, inputs=inputs, option="--output")
    design = picker.load_design(requirements)
    catalog = Catalog(open_catalog(catalog_path, strict))
    result = picker.choose(design, catalog)
    review = picker.review(bom, catalog, design=design) if bom else None
    text = (result.to_html if fmt == "html" else result.to_markdown)(review=review, top=top)
    write_atomic(target, text.encode("utf-8"), overwrite=force)
    say(f"wrote {output} ({len(text.encode('utf-8')):,} bytes): "
        + ", ".join(f"{name} {r.choice or 'none feasible'}" for name, r in result.roles.items()))
    if not result.complete:
        say(f"no feasible part for: {', '.join(result.missing) or 'some role'}")
        raise typer.Exit(1)


def _check_target(path: str, *, force: bool, inputs, option: str) -> Path:
    """The write rule, the least of it until safe_io has its own: never a file
    this command reads, never an existing file without --force, never a folder."""
    target = Path(path)
    if target.is_dir():
        raise WriteRefused(f"that is a folder, not a file: give the path of a file for {option} "
                           "to write", file=path)
    for what, other in inputs:
        try:
            same = other is not None and os.path.samefile(target, other)
        except OSError:
            same = False
        if same:
            raise WriteRefused(f"{option} names {what} this command reads; picker never writes "
                               "over its own input: give another file name", file=path)
    if target.exists() and not force:
        raise WriteRefused("the file exists; choose another name or pass --force", file=path)
    return target
