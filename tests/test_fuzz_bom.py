"""Fuzzing the BOM reader (picker.review.bom): any bytes give a Bom whose warnings
name the file and line, or a BomError naming the file; never another
exception. Whatever is read can be written back as a revised BOM that reads
again with the same lines, and unchanged cells keep their values.

Inputs: random bytes; random rows under BOM headers; the example and test
BOMs with up to four edits each (see tests/fuzzing.py)."""

from __future__ import annotations

import csv
import io

import pytest
from hypothesis import given
from hypothesis import strategies as st

from conftest import DEMO, EXAMPLES, ROOT
from fuzzing import FUZZ, csv_like, mutated, nasty_cell, ours
from picker.review.bom import MAX_RANGE, _physical_lines, expand_refs, read_bom
from picker.review.match import PartIndex
from picker.review.revised import Change, revised_bom
from picker.errors import BomError, PickerError

PATH = "fuzz/bom.csv"
SEEDS = [EXAMPLES.joinpath("kettlewick-bom.csv").read_bytes()] + [
    p.read_bytes() for p in sorted((ROOT / "tests" / "data" / "review").glob("*.csv"))
    if p.name != "cost-catalogue.csv"]
HEADERS = [["Ref", "Qty", "MPN", "Manufacturer", "Description", "Unit Price"],
           ["Reference designators", "Quantity", "Part number"],
           ["Item", "Qty", "Ref Des", "Maker", "MPN"]]


def _read(data: bytes):
    try:
        bom = read_bom(PATH, data=data)
    except PickerError as exc:
        ours(exc, file=PATH)
        assert isinstance(exc, BomError) or type(exc).__name__ == "TooLarge", exc
        return None
    for w in bom.warnings:
        assert w.file == PATH and w.line is not None and "\n" not in str(w), w
    return bom


# What a revised BOM writes comes from a loaded catalogue, which holds no NUL
# (the reader refuses such a file) and no blank part number, and from
# picker's own notes, never blank for a changed line.
written = nasty_cell.map(lambda t: t.replace("\x00", ""))
filled = written.filter(lambda t: t.strip())
changes = st.dictionaries(st.integers(0, 12), st.builds(
    Change, part=st.none() | filled, maker=st.none() | written,
    price=st.floats(allow_nan=True, allow_infinity=True) | st.floats(0, 10), note=filled,
    description=st.none() | written),
    max_size=4)


def _records(data: bytes, bom) -> list[list[str]]:
    """The non-blank records from the header on, every field as the csv
    module reads it (unstripped, fields past the header's width included)."""
    text = data.decode(bom.encoding, errors="replace")
    rest = "".join(_physical_lines(text)[bom.header_line - 1:])
    return [r for r in csv.reader(io.StringIO(rest, newline=""), delimiter=bom.delimiter,
                                  strict=False) if any(c.strip() for c in r)]


def _check_revised(bom, wanted: dict) -> None:
    """The revised copy reads back: one more column, the same lines, and every
    field of a line without a change as it was, fields past the header's
    width included (nothing of the user's is lost); the title lines above
    the header are the same bytes."""
    wanted = {row: c for row, c in wanted.items() if row < len(bom.lines)}
    data = revised_bom(bom, wanted)
    again = read_bom(PATH, data=data)
    assert len(again.lines) == len(bom.lines)
    width = len(bom.header)
    # A Windows-1252 BOM whose only bytes that are not UTF-8 sit in a replaced
    # cell reads back as UTF-8 (its other bytes unchanged): compare the cells
    # as the BOM's own encoding reads them, below.
    for old, new in zip(bom.lines, again.lines):
        if old.row not in wanted and again.encoding == bom.encoding:
            assert new.cells[:width] == old.cells, (old.cells, new.cells)
    text, revised = (d.decode(bom.encoding, errors="replace") for d in (bom.data, data))
    assert _physical_lines(revised)[:bom.header_line - 1] == \
        _physical_lines(text)[:bom.header_line - 1]
    try:
        before, after = _records(bom.data, bom), _records(data, bom)
    except csv.Error:  # a field past the csv module's limit: read_bom refused such a row
        return
    assert len(after) == len(before)
    for k, (old, new) in enumerate(zip(before[1:], after[1:])):
        if k not in wanted:  # values as read (stripped), trailing empty fields aside
            assert _values(new[:width] + new[width + 1:]) == _values(old), (old, new)


def _values(fields: list[str]) -> list[str]:
    values = [f.strip() for f in fields]
    while values and not values[-1]:
        values.pop()
    return values


@FUZZ
@given(st.binary(max_size=600))
def test_random_bytes(data):
    bom = _read(data)
    if bom is not None:
        revised_bom(bom, {})


@FUZZ
@given(st.sampled_from(HEADERS).flatmap(csv_like), changes)
def test_random_rows_under_bom_headers(data, wanted):
    bom = _read(data)
    if bom is not None:
        _check_revised(bom, wanted)


@FUZZ
@given(mutated(SEEDS), changes)
def test_mutated_boms(data, wanted):
    bom = _read(data)
    if bom is not None:
        _check_revised(bom, wanted)


INDEX = PartIndex(__import__("picker.catalog.load", fromlist=["x"]).load_catalog(
    DEMO, source="test", cache=False).df["part"])


@FUZZ
@given(st.lists(nasty_cell | st.sampled_from(list(INDEX.parts)).map(lambda p: p + "-TR"),
                max_size=5),
       st.floats(0, 100), st.floats(0, 100))
def test_part_matching_takes_any_text(names, a, b):
    """Part-number matching: a Match for every name, or our error for
    thresholds out of order."""
    try:
        found = INDEX.match(names, take_at=max(a, b), confirm_at=min(a, b))
    except PickerError as exc:
        ours(exc)
        return
    assert len(found) == len(names)
    for m in found:
        assert m.position < len(INDEX.parts) and (m.position < 0 or 0 <= m.score <= 100)


@FUZZ
@given(st.text(alphabet=st.sampled_from(list("QRTU1234567890-–—.., ;_")), max_size=40))
def test_ref_lists_expand_within_bounds(text):
    refs, problems = expand_refs(text)
    assert len(refs) <= MAX_RANGE * max(1, text.count("-") + text.count("..")
                                        + text.count("–") + text.count("—"))


# -- regressions found by fuzzing ------------------------------------------------------

def test_huge_range_is_not_expanded():
    """A range such as Q1-Q99999999 would expand to 10^8 refs: it is kept as
    written (bounded by MAX_RANGE, as test_bom.py's test_refs_expand has it)
    with a warning naming the file, line and column."""
    bom = read_bom(PATH, data=b"Ref,Qty,MPN\nQ1,1,ABC\nQ1-Q99999999,1,DEF\n")
    assert bom.lines[1].refs == ("Q1-Q99999999",)
    assert [(w.file, w.line, w.column) for w in bom.warnings] == [(PATH, 3, 1)]


def test_regression_refs_of_the_whole_bom_are_bounded(monkeypatch):
    """Ranges of up to MAX_RANGE refs on every line of a large BOM could still
    expand to billions of refs: the whole BOM is bounded by MAX_REFS, an error
    naming the line where the bound is passed."""
    from picker.review import bom as bom_module

    monkeypatch.setattr(bom_module, "MAX_REFS", 25)
    rows = "".join(f"Q{10 * k + 1}-Q{10 * k + 10},10,P{k}\n" for k in range(3))
    with pytest.raises(BomError, match="more than 25 refs") as info:
        read_bom(PATH, data=("Ref,Qty,MPN\n" + rows).encode())
    assert info.value.line == 4


def test_regression_ref_numbers_of_thousands_of_digits():
    """'Q' followed by 5,000 digits in a range: int() refuses strings over
    4,300 digits (ValueError); such a token is kept as written, with a warning."""
    token = "Q" + "1" * 5000 + "-Q" + "2" * 5000
    refs, problems = expand_refs(token)
    assert refs == [token] and problems


def test_regression_header_cell_over_the_csv_field_limit():
    """A title line with a cell over the csv module's 128 KiB field limit made
    the header search raise _csv.Error; now it is just not a header."""
    data = ("x" * 140_000 + "\nRef,Qty,MPN\nQ1,1,ABC\n").encode()
    try:
        bom = read_bom(PATH, data=data)
    except BomError as exc:
        ours(exc, file=PATH)
    else:
        assert [ln.part for ln in bom.lines] == ["ABC"]


@pytest.mark.parametrize("digits", [12, 400, 5000])
def test_regression_huge_quantity_is_a_warning(digits):
    """A quantity of 400 digits was taken as is (costs overflowed later); one of
    5,000 digits raised ValueError from int(). Over MAX_QTY per board, the
    line is costed at its refs' count, with a warning on the qty cell."""
    data = ("Ref,Qty,MPN,Price\nQ1," + "9" * digits + ",ABC,0.1\n").encode()
    bom = read_bom(PATH, data=data)
    assert bom.lines[0].qty == 1
    assert [(w.line, w.column) for w in bom.warnings] == [(2, 2)]
    assert "over 100,000 per board" in bom.warnings[0].message


def test_regression_tiny_confirm_threshold():
    """--confirm-at 1e-311 (allowed: min 0) made the length window
    length / cutoff overflow (OverflowError in math.floor)."""
    found = INDEX.match(["na"], take_at=1.0, confirm_at=2.2e-311)
    assert len(found) == 1


def test_regression_lone_carriage_return_in_a_rewritten_cell_is_quoted(monkeypatch):
    """Where the byte-keeping copy falls back to writing every cell again, a
    value holding a lone CR (a catalogue cell may) was written unquoted by the
    csv module's writer, so the revised BOM read back with an extra line."""
    from picker.review import revised as bom_module

    monkeypatch.setattr(bom_module, "_faithful", lambda *a: False)
    bom = read_bom(PATH, data=b"Ref,Qty,MPN,Manufacturer\nQ1,1,ABC,Old\nQ2,1,DEF,Old\n")
    data = revised_bom(bom, {0: Change("XYZ", "a\rb", float("nan"), "note")})
    again = read_bom(PATH, data=data)
    assert [ln.cells for ln in again.lines] == [("Q1", "1", "XYZ", "a\rb", "note"),
                                                ("Q2", "1", "DEF", "Old", "")]


def test_regression_rewritten_bom_keeps_fields_past_the_header():
    """Found by fuzzing: where the byte-keeping copy gave way to writing every
    cell again (here a change on a short row after a lone CR), the fields a
    ragged row has past the header's width were dropped, and a row with only
    such fields vanished. They are kept now, after the change column."""
    data = b"Ref,Qty,MPN,Price\r99\n1,Q1,ABC,0.06\r,,,,-,,\n2,Q2,DEF,0.01\r\n"
    bom = read_bom(PATH, data=data)
    out = revised_bom(bom, {0: Change(None, None, 0.0, "")})
    assert out == (b"Ref,Qty,MPN,Price,picker_change\r\n99,,,0.0,\r\n1,Q1,ABC,0.06,\r\n"
                   b",,,,,-,,\r\n2,Q2,DEF,0.01,\r\n")
    assert len(read_bom(PATH, data=out).lines) == 4


def test_regression_rewritten_bom_keeps_its_title_lines(monkeypatch):
    """The same fallback dropped the title lines above the header."""
    from picker.review import revised as bom_module

    monkeypatch.setattr(bom_module, "_faithful", lambda *a: False)
    data = b"Bill of materials\nBoard: KL-1\n\nRef,Qty,MPN\nQ1,1,ABC\n"
    bom = read_bom(PATH, data=data)
    out = revised_bom(bom, {0: Change("XYZ", None, float("nan"), "n")})
    assert out == b"Bill of materials\nBoard: KL-1\n\nRef,Qty,MPN,picker_change\nQ1,1,XYZ,n\n"


def test_regression_title_line_with_a_record_separator():
    """Found by fuzzing: title lines were split with str.splitlines, which
    also breaks at \\x1e, \\x0c and the like; the csv module does not, so
    the header's line number came out one too high and the revised BOM
    repeated the header as a data row."""
    data = b"\x1e,,,\nBoard: KL-1,,,,\nRef,Qty,MPN\nQ1,1,ABC\n"
    bom = read_bom(PATH, data=data)
    assert (bom.header_line, [ln.line for ln in bom.lines]) == (3, [4])
    again = read_bom(PATH, data=revised_bom(bom, {}))
    assert [ln.cells for ln in again.lines] == [("Q1", "1", "ABC", "")]
