"""The one renderer: every command's rows go out as a table, CSV or JSON.

A command builds a `Report` (sections of rows with typed columns, notes, and
optionally its own JSON document) and hands it to `render`. Tables are for
people (rich, engineering units); CSV and JSON are for scripts (plain numbers
in the unit named by the column key, undecorated on stdout).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any, Iterable

from picker.catalog.quantities import format_quantity
from picker.cells import clean, neutralise

FORMATS = ("table", "csv", "json")

@dataclass(frozen=True)
class Column:
    key: str  # the field name in rows, CSV headers and JSON
    header: str = ""  # the table header (defaults to key)
    unit: str | None = None  # a quantities unit: the table shows engineering prefixes
    digits: int = 3
    numeric: bool = False  # CSV writes the raw value, never neutralised

    @property
    def title(self) -> str:
        return self.header or self.key


@dataclass
class Section:
    title: str | None
    columns: list[Column]
    rows: list[dict]
    caption: list[str] = field(default_factory=list)  # lines printed under the table
    bold: set[tuple[int, str]] = field(default_factory=set)  # (row index, key) emphasised


@dataclass
class Report:
    sections: list[Section]
    notes: list[str] = field(default_factory=list)  # lines under everything (table only)
    data: Any = None  # the JSON document; default: the rows of every section
    csv_columns: list[Column] | None = None  # CSV: these columns over csv_rows
    csv_rows: list[dict] | None = None


def csv_cell(value: Any, numeric: bool) -> str:
    """How one value is written to CSV: numbers as the shortest exact text,
    unknown as an empty cell, booleans yes/no, text neutralised."""
    value = clean(value)
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)) and numeric:
        if isinstance(value, float) and value.is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(value)
    if isinstance(value, (list, tuple)):
        value = "; ".join(str(v) for v in value)
    return neutralise(str(value))


def table_cell(value: Any, column: Column) -> str:
    value = clean(value)
    if value is None:
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (list, tuple)):
        return ", ".join(str(v) for v in value)
    if isinstance(value, (int, float)) and column.unit:
        return format_quantity(float(value), column.unit, column.digits)
    if isinstance(value, float):
        return f"{value:.{column.digits}g}"
    return str(value)


def csv_field(cell: str) -> str:
    """One CSV field: quoted where it holds a comma, a quote or a line break.
    (The csv module's writer, ending lines with '\\n', leaves a lone '\\r'
    unquoted, and every reader then starts a new row there.)"""
    if any(c in cell for c in ',"\n\r'):
        return '"' + cell.replace('"', '""') + '"'
    return cell


def _csv_line(cells: list[str]) -> str:
    if cells == [""]:
        return '""\n'  # one empty field: written so that the line is not blank
    return ",".join(csv_field(c) for c in cells) + "\n"


def write_csv(columns: list[Column], rows: Iterable[dict], out) -> None:
    out.write(_csv_line([neutralise(c.key) for c in columns]))
    for row in rows:
        out.write(_csv_line([csv_cell(row.get(c.key), c.numeric) for c in columns]))


def to_json(report: Report) -> str:
    if report.data is not None:
        document = report.data
    else:
        document = [clean({c.key: r.get(c.key) for c in s.columns})
                    for s in report.sections for r in s.rows]
    return json.dumps(clean(document), indent=2, ensure_ascii=False, allow_nan=False)


def render(report: Report, fmt: str, out=None, *, width: int | None = None) -> None:
    """Write `report` to `out` (default stdout) as 'table', 'csv' or 'json'."""
    import sys

    out = out or sys.stdout
    if fmt == "json":
        out.write(to_json(report) + "\n")
    elif fmt == "csv":
        if report.csv_rows is not None:
            columns, rows = report.csv_columns, report.csv_rows
        else:
            columns = _union(s.columns for s in report.sections)
            rows = [r for s in report.sections for r in s.rows]
        write_csv(columns, rows, out)
    elif fmt == "table":
        _render_table(report, out, width)
    else:
        raise ValueError(fmt)


def _union(groups: Iterable[list[Column]]) -> list[Column]:
    seen: dict[str, Column] = {}
    for group in groups:
        for c in group:
            seen.setdefault(c.key, c)
    return list(seen.values())


def _render_table(report: Report, out, width: int | None) -> None:
    """Tables on a terminal through rich (fitted to its width, best values in
    bold); to a pipe or a file, the same layout written directly: no styles
    to show there, no width to fit, and a tenth of the time."""
    terminal = hasattr(out, "isatty") and out.isatty()
    if not terminal and width is None:
        _plain_tables(report, out)
        return
    from rich import box
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    # markup off: a part number with brackets is printed as written
    console = Console(file=out, width=width, highlight=False, soft_wrap=False, markup=False,
                      emoji=False)
    for section in report.sections:
        table = Table(title=section.title, title_justify="left", box=box.SIMPLE_HEAD,
                      title_style="bold", pad_edge=False)
        for c in section.columns:
            numeric = bool(c.unit or c.numeric)
            table.add_column(c.title, justify="right" if numeric else "left",
                             no_wrap=numeric, overflow="fold")
        for i, row in enumerate(section.rows):
            cells = []
            for c in section.columns:
                text = table_cell(row.get(c.key), c)
                cells.append(Text(text, style="bold") if (i, c.key) in section.bold else text)
            table.add_row(*cells)
        if section.rows:
            console.print(table)
        elif section.title:
            console.print(Text(section.title, style="bold"))
        for line in section.caption:
            console.print(Text(line))
        if section.caption:
            console.print()
    for line in report.notes:
        console.print(Text(line))


def _plain_tables(report: Report, out) -> None:
    """The table layout in plain text: a title line, the header, a rule, the
    rows (numbers right-aligned), then the captions and the notes."""
    for section in report.sections:
        if section.rows:
            cells = [[table_cell(row.get(c.key), c) for c in section.columns] for row in section.rows]
            titles = [c.title for c in section.columns]
            widths = [max(len(t), *(len(r[i]) for r in cells)) for i, t in enumerate(titles)]
            right = [bool(c.unit or c.numeric) for c in section.columns]

            def line(values: list[str]) -> str:
                return " " + "   ".join(v.rjust(w) if r else v.ljust(w)
                                        for v, w, r in zip(values, widths, right)).rstrip()

            if section.title:
                out.write(section.title + "\n")
            out.write(line(titles) + "\n")
            out.write(" " + "─" * (sum(widths) + 3 * (len(widths) - 1)) + "\n")
            for r in cells:
                out.write(line(r) + "\n")
            out.write("\n")
        elif section.title:
            out.write(section.title + "\n")
        for caption in section.caption:
            out.write(caption + "\n")
        if section.caption:
            out.write("\n")
    for note in report.notes:
        out.write(note + "\n")
