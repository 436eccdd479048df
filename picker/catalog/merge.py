"""Bring a raw parameter table into the catalogue: values, merge, safe write.

`picker.catalog.import_rows` converts each raw row's cells to catalogue
units; `plan_merge` compares the rows with the catalogue and builds
the catalogue's new bytes by splicing its old bytes: every line that does not
change is kept byte for byte, new parts are appended in the file's own
delimiter, encoding, line ending and decimal mark, and with `--update` only
the changed cells of a row are rewritten. The result is loaded again with the
catalogue loader before anything is written: an import that would add an
error, or whose values would not read back exactly, is refused. `write_plan`
writes through `safe_io.write_atomic` (temporary file, fsync, rename, `.bak`,
refused if the file changed since it was read).

Text cells written into the catalogue are made inert for spreadsheets
(`_written`).

Policy for columns the catalogue lacks: refused (and listed) unless
`add_columns`; then they are appended to the header and every existing row
gets empty trailing fields, which changes every row's bytes (said in the
report).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path

from picker.catalog import columns as cols
from picker.catalog.load import KNOWN_HEADERS, Catalog, Problem, load_catalog
from picker.errors import CatalogError
from picker.catalog.import_rows import ImportRow, decimal_mark
from picker.catalog.importer import _plain
from picker.safe_io import FileState, file_state, write_atomic
from picker.catalog.tabular import decode, read_bytes, read_table


# -- the merge ------------------------------------------------------------------

@dataclass(frozen=True)
class Change:
    """One field of a part already in the catalogue that the import would change."""

    part: str
    column: str
    catalogue: str  # the cell as written in the catalogue ('' when blank)
    imported: str  # the value as it would be written
    action: str  # 'kept' (catalogue value stays), 'updated', 'filled' (was blank)
    line: int  # catalogue line
    raw_line: int | None


@dataclass
class Plan:
    """What an import would do; `after` is None when it must not be written."""

    path: str
    before: bytes
    state: FileState
    raw_path: str = ""
    after: bytes | None = None
    appended: list[dict] = field(default_factory=list)  # part, kind, maker, line, raw_line
    identical: list[str] = field(default_factory=list)
    changes: list[Change] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)
    held_back: list[int] = field(default_factory=list)  # raw lines with errors, not imported
    new_columns: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    @property
    def errors(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == "error"]

    def parts_with(self, action: str) -> int:
        return len({c.part for c in self.changes if c.action == action})


@dataclass
class _Record:
    line: int
    fields: list[tuple[int, int]]  # (start, end) of each field's text
    end: int  # where the record's text ends, before its line break


def _records(text: str, delimiter: str) -> dict[int, _Record]:
    """The records of a delimited text by starting line, with every field's span
    (quoted fields may hold delimiters and line breaks), as csv reads them."""
    out, i, n, line = {}, 0, len(text), 1
    while i < n:
        start_line, fields = line, []
        while True:
            start = i
            if i < n and text[i] == '"':
                i += 1
                while i < n:
                    if text[i] == '"':
                        if not text.startswith('"', i + 1):
                            i += 1
                            break
                        i += 1
                    elif text[i] == "\n" or (text[i] == "\r" and not text.startswith("\n", i + 1)):
                        line += 1
                    i += 1
            while i < n and text[i] not in (delimiter, "\n", "\r"):
                i += 1
            fields.append((start, i))
            if i < n and text[i] == delimiter:
                i += 1
                continue
            break
        end = i
        if i < n:
            i += 2 if text.startswith("\r\n", i) else 1
            line += 1
        if any(text[a:b].strip() for a, b in fields):
            out[start_line] = _Record(start_line, fields, end)
    return out


def _quote(text: str, delimiter: str) -> str:
    if any(c in text for c in (delimiter, '"', "\n", "\r")) or text != text.strip():
        return '"' + text.replace('"', '""') + '"'
    return text


def _cell(value, comma: bool) -> str:
    if isinstance(value, float):
        text = _plain(value)
        return text.replace(".", ",") if comma else text
    return str(value)


def _written(value, comma: bool) -> str:
    """A cell as written into the catalogue file: numbers as `_cell` writes
    them; text made inert for spreadsheets (a leading apostrophe before '-',
    '=', '+', '@'), which the catalogue loader drops again on reading, so the
    value reads back exactly (`cells.neutralise` / `cells.restore`)."""
    from picker.cells import neutralise

    return neutralise(value) if isinstance(value, str) else _cell(value, comma)


def _same(a, b) -> bool:
    if isinstance(a, float) or isinstance(b, float):
        try:
            return math.isclose(float(a), float(b), rel_tol=1e-9, abs_tol=0.0)
        except (TypeError, ValueError):
            return False
    return str(a).strip() == str(b).strip()


def part_key(part: str) -> str:
    """Parts are the same when equal but for case and spaces (as the loader checks)."""
    return "".join(str(part).split()).casefold()


def plan_merge(path: str, rows: list[ImportRow], *, update: bool = False, fill: bool = False,
               add_columns: bool = False, raw_path: str = "") -> Plan:
    """Compare `rows` with the catalogue at `path` and build its new bytes."""
    data = read_bytes(path, CatalogError, "catalogue")
    table = read_table(path, error=CatalogError, what="catalogue", known=KNOWN_HEADERS, data=data)
    catalog = load_catalog(path, source="--into", data=data)
    plan = Plan(path, data, file_state(path, data), raw_path=raw_path)
    names = []
    for raw in table.header:
        try:
            names.append(cols.canonical(raw))
        except cols.HeaderProblem:
            names.append(None)
    position = {n: i for i, n in enumerate(names) if n is not None}
    text, encoding = decode(data, path, CatalogError)
    comma = decimal_mark(table) == ","
    records = _records(text, table.delimiter)
    existing = {part_key(p): (i, table.lines[i]) for i, p in enumerate(table.cells(position["part"]))
                if p.strip()}
    bad_lines = set(catalog.error_lines)

    _repeats(rows, plan, raw_path)
    appended: list[ImportRow] = []
    edits: dict[int, dict[str, object]] = {}  # catalogue line -> column -> value to write
    done: set[str] = set()
    for row in rows:
        key = part_key(row.part)
        if not row.ok or key in done:
            continue
        done.add(key)
        if key not in existing:
            appended.append(row)
            continue
        pos, line = existing[key]
        if line in bad_lines:
            plan.problems.append(Problem("error", raw_path, row.line, row.origin.get("part"),
                                         f"'{row.part}' is on catalogue line {line}, which has "
                                         f"errors; fix it first (picker catalog check {path})",
                                         "part"))
            row.ok = False
            continue
        shown = {n: table.cells(i)[pos] for n, i in position.items()}
        differs = _differences(row, catalog.df.loc[line], shown, line, update, fill)
        plan.changes.extend(differs)
        if not differs:
            plan.identical.append(row.part)
        for c in differs:
            if c.action != "kept":
                edits.setdefault(line, {})[c.column] = row.values[c.column]
    plan.held_back = [r.line for r in rows if not r.ok]

    used = {c for r in appended for c in r.values} | {c for e in edits.values() for c in e}
    new = sorted(used - set(position), key=_column_order)
    if new and not add_columns:
        for name in new:
            users = [r for r in appended if name in r.values]
            first = users[0] if users else None
            plan.problems.append(Problem(
                "error", raw_path, first.line if first else None,
                first.origin.get(name) if first else None,
                f"column {name} is not in the catalogue ({len(users) or 'some'} value(s)); pass "
                "--add-columns to add it at the end of every row"
                + (", or leave the header out with --map" if first and first.line else ""),
                name))
    plan.new_columns = new
    if plan.errors:
        return plan
    plan.after = _splice(plan, text, encoding, table, records, names, position, new, edits,
                         appended, comma)
    if plan.after is not None:
        _validate(plan, catalog, appended, edits, raw_path)
    return plan


def _repeats(rows: list[ImportRow], plan: Plan, raw_path: str) -> None:
    """A part twice in the raw table: read once if the rows agree, else both held back."""
    first: dict[str, ImportRow] = {}
    for row in rows:
        if not row.ok:
            continue
        key = part_key(row.part)
        if key not in first:
            first[key] = row
            continue
        one = first[key]
        if all(_same(one.values.get(c), v) for c, v in row.values.items()):
            plan.notes.append(f"{raw_path}:{row.line}: '{row.part}' repeats line {one.line} "
                              "with the same values; read once")
            continue
        plan.problems.append(Problem("error", raw_path, row.line, row.origin.get("part"),
                                     f"part '{row.part}' repeats line {one.line} with other "
                                     "values; keep one of them", "part"))
        row.ok = one.ok = False


def _differences(row: ImportRow, current, shown: dict[str, str], line: int, update: bool,
                 fill: bool) -> list[Change]:
    """The fields where `row` differs from the catalogue row `current` (values
    loaded) whose cells read `shown`; a blank in the raw row is no difference."""
    out = []
    for name, value in row.values.items():
        have = current.get(name) if name in shown else None
        blank = have is None or (isinstance(have, float) and math.isnan(have)) or have == ""
        if name == "preferred" and not blank:
            have = "yes" if have is True else "no"
        if name == "part" or (not blank and _same(have, value)):
            continue
        if blank:
            action = "filled" if update or fill else "kept"
        else:
            action = "updated" if update else "kept"
        out.append(Change(row.part, name, shown.get(name, ""), _cell(value, False), action,
                          line, row.line))
    return out


def _column_order(name: str) -> tuple:
    order = list(cols.COLUMNS)
    base = name.split("@")[0]
    return (order.index(base) if base in order else len(order), name)


def _codec(data: bytes, encoding: str) -> tuple[bytes, str]:
    """(byte-order mark, codec without it) of the file's encoding."""
    if encoding == "utf-8-sig":
        return data[:3], "utf-8"
    if encoding == "utf-16":
        return data[:2], "utf-16-le" if data.startswith(b"\xff\xfe") else "utf-16-be"
    return b"", encoding


def _splice(plan, text, encoding, table, records, names, position, new, edits, appended,
            comma) -> bytes | None:
    """The new bytes: the old ones with the changed cells replaced, the new
    columns' fields added at each record's end, and the new rows appended."""
    delim = table.delimiter
    newline = "\r\n" if re.search(r"\r\n", text[:text.find("\n") + 1] or "") else "\n"
    width = len(names) + len(new)
    patches: list[tuple[int, int, str]] = []  # (start, end, new text) in `text`
    if new:
        header = records[table.header_line]
        patches.append((header.end, header.end, "".join(delim + _quote(n, delim) for n in new)))
    for line, record in (records.items() if new else ()):
        if line != table.header_line:
            extra = edits.get(line, {})
            patches.append((record.end, record.end, "".join(
                delim + _quote(_written(extra[n], comma), delim) if n in extra else delim
                for n in new)))
    for line, values in edits.items():
        fields = records[line].fields
        for name, value in values.items():
            if name in position and position[name] < len(fields):
                start, end = fields[position[name]]
                patches.append((start, end, _quote(_written(value, comma), delim)))
    lines_before = len(re.findall(r"\r\n|\r|\n", text))
    tail = "" if not text or text.endswith(("\n", "\r")) else newline
    order = [n for n in names] + new
    block = []
    for k, row in enumerate(appended):
        cells = [_quote(_written(row.values[n], comma), delim) if n in row.values else ""
                 for n in order]
        block.append(delim.join(cells[:width]) + newline)
        plan.appended.append({"part": row.part, "kind": row.values.get("kind", ""),
                              "maker": row.values.get("maker", ""),
                              "line": lines_before + (1 if tail else 0) + k + 1,
                              "raw_line": row.line})
    patches.append((len(text), len(text), tail + "".join(block)))
    bom, codec = _codec(plan.before, encoding)
    out, at, byte_at = [plan.before[:len(bom)]], 0, len(bom)
    try:
        for start, end, new_text in sorted(patches, key=lambda p: (p[0], p[1])):
            kept = len(text[at:start].encode(codec))
            out.append(plan.before[byte_at:byte_at + kept])  # the old bytes, untouched
            byte_at += kept + len(text[start:end].encode(codec))
            out.append(new_text.encode(codec))
            at = end
        out.append(plan.before[byte_at:])
    except UnicodeEncodeError as exc:
        bad = exc.object[exc.start:exc.end]
        row = next((r for r in appended if any(bad in str(v) for v in r.values.values())), None)
        where = ("command line" if row.line is None else plan.raw_path, row.line) if row else \
            (plan.path, None)
        plan.problems.append(Problem("error", where[0], where[1], None,
                                     f"'{bad}' cannot be written in this {encoding} catalogue; "
                                     "save the catalogue as UTF-8 or write the value without it"))
        plan.appended.clear()
        return None
    return b"".join(out)


def _validate(plan: Plan, before: Catalog, appended, edits, raw_path) -> None:
    """Load the new bytes with the catalogue loader: refuse new errors on the
    rows written, and values that would not read back exactly."""
    after = load_catalog(plan.path, source="--into", data=plan.after)
    raw_of = {a["line"]: a["raw_line"] for a in plan.appended}
    raw_of.update({c.line: c.raw_line for c in plan.changes if c.action != "kept"})
    origin = {r.line: r.origin for r in appended}
    old_lines = {p.line for p in before.problems}
    for p in after.problems:
        if p.line in old_lines:
            continue
        raw_line = raw_of.get(p.line)
        where = f"catalogue line {p.line}" + (f" (raw line {raw_line})" if raw_line else "")
        if p.severity == "warning":
            plan.notes.append(f"{where}: warning: {p.message}")
            continue
        plan.problems.append(Problem("error", raw_path if raw_line else plan.path,
                                     raw_line or p.line,
                                     origin.get(raw_line, {}).get(p.column_name or ""),
                                     f"the catalogue check would fail: {p.message}",
                                     p.column_name))
    wanted = {a["line"]: r.values for a, r in zip(plan.appended, appended)}
    wanted.update(edits)
    for line, values in wanted.items():
        if line not in after.df.index:
            continue  # an error, reported above
        for name, value in values.items():
            got = after.df.at[line, name]
            if name == "preferred":
                got = "yes" if got else "no"
            if not _same(got, value):
                plan.problems.append(Problem("error", plan.path, line, None,
                                             f"{name} would read back as {got!r}, not "
                                             f"{value!r}; nothing was written", name))
    if plan.errors:
        plan.after = None


def write_plan(plan: Plan) -> tuple[Path | None, list[Path]]:
    """Write the planned bytes atomically; returns (backup, stale temporaries removed).
    Refuses (WriteRefused) if the catalogue changed on disk since it was read."""
    if plan.after is None:
        raise CatalogError("nothing to write: the import has errors", file=plan.path)
    removed: list[Path] = []
    backup = write_atomic(plan.path, plan.after, overwrite=True, backup=True, expect=plan.state,
                          cleaned=removed)
    return backup, removed
