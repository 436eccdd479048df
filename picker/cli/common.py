"""Options and helpers every command shares."""

import os
import sys
from contextlib import contextmanager
from enum import Enum
from typing import Annotated, Callable, Iterator, Optional

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


USE_CACHE = True  # set for each invocation by the root --no-cache option


def open_catalog(path: str | None, strict: bool):
    """Load the catalogue the options name and say which one it is."""
    from picker.catalog.load import load_catalog, resolve_catalog

    try:
        size = os.path.getsize(resolve_catalog(path)[0])
    except OSError:
        size = 0  # load_catalog says what is wrong with the path
    with progress("reading the catalogue", show=is_large(file_bytes=size)):
        catalog = load_catalog(path, strict=strict, cache=USE_CACHE)
    say(catalog.describe())
    notice = catalog.left_out_notice()
    if notice:
        say(notice)
    return catalog


def emit(report, fmt: Fmt) -> None:
    from picker.present.render import render

    render(report, fmt.value)


# -- progress on a terminal ------------------------------------------------------------

# Work past these sizes takes about a second or more on a laptop (measured with
# scripts/synth.py: 200,000 rows, 25 MB, load in about 6 s), so it gets a bar.
LARGE_CATALOGUE_ROWS = 50_000
LARGE_BOM_LINES = 500
LARGE_FILE_BYTES = 6_000_000


def is_large(*, rows: int = 0, bom_lines: int = 0, file_bytes: int = 0) -> bool:
    """True when the work is big enough to deserve a progress bar: more than
    LARGE_CATALOGUE_ROWS catalogue rows, LARGE_BOM_LINES BOM lines, or an input
    file over LARGE_FILE_BYTES (a catalogue or import not yet read)."""
    return (rows > LARGE_CATALOGUE_ROWS or bom_lines > LARGE_BOM_LINES
            or file_bytes > LARGE_FILE_BYTES)


@contextmanager
def progress(description: str, total: float | None = None, *, show: bool = True,
             stream=None) -> Iterator[Callable[..., None]]:
    """A rich progress bar on stderr for the work inside the block.

    Shown only when `show` (pass `is_large(...)`) and the stream (default
    stderr) is a terminal: on a pipe, a file or a test runner nothing at all is
    written. Yields `advance(n=1, description=None)`; with `total=None` the bar
    is a spinner with the elapsed time. The bar is removed when the block ends,
    so the output that follows starts on a clean line.

        with progress("evaluating 80,000 parts", total=steps,
                      show=is_large(rows=len(df))) as advance:
            for ...:
                advance()
    """
    stream = sys.stderr if stream is None else stream
    if not (show and hasattr(stream, "isatty") and stream.isatty()):
        yield lambda n=1, description=None: None
        return
    from rich.console import Console
    from rich.progress import (BarColumn, MofNCompleteColumn, Progress, SpinnerColumn,
                               TextColumn, TimeElapsedColumn)

    columns = [SpinnerColumn(), TextColumn("{task.description}")]
    if total is not None:
        columns += [BarColumn(), MofNCompleteColumn()]
    columns.append(TimeElapsedColumn())
    with Progress(*columns, console=Console(file=stream), transient=True) as bar:
        task = bar.add_task(description, total=total)

        def advance(n: float = 1, description: str | None = None) -> None:
            bar.update(task, advance=n, **({"description": description} if description else {}))

        yield advance
