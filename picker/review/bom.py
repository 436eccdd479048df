"""A bill of materials: read it, find its lines in the catalogue, write a revised copy.

- `read_bom` reads a BOM CSV (any delimiter and encoding `tabular.read_table`
  reads), finds its columns by fuzzy header matching, expands reference lists
  and ranges, and keeps every original cell, so nothing is lost on the way back.
- `PartIndex.match` finds each line's part number in the catalogue: exact after
  normalising, then a known packaging suffix, then a fuzzy score computed with
  rapidfuzz's batch function (`process.cdist`) over catalogue keys of a similar
  length.
- `revised_bom` writes a copy with some lines' part number, maker and price
  replaced and one column added, keeping the bytes of everything else.

Nothing here imports the CLI framework or prints.
"""

from __future__ import annotations

import io
import math
import re
from dataclasses import dataclass, field

import numpy as np

from picker.catalog.load import Problem, normalise_part
from picker.errors import BomError, UsageError
from picker.catalog.tabular import decode, read_bytes, read_table

# -- the columns a BOM may have ------------------------------------------------------

# The usual spellings of each column (compared after `_header_key`), best first:
# where two headers both fit one field, the one matching an earlier spelling wins.
FIELDS: dict[str, tuple[str, ...]] = {
    "refs": ("ref des", "refdes", "reference designator", "reference designators",
             "designator", "designators", "references", "reference", "refs", "ref",
             "part reference", "part references", "location", "locations", "position"),
    "qty": ("qty", "quantity", "qty per board", "quantity per board", "qty per assembly",
            "qty board", "count", "pcs", "qnty", "amount"),
    "part": ("mpn", "mfr part number", "mfg part number", "manufacturer part number",
             "manufacturer part", "manufacturer pn", "mfr pn", "mfg pn", "mfr part", "mfg part",
             "part number", "pn", "p n", "part no", "part", "component"),
    "description": ("description", "desc", "part description", "comment", "details", "value"),
    "maker": ("manufacturer", "mfr", "mfg", "maker", "manufacturer name", "mfr name",
              "mfg name", "make", "brand"),
    "price": ("unit price", "price", "unit cost", "price each", "cost each", "price per unit",
              "cost per unit", "cost", "each"),
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

# Packaging and finish codes makers append to a part number: tape and reel, reel
# sizes, cut tape, bulk, lead-free. Compared after `normalise_part`.
PACKAGING_SUFFIXES = ("tr", "reel", "rl", "r7", "r13", "ct", "cut", "bulk", "tape", "pbf", "lf",
                      "nopb")
MAX_RANGE = 10_000  # refs in one range such as Q1-Q10000; a longer one is kept as written
MAX_REFS = 1_000_000  # refs in the whole BOM, ranges expanded: beyond it, an error
MAX_QTY = 100_000  # parts per board on one line (as picker.design.requirements.MAX_QTY)


def _header_key(text: str) -> str:
    """'Mfr. Part #' -> 'mfr part number'; '(USD)' and the like are dropped."""
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

TAKE_AT = 95.0  # score (0-100) from which a match is taken as is
CONFIRM_AT = 80.0  # score from which it is taken but marked for the engineer to confirm
SUFFIX_SCORE = 98.0  # the catalogue part plus a known packaging suffix


@dataclass(frozen=True)
class Match:
    """How one BOM part number was found in the catalogue."""

    position: int  # row position in the catalogue DataFrame; -1: none
    score: float  # 0-100
    how: str  # 'exact', 'suffix', 'fuzzy', 'tail' or '' (none)
    status: str  # 'taken', 'confirm' or 'none'
    also: tuple[int, ...] = ()  # positions that score as well (ambiguous)

    @property
    def found(self) -> bool:
        return self.position >= 0


NO_MATCH = Match(-1, 0.0, "", "none")


class PartIndex:
    """The catalogue's part numbers, normalised once, for matching BOM lines.

    Score of a BOM part number b against a catalogue part number k, both
    normalised (case folded, everything but letters and digits dropped):

    - 100, 'exact': b == k.
    - 98, 'suffix': b is k followed by known packaging codes (`-TR`, `-REEL`...).
    - 'fuzzy': 100 x the optimal-string-alignment similarity,
      1 - d / max(len b, len k), where d counts insertions, deletions,
      substitutions and swaps of two neighbours, each as one edit. One wrong
      character in an 8-character part number scores 87.5; two score 75.
    - 'tail': where k is a prefix of b (an unknown suffix of t characters),
      the insertion-only similarity 1 - t / (len b + len k), so an unknown
      two-letter suffix on an 8-character part scores 88.9, not 80: an extra
      tail is weaker evidence of another part than a changed character.

    The best-scoring part is the match: taken from `take_at`, marked to
    confirm from `confirm_at`, none below. Two parts scoring the same are
    ambiguous: marked to confirm, with both named, even above `take_at`.
    """

    def __init__(self, parts) -> None:
        import pandas as pd

        raw = pd.Series(parts, dtype=object).astype(str)
        self.parts = raw.to_numpy()
        self.keys = raw.str.casefold().str.replace(r"[^0-9a-z]", "", regex=True).to_numpy()
        self.folded = raw.str.casefold().str.replace(r"\s+", "", regex=True).to_numpy()
        self.by_key: dict[str, list[int]] = {}
        for pos, key in enumerate(self.keys):
            if key:
                self.by_key.setdefault(key, []).append(pos)
        lengths = np.fromiter((len(k) for k in self.keys), dtype=np.int64, count=len(self.keys))
        order = np.argsort(lengths, kind="stable")
        self._sorted_pos = order
        self._sorted_len = lengths[order]
        self._sorted_keys = self.keys[order].tolist()

    def match(self, names: list[str], *, fuzzy: np.ndarray | None = None,
              take_at: float = TAKE_AT, confirm_at: float = CONFIRM_AT) -> list[Match]:
        """A Match for every name. `fuzzy` (bool per name, default all) says
        which names may be matched by score; the others only exactly or by suffix."""
        if not 0 <= confirm_at <= take_at <= 100:
            raise UsageError(f"thresholds must satisfy 0 <= confirm ({confirm_at:g}) <= take "
                             f"({take_at:g}) <= 100")
        out: list[Match] = [NO_MATCH] * len(names)
        pending: list[tuple[int, str, str]] = []
        for i, name in enumerate(names):
            key = normalise_part(name)
            if not key:
                continue
            hits = self.by_key.get(key)
            if hits:
                out[i] = self._pick(hits, name, 100.0, "exact", take_at)
                continue
            core = self._strip_suffixes(key)
            if core != key and core in self.by_key:
                out[i] = self._pick(self.by_key[core], name, SUFFIX_SCORE, "suffix", take_at)
                continue
            if fuzzy is None or fuzzy[i]:
                pending.append((i, key, core))
        if pending and confirm_at < 100:
            for i, m in self._fuzzy(pending, take_at, confirm_at).items():
                out[i] = m
        return out

    def _pick(self, hits: list[int], name: str, score: float, how: str, take_at: float) -> Match:
        if len(hits) > 1:  # 'QLB-4N60K' and 'QLB4N60K' are both catalogue parts
            folded = "".join(name.split()).casefold()
            same = [p for p in hits if self.folded[p] == folded]
            if len(same) == 1:
                return Match(same[0], score, how, "taken" if score >= take_at else "confirm")
            return Match(hits[0], score, how, "confirm", tuple(hits[1:]))
        return Match(hits[0], score, how, "taken" if score >= take_at else "confirm")

    @staticmethod
    def _strip_suffixes(key: str) -> str:
        for _ in range(3):  # '-TR-PBF': up to three codes
            for suffix in PACKAGING_SUFFIXES:
                if key.endswith(suffix) and len(key) - len(suffix) >= 4:
                    key = key[: -len(suffix)]
                    break
            else:
                break
        return key

    def _fuzzy(self, pending: list[tuple[int, str, str]], take_at: float, confirm_at: float
               ) -> dict[int, Match]:
        """Scores for the names not found exactly: the name as written and with
        its packaging codes removed are both scored; the better one counts."""
        from rapidfuzz import process
        from rapidfuzz.distance import OSA

        cutoff = confirm_at / 100.0
        best: dict[int, tuple[float, set[int], str]] = {}

        def offer(i: int, score: float, hits, how: str) -> None:
            now = best.get(i)
            if now is None or score > now[0] + 1e-6:
                best[i] = (score, set(hits), how)
            elif abs(score - now[0]) <= 1e-6:
                now[1].update(hits)

        queries: dict[int, list[tuple[int, str]]] = {}  # by length
        for i, key, core in pending:
            for k in {key, core}:
                queries.setdefault(len(k), []).append((i, k))
        for length, group in queries.items():
            # OSA similarity >= cutoff needs min(len) >= cutoff * max(len)
            lo = math.ceil(cutoff * length - 1e-9)
            hi = math.floor(min(length / cutoff, 1e9) + 1e-9) if cutoff > 0 else 10**9
            a, b = np.searchsorted(self._sorted_len, [lo, hi + 1])
            keys, positions = self._sorted_keys[a:b], self._sorted_pos[a:b]
            if not keys:
                continue
            chunk = max(1, 4_000_000 // len(keys))  # at most 16 MB of float32 scores
            for start in range(0, len(group), chunk):
                part = group[start:start + chunk]
                scores = process.cdist([k for _, k in part], keys,
                                       scorer=OSA.normalized_similarity, score_cutoff=cutoff,
                                       dtype=np.float32, workers=-1)
                top = scores.max(axis=1)
                for row in np.flatnonzero((top >= cutoff) & (top > 0)):
                    ties = np.flatnonzero(scores[row] >= top[row] - 1e-6)
                    offer(part[row][0], float(top[row]) * 100.0, positions[ties].tolist(), "fuzzy")
        for i, key, core in pending:  # a catalogue part followed by an unknown tail
            for k in {key, core}:
                for cut in range(len(k) - 1, max(3, len(k) - 8), -1):
                    hits = self.by_key.get(k[:cut])
                    if hits:
                        score = 100.0 * (1.0 - (len(k) - cut) / (len(k) + cut))
                        if score >= confirm_at:
                            offer(i, score, hits, "tail")
                        break
        out = {}
        for i, (score, hits, how) in best.items():
            ordered = sorted(hits, key=lambda p: self.parts[p])
            status = "taken" if score >= take_at and len(ordered) == 1 else "confirm"
            out[i] = Match(ordered[0], round(score, 1), how, status, tuple(ordered[1:6]))
        return out


# -- writing a revised BOM -----------------------------------------------------------

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


def _physical_lines(text: str) -> list[str]:
    """`text` split after each line break as the csv module counts them (CR,
    LF, CRLF), endings kept (str.splitlines also splits at form feeds and
    other separators, which the csv module reads as text)."""
    return re.findall(r"[^\r\n]*(?:\r\n|\r|\n)|[^\r\n]+$", text)


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
