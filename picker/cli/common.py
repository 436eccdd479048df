"""Options and helpers every command shares."""

from __future__ import annotations

from enum import Enum
from typing import Annotated, Optional

import typer


class Fmt(str, Enum):
    table = "table"
    csv = "csv"
    json = "json"


FormatOpt = Annotated[Fmt, typer.Option("--format", "-f", help="Output: table for people, "
                                        "csv or json for scripts.")]
CatalogOpt = Annotated[Optional[str], typer.Option(
    "--catalog", "-c", metavar="PATH",
    help="Parts catalogue CSV. Default: $PICKER_CATALOG, else the bundled demo catalogue.")]
StrictOpt = Annotated[bool, typer.Option(
    "--strict", help="Stop on any catalogue error instead of leaving the bad rows out.")]


def say(message: str) -> None:
    """A status line for people: on stderr, so CSV and JSON on stdout stay clean."""
    typer.echo(message, err=True)


def open_catalog(path: str | None, strict: bool):
    """Load the catalogue the options name and say which one it is."""
    from picker.catalog import load_catalog

    catalog = load_catalog(path, strict=strict)
    say(catalog.describe())
    notice = catalog.left_out_notice()
    if notice:
        say(notice)
    return catalog


def emit(report, fmt: Fmt) -> None:
    from picker.render import render

    render(report, fmt.value)
