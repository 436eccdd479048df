"""Reading a BOM, finding its part numbers in the catalogue, writing a revised copy.

The part numbers are the invented ones of the demo catalogue; what is checked
against outside sources is the score: the edit distances are compared with a
textbook dynamic programme (Wagner & Fischer, "The string-to-string correction
problem", J. ACM 21(1), 1974; the adjacent-swap case is the restricted
"optimal string alignment" variant, see e.g. Boytsov, "Indexing methods for
approximate dictionary searching", ACM J. Exp. Algorithmics 16, 2011)."""

import csv
import io

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import DEMO, EXAMPLES, ROOT
from picker.review.bom import expand_refs, map_header, read_bom
from picker.review.match import PartIndex
from picker.review.revised import Change, revised_bom, split_records
from picker.catalog.load import load_catalog
from picker.errors import BomError, UsageError

DATA = ROOT / "tests" / "data" / "review"


@pytest.fixture(scope="module")
def index():
    return PartIndex(load_catalog(DEMO, source="test").df["part"])


def osa_distance(a: str, b: str) -> int:
    """Optimal string alignment distance by the textbook dynamic programme
    (Wagner & Fischer 1974, plus the adjacent transposition of the restricted
    edit distance): insert, delete, substitute, swap two neighbours, each 1."""
    d = [[0] * (len(b) + 1) for _ in range(len(a) + 1)]
    for i in range(len(a) + 1):
        d[i][0] = i
    for j in range(len(b) + 1):
        d[0][j] = j
    for i in range(1, len(a) + 1):
        for j in range(1, len(b) + 1):
            cost = a[i - 1] != b[j - 1]
            d[i][j] = min(d[i - 1][j] + 1, d[i][j - 1] + 1, d[i - 1][j - 1] + cost)
            if i > 1 and j > 1 and a[i - 1] == b[j - 2] and a[i - 2] == b[j - 1]:
                d[i][j] = min(d[i][j], d[i - 2][j - 2] + 1)
    return d[len(a)][len(b)]


def test_reference_distance_on_the_classic_examples():
    """kitten -> sitting is 3 edits (the usual textbook example of Levenshtein
    distance, from memory); 'ca' -> 'abc' is 3 in the restricted (OSA)
    distance but 2 in the unrestricted Damerau one (from memory)."""
    assert osa_distance("kitten", "sitting") == 3
    assert osa_distance("ca", "abc") == 3
    assert osa_distance("hln6126t", "hln6162t") == 1


# -- part-number spellings: the truth table ------------------------------------------

# (as written in the BOM, expected catalogue part or None, status, how, also)
SPELLINGS = [
    ("HLP6125-T", "HLP6125-T", "taken", "exact", ()),
    ("hlp6125-t", "HLP6125-T", "taken", "exact", ()),  # case
    ("HLP6125T", "HLP6125-T", "taken", "exact", ()),  # a dropped dash
    ("HLP 6125 - T", "HLP6125-T", "taken", "exact", ()),  # spaces
    ("HLP6125/T", "HLP6125-T", "taken", "exact", ()),  # other punctuation
    ("QLB4P60K", "QLB-4P60K", "taken", "exact", ()),
    ("HLP6125-T-TR", "HLP6125-T", "taken", "suffix", ()),  # tape and reel
    ("HLP6125-T/TR", "HLP6125-T", "taken", "suffix", ()),
    ("HLP6125-TTR", "HLP6125-T", "taken", "suffix", ()),
    ("HLP6125-T-REEL", "HLP6125-T", "taken", "suffix", ()),
    ("HLP6125-T-R7", "HLP6125-T", "taken", "suffix", ()),
    ("hlp6125-t-tr-pbf", "HLP6125-T", "taken", "suffix", ()),  # two codes, lower case
    ("HLP6125-T-X9", "HLP6125-T", "confirm", "tail", ()),  # an unknown tail
    ("HLN6128-T", "HLN6126-T", "confirm", "fuzzy", ()),  # one wrong character
    ("HLN6162-T", "HLN6126-T", "confirm", "fuzzy", ()),  # two neighbours swapped
    ("HLN626-T", "HLN6126-T", "confirm", "fuzzy", ()),  # a dropped character
    ("HLN6128-T-TR", "HLN6126-T", "confirm", "fuzzy", ()),  # a typo and a reel suffix
    ("HLP6125", "HLP6125-T", "confirm", "fuzzy", ("HLP6125-W",)),  # no package code: two fit
    ("HLG614D-T", "HLG614A-T", "confirm", "fuzzy", ("HLG614B-T", "HLG614C-T")),  # gain group
    ("HLN6138-W", None, "none", "", ()),  # two wrong characters in eight
    ("ZXQ9071-P", None, "none", "", ()),  # a wholly different part
    ("FPR04-1003-F", None, "none", "", ()),  # a resistor
    ("", None, "none", "", ()),
]


@pytest.mark.parametrize("written, part, status, how, also", SPELLINGS)
def test_part_number_spellings(index, written, part, status, how, also):
    m = index.match([written])[0]
    assert (index.parts[m.position] if m.found else None) == part
    assert (m.status, m.how) == (status, how)
    assert tuple(index.parts[p] for p in m.also) == also


@pytest.mark.parametrize("written, catalogue", [
    ("HLN6128-T", "HLN6126-T"), ("HLN6162-T", "HLN6126-T"), ("HLN626-T", "HLN6126-T"),
    ("HLP6125", "HLP6125-T"), ("QLB4N61K", "QLB-4N60K"), ("MWB4581K", "MWB4518K"),
])
def test_fuzzy_score_is_one_minus_distance_over_the_longer(index, written, catalogue):
    """score = 100 (1 - d / max(len)) on the normalised part numbers, d from
    the reference dynamic programme above."""
    a = "".join(c for c in written.lower() if c.isalnum())
    b = "".join(c for c in catalogue.lower() if c.isalnum())
    expected = 100 * (1 - osa_distance(a, b) / max(len(a), len(b)))
    m = index.match([written])[0]
    assert index.parts[m.position] == catalogue
    assert m.score == pytest.approx(expected, abs=0.05)  # scores are rounded to 0.1


def test_unknown_tail_scores_as_insertions_only(index):
    """'hlp6125t' + 'x9': 1 - 2 / (10 + 8) = 88.9 (insertions over both lengths)."""
    assert index.match(["HLP6125-T-X9"])[0].score == pytest.approx(100 * (1 - 2 / 18), abs=0.05)


def test_thresholds_move_the_bands(index):
    typo = "HLN6128-T"  # 87.5
    assert index.match([typo], take_at=85, confirm_at=80)[0].status == "taken"
    assert index.match([typo], take_at=95, confirm_at=90)[0].status == "none"
    with pytest.raises(UsageError):
        index.match([typo], take_at=80, confirm_at=90)


def test_fuzzy_matching_is_only_where_allowed(index):
    m = index.match(["HLN6128-T", "HLN6128-T", "HLP6125-T-TR"],
                    fuzzy=np.array([True, False, False]))
    assert [x.status for x in m] == ["confirm", "none", "taken"]


def test_matching_uses_the_batch_function_not_a_loop(index, monkeypatch):
    """The fuzzy stage goes through rapidfuzz.process.cdist: the one-at-a-time
    functions are made to fail, and matching still works."""
    from rapidfuzz import process

    def refuse(*a, **k):
        raise AssertionError("one query at a time")

    for name in ("extract", "extractOne", "extract_iter"):
        monkeypatch.setattr(process, name, refuse)
    assert index.parts[index.match(["HLN6128-T"])[0].position] == "HLN6126-T"


def test_ambiguous_exact_key_prefers_the_same_spelling():
    idx = PartIndex(["QLB-4N60K", "QLB4N-60K"])
    a, b, c = idx.match(["qlb4n-60k", "QLB-4N60K", "QLB4N60K"])
    assert (idx.parts[a.position], a.status) == ("QLB4N-60K", "taken")
    assert (idx.parts[b.position], b.status) == ("QLB-4N60K", "taken")
    assert c.status == "confirm" and len(c.also) == 1


# -- refs --------------------------------------------------------------------------------

@pytest.mark.parametrize("text, refs, problems", [
    ("Q1", ["Q1"], 0),
    ("Q1, Q3", ["Q1", "Q3"], 0),
    ("Q1;Q3 Q5", ["Q1", "Q3", "Q5"], 0),
    ("Q4-Q7", ["Q4", "Q5", "Q6", "Q7"], 0),
    ("Q4-7", ["Q4", "Q5", "Q6", "Q7"], 0),
    ("Q4 - Q7", ["Q4", "Q5", "Q6", "Q7"], 0),
    ("Q4–Q7", ["Q4", "Q5", "Q6", "Q7"], 0),  # an en dash, as word processors write it
    ("Q4..Q6", ["Q4", "Q5", "Q6"], 0),
    ("q2, Q4-Q5, R1", ["q2", "Q4", "Q5", "R1"], 0),
    ("U1-A", ["U1-A"], 0),  # a name with a dash, not a range
    ("Q1-R3", ["Q1-R3"], 0),
    ("Q7-Q4", ["Q7-Q4"], 1),  # descending: kept as written, with a warning
    ("Q1-Q20000", ["Q1-Q20000"], 1),  # too long to be meant
    ("", [], 0),
])
def test_refs_expand(text, refs, problems):
    got, found = expand_refs(text)
    assert got == refs and len(found) == problems


# -- the header ----------------------------------------------------------------------------

@pytest.mark.parametrize("header, expected", [
    (["Item", "Qty", "Ref Des", "Manufacturer", "MPN", "Description", "Unit Price"],
     {"qty": 1, "refs": 2, "maker": 3, "part": 4, "description": 5, "price": 6}),
    (["Reference designators", "Quantity", "Manufacturer part number", "Maker", "Description"],
     {"refs": 0, "qty": 1, "part": 2, "maker": 3, "description": 4}),
    (["Reference", "QTY", "Part #", "Manufactuer", "Unit Price (USD)"],  # a typo too
     {"refs": 0, "qty": 1, "part": 2, "maker": 3, "price": 4}),
    (["Refs", "Qty", "Part No.", "Make", "Price each"],
     {"refs": 0, "qty": 1, "part": 2, "maker": 3, "price": 4}),
    (["Part", "MPN", "Refs", "Count"], {"part": 1, "refs": 2, "qty": 3}),  # MPN beats Part
    (["Pos", "Anzahl", "Bauteil"], {}),
    # one tool's own column names are not guessed: --column names them
    (["Designator", "Quantity", "Part number", "Comment"], {"qty": 1, "part": 2}),
])
def test_header_fuzzy_matching(header, expected):
    assert map_header(header) == expected


def test_column_overrides_by_name_or_number():
    header = ["Pos", "Anzahl", "Bauteil", "Hersteller"]
    assert map_header(header, {"part": "bauteil", "qty": "2"}) == {"part": 2, "qty": 1}
    with pytest.raises(BomError, match="no such column"):
        map_header(header, {"part": "Teil"})
    with pytest.raises(UsageError, match="unknown field"):
        map_header(header, {"mpn": "Bauteil"})


def test_unrecognised_header_says_what_was_found_and_missing():
    with pytest.raises(BomError) as err:
        read_bom(DATA / "unknown-header.csv")
    text = str(err.value)
    assert "\n" not in text and text.startswith(f"{DATA / 'unknown-header.csv'}:1:")
    assert "found none" in text and "missing part and refs or qty" in text
    assert "Bauteil" in text and "--column part=HEADER" in text


def test_title_lines_above_the_header():
    bom = read_bom(DATA / "title-lines.csv")
    assert bom.header_line == 4
    assert [ln.line for ln in bom.lines] == [5, 6, 7]
    assert bom.lines[1].refs == ("Q4", "Q5", "Q6", "Q7") and bom.lines[1].qty == 3


# -- the demo BOM and its dialects ----------------------------------------------------------

def test_demo_bom_reads():
    bom = read_bom(EXAMPLES / "kettlewick-bom.csv")
    assert bom.delimiter == "," and bom.header_line == 1 and len(bom.lines) == 21
    q4 = bom.lines[2]
    assert (q4.refs, q4.qty, q4.part, q4.bom_price, q4.kind_hint) == (
        ("Q4", "Q5", "Q6", "Q7"), 4, "MWB4518K", 0.085, "npn")
    assert [ln.transistor for ln in bom.lines[:7]] == [True] * 6 + [False]
    assert bom.warnings == []


def test_semicolon_cp1252_decimal_comma():
    bom = read_bom(DATA / "failing-incumbents.csv")
    assert (bom.delimiter, bom.encoding, bom.decimal_comma) == (";", "cp1252", True)
    assert [ln.bom_price for ln in bom.lines[:3]] == [0.066, 0.0075, 0.085]
    assert "µA" in bom.lines[1].description
    assert bom.lines[-1].qty == 0


def test_quantity_that_disagrees_with_the_refs_names_the_line(tmp_path):
    path = tmp_path / "b.csv"
    path.write_text("Refs,Qty,MPN\nQ1-Q4,3,MWB4518K\nQ5,,QLB-4N60K\nQ6,two,QLB-4N60K\n")
    bom = read_bom(path)
    assert [ln.qty for ln in bom.lines] == [3, 1, 1]
    messages = [str(w) for w in bom.warnings]
    assert messages[0].startswith(f"{path}:2:2: warning: quantity 3 disagrees with the 4 refs")
    assert messages[1].startswith(f"{path}:4:2: warning: quantity 'two' is not a whole number")


def test_duplicate_refs_warn(tmp_path):
    path = tmp_path / "b.csv"
    path.write_text("Refs,Qty,MPN\nQ1,1,A1\nQ2,1,A2\nq1,1,A3\n")
    assert "Q1 is also on line 2" not in str(read_bom(path).warnings)
    assert "q1 is also on line 2" in str(read_bom(path).warnings[0])


# -- the revised BOM ------------------------------------------------------------------------

def _reread(data: bytes, path):
    path.write_bytes(data)
    return read_bom(path)


@pytest.mark.parametrize("name", ["kettlewick", "failing-incumbents", "title-lines"])
def test_revised_bom_keeps_every_other_byte(tmp_path, name):
    source = EXAMPLES / "kettlewick-bom.csv" if name == "kettlewick" else DATA / f"{name}.csv"
    bom = read_bom(source)
    row = next(ln.row for ln in bom.lines if ln.part.upper().startswith("MWB4518K"))
    data = revised_bom(bom, {row: Change("QLB-4N62K", "Quillon Semiconductor", 0.009, "was MWB4518K")})
    original = source.read_bytes().decode(bom.encoding).splitlines(keepends=True)
    written = data.decode(bom.encoding).splitlines(keepends=True)
    assert len(written) == len(original)
    line_of_row = bom.lines[row].line
    for number, (a, b) in enumerate(zip(original, written), start=1):
        ending = a[len(a.rstrip("\r\n")):]
        assert b.endswith(ending)  # the line ends are kept (CRLF in the demo)
        if number < bom.header_line or not a.strip(",;\r\n"):
            assert b == a  # title and blank lines untouched
        elif number != line_of_row:
            # the original line, byte for byte, then the new column
            new = "picker_change" if number == bom.header_line else ""
            assert b == a.rstrip("\r\n") + bom.delimiter + new + ending
    again = _reread(data, tmp_path / "out.csv")
    assert again.header == bom.header + ["picker_change"]
    for old, new in zip(bom.lines, again.lines):
        changed = {bom.columns[c] for c in ("part", "maker", "price") if c in bom.columns}
        for i, (x, y) in enumerate(zip(old.cells, new.cells)):
            if old.row != row or i not in changed:
                assert x == y
        assert new.cells[-1] == ("was MWB4518K" if old.row == row else "")
    assert again.lines[row].part == "QLB-4N62K"


def test_revised_bom_new_cells_are_inert_and_quoted(tmp_path):
    bom = read_bom(EXAMPLES / "kettlewick-bom.csv")
    data = revised_bom(bom, {0: Change("=HYPERLINK(1)", "A, B", float("nan"), 'say "hi"; ok')})
    again = _reread(data, tmp_path / "out.csv")
    first = again.lines[0]
    assert first.part == "'=HYPERLINK(1)" and first.maker == "A, B"
    assert first.bom_price == 0.061  # NaN price: the cell is left as it was
    assert first.cells[-1] == 'say "hi"; ok'


def test_existing_change_column_gets_a_new_name(tmp_path):
    path = tmp_path / "b.csv"
    path.write_text("Refs,Qty,MPN,picker_change\nQ1,1,MWB4518K,old note\n")
    data = revised_bom(read_bom(path), {0: Change("QLB-4N62K", None, float("nan"), "new")})
    rows = list(csv.reader(io.StringIO(data.decode())))
    assert rows == [["Refs", "Qty", "MPN", "picker_change", "picker_change_2"],
                    ["Q1", "1", "QLB-4N62K", "old note", "new"]]


def test_ragged_rows_keep_the_new_column_aligned(tmp_path):
    path = tmp_path / "b.csv"
    path.write_text("Refs,Qty,MPN,Note\nQ1,1,MWB4518K\nQ2,1,QLB-4N60K,a,extra\n")
    data = revised_bom(read_bom(path), {0: Change("QLB-4N62K", None, float("nan"), "new")})
    assert data.decode().splitlines() == ["Refs,Qty,MPN,Note,picker_change",
                                          "Q1,1,QLB-4N62K,,new", "Q2,1,QLB-4N60K,a,,extra"]


cell = st.text(alphabet=st.sampled_from(list('ab ,;"\r\n\t')), max_size=6)


@settings(max_examples=300, deadline=None)
@given(rows=st.lists(st.lists(cell, min_size=1, max_size=4), min_size=1, max_size=5),
       delimiter=st.sampled_from([",", ";", "\t"]), ending=st.sampled_from(["\n", "\r\n"]))
def test_split_records_agrees_with_the_csv_module(rows, delimiter, ending):
    """Records split from the raw text round-trip to the same text, and
    unquoted they are what Python's csv reader reads."""
    out = io.StringIO()
    csv.writer(out, delimiter=delimiter, lineterminator=ending).writerows(rows)
    text = out.getvalue()
    records = split_records(text, delimiter)
    assert "".join(delimiter.join(f) + e for _, f, e in records) == text
    expected = list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter))
    got = [next(csv.reader(io.StringIO(delimiter.join(f), newline=""), delimiter=delimiter), [""])
           for _, f, _ in records]
    assert [r if r else [""] for r in expected] == [g if g else [""] for g in got]


def test_rewrite_fallback_keeps_every_cell(tmp_path, monkeypatch):
    """Where the byte-keeping copy does not read back as expected, every cell is
    written again with the csv module: values kept, same delimiter and encoding."""
    from picker.review import revised as bom_module

    monkeypatch.setattr(bom_module, "_faithful", lambda *a: False)
    bom = read_bom(DATA / "failing-incumbents.csv")
    data = revised_bom(bom, {2: Change("QLB-4N62K", None, 0.009, "new")})
    again = _reread(data, tmp_path / "out.csv")
    assert (again.delimiter, again.encoding) == (";", "cp1252")
    for old, new in zip(bom.lines, again.lines):
        expected = list(old.cells)
        if old.row == 2:
            expected[bom.columns["part"]], expected[bom.columns["price"]] = "QLB-4N62K", "0,009"
        assert list(new.cells[:-1]) == expected


@pytest.mark.parametrize("encoding, delimiter", [("utf-16", ","), ("utf-8-sig", "\t")])
def test_revised_bom_in_the_bom_encoding(tmp_path, encoding, delimiter):
    path = tmp_path / "b.csv"
    text = delimiter.join(["Refs", "Qty", "MPN", "Note"]) + "\n" + \
        delimiter.join(["Q1", "1", "MWB4518K", "µ-power"]) + "\n"
    path.write_bytes(text.encode(encoding))
    bom = read_bom(path)
    data = revised_bom(bom, {0: Change("QLB-4N62K", None, float("nan"), "new")})
    assert data.startswith(text.encode(encoding)[:2])  # the byte-order mark is kept
    again = _reread(data, tmp_path / "out.csv")
    assert again.lines[0].cells == ("Q1", "1", "QLB-4N62K", "µ-power", "new")


@settings(max_examples=150, deadline=None)
@given(st.binary(max_size=300) | st.text(alphabet=st.sampled_from(list('QR1-2,;"\n\t xMPNRefsQty')),
                                          max_size=200).map(str.encode))
def test_any_file_is_read_or_refused_in_one_line(tmp_path_factory, data):
    """Whatever the bytes, reading gives a BOM or a BomError: never another exception."""
    path = tmp_path_factory.mktemp("fuzz") / "b.csv"
    path.write_bytes(data)
    try:
        bom = read_bom(path)
    except BomError as exc:
        assert "\n" not in str(exc)
        return
    revised_bom(bom, {})
