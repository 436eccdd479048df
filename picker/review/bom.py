"""A bill of materials: read it, keeping every original cell.

- `read_bom` reads a BOM CSV (any delimiter and encoding `tabular.read_table`
  reads), finds its columns by fuzzy header matching, expands reference lists
  and ranges, and keeps every original cell, so nothing is lost on the way back.
- `picker.review.match` finds each line's part number in the catalogue, and
  `picker.review.revised` writes the revised copy.

Nothing here imports the CLI framework or prints.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np

from picker.catalog.load import Problem
from picker.errors import BomError, UsageError
from picker.catalog.tabular import decode, read_bytes, read_table

# -- the columns a BOM may have ------------------------------------------------------

# What each column is called, best first (compared after `_header_key`): where two
# headers both fit one field, the one matching an earlier spelling wins. Only
# the standards' terms ("reference designator": IEEE 315 / ASME Y14.44), the
# trade's abbreviations (refdes, qty, MPN) and plain English; a BOM that names
# a column otherwise is read with --column FIELD=HEADER. tests/test_own_words.py
# lists every entry with its source.
FIELDS: dict[str, tuple[str, ...]] = {
    "refs": ("reference designators", "reference designator", "refdes", "ref des", "refs", "ref",
             "references", "reference"),
    "qty": ("qty", "quantity", "qty per board", "quantity per board", "qty per assembly",
            "quantity per assembly", "count"),
    "part": ("mpn", "manufacturer part number", "part number", "part no", "part"),
    "description": ("description", "desc", "part description"),
    "maker": ("manufacturer", "maker", "manufacturer name", "make", "brand"),
    "price": ("unit price", "price", "unit cost", "price each", "cost each", "cost"),
}
FIELD_NAMES = {"refs": "reference designators", "qty": "quantity", "part": "part number",
               "description": "description", "maker": "maker", "price": "unit price"}
HEADER_SCORE = 85.0  # fuzz.ratio of a header against a spelling, 0-100, to be taken
PREAMBLE_LINES = 30  # title lines above the header that are looked through

# Reference designator class letters of transistors: Q (IEEE 315 / ASME Y14.44),
# TR (older British drawings, BS 3939).
TRANSISTOR_LETTERS = ("Q", "TR")
_TRANSISTOR_WORDS = re.compile(r"\b(MOSFET|FET|TRANS|TRANSISTOR|NPN|PNP|BJT|[NP]-?CH(ANNEL)?)\b",
                               re.IGNORECASE)
_KIND_WORDS = (("pmos", re.compile(r"\bP-?CH(ANNEL)?\b|\bPMOS\b", re.I)),
               ("nmos", re.compile(r"\bN-?CH(ANNEL)?\b|\bNMOS\b", re.I)),
               ("npn", re.compile(r"\bNPN\b", re.I)), ("pnp", re.compile(r"\bPNP\b", re.I)))

MAX_RANGE = 10_000  # refs in one range such as Q1-Q10000; a longer one is kept as written
MAX_REFS = 1_000_000  # refs in the whole BOM, ranges expanded: beyond it, an error
MAX_QTY = 100_000  # parts per board on one line (as picker.design.requirements.MAX_QTY)


def _header_key(text: str) -> str:
    """'Part #' and 'Part No.' -> 'part number'; '(USD)' and the like are dropped."""
    text = re.sub(r"\([^)]*\)|\[[^\]]*\]", " ", text.casefold())
    text = text.replace("#", " number ").replace("no.", "number ")
    return " ".join(re.sub(r"[^0-9a-z]+", " ", text).split())


@dataclass(frozen=True)
class BomLine:
    """One data row of the BOM: every original cell, and what picker reads from them."""

    row: int  # 0-based data row
    line: int  # file line the row starts on
    cells: tuple[str, ...]  # every cell, stripped, in header order
    refs: tuple[str, ...]
    qty: int | None  # parts per board used for costing (None: unknown)
    part: str
    description: str
    maker: str
    bom_price: float  # the BOM's unit price; NaN without one
    transistor: bool | None  # from the refs or the description; None: cannot tell
    kind_hint: str | None  # 'npn' etc. where the description says so


@dataclass
class Bom:
    path: str
    data: bytes  # the file as read: never written back
    encoding: str
    delimiter: str
    header: list[str]
    header_line: int
    columns: dict[str, int]  # field -> 0-based column position
    lines: list[BomLine]
    warnings: list[Problem] = field(default_factory=list)
    decimal_comma: bool = False  # the price cells use a decimal comma

    def column_name(self, name: str) -> str | None:
        pos = self.columns.get(name)
        return None if pos is None else self.header[pos]

    def cells_of(self, line: BomLine, name: str) -> str:
        """The cell of field `name` on `line` as read ('' without such a column)."""
        pos = self.columns.get(name)
        return line.cells[pos] if pos is not None and pos < len(line.cells) else ""


# -- the header ----------------------------------------------------------------------

def map_header(header: list[str], overrides: dict[str, str] | None = None
               ) -> dict[str, int]:
    """field -> column position, by fuzzy matching each header against the usual
    spellings (rapidfuzz `fuzz.ratio` over all headers and spellings at once).
    `overrides` (field -> header text, or a 1-based column number) win.
    Raises BomError for an override naming no column."""
    from rapidfuzz import fuzz, process

    overrides = overrides or {}
    found: dict[str, int] = {}
    keys = [_header_key(h) for h in header]
    for name, wanted in overrides.items():
        if name not in FIELDS:
            raise UsageError(f"--column {name}=...: unknown field '{name}'; "
                             f"one of {', '.join(FIELDS)}")
        pos = _override_position(header, keys, wanted)
        if pos is None:
            raise BomError(f"--column {name}={wanted}: no such column; the columns are "
                           + ", ".join(f"'{' '.join(h.split())}'" for h in header[:40]))
        found[name] = pos
    spellings = [(f, rank, s) for f in FIELDS for rank, s in enumerate(FIELDS[f])]
    scores = process.cdist(keys, [s for _, _, s in spellings], scorer=fuzz.ratio,
                           dtype=np.float32) if keys else np.zeros((0, len(spellings)))
    pairs = []  # (score, -rank, field, position)
    for j, (name, rank, _) in enumerate(spellings):
        for pos in np.flatnonzero(scores[:, j] >= HEADER_SCORE):
            pairs.append((float(scores[pos, j]), -rank, name, int(pos)))
    taken = set(found.values())
    for score, _, name, pos in sorted(pairs, reverse=True):
        if name in found or pos in taken:
            continue
        found[name] = pos
        taken.add(pos)
    return found


def _override_position(header: list[str], keys: list[str], wanted: str) -> int | None:
    if wanted.strip().isdigit() and 1 <= int(wanted) <= len(header):
        return int(wanted) - 1
    exact = [i for i, h in enumerate(header) if h.strip() == wanted.strip()]
    if exact:
        return exact[0]
    folded = [i for i, k in enumerate(keys) if k == _header_key(wanted)]
    return folded[0] if folded else None


def _usable(found: dict[str, int]) -> bool:
    return "part" in found and ("refs" in found or "qty" in found)


def _header_error(path: str, line: int, header: list[str], found: dict[str, int]) -> BomError:
    """One line: which columns were recognised, which are missing, how to name them."""
    def shown(text: str) -> str:  # a header cell may hold line breaks: one line
        text = " ".join(text.split())
        return text if len(text) <= 40 else text[:37] + "..."

    have = ", ".join(f"{f}='{shown(header[p])}'" for f, p in found.items()) or "none"
    need = ["part"] if "part" not in found else []
    if "refs" not in found and "qty" not in found:
        need.append("refs or qty")
    others = [shown(h) for i, h in enumerate(header) if i not in found.values() and h.strip()]
    if len(others) > 12:
        others = others[:12] + [f"... {len(others) - 12} more"]
    example = " ".join(f"--column {n.split()[-1]}=HEADER" for n in need)
    return BomError(f"BOM columns not recognised: found {have}; missing "
                    f"{' and '.join(need)} (among: {', '.join(others) or 'no other column'}); "
                    f"name them, e.g. {example}", file=path, line=line)


# -- reading -------------------------------------------------------------------------

def read_bom(path: str, *, columns: dict[str, str] | None = None,
             data: bytes | None = None) -> Bom:
    """Read a BOM; BomError (with file and line) when its header cannot be used."""
    path = str(path)
    if data is None:
        data = read_bytes(path, BomError, "BOM")
    known = {s for spellings in FIELDS.values() for s in spellings}
    table = read_table(path, error=BomError, what="BOM", known=known, data=data)
    found = map_header(table.header, columns)
    if not _usable(found) and not columns:
        table, found = _after_preamble(path, data, table, found, known)
    if not _usable(found):
        raise _header_error(path, table.header_line, table.header, found)
    bom = Bom(path, data, table.encoding, table.delimiter, table.header, table.header_line,
              found, [])
    for line, column, message in table.problems:
        bom.warnings.append(Problem("warning", path, line, column, message))
    _read_lines(bom, table)
    return bom


def _after_preamble(path, data, table, found, known):
    """A header below title lines: the first of the top lines that names the
    part column and the refs or quantity; the table re-read from there."""
    text, _ = decode(data, path, BomError)
    lines = _physical_lines(text)  # as the csv module counts lines
    import csv

    for k in range(1, min(len(lines), PREAMBLE_LINES)):
        if not lines[k].strip():
            continue
        for delimiter in (",", ";", "\t"):
            try:
                cells = next(csv.reader([lines[k]], delimiter=delimiter), [])
            except csv.Error:  # e.g. a field past the csv module's size limit: not a header
                continue
            candidate = map_header([c.strip() for c in cells])
            if len(cells) > 1 and _usable(candidate):
                rest = "".join(lines[k:]).encode("utf-8")
                again = read_table(path, error=BomError, what="BOM", known=known, data=rest)
                again.encoding = table.encoding
                again.header_line += k
                again.lines = [n + k for n in again.lines]
                again.problems = [(n + k, c, m) for n, c, m in again.problems]
                return again, map_header(again.header)
    return table, found


def _read_lines(bom: Bom, table) -> None:
    cols = bom.columns
    n = len(table.lines)
    cells_by_row = list(zip(*table.columns)) if table.columns else [()] * n
    comma_prices = 0
    total_refs = 0
    seen_refs: dict[str, int] = {}

    def cell(row: tuple, name: str) -> str:
        pos = cols.get(name)
        return row[pos] if pos is not None else ""

    for i, (line, cells) in enumerate(zip(table.lines, cells_by_row)):
        warn = lambda col, msg: bom.warnings.append(  # noqa: E731
            Problem("warning", bom.path, line, None if col is None else cols[col] + 1, msg))
        refs, problems = expand_refs(cell(cells, "refs"))
        total_refs += len(refs)
        if total_refs > MAX_REFS:
            raise BomError(f"the BOM names more than {MAX_REFS:,} refs (ranges expanded); picker "
                           "reads BOMs up to that many (split it)", file=bom.path, line=line,
                           column=cols["refs"] + 1)
        for message in problems:
            warn("refs", message)
        for ref in refs:
            if ref.upper() in seen_refs:
                warn("refs", f"{ref} is also on line {seen_refs[ref.upper()]}")
            else:
                seen_refs[ref.upper()] = line
        qty = _quantity(cell(cells, "qty"), refs, warn, "qty" in cols)
        price_text = cell(cells, "price")
        price = _price(price_text, table.decimal_comma)
        if price_text and math.isnan(price):
            warn("price", f"unit price '{price_text}' is not a number; ignored")
        comma_prices += "," in price_text and "." not in price_text
        description = cell(cells, "description")
        bom.lines.append(BomLine(i, line, tuple(cells), tuple(refs), qty, cell(cells, "part"),
                                 description, cell(cells, "maker"), price,
                                 _looks_transistor(refs, description), _kind_hint(description)))
    bom.decimal_comma = comma_prices > 0


_REF = re.compile(r"^([A-Za-z_]+)(\d+)$")


def expand_refs(text: str) -> tuple[list[str], list[str]]:
    """'Q1, Q3' -> [Q1, Q3]; 'Q4-Q7' (or 'Q4-7', 'Q4..Q7') -> [Q4, Q5, Q6, Q7].
    Separators: comma, semicolon, spaces. A token that is not a usable range
    (mixed letters, descending, over MAX_RANGE refs, numbers of more than 18
    digits) is kept as one ref, with a problem message: never expanded.
    Returns (refs, problems)."""
    text = re.sub(r"\s*(?:\.\.|[-–—])\s*", "-", text.strip())
    refs: list[str] = []
    problems: list[str] = []
    for token in filter(None, re.split(r"[,;\s]+", text)):
        if "-" not in token:
            refs.append(token)
            continue
        a, _, b = token.partition("-")
        ma, mb = _REF.match(a), _REF.match(b) or re.match(r"^()(\d+)$", b)
        if not (ma and mb) or "-" in b or (mb.group(1) and mb.group(1).upper() != ma.group(1).upper()):
            refs.append(token)  # e.g. 'U1-A': a name with a dash, not a range
            continue
        if max(len(ma.group(2)), len(mb.group(2))) > 18:
            problems.append(f"'{token}': numbers this long are not a usable range; kept as written")
            refs.append(token)
            continue
        start, end = int(ma.group(2)), int(mb.group(2))
        if end < start or end - start + 1 > MAX_RANGE:
            problems.append(f"'{token}' is not a usable range (write e.g. Q4-Q7); kept as written")
            refs.append(token)
            continue
        refs.extend(f"{ma.group(1)}{k}" for k in range(start, end + 1))
    return refs, problems


def _quantity(text: str, refs: list[str], warn, has_column: bool) -> int | None:
    """Parts per board: the quantity cell, else the count of refs."""
    m = re.match(r"^(\d+)(?:[.,]0*)?\s*(?:pcs?|x|ea)?$", text.strip(), re.IGNORECASE)
    if text.strip() and not m:
        if refs:
            warn("qty", f"quantity '{text}' is not a whole number; using the {len(refs)} refs")
            return len(refs)
        warn("qty", f"quantity '{text}' is not a whole number and there are no refs; "
             "the line cannot be costed")
        return None
    if not m:
        if has_column and not refs:
            warn("qty", "no quantity and no refs; the line cannot be costed")
            return None
        return len(refs) if refs else None
    if len(m.group(1).lstrip("0")) > len(str(MAX_QTY)) or int(m.group(1)) > MAX_QTY:
        what = f"using the {len(refs)} refs" if refs else "the line cannot be costed"
        warn("qty", f"quantity '{_clip(text.strip())}' is over {MAX_QTY:,} per board; {what}")
        return len(refs) if refs else None
    qty = int(m.group(1))
    if refs and qty != len(refs):
        warn("qty", f"quantity {qty} disagrees with the {len(refs)} refs "
             f"({_short(refs)}); costed at the quantity, {qty} per board")
    return qty


def _clip(text: str, length: int = 40) -> str:
    return text if len(text) <= length else text[:length - 3] + "..."


def _short(refs: list[str]) -> str:
    return ", ".join(refs) if len(refs) <= 6 else ", ".join(refs[:5]) + f", ... {refs[-1]}"


def _price(text: str, decimal_comma: bool) -> float:
    """'0.061', '$0.061', '0,061' (decimal comma), '1,234.50', '0.061 USD' -> float; NaN if not."""
    t = re.sub(r"(?i)\b(usd|eur|gbp|chf|cny|jpy)\b|[$€£¥\s]", "", text)
    if not t:
        return math.nan
    if "," in t and "." in t:
        t = t.replace(",", "") if t.rfind(".") > t.rfind(",") else t.replace(".", "").replace(",", ".")
    elif "," in t and (decimal_comma or re.fullmatch(r"\d*,\d{1,2}|\d*,\d{4,}|0,\d+", t)):
        t = t.replace(",", ".")
    try:
        value = float(t)
    except ValueError:
        return math.nan
    return value if value >= 0 and math.isfinite(value) else math.nan


def _looks_transistor(refs: list[str], description: str) -> bool | None:
    letters = {re.match(r"^[A-Za-z_]*", r).group(0).upper() for r in refs}
    letters.discard("")
    if letters:
        return bool(letters & set(TRANSISTOR_LETTERS))
    if description:
        return bool(_TRANSISTOR_WORDS.search(description))
    return None


def _kind_hint(description: str) -> str | None:
    hits = [kind for kind, pattern in _KIND_WORDS if pattern.search(description)]
    return hits[0] if len(hits) == 1 else None


# -- matching part numbers -----------------------------------------------------------


def _physical_lines(text: str) -> list[str]:
    """`text` split after each line break as the csv module counts them (CR,
    LF, CRLF), endings kept (str.splitlines also splits at form feeds and
    other separators, which the csv module reads as text)."""
    return re.findall(r"[^\r\n]*(?:\r\n|\r|\n)|[^\r\n]+$", text)
