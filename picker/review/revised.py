"""The revised BOM: a copy with some lines' part number, maker and price
replaced and one column added, keeping the bytes of everything else."""

from __future__ import annotations

import io
import math
from dataclasses import dataclass

from picker.catalog.tabular import decode, read_table
from picker.errors import BomError
from picker.review.bom import Bom, _physical_lines

@dataclass(frozen=True)
class Change:
    """What replaces the part of one BOM row in the revised copy."""

    part: str | None  # None: leave the cell as it is
    maker: str | None
    price: float  # unit price to write in the price column (NaN: leave it)
    note: str  # the text of the change column


CHANGE_COLUMN = "picker_change"


def revised_bom(bom: Bom, changes: dict[int, Change], *, note_for: dict[int, str] | None = None
                ) -> bytes:
    """The BOM's bytes with, for each changed row, the part number, maker and
    price cells replaced, and a column `picker_change` added after the last
    header column (`picker_change_2`... if the BOM has one). Every other byte is
    kept: the records are split from the original text, not re-written, so
    quoting, spacing, line ends and the title lines above the header survive.
    Same delimiter and encoding as the input. The cells picker writes are made
    inert for spreadsheets (`cells.neutralise`: a leading apostrophe before
    '=', '+', '-', '@', a tab or a CR); the user's own cells are the user's
    data and stay byte for byte as they were, even one a spreadsheet would run."""
    text, _ = decode(bom.data, bom.path, BomError)
    records = split_records(text, bom.delimiter)
    name = CHANGE_COLUMN
    taken = {h.strip().casefold() for h in bom.header}
    k = 2
    while name.casefold() in taken:
        name, k = f"{CHANGE_COLUMN}_{k}", k + 1
    width = len(bom.header)
    row_at_line = {ln.line: ln.row for ln in bom.lines}
    note_for = note_for or {}
    out = io.StringIO()
    for start_line, fields, ending in records:
        if start_line < bom.header_line or not any(_unquote(f).strip() for f in fields):
            out.write(_join(fields, bom.delimiter) + ending)  # title line or blank line
            continue
        if start_line == bom.header_line:
            new = _cell(name, bom.delimiter)
        else:
            row = row_at_line.get(start_line)
            change = changes.get(row)
            if change is not None:
                fields = list(fields)
                for col, value in (("part", change.part), ("maker", change.maker),
                                   ("price", _price_text(change.price, bom.decimal_comma))):
                    pos = bom.columns.get(col)
                    if pos is not None and value is not None and pos < len(fields):
                        fields[pos] = _cell(value, bom.delimiter)
            note = change.note if change is not None else note_for.get(row, "")
            new = _cell(note, bom.delimiter)
        fields = list(fields[:width]) + [""] * (width - len(fields)) + [new] + list(fields[width:])
        out.write(_join(fields, bom.delimiter) + ending)
    data = out.getvalue().encode(bom.encoding, errors="replace")
    if not _faithful(bom, data, changes, name):
        data = _rewritten(bom, changes, name, note_for)
    return data


def _expected_cells(bom: Bom, changes: dict[int, Change], note_for: dict[int, str]):
    for ln in bom.lines:
        cells = list(ln.cells)
        change = changes.get(ln.row)
        if change is not None:
            for col, value in (("part", change.part), ("maker", change.maker),
                               ("price", _price_text(change.price, bom.decimal_comma))):
                if bom.columns.get(col) is not None and value is not None:
                    cells[bom.columns[col]] = _neutral(value)
        yield cells, (change.note if change is not None else note_for.get(ln.row, ""))


def _neutral(value: str) -> str:
    from picker.cells import neutralise

    return neutralise(str(value)).strip()


def _faithful(bom: Bom, data: bytes, changes: dict[int, Change], name: str) -> bool:
    """Does the written copy read back as the original plus the changes?"""
    try:
        text = decode(data, bom.path, BomError)[0]
        rest = "".join(_physical_lines(text)[bom.header_line - 1:])  # past title lines
        again = read_table(bom.path, error=BomError, what="BOM", data=rest.encode("utf-8"))
    except BomError:
        return False
    width = len(bom.header)
    if again.header[:width] != bom.header or again.header[width:width + 1] != [name]:
        return False
    rows = list(zip(*again.columns))
    if len(rows) != len(bom.lines):
        return False
    for (cells, note), got in zip(_expected_cells(bom, changes, {}), rows):
        if list(got[:width]) != cells or (note and got[width] != _neutral(note)):
            return False
    return True


def _rewritten(bom: Bom, changes: dict[int, Change], name: str, note_for: dict[int, str]) -> bytes:
    """Fallback when the file's layout defeats the byte-keeping copy: the title
    lines above the header kept as they were, then every record written again
    (same delimiter, line ending and encoding), quoted where it holds the
    delimiter, a quote or a line break of any kind. Each row keeps its cells as
    read (unstripped), fields past the header's width included, with the
    changed cells and the note put in."""
    import csv

    text, _ = decode(bom.data, bom.path, BomError)
    lines = _physical_lines(text)
    preamble = "".join(lines[:bom.header_line - 1])
    try:
        records = [r for r in csv.reader(io.StringIO("".join(lines[bom.header_line - 1:]),
                                                     newline=""),
                                         delimiter=bom.delimiter, strict=False)
                   if any(c.strip() for c in r)]
    except csv.Error:
        records = []
    width = len(bom.header)
    expected = list(_expected_cells(bom, changes, note_for))
    if len(records) != len(expected) + 1:  # not the rows read: write the cells as read
        records = [list(bom.header)] + [cells for cells, _ in expected]
    rows = [list(records[0][:width]) + [name]]
    for (cells, note), raw in zip(expected, records[1:]):
        raw = list(raw) + [""] * (width - len(raw))
        kept = [raw[i] if raw[i].strip() == cells[i] else cells[i] for i in range(width)]
        rows.append(kept + [_neutral(note)] + raw[width:])
    ending = "\r\n" if b"\r\n" in bom.data else "\n"
    out = preamble + "".join(bom.delimiter.join(_quoted(c, bom.delimiter) for c in row) + ending
                             for row in rows)
    return out.encode(bom.encoding, errors="replace")


def _join(fields, delimiter: str) -> str:
    return delimiter.join(fields)


def _unquote(raw: str) -> str:
    raw = raw.strip()
    if raw.startswith('"') and raw.endswith('"') and len(raw) >= 2:
        return raw[1:-1].replace('""', '"')
    return raw


def _cell(value: str, delimiter: str) -> str:
    """A new cell: made inert for spreadsheets, quoted where the text needs it."""
    from picker.cells import neutralise

    return _quoted(neutralise(str(value)), delimiter)


def _quoted(value: str, delimiter: str) -> str:
    """`value` as a CSV field: quoted where it holds the delimiter, a quote or a
    line break (the csv module's writer leaves a lone CR unquoted), or where
    spaces at its ends would be stripped on reading."""
    if any(c in value for c in (delimiter, '"', "\n", "\r")) or value != value.strip():
        return '"' + value.replace('"', '""') + '"'
    return value


def _price_text(price: float, decimal_comma: bool) -> str | None:
    if price is None or not math.isfinite(price):
        return None
    text = f"{price:.6f}".rstrip("0")
    text = text + "0" if text.endswith(".") else text
    return text.replace(".", ",") if decimal_comma else text


def split_records(text: str, delimiter: str) -> list[tuple[int, list[str], str]]:
    """The text's CSV records as (start line, raw field texts, line ending), the
    way Python's csv reader splits them (quotes open only at a field's start;
    line ends inside quotes belong to the field). Joining every record's
    fields with the delimiter and adding its ending gives back the text."""
    records = []
    fields: list[str] = []
    start = 0  # start of the current field
    line = 1
    record_line = 1
    i, n = 0, len(text)
    in_quotes = False
    field_start = True
    while i < n:
        c = text[i]
        if in_quotes:
            if c == '"':
                if i + 1 < n and text[i + 1] == '"':
                    i += 2
                    continue
                in_quotes = False
            elif c == "\n" or (c == "\r" and not (i + 1 < n and text[i + 1] == "\n")):
                line += 1
            i += 1
            continue
        if c == '"' and field_start:
            in_quotes, field_start = True, False
            i += 1
            continue
        if c == delimiter:
            fields.append(text[start:i])
            start, field_start = i + 1, True
            i += 1
            continue
        if c in "\r\n":
            ending = "\r\n" if text.startswith("\r\n", i) else c
            fields.append(text[start:i])
            records.append((record_line, fields, ending))
            fields, line = [], line + 1
            i += len(ending)
            start, field_start, record_line = i, True, line
            continue
        field_start = False
        i += 1
    if start < n or fields:
        fields.append(text[start:n])
        records.append((record_line, fields, ""))
    return records
