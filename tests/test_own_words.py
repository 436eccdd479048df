"""Our own words: no text in the repository written in a distributor's terse
house syntax for part descriptions, and no supplier's export header spellings.

The house syntax has a fixed shape: an upper-case type word, then a channel or
polarity abbreviation, then the ratings and the package, in that order (and
the same shape for resistors, capacitors and connectors: type word, value,
tolerance, package). The patterns below match that shape, not any one string;
the samples they must catch are assembled from tokens at run time, so that no
file of the repository holds one. A BOM line as an engineer writes it for
colleagues ("cell switch: P-channel MOSFET, 20 V, 4.2 A, SOT-23") reads the
same facts in another order and in mixed case, and must pass.
"""

from __future__ import annotations

import csv
import io
import re
import subprocess

import pytest

from conftest import EXAMPLES, ROOT

# -- the shapes ----------------------------------------------------------------------------

_RATING = r"\d+(?:\.\d+)?[mkKMuUµ]?(?:V|A|W|OHM|F|UF|PF|NF|%)"
DESCRIPTION_SHAPES = {
    # upper-case type word, then the channel or polarity abbreviation (ratings follow)
    "transistor": re.compile(r"\b(?:MOSFET|TRANS|TRANSISTOR|FET|JFET|BJT|IGBT)\s+"
                             r"(?:[2-4]?[NP]-?CH|[NP]/[NP]-?CH|NPN|PNP|2NPN|2PNP|NPN/PNP)\b"),
    # RES, then a value with its multiplier letter (10K, 4.7M, 330R) or a tolerance
    "resistor": re.compile(r"\bRES(?:\s+(?:SMD|ARRAY|NET|CHIP))?\s+\d+(?:\.\d+)?[RKM]?\d*"
                           r"(?:\s*OHM)?\b"),
    # CAP, then the dielectric family or a value
    "capacitor": re.compile(r"\bCAP\s+(?:CER|TANT|ALUM|FILM|MLCC|POLY|\d)"),
    # CONN, then the connector family or a contact count in POS
    "connector": re.compile(r"\bCONN\s+(?:HEADER|HDR|RCPT|RECEPT|PLUG|FPC|FFC|USB|SOCKET|"
                            r"TERM|JACK|\d+\s*POS)\b|\b\d+POS\b"),
    # the other families of the same syntax seen in the old example
    "other": re.compile(r"\bLED\s+(?:RED|GREEN|BLUE|WHITE|AMBER|YELLOW|DRIVER)\b|"
                        r"\bHOLDER\s+\d+\s+CELL\b|\bIC\s+(?:MCU|REG|CHARGER|DRIVER)\b|"
                        r"\bDIODE\s+(?:GEN\s+PURP|SCHOTTKY|ZENER)\b"),
}

# A supplier's export and parameter-table headers (compared case-insensitively):
# written as patterns so that this file does not hold the spellings it forbids.
HEADER_SHAPES = {
    "a 'supplier'-prefixed package": re.compile(r"supplier[ ,\-]+device[ ,\-]+package", re.I),
    "the drain current in reversed word order": re.compile(r"current[ ,\-]+continuous[ ,\-]+drain", re.I),
    "a mounting column": re.compile(r"mounting[ ,\-]+(?:type|style)", re.I),
    "an availability column": re.compile(r"quantity[ ,\-]+available|\bin[ ,\-]+stock[ ,\-]+qty", re.I),
    "package and case with a slash": re.compile(r"package\s*/\s*case", re.I),
    "a '#' after an abbreviated part": re.compile(r"\bmf[rg]\.?\s+part\s*#", re.I),
    "a '(Max) @' qualifier": re.compile(r"\((?:max|min|typ)\)\s*@\s*[a-z]", re.I),
    "a symbol, a dash, then the name": re.compile(
        r"\b(?:Vds|Id|Rds\s?On|Vgs\s?th|Pd|Qg)\s-\s(?:Drain|Continuous|Gate|Power)", re.I),
}

ALL_SHAPES = {**{f"description ({k})": v for k, v in DESCRIPTION_SHAPES.items()},
              **{f"header ({k})": v for k, v in HEADER_SHAPES.items()}}


def _sample(*tokens: str) -> str:
    return " ".join(tokens)


# Samples of the forbidden shapes, assembled from tokens: each pattern must catch them.
CAUGHT = [
    ("transistor", _sample("MOSFET", "P-CH", "20V", "4.2A", "SOT-23")),
    ("transistor", _sample("TRANS", "NPN", "45V", "0.1A", "SOT-23")),
    ("transistor", _sample("TRANS", "PNP", "40V")),
    ("transistor", _sample("MOSFET", "2N-CH", "30V", "SOT-363")),
    ("resistor", _sample("RES", "100K", "1%", "1/16W", "0402")),
    ("resistor", _sample("RES", "330R", "1%", "0402")),
    ("resistor", _sample("RES", "SMD", "4.7M", "5%")),
    ("capacitor", _sample("CAP", "CER", "10UF", "10V", "X5R", "0603")),
    ("capacitor", _sample("CAP", "TANT", "47UF")),
    ("connector", _sample("CONN", "USB", "TYPE-C", "RCPT", "16" + "POS", "SMT")),
    ("connector", _sample("CONN", "FPC", "6" + "POS", "0.5MM")),
    ("other", _sample("LED", "GREEN", "0603")),
    ("other", _sample("HOLDER", "1", "CELL", "18650")),
]
HEADERS_CAUGHT = [
    ("a 'supplier'-prefixed package", _sample("Supplier", "Device", "Package")),
    ("the drain current in reversed word order", "Current - " + _sample("Continuous", "Drain")),
    ("a mounting column", _sample("Mounting", "Type")),
    ("an availability column", _sample("Quantity", "Available")),
    ("package and case with a slash", "Package" + " / " + "Case"),
    ("a '#' after an abbreviated part", _sample("Mfr", "Part") + " #"),
    ("a '(Max) @' qualifier", "Vgs(th) (Max)" + " @ Id"),
]
# Our own ways of writing the same facts: none of them may be caught.
PASSED = [
    "cell switch: P-channel MOSFET, 20 V, 4.2 A, SOT-23",
    "soft-power latch pair, small NPN (45 V, 100 mA) in SOT-23",
    "N-channel MOSFET for the night-light, 20 V 5 A, SOT-23",
    "100k 1% 0402, latch divider", "10 kΩ gauge base resistors, 0402",
    "cell-side bulk: 10 µF ceramic, X5R 10 V, 0603",
    "USB-C receptacle for charging, 16 contacts, surface mount",
    "holder for one 18650 cell, through-hole", "green 0603 LEDs, charge gauge",
    "the LED driver's input at full brightness", "P-CH" , "NPN 45 V",
]


@pytest.mark.parametrize("family, text", CAUGHT, ids=[t for _, t in CAUGHT])
def test_the_description_shapes_catch_the_house_syntax(family, text):
    assert DESCRIPTION_SHAPES[family].search(text), text


@pytest.mark.parametrize("name, text", HEADERS_CAUGHT, ids=[t for _, t in HEADERS_CAUGHT])
def test_the_header_shapes_catch_supplier_spellings(name, text):
    assert HEADER_SHAPES[name].search(text), text


@pytest.mark.parametrize("text", PASSED)
def test_our_own_wording_passes(text):
    assert not [n for n, p in ALL_SHAPES.items() if p.search(text)], text


def test_the_example_bom_is_in_our_own_words():
    """Every description of the lantern's BOM, read with Python's csv module."""
    rows = list(csv.DictReader(io.StringIO(
        (EXAMPLES / "kettlewick-bom.csv").read_text(encoding="utf-8"), newline="")))
    descriptions = [r["Description"] for r in rows]
    assert len(descriptions) == 21 and all(descriptions)
    for text in descriptions:
        assert not [n for n, p in DESCRIPTION_SHAPES.items() if p.search(text)], text
    # written the way colleagues write them: not one fixed template
    assert len({d.split()[0].strip(",:").lower() for d in descriptions}) >= 15


# -- the vocabularies: every entry with its source -------------------------------------------
# Sources, all from memory (the standards' texts are not in the repository):
IEC8 = "IEC 60747-8 (field-effect transistors): parameter name or letter symbol"
IEC7 = "IEC 60747-7 (bipolar transistors): parameter name or letter symbol"
IEC = "IEC 60747 (discrete devices, general): parameter name or letter symbol"
JEDEC = "JEDEC JESD77 letter symbol or term (the number from memory)"
OUTLINE = "JEDEC outline registration (JEP95): package or case outline"
IEEE315 = "IEEE 315 / ASME Y14.44: reference designator"
TRADE = "the trade's abbreviation (common practice)"
PLAIN = "plain English"

IMPORT_VOCABULARY = {
    "part": {"part": PLAIN, "part number": PLAIN, "part no": PLAIN,
             "manufacturer part number": PLAIN, "type number": JEDEC, "type designation": IEC,
             "ordering code": PLAIN, "device": PLAIN},
    "maker": {"manufacturer": PLAIN, "maker": PLAIN, "manufacturer name": PLAIN, "make": PLAIN,
              "brand": PLAIN},
    "kind": {"channel": IEC8, "channel type": PLAIN, "polarity": PLAIN, "type": PLAIN,
             "transistor type": PLAIN},
    "package": {"package": PLAIN, "case": PLAIN, "outline": OUTLINE, "package outline": OUTLINE,
                "case outline": OUTLINE},
    "status": {"status": PLAIN, "lifecycle": PLAIN, "lifecycle status": PLAIN},
    "notes": {"notes": PLAIN, "note": PLAIN, "remarks": PLAIN, "remark": PLAIN, "comment": PLAIN,
              "comments": PLAIN},
    "vds_max_V": {"vds": JEDEC, "vdss": IEC8, "v br dss": JEDEC, "drain source voltage": IEC8,
                  "drain source breakdown voltage": JEDEC},
    "vgs_max_V": {"vgs": JEDEC, "vgss": IEC8, "gate source voltage": IEC8},
    "id_max_A": {"id": JEDEC, "drain current": IEC8, "continuous drain current": PLAIN},
    "vgs_th": {"vgs th": JEDEC, "gate source threshold voltage": IEC8,
               "gate threshold voltage": PLAIN, "threshold voltage": PLAIN},
    "rds_on": {"rds on": JEDEC, "drain source on state resistance": IEC8,
               "static drain source on state resistance": JEDEC,
               "drain source on resistance": PLAIN, "on state resistance": IEC8,
               "on resistance": PLAIN},
    "idss": {"idss": JEDEC, "zero gate voltage drain current": JEDEC,
             "drain cut off current": IEC8, "drain leakage current": PLAIN},
    "vceo_max_V": {"vceo": IEC7, "v br ceo": JEDEC, "collector emitter voltage": IEC7,
                   "collector emitter breakdown voltage": JEDEC},
    "ic_max_A": {"ic": JEDEC, "collector current": IEC7, "continuous collector current": PLAIN},
    "hfe": {"hfe": JEDEC, "h21e": IEC7, "static forward current transfer ratio": IEC7,
            "dc current gain": PLAIN, "current gain": PLAIN},
    "vce_sat": {"vce sat": JEDEC, "collector emitter saturation voltage": IEC7,
                "saturation voltage": PLAIN},
    "vbe_on_V": {"vbe": JEDEC, "vbe on": JEDEC, "base emitter voltage": IEC7,
                 "base emitter on voltage": PLAIN},
    "icbo": {"icbo": JEDEC, "collector cut off current": IEC7,
             "collector base cut off current": PLAIN, "collector leakage current": PLAIN},
    "rth_ja_C/W": {"rth j a": IEC, "r theta ja": JEDEC,
                   "thermal resistance junction to ambient": IEC, "thermal resistance": PLAIN},
    "tj_max_C": {"tj": IEC, "junction temperature": IEC, "operating junction temperature": PLAIN},
    "price": {"price": PLAIN, "unit price": PLAIN, "cost": PLAIN, "unit cost": PLAIN},
    "vgs_th_tc_mV/C": {"threshold temperature coefficient": PLAIN,
                       "gate threshold voltage temperature coefficient": PLAIN},
    "rds_tc_pct/C": {"on resistance temperature coefficient": PLAIN,
                     "on state resistance temperature coefficient": PLAIN},
    "_pd": {"pd": JEDEC, "ptot": IEC, "power dissipation": PLAIN, "total power dissipation": IEC},
    "_other": {"rth j c": IEC, "r theta jc": JEDEC, "thermal resistance junction to case": IEC,
               "vcbo": IEC7, "vebo": IEC7, "iceo": IEC7, "iebo": IEC7, "igss": IEC8,
               "gate leakage current": PLAIN, "vgs off": IEC8, "qg": JEDEC,
               "gate charge": PLAIN, "total gate charge": IEC8, "ciss": IEC8,
               "input capacitance": IEC8, "coss": IEC8, "output capacitance": IEC8,
               "crss": IEC8, "reverse transfer capacitance": IEC8, "td on": IEC, "td off": IEC,
               "rise time": IEC, "fall time": IEC, "ft": IEC7, "transition frequency": IEC7,
               "vsd": IEC8, "source drain voltage": IEC8, "diode forward voltage": PLAIN,
               "idm": IEC8, "peak drain current": IEC8, "icm": IEC7,
               "peak collector current": IEC7, "description": PLAIN, "datasheet": PLAIN},
}
BOM_VOCABULARY = {
    "refs": {"reference designators": IEEE315, "reference designator": IEEE315,
             "refdes": TRADE, "ref des": TRADE, "refs": TRADE, "ref": TRADE,
             "references": PLAIN, "reference": PLAIN},
    "qty": {"qty": TRADE, "quantity": PLAIN, "qty per board": TRADE,
            "quantity per board": PLAIN, "qty per assembly": TRADE,
            "quantity per assembly": PLAIN, "count": PLAIN},
    "part": {"mpn": TRADE, "manufacturer part number": PLAIN, "part number": PLAIN,
             "part no": PLAIN, "part": PLAIN},
    "description": {"description": PLAIN, "desc": PLAIN, "part description": PLAIN},
    "maker": {"manufacturer": PLAIN, "maker": PLAIN, "manufacturer name": PLAIN, "make": PLAIN,
              "brand": PLAIN},
    "price": {"unit price": PLAIN, "price": PLAIN, "unit cost": PLAIN, "price each": PLAIN,
              "cost each": PLAIN, "cost": PLAIN},
}
# Words no entry may hold: a supplier's columns (availability, mounting, its own
# package column), its abbreviations of 'manufacturer' and the '#' after 'part'.
NOT_OURS = re.compile(r"\b(?:supplier|mounting|stock|available|availability|mfr|mfg|vendor|"
                      r"series|rohs)\b|[#/]")


@pytest.mark.parametrize("name, vocabulary, listed", [
    ("import", "picker.catalog.importer:VOCABULARY", IMPORT_VOCABULARY),
    ("bom", "picker.review.bom:FIELDS", BOM_VOCABULARY)])
def test_every_vocabulary_entry_has_a_source(name, vocabulary, listed):
    """The code's vocabulary is exactly the list above, entry by entry: a new
    spelling needs its source here, and a supplier's spelling has none."""
    import importlib

    module, _, attribute = vocabulary.partition(":")
    table = getattr(importlib.import_module(module), attribute)
    assert set(table) == set(listed)
    for quantity, spellings in table.items():
        assert len(set(spellings)) == len(spellings), quantity
        assert set(spellings) == set(listed[quantity]), (quantity, set(spellings) ^ set(listed[quantity]))
        for s in spellings:
            assert not NOT_OURS.search(s), (quantity, s)
            assert s == " ".join(s.split()) and s == s.lower(), (quantity, s)
    sources = {src for entries in listed.values() for src in entries.values()}
    assert sources <= {IEC8, IEC7, IEC, JEDEC, OUTLINE, IEEE315, TRADE, PLAIN}
    if name == "import":  # the import reads standards' names and plain English only
        assert TRADE not in sources and IEEE315 not in sources


def _repository_files() -> list:
    """Every file git tracks (a clean clone holds exactly these), else every
    file under the root outside hidden folders, the virtual environment and caches."""
    try:
        listed = subprocess.run(["git", "ls-files", "-z"], cwd=ROOT, capture_output=True,
                                check=True, timeout=60).stdout.split(b"\0")
        files = [ROOT / name.decode() for name in listed if name]
    except (OSError, subprocess.SubprocessError):
        files = [p for p in ROOT.rglob("*") if p.is_file() and not any(
            part.startswith(".") or part.endswith(".egg-info") or part == "__pycache__"
            for part in p.relative_to(ROOT).parts[:-1])]
    for extra in (ROOT / "tests" / "test_own_words.py",):  # this file, tracked or not yet
        if extra not in files:
            files.append(extra)
    return [p for p in files if p.is_file()]


def test_no_file_of_the_repository_uses_the_house_syntax_or_supplier_headers():
    found = []
    for path in _repository_files():
        data = path.read_bytes()
        if b"\0" in data:
            continue  # not a text file
        text = data.decode("utf-8", errors="replace")
        for name, pattern in ALL_SHAPES.items():
            for m in pattern.finditer(text):
                line = text.count("\n", 0, m.start()) + 1
                found.append(f"{path.relative_to(ROOT)}:{line}: {name}: {m.group()!r}")
    assert not found, "\n".join(found)
