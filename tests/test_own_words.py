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

import pytest

from conftest import EXAMPLES

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
