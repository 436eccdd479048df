"""The revised BOM: a copy with some lines' cells replaced (part number,
maker, price, description; refs and quantity where lines are merged), lines
merged into another left out, and one column added saying what changed,
keeping the bytes of everything else. `picker.review.changes` decides the
changes; `check_revised` reads the copy back and accounts for every
reference designator and quantity."""

from __future__ import annotations

import io
import math
from dataclasses import dataclass

from picker.catalog.tabular import decode, read_table
from picker.errors import BomError
from picker.review.bom import Bom, _physical_lines

@dataclass(frozen=True)
class Change:
    """What changes on one BOM row in the revised copy (None: leave the cell)."""

    part: str | None
    maker: str | None
    price: float  # unit price to write in the price column (NaN: leave it)
    note: str  # the text of the change column
    description: str | None = None
    refs: str | None = None  # a merged line's reference designators
    qty: str | None = None  # ... and its quantity
    drop: bool = False  # merged into another line: left out of the copy
    into: int | None = None  # ... the data row of that line

    def cells(self, decimal_comma: bool) -> tuple[tuple[str, str | None], ...]:
        """(field, new text) for each cell this change may write."""
        return (("part", self.part), ("maker", self.maker),
                ("price", _price_text(self.price, decimal_comma)),
                ("description", self.description), ("refs", self.refs), ("qty", self.qty))


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
            if change is not None and change.drop:
                continue  # merged into another line, which says so
            if change is not None:
                fields = list(fields)
                for col, value in change.cells(bom.decimal_comma):
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
        if change is not None and change.drop:
            continue
        if change is not None:
            for col, value in change.cells(bom.decimal_comma):
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
    expected = list(_expected_cells(bom, changes, {}))
    if len(rows) != len(expected):
        return False
    for (cells, note), got in zip(expected, rows):
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
    kept_rows = [ln.row for ln in bom.lines if not (ln.row in changes and changes[ln.row].drop)]
    if len(records) != len(bom.lines) + 1:  # not the rows read: write the cells as read
        records = [list(bom.header)] + [list(ln.cells) for ln in bom.lines]
    raw_of = dict(zip((ln.row for ln in bom.lines), records[1:]))
    rows = [list(records[0][:width]) + [name]]
    for (cells, note), raw in zip(expected, (raw_of[row] for row in kept_rows)):
        raw = list(raw) + [""] * (width - len(raw))
        kept = [raw[i] if raw[i].strip() == cells[i] else cells[i] for i in range(width)]
        rows.append(kept + [_neutral(note)] + raw[width:])
    ending = "\r\n" if b"\r\n" in bom.data else "\n"
    out = preamble + "".join(bom.delimiter.join(_quoted(c, bom.delimiter) for c in row) + ending
                             for row in rows)
    return out.encode(bom.encoding, errors="replace")


def check_revised(bom: Bom, data: bytes, changes: dict[int, Change]) -> list[str]:
    """Read the revised copy back with the same reader (`read_bom`, from the
    header line, each field at the column the original was read from) and
    account for everything: the same reference designators, each on one line
    with the part it is meant to have; the same total quantity; every line
    changed marked in the change column, every other line's cells as they
    were. Returns what does not hold ([] when all does)."""
    from collections import Counter

    from picker.review.bom import read_bom

    try:
        text = decode(data, bom.path, BomError)[0]
        rest = "".join(_physical_lines(text)[bom.header_line - 1:]).encode("utf-8")
        again = read_bom(bom.path, data=rest,
                         columns={f: str(p + 1) for f, p in bom.columns.items()})
    except BomError as exc:
        return [f"it does not read as a BOM: {exc.message}"]
    shift = bom.header_line - 1  # lines above the header, left out of the reading
    problems = []
    note_at = len(bom.header)
    kept = [ln for ln in bom.lines if not (ln.row in changes and changes[ln.row].drop)]

    def final(ln) -> str:
        change = changes.get(ln.row)
        if change is not None and change.drop:
            return final(bom.lines[change.into])
        return change.part if change is not None and change.part is not None else ln.part

    def counted(lines) -> tuple[Counter, int]:
        return (Counter(ref.upper() for ln in lines for ref in ln.refs),
                sum(ln.qty for ln in lines if ln.qty is not None))

    if counted(bom.lines) != counted(again.lines):
        before, after = counted(bom.lines), counted(again.lines)
        problems.append(f"refs or quantities differ: {sum(before[0].values())} refs and "
                        f"{before[1]} parts before, {sum(after[0].values())} and {after[1]} after")
    if len(again.lines) != len(kept):
        return problems + [f"{len(again.lines)} lines read back where {len(kept)} were written"]
    part_of = {ref.upper(): final(ln) for ln in bom.lines for ref in ln.refs}
    for old, new in zip(kept, again.lines):
        marked = len(new.cells) > note_at and new.cells[note_at].strip()
        if old.row in changes and not marked:
            problems.append(f"line {new.line + shift}: changed but not marked")
        if old.row not in changes and (new.cells[:note_at] != old.cells[:note_at] or marked):
            problems.append(f"line {new.line + shift}: not meant to change, but it did")
        for ref in new.refs:
            if normalise(part_of.get(ref.upper(), "")) != normalise(new.part):
                problems.append(f"line {new.line + shift}: {ref} has {new.part}, meant to have "
                                f"{part_of.get(ref.upper(), 'no line')}")
    return problems


def normalise(part: str) -> str:
    from picker.catalog.load import normalise_part

    return normalise_part(str(part).lstrip("'"))


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
