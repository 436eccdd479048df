"""A raw parameter table's cells and rows in catalogue units.

`cell_values` reads one cell: the cell's unit, else the header's; a
"min ~ max" range split; footnote marks, currency and thousands separators
stripped; what still does not parse raises, never a guess. `read_rows`
converts each raw row's cells (`ImportRow`), `row_from_options` one row typed
on the command line. Cells starting with '=', '+', '@', a tab or a carriage
return are refused outright in part, maker, package and notes
(`_text_value`): such a cell in a supplier's table is a formula that leaked
into the export, not a part's data.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from picker.catalog import columns as cols
from picker.catalog.importer import BIPOLAR_ONLY, MOSFET_ONLY, HeaderMatch, Target
from picker.catalog.load import NO, UNKNOWN_MARKERS, YES, Problem
from picker.catalog.quantities import parse_quantity
from picker.catalog.tabular import TextTable
from picker.errors import PickerError, QuantityError


# -- cell values ---------------------------------------------------------------

_FOOTNOTE = re.compile(r"\s*(?:[*†‡§¶]+|[¹²³⁴⁵⁶⁷⁸⁹⁰]+|\(\s*\d{1,2}\s*\)|\[\s*\d{1,2}\s*\]"
                       r"|\(\s*note\s*\d+\s*\))$", re.I)
_CURRENCY = re.compile(r"^[$€£¥]\s*|\s*(?:[$€£¥]|usd|eur|gbp|chf)$", re.I)
_QTY = r"[+\-−]?(?:\d+(?:[.,]\d+)*|[.,]\d+)(?:[eE][+-]?\d+)?\s*[A-Za-zΩΩµμ°%]*"
_RANGE = re.compile(rf"^({_QTY})\s*(~|～|–|—|\.\.|…|\bto\b|-|/)\s*({_QTY})$")
_BARE = re.compile(r"^[+\-−]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$")
_UNIT_TAIL = re.compile(r"[A-Za-zΩΩµμ°%]+$")
_KIND_NOISE = re.compile(r"mosfet|channel|enhancement|transistor|mode|type|mos|fet|ch|[^a-z]")


def clean_number(text: str, decimal_mark: str, holds: str | None) -> str:
    """Strip footnote marks, currency, bound signs that match the column
    ('≤ 1 µA' in a maximum column) and thousands separators."""
    s = text.strip()
    while True:
        new = _FOOTNOTE.sub("", s).strip()
        if new == s:
            break
        s = new
    s = _CURRENCY.sub("", s).strip()
    bound = re.match(r"^(≤|<=|<|max\.?|≥|>=|>|min\.?)\s*", s, re.I)
    if bound:
        upper = bound.group(1).lower().startswith(("≤", "<", "max"))
        if holds != ("max" if upper else "min"):
            raise QuantityError(f"'{text}' is a bound ({bound.group(1)}) in a column that holds "
                                "a plain value; write the value")
        s = s[bound.end():]
    sep = "," if decimal_mark == "." else "."
    if re.match(rf"^[+\-−]?[1-9]\d{{0,2}}(?:{re.escape(sep)}\d{{3}})+(?:{re.escape(decimal_mark)}\d+)?"
                r"(?!\d)", s):
        head = re.match(r"^[+\-−]?[\d.,]+", s).group()
        s = head.replace(sep, "") + s[len(head):]
    return s


def parse_value(text: str, unit: str, header_unit: str, decimal_mark: str) -> float:
    """One number in `unit`: the cell's own unit wins, else the header's."""
    if header_unit and _BARE.match(text.replace(" ", "")):
        text = text + header_unit
    return parse_quantity(text, unit, decimal_comma=decimal_mark == ",")


def cell_values(text: str, target: Target, decimal_mark: str = ".") -> tuple[dict, str]:
    """{column: value} of one numeric cell (signed, as written), and a note
    (e.g. a range's high end with no column). Raises QuantityError."""
    name = target.columns[0]
    unit = cols.spec_of(name)[0]
    holds = "min" if name.startswith("hfe_min") else (
        "max" if name.split("@")[0] in ("rds_on_mohm", "vce_sat_mV", "idss_uA", "icbo_nA",
                                        "idss_hot_uA", "icbo_hot_nA") else None)
    s = clean_number(text, decimal_mark, holds)
    try:
        value = parse_value(s, unit, target.unit, decimal_mark)
        found = {c: value for c in target.columns} if len(target.columns) == 1 else None
        if found is None:
            raise QuantityError(f"'{text}' is one value where a min ~ max range belongs "
                                "(e.g. 0.4 ~ 1.0); for single values, map the header to one "
                                "column")
        return found, ""
    except QuantityError as single:
        m = _RANGE.match(s)
        if not m or (m.group(2) == "/" and target.ranges != "pair"):
            raise single from None
        if target.ranges == "error":
            raise QuantityError(f"'{text}' is a range; {name} holds one value") from None
    low_text, high_text = m.group(1), m.group(3)
    tail = _UNIT_TAIL.search(high_text)
    if tail and not _UNIT_TAIL.search(low_text):
        low_text += tail.group()  # '400 ~ 1000 mV': the unit of the high side applies to both
    low, high = (parse_value(t, unit, target.unit, decimal_mark) for t in (low_text, high_text))
    low, high = sorted((low, high), key=abs)
    if target.ranges == "pair":
        return {target.columns[0]: low, target.columns[1]: high}, ""
    return {name: low}, f"{name}: range '{text}', the low end kept (no column for the high end)"


def read_kind(text: str, family: str) -> tuple[str, str]:
    """(kind, family) of a kind cell: 'P-Channel' -> ('pmos', 'mos'); a bare
    'N' with no family from the header -> ('n', ''), settled later from the
    row's columns. Raises ValueError."""
    s = text.strip().lower()
    if re.search(r"dual|complement|array|\bn\s*\+\s*p\b|\bp\s*\+\s*n\b", s):
        raise ValueError(f"'{text}': dual or complementary devices are not catalogue rows; "
                         "enter each transistor as its own part")
    bipolar = re.findall(r"npn|pnp", s)
    if len(set(bipolar)) == 1:
        return bipolar[0], "bjt"
    if re.search(r"mos|fet|channel|ch\b", s):
        family = "mos"
    rest = _KIND_NOISE.sub("", s)
    if rest in ("n", "p") and not bipolar:
        return (rest + "mos" if family == "mos" else rest), family
    raise ValueError(f"unknown kind '{text}'; expected N- or P-channel, NPN or PNP")


STATUS_WORDS = {"active": "active", "production": "active", "in production": "active",
                "nrnd": "nrnd", "not recommended for new designs": "nrnd",
                "not for new designs": "nrnd", "eol": "eol", "obsolete": "eol",
                "end of life": "eol", "discontinued": "eol", "last time buy": "eol"}


# -- rows ---------------------------------------------------------------------

@dataclass
class ImportRow:
    """One raw row, converted: values in catalogue units, where each came from."""

    line: int | None  # None: typed on the command line
    values: dict[str, object] = field(default_factory=dict)
    origin: dict[str, int] = field(default_factory=dict)  # column -> raw column number
    notes: list[str] = field(default_factory=list)
    family: str = ""  # 'mos' / 'bjt' as the kind cell said
    ok: bool = True  # False: some cell did not read; the row is held back

    @property
    def part(self) -> str:
        return str(self.values.get("part", ""))



def decimal_mark(table: TextTable) -> str:
    """'.' or ',': the decimal mark of the numeric cells of `table`, judged by
    the cells that can only be read one way ('0,5', '2,25', '0.5'; not
    '1,050'); with no such cell, '.' in a comma-separated file, else ','."""
    votes = {",": 0, ".": 0}
    for column in table.columns:
        for cell in column[:2000]:
            for mark in votes:
                m = re.escape(mark)
                votes[mark] += bool(re.fullmatch(rf"[+\-−]?(?:0{m}\d+|\d+{m}\d{{1,2}}|\d+{m}\d{{4,}})"
                                                 r"(?:\s*\S{0,4})?", cell.strip()))
    if votes[","] != votes["."]:
        return max(votes, key=votes.get)
    return "." if table.delimiter == "," else ","


_TEXT = {"part", "maker", "package", "notes"}
_FORMULA = ("=", "+", "@", "\t", "\r")


def _text_value(row: ImportRow, target: Target, text: str) -> None:
    name = target.columns[0]
    value = " ".join(text.split())  # line breaks in a cell become one space
    if name in _TEXT:
        if value.startswith(_FORMULA):
            raise ValueError(f"'{value}' starts with '{value[0]}', which a spreadsheet runs "
                             "as a formula; remove the sign")
        row.values[name] = value
    elif name == "kind":
        row.values["kind"], row.family = read_kind(value, target.family)
    elif name == "status":
        if value.lower() not in STATUS_WORDS:
            raise ValueError(f"unknown status '{value}'; expected active, nrnd (not "
                             "recommended for new designs) or eol (obsolete)")
        row.values["status"] = STATUS_WORDS[value.lower()]
    elif name == "preferred":
        if value.lower() not in YES | NO:
            raise ValueError(f"preferred is '{value}'; expected yes or no")
        row.values["preferred"] = "yes" if value.lower() in YES else "no"


def read_rows(table: TextTable, matches: list[HeaderMatch], *, kind: str | None = None,
              maker: str | None = None) -> tuple[list[ImportRow], list[Problem]]:
    """Every raw row converted; each cell that does not read is a Problem with
    the raw file, line and column. A row with any problem has `ok` False."""
    mark = decimal_mark(table)
    mapped = [m for m in matches if m.target is not None]
    rows, problems = [], []
    ragged = {line: (column, message) for line, column, message in table.problems}
    for pos, line in enumerate(table.lines):
        row = ImportRow(line)

        def problem(column, message, name=None, row=row):
            problems.append(Problem("error", table.path, row.line, column, message, name))
            row.ok = False

        if line in ragged:  # values may sit under the wrong headers: not guessed
            problem(ragged[line][0], ragged[line][1])
        for m in mapped:
            text = table.cells(m.position - 1)[pos]
            if text.strip().lower() in UNKNOWN_MARKERS:
                continue
            name = m.target.columns[0]
            try:
                if cols.spec_of(name)[0] is None:
                    _text_value(row, m.target, text)
                else:
                    values, note = cell_values(text, m.target, mark)
                    values.update(dict(m.target.constants))
                    row.values.update(values)
                    if note:
                        row.notes.append(f"{table.path}:{line}:{m.position}: {note}")
                for c in m.target.columns + tuple(c for c, _ in m.target.constants):
                    row.origin[c] = m.position
            except (QuantityError, ValueError) as exc:
                problem(m.position, getattr(exc, "message", str(exc)), m.target.name)
        _finish(row, kind, maker, problem)
        rows.append(row)
    return rows, problems


def _finish(row: ImportRow, kind: str | None, maker: str | None, problem) -> None:
    """Defaults from the options, the kind settled, P-type negatives made magnitudes."""
    if not row.values.get("part"):
        problem(row.origin.get("part"), "no part number in this row", "part")
    if maker and not row.values.get("maker"):
        row.values["maker"] = maker
    if kind and "kind" in row.values and row.values["kind"] not in (kind, kind[0]):
        problem(row.origin.get("kind"), f"kind '{row.values['kind']}' differs from "
                f"--kind {kind}", "kind")
    value = row.values.get("kind") or kind
    if value in ("n", "p"):  # a bare N or P: the row's columns tell MOSFET from bipolar
        mos = any(c.startswith(MOSFET_ONLY) for c in row.values)
        bjt = any(c.startswith(BIPOLAR_ONLY) for c in row.values)
        if mos == bjt:
            problem(row.origin.get("kind"), f"kind '{value.upper()}': cannot tell a MOSFET "
                    "from a bipolar part here; write e.g. P-channel or PNP", "kind")
            return
        value = value + "mos" if mos else {"n": "npn", "p": "pnp"}[value]
    if not value:
        if row.ok:
            problem(None, "no kind for this row; map a type column or pass --kind", "kind")
        return
    row.values["kind"] = value
    p_type = value in cols.P_TYPE_KINDS
    for name, v in list(row.values.items()):
        if not isinstance(v, float) or v >= 0:
            continue
        sign = cols.spec_of(name)[1]
        if sign == "magnitude" and p_type:
            row.values[name] = -v
        elif sign != "any":
            why = ("only P-channel and PNP values may be written negative"
                   if sign == "magnitude" else "it must be positive")
            problem(row.origin.get(name), f"negative value {v:g} in {name}; {why}", name)


def row_from_options(fields: list[tuple[str, str, str]]) -> tuple[ImportRow, list[Problem]]:
    """One row from the command line: (option, column or 'min..max', text) each,
    through the same conversion as an imported cell."""
    from picker.catalog.importer import target_from_name

    header, cells, matches, problems = [], [], [], []
    for i, (option, column, text) in enumerate(fields, start=1):
        try:
            target = target_from_name(column)
        except PickerError as exc:
            problems.append(Problem("error", "command line", None, None, f"{option}: {exc.message}"))
            continue
        header.append(column)
        cells.append([text])
        matches.append(HeaderMatch(len(header), option, target, 100.0, "option"))
    table = TextTable("command line", "utf-8", ",", header, 0, cells, [1], [])
    rows, found = read_rows(table, matches)
    for p in found:
        option = matches[p.column - 1].raw if p.column else f"--{p.column_name}"
        problems.append(Problem("error", "command line", None, None, f"{option}: {p.message}",
                                p.column_name))
    row = rows[0]
    row.ok, row.line, row.origin = not problems, None, {}  # no raw file line to point at
    return row, problems
