"""Bring a supplier's or maker's parameter table into the catalogue: the headers.

`propose_mapping` maps every raw header to a catalogue column, with a score.
Exact interface names score 100; other spellings are scored with rapidfuzz
against the vocabulary below, after the header's unit ("(Ω)", "[mA]") and
conditions ("@ VGS=-2.5V", "Ic=1mA", "Tj=85°C", "(1k)") are parsed out, so
"RDS(on) max @ VGS=-2.5V (Ω)" becomes `rds_on_mohm@2.5V` with Ω -> mΩ ×1000.
A mapping file (TOML, `load_mapping` / `mapping_toml`) fixes or overrides it.

The cells and rows are read in `picker.catalog.import_rows`; the merge with
the catalogue and the safe write are in `picker.catalog.merge`. Nothing here
prints or imports the CLI framework.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from decimal import Decimal

from picker.catalog import columns as cols
from picker.errors import MappingError, QuantityError, one_line
from picker.catalog.quantities import PREFIX_EXP, parse_quantity, unit_label

MAP_AT = 80.0  # a header scoring below this is left unmapped and listed
MAX_MAPPING_BYTES = 1_000_000  # a mapping file's bound, as a requirement file's

# -- the vocabulary ---------------------------------------------------------
# What the trade and the open standards call each quantity, and nothing else:
# the parameter names and letter symbols of IEC 60747-8 (field-effect
# transistors) and IEC 60747-7 (bipolar transistors), the letter symbols of
# JEDEC JESD77 (terms and letter symbols for discrete semiconductors; the
# number from memory), and plain English. Written in lower case, punctuation
# as spaces, as `_split_header` leaves a header ('V(BR)DSS' -> 'v br dss',
# 'RθJA' -> 'rthja'). A supplier's own spellings are not here: a table that
# uses them is read with a mapping file (--map). tests/test_own_words.py lists
# every entry with its source.
# A key starting with '_' is a quantity the catalogue has no column for: a
# header matching it best is listed as left out, with the reason.
VOCABULARY: dict[str, tuple[str, ...]] = {
    "part": ("part", "part number", "part no", "manufacturer part number", "type number",
             "type designation", "ordering code", "device"),
    "maker": ("manufacturer", "maker", "manufacturer name", "make", "brand"),
    "kind": ("channel", "channel type", "polarity", "type", "transistor type"),
    "package": ("package", "case", "outline", "package outline", "case outline"),
    "status": ("status", "lifecycle", "lifecycle status"),
    "notes": ("notes", "note", "remarks", "remark", "comment", "comments"),
    "vds_max_V": ("vds", "vdss", "v br dss", "drain source voltage",
                  "drain source breakdown voltage"),
    "vgs_max_V": ("vgs", "vgss", "gate source voltage"),
    "id_max_A": ("id", "drain current", "continuous drain current"),
    "vgs_th": ("vgs th", "gate source threshold voltage", "gate threshold voltage",
               "threshold voltage"),
    "rds_on": ("rds on", "drain source on state resistance",
               "static drain source on state resistance", "drain source on resistance",
               "on state resistance", "on resistance"),
    "idss": ("idss", "zero gate voltage drain current", "drain cut off current",
             "drain leakage current"),
    "vceo_max_V": ("vceo", "v br ceo", "collector emitter voltage",
                   "collector emitter breakdown voltage"),
    "ic_max_A": ("ic", "collector current", "continuous collector current"),
    "hfe": ("hfe", "h21e", "static forward current transfer ratio", "dc current gain",
            "current gain"),
    "vce_sat": ("vce sat", "collector emitter saturation voltage", "saturation voltage"),
    "vbe_on_V": ("vbe", "vbe on", "base emitter voltage", "base emitter on voltage"),
    "icbo": ("icbo", "collector cut off current", "collector base cut off current",
             "collector leakage current"),
    "rth_ja_C/W": ("rth j a", "r theta ja", "thermal resistance junction to ambient",
                   "thermal resistance"),
    "tj_max_C": ("tj", "junction temperature", "operating junction temperature"),
    "price": ("price", "unit price", "cost", "unit cost"),
    "vgs_th_tc_mV/C": ("threshold temperature coefficient",
                       "gate threshold voltage temperature coefficient"),
    "rds_tc_pct/C": ("on resistance temperature coefficient",
                     "on state resistance temperature coefficient"),
    "_pd": ("pd", "ptot", "power dissipation", "total power dissipation"),
    "_other": ("rth j c", "r theta jc", "thermal resistance junction to case", "vcbo", "vebo",
               "iceo", "iebo", "igss", "gate leakage current", "vgs off", "qg", "gate charge",
               "total gate charge", "ciss", "input capacitance", "coss", "output capacitance",
               "crss", "reverse transfer capacitance", "td on", "td off", "rise time",
               "fall time", "ft", "transition frequency", "vsd", "source drain voltage",
               "diode forward voltage", "idm", "peak drain current", "icm",
               "peak collector current", "description", "datasheet"),
}
LEFT_OUT = {"_pd": "power dissipation has no catalogue column (picker uses rth_ja_C/W; take "
                   "it from the datasheet rather than from Pd, which depends on the test board)",
            "_other": "a quantity the catalogue has no column for"}

# Quantities with more than one column, and what a header qualifier selects.
THRESHOLD = {"min": "vgs_th_min_V", "typ": "vgs_th_typ_V", "max": "vgs_th_max_V"}
PAIRS = {("vgs_th_min_V", "vgs_th_max_V")}
# Which qualifier a quantity's catalogue column holds (upper limits, lower limits).
HOLDS = {"rds_on": "max", "vce_sat": "max", "idss": "max", "icbo": "max", "hfe": "min",
         "vbe_on_V": "typ"}
MOSFET_ONLY = ("vds_max_V", "vgs_max_V", "id_max_A", "vgs_th_", "rds_on_mohm", "idss_", "qg_nC")
BIPOLAR_ONLY = ("vceo_max_V", "ic_max_A", "hfe_min", "vce_sat_mV", "vbe_on_V", "icbo_")
_UNIT_KEYS = ("V", "A", "ohm", "W", "degC", "C/W", "mV/C", "pct/C")


@dataclass(frozen=True)
class Target:
    """Where one raw column goes."""

    columns: tuple[str, ...]  # one column, or (min, max) of a pair
    unit: str = ""  # unit text the header gave ('Ω'); applies to bare numbers
    ranges: str = "error"  # a range cell: 'pair' splits it, 'low' keeps the low end
    constants: tuple[tuple[str, float], ...] = ()  # e.g. (('idss_hot_C', 85.0),)
    family: str = ""  # 'mos' or 'bjt' when the header says (for N/P kind cells)

    @property
    def name(self) -> str:
        return "..".join(self.columns)

    @property
    def factor(self) -> float:
        """What a bare number in this raw column is multiplied by (Ω -> mΩ: 1000)."""
        unit = cols.spec_of(self.columns[0])[0]
        return parse_quantity("1" + self.unit, unit) if self.unit and unit else 1.0

    def conversion(self) -> str:
        """'Ω -> mΩ ×1000' for people; '' when no conversion."""
        if self.factor == 1:
            return ""
        return f"{self.unit} -> {unit_label(cols.spec_of(self.columns[0])[0])} ×{_plain(self.factor)}"


@dataclass(frozen=True)
class HeaderMatch:
    position: int  # 1-based column in the raw table
    raw: str
    target: Target | None
    score: float
    how: str  # 'name', 'vocabulary', 'map', 'option'
    note: str = ""  # why it is left out, or what else it means
    guess: str = ""  # the closest quantity, for a header left out


def _plain(value) -> str:
    text = format(Decimal(repr(float(value))), "f")
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


# -- reading one header -------------------------------------------------------

def _unit_of(text: str) -> str | None:
    """The quantities unit key that `text` (a unit symbol alone) measures, or None."""
    text = text.strip()
    if not text or any(ch.isdigit() for ch in text) or text in PREFIX_EXP or len(text) > 8:
        return None
    for key in _UNIT_KEYS:
        try:
            parse_quantity("1" + text, key)
            return key
        except QuantityError:
            continue
    return None


_BRACKET = re.compile(r"[(\[]\s*([^()\[\]]*?)\s*[)\]]")
_COND = re.compile(
    r"(?:\b(?P<var>vgs|vds|vce|ic|ib|id|tj|ta|tc|t|qty|quantity)\s*)?(?P<op>=|@|≥|>=|\bat\b)?\s*"
    r"(?P<num>[+-]?(?:\d+(?:\.\d+)?|\.\d+))\s*(?P<unit>mv|v|ma|µa|ua|na|a|°c|ºc|degc|c|k|pcs|pieces)?"
    r"(?![a-z0-9])")
_LINK_WORDS = {"at", "of", "the", "and", "with", "for"}  # 'ICBO at TA = 150 °C'
_QUALIFIERS = {"min": r"\bmin(?:imum)?\b", "typ": r"\b(?:typ(?:ical)?|nom(?:inal)?)\b",
               "max": r"\bmax(?:imum)?\b"}


def _split_header(raw: str) -> tuple[str, str, list[tuple[str, float, str]], set[str]]:
    """(unit text, words left, conditions [(variable, value, unit)], qualifiers)."""
    unit, rest = "", raw.replace("\u2212", "-").replace("\u03bc", "µ")
    for m in _BRACKET.finditer(rest):
        if _unit_of(m.group(1)):
            unit, rest = m.group(1), rest[:m.start()] + " " + rest[m.end():]
            break
    else:
        tokens = rest.split()
        for prev, tok in zip(tokens, tokens[1:]):
            if not re.search(r"[\d=@]$", prev) and _unit_of(tok.strip(",;:")):  # not '0.5 A'
                unit = tok.strip(",;:")
                rest = " ".join(t for t in tokens if t is not tok)
                break
    low = re.sub(r"(?<![\w.])(\d+)v(\d+)(?![\w.])", r"\1.\2v", rest.lower())  # '2V5'
    low = re.sub(r"\b([vi])\s*[(_]?\s*(gs|ds|ce|c|b|d)\s*\)?(?=\s*(?:=|@|≥))", r"\1\2", low)
    conditions = []
    for m in _COND.finditer(low):
        value = float(m.group("num"))
        cond_unit = (m.group("unit") or "").replace("µ", "u").replace("º", "°")
        conditions.append((m.group("var") or "", value, cond_unit))
    words = _COND.sub(" ", low)
    qualifiers = {q for q, pattern in _QUALIFIERS.items() if re.search(pattern, words)}
    for pattern in _QUALIFIERS.values():
        words = re.sub(pattern, " ", words)
    words = words.replace("θ", "th").replace("#", " no ")
    words = " ".join(re.sub(r"[^a-z0-9]+", " ", words).split())
    words = " ".join(w for w in words.split() if w not in _LINK_WORDS) or words
    return unit, words, conditions, qualifiers


def _score(words: str) -> tuple[str, float]:
    """The quantity of the vocabulary closest to `words`, and the score (0-100)."""
    from rapidfuzz import fuzz

    best, best_score = "", 0.0
    squeezed = words.replace(" ", "")
    for quantity, spellings in VOCABULARY.items():
        for s in spellings:
            score = max(fuzz.token_sort_ratio(words, s), fuzz.ratio(squeezed, s.replace(" ", "")))
            if len(words.split()) > 1 and len(s.split()) > 1:  # 'drain source voltage vds'
                score = max(score, (fuzz.token_sort_ratio(words, s)
                                    + fuzz.token_set_ratio(words, s)) / 2)
            if score > best_score:
                best, best_score = quantity, float(score)
    return best, round(best_score, 1)


def _pick(conditions, dimension_units, variables) -> list[float]:
    """Distinct values of the conditions in `dimension_units` named by one of
    `variables` (or by none)."""
    found = []
    for var, value, unit in conditions:
        if unit in dimension_units and var in variables:
            scale = dimension_units[unit]
            found.append(abs(float(Decimal(repr(value)) * Decimal(scale))))
    return sorted(set(found))


_VOLT = {"v": "1", "mv": "0.001"}
_MILLIAMP = {"ma": "1", "ua": "0.001", "na": "0.000001", "a": "1000"}
_DEGREES = {"°c": "1", "c": "1", "degc": "1"}


def match_header(position: int, raw: str, min_score: float = MAP_AT) -> HeaderMatch:
    """Map one raw header to a catalogue column (or leave it out, with why)."""
    problem = ""
    try:
        name = cols.canonical(raw) if raw.strip() else None
    except cols.HeaderProblem as exc:  # 'Price @ 100 pcs' looks like a point column
        name, problem = None, str(exc)
    if name is not None:
        return HeaderMatch(position, raw, Target((name,), ranges=_ranges(name)), 100.0, "name")
    if not raw.strip():
        return HeaderMatch(position, raw, None, 0.0, "vocabulary", "empty header")
    unit, words, conditions, qualifiers = _split_header(raw)
    quantity, score = _score(words)

    def out(note: str) -> HeaderMatch:
        return HeaderMatch(position, raw, None, score, "vocabulary", note, quantity.strip("_"))

    if score < min_score:
        return out(problem or f"not a name picker reads (closest: {quantity.strip('_')}, score "
                   f"{score:g} < {min_score:g}); to bring it in, name its column in a "
                   f"--map file: {_toml_str(_clip(raw))} = \"<column>\"")
    if quantity.startswith("_"):
        return out(LEFT_OUT[quantity])
    holds = HOLDS.get(quantity)
    if holds and qualifiers and holds not in qualifiers:
        return out(f"{'/'.join(sorted(qualifiers))} values; the catalogue column holds the "
                   f"{ {'max': 'maximum', 'min': 'minimum', 'typ': 'typical'}[holds]}")
    constants: tuple = ()
    family = "mos" if quantity == "kind" and re.search(r"channel|fet", words) else ""
    if quantity == "vgs_th":
        chosen = [THRESHOLD[q] for q in ("min", "typ", "max") if q in qualifiers]
        column = tuple(chosen) if len(chosen) == 1 else ("vgs_th_min_V", "vgs_th_max_V")
        if len(chosen) > 1 and set(chosen) != {"vgs_th_min_V", "vgs_th_max_V"}:
            return out("names several threshold columns; map it with --map")
        return _found(position, raw, column, unit, score, "pair" if len(column) == 2 else "error")
    if quantity == "rds_on":
        drives = _pick(conditions, _VOLT, ("vgs", ""))
        if len(drives) != 1 or drives[0] == 0:
            return out("no single gate drive in the header; map it with --map, e.g. "
                       "rds_on_mohm@4.5V")
        if unit and _unit_of(unit) == "ohm" and parse_quantity("1" + unit, "mohm") >= 1e6:
            return out(f"'{unit}' (megohm) for an on-resistance; write mΩ or Ω in the header")
        return _found(position, raw, (f"rds_on_mohm@{_plain(drives[0])}V",), unit, score)
    if quantity in ("hfe", "vce_sat"):
        currents = _pick(conditions, _MILLIAMP, ("ic", ""))
        if len(currents) != 1 or currents[0] == 0:
            return out("no single collector current in the header; map it with --map, e.g. "
                       f"{'hfe_min' if quantity == 'hfe' else 'vce_sat_mV'}@10mA")
        base = _pick(conditions, _MILLIAMP, ("ib",))
        if quantity == "vce_sat" and base and abs(currents[0] / base[0] - 10) > 1e-9:
            return out(f"Ic/Ib = {currents[0] / base[0]:g}; the catalogue holds Vce(sat) at "
                       "Ic/Ib = 10")
        prefix = "hfe_min" if quantity == "hfe" else "vce_sat_mV"
        name = cols.canonical(f"{prefix}@{_plain(currents[0])}mA")
        return _found(position, raw, (name,), unit, score, "low" if quantity == "hfe" else "error")
    if quantity in ("idss", "icbo"):
        temps = _pick(conditions, _DEGREES, ("tj", "ta", "t", ""))
        if len(temps) > 1:
            return out("more than one temperature in the header; map it with --map")
        column = {"idss": "idss_uA", "icbo": "icbo_nA"}[quantity]
        if temps and temps[0] != 25:
            hot = column.replace("_uA", "_hot_uA").replace("_nA", "_hot_nA")
            constants = ((f"{quantity}_hot_C", temps[0]),)
            column = hot
        return _found(position, raw, (column,), unit, score, constants=constants)
    if quantity == "price":
        qty = [v * (1000 if u == "k" else 1) for var, v, u in conditions
               if u in ("k", "pcs", "pieces", "") and var in ("qty", "quantity", "")]
        if not qty or not qty[0] < 1e15 or qty[0] < 1 or qty[0] != int(qty[0]):
            return out("no quantity break in the header; map it with --map, e.g. price@1000")
        return _found(position, raw, (f"price@{int(qty[0])}",), "", score)
    return _found(position, raw, (quantity,), unit, score, family=family)


def _clip(text: str, length: int = 60) -> str:
    return text if len(text) <= length else text[:length - 3] + "..."


def _ranges(name: str) -> str:
    return "low" if name.startswith("hfe_min@") else "error"


def _found(position, raw, columns, unit, score, ranges="error", constants=(), family=""):
    column_unit = cols.spec_of(columns[0])[0]
    if unit and column_unit not in (None, "1"):
        try:
            parse_quantity("1" + unit, column_unit)
        except QuantityError:
            return HeaderMatch(position, raw, None, score, "vocabulary",
                               f"the header's unit '{unit}' does not fit {columns[0]}",
                               "..".join(columns))
    unit = unit if column_unit not in (None, "1") else ""
    return HeaderMatch(position, raw, Target(tuple(columns), unit, ranges, constants, family),
                       score, "vocabulary")


def propose_mapping(headers: list[str], overrides: dict[str, Target | None] | None = None,
                    min_score: float = MAP_AT) -> list[HeaderMatch]:
    """One HeaderMatch per raw header. `overrides` (raw header -> Target, or
    None to leave it out) win; two headers for one column: the better scored
    keeps it, the other is left out and says so."""
    overrides = {_key(k): v for k, v in (overrides or {}).items()}
    found = []
    for i, raw in enumerate(headers, start=1):
        if _key(raw) in overrides:
            target = overrides[_key(raw)]
            found.append(HeaderMatch(i, raw, target, 100.0, "map",
                                     "" if target else "left out by the mapping file"))
        else:
            found.append(match_header(i, raw, min_score))
    taken: dict[str, HeaderMatch] = {}
    order = sorted(found, key=lambda m: (m.how != "map", -m.score, m.position))
    result = {m.position: m for m in found}
    for m in order:
        if m.target is None:
            continue
        clash = next((taken[c] for c in m.target.columns + tuple(c for c, _ in m.target.constants)
                      if c in taken), None)
        if clash is not None:
            result[m.position] = HeaderMatch(m.position, m.raw, None, m.score, m.how,
                                             f"same column as header {clash.position} "
                                             f"'{clash.raw}'", m.target.name)
            continue
        for c in m.target.columns + tuple(c for c, _ in m.target.constants):
            taken[c] = m
    return [result[i] for i in sorted(result)]


def _key(header: str) -> str:
    return " ".join(header.split()).casefold()


# -- the mapping file ---------------------------------------------------------

def target_from_name(column: str, unit: str = "") -> Target | None:
    """A mapping file's right-hand side: a column name, 'min..max' of a pair,
    or '' to leave the header out. Raises MappingError for an unknown name."""
    if column.strip() == "":
        return None
    names = []
    for part in column.split(".."):
        try:
            name = cols.canonical(part)
        except cols.HeaderProblem as exc:
            raise MappingError(str(exc)) from None
        if name is None:
            raise MappingError(f"unknown catalogue column '{part}'{_closest(part)}")
        names.append(name)
    if len(names) == 2 and tuple(names) not in PAIRS:
        raise MappingError(f"'{column}' is not a min..max pair; the pair is "
                           "vgs_th_min_V..vgs_th_max_V")
    match = _found(0, column, tuple(names), unit, 100.0, "pair" if len(names) == 2 else
                   _ranges(names[0]))
    if match.target is None:
        raise MappingError(match.note)
    return match.target


def _closest(name: str) -> str:
    from rapidfuzz import process

    known = list(cols.COLUMNS) + ["rds_on_mohm@4.5V", "hfe_min@1mA", "vce_sat_mV@10mA",
                                  "price@1000"]
    best = process.extractOne(name, known, score_cutoff=60)
    return f"; did you mean '{best[0]}'?" if best else "; see the catalogue columns in the docs"


def load_mapping(path: str) -> dict[str, Target | None]:
    """Read a mapping TOML: a [columns] table of raw header = column (or
    {column = ..., unit = ...}, or "" to leave the header out)."""
    from picker.catalog.tabular import read_bytes

    data = read_bytes(path, MappingError, "mapping", limit=MAX_MAPPING_BYTES)
    try:
        text = data.decode("utf-8-sig")
        doc = tomllib.loads(text)
    except UnicodeDecodeError:
        raise MappingError("the mapping file is not UTF-8 text", file=path) from None
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        raise MappingError(f"not valid TOML: {str(exc).split(' (at')[0]}", file=path,
                           line=int(m.group(1)) if m else None,
                           column=int(m.group(2)) if m else None) from None
    except ValueError:  # an integer past Python's 4,300-digit limit for reading one
        m = re.search(r"\d{4000,}", text)
        raise MappingError("not valid TOML: a number with thousands of digits", file=path,
                           line=text.count("\n", 0, m.start()) + 1 if m else None) from None
    except RecursionError:
        raise MappingError("not valid TOML: nested too deeply", file=path) from None
    extra = [k for k in doc if k != "columns"]
    if extra or not isinstance(doc.get("columns"), dict):
        raise MappingError(f"expected one [columns] table of \"raw header\" = \"column\""
                           f"{'; unknown key ' + repr(extra[0]) if extra else ''}", file=path)
    lines = text.splitlines()
    out: dict[str, Target | None] = {}
    for raw, spec in doc["columns"].items():
        line = next((n for n, ln in enumerate(lines, 1) if _toml_str(raw) in ln or
                     ln.strip().startswith(raw)), None)
        where = dict(file=path, line=line, column=1 if line else None)
        if isinstance(spec, dict):
            bad = set(spec) - {"column", "unit"}
            if bad or not isinstance(spec.get("column", ""), str):
                raise MappingError(f"'{raw}': a table holds column = \"...\" and optionally "
                                   "unit = \"...\"", **where)
            spec, unit = spec.get("column", ""), str(spec.get("unit", ""))
        elif isinstance(spec, str):
            unit = ""
        else:
            raise MappingError(f"'{raw}': write a column name in quotes, or \"\" to leave "
                               "the header out", **where)
        try:
            out[raw] = target_from_name(spec, unit)
        except MappingError as exc:
            raise exc.located(**where) from None
    return out


def _toml_str(text: str) -> str:
    out = text.replace("\\", "\\\\").replace('"', '\\"')
    out = re.sub(r"[\x00-\x1f\x7f]", lambda m: f"\\u{ord(m.group()):04x}", out)
    return f'"{out}"'


def mapping_toml(matches: list[HeaderMatch], source: str) -> str:
    """The mapping as a TOML file, ready for --map next time (left-out headers as "")."""
    lines = [f"# picker catalogue import mapping, made from {one_line(source)}",
             "# raw header = catalogue column; \"\" leaves the header out;",
             "# {column = \"...\", unit = \"...\"} gives the unit of bare numbers.", "",
             "[columns]"]
    written: dict[str, int] = {}
    for m in matches:
        if _key(m.raw) in written:  # a repeated header: one key (a TOML key is given once)
            lines.append(f"# header {m.position} repeats header {written[_key(m.raw)]}: "
                         f"{_toml_str(m.raw)}")
            continue
        written[_key(m.raw)] = m.position
        if m.target is None:
            value, comment = '""', f"  # left out: {m.note}" if m.note else ""
        elif m.target.unit:
            value = f"{{ column = {_toml_str(m.target.name)}, unit = {_toml_str(m.target.unit)} }}"
            comment = f"  # score {m.score:g}"
        else:
            value, comment = _toml_str(m.target.name), f"  # score {m.score:g}"
        lines.append(f"{_toml_str(m.raw)} = {value}{one_line(comment)}")  # comments: one line
    return "\n".join(lines) + "\n"
