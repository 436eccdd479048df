"""Fuzzing the import path (picker.catalog.importer, picker.catalog.merge): mapping
files, raw parameter tables, single cells. Any input gives a result or one of
our errors naming the file; never another exception; and nothing is written
(the merge is planned and checked, never applied here: see test_safe_io.py
for the writes).

Inputs: random and mutated mapping TOML; the two makers' tables under
tests/data/import with up to four edits each; random headers and cells;
saved mappings of random headers read back (the --save-map round trip)."""

from __future__ import annotations

import math

from hypothesis import given
from hypothesis import strategies as st

from conftest import ROOT, TINY_CSV
from fuzzing import FUZZ, mutated, nasty_cell, ours
from picker.catalog import columns as cols
from picker.errors import CatalogError, MappingError, PickerError
from picker.catalog.import_rows import cell_values, clean_number, read_kind, read_rows
from picker.catalog.importer import (load_mapping, mapping_toml, match_header, propose_mapping,
                                     target_from_name)
from picker.catalog.merge import plan_merge
from picker.catalog.tabular import read_table

RAW = "fuzz/raw.csv"
RAW_PATHS = sorted((ROOT / "tests" / "data" / "import").glob("*.csv"))
RAW_SEEDS = [p.read_bytes() for p in RAW_PATHS]
MAP_SEEDS = [
    b'[columns]\n"Type number" = "part"\n"RDS(on) (m\xce\xa9)" = "rds_on_mohm@4.5V"\n'
    b'"Vth window" = "vgs_th_min_V..vgs_th_max_V"\n"Reel colour" = ""\n',
    b'[columns]\n"Ron2V5 (\xce\xa9)" = { column = "rds_on_mohm@2.5V", '
    b'unit = "\xce\xa9" }\n"Case" = "package"\n',
]
HEADERS = ["Part number", "Type number", "Manufacturer", "Channel", "Polarity",
           "RDS(on) max at VGS = -4.5 V (Ω)", "Rds(on) @ 1.8V [mΩ]", "VGS(th) min and max",
           "VGS(th) typ (V)", "IDSS (µA)", "ICBO at TA = 150 °C (µA)", "hFE min @ Ic=1mA",
           "VCE(sat) @ IC=100mA, IB=10mA (mV)", "Price @ 1000 pcs", "Unit price at 1k",
           "Tj max (°C)", "Rth(j-a) K/W", "Ptot (W)", "Lifecycle status", "Datasheet revision",
           "Case", "V(BR)CEO (V)", "IC (mA)", "Remarks", "Ron2V5 (mΩ)", "", "part", "kind",
           "price@100"]
header_text = st.one_of(st.sampled_from(HEADERS), nasty_cell,
                        st.text(alphabet=st.sampled_from(list("RDSonVgthICBOµΩmA()[]@=., -25")),
                                max_size=25))


def _table(data: bytes):
    try:
        return read_table(RAW, error=CatalogError, what="raw table", data=data)
    except PickerError as exc:
        ours(exc, file=RAW)
        return None


@FUZZ
@given(mutated(MAP_SEEDS, delimiters=b'="[]{},'))
def test_mutated_mapping_files(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("map") / "map.toml"
    path.write_bytes(data)
    try:
        mapping = load_mapping(str(path))
    except PickerError as exc:
        ours(exc, file=str(path))
        assert isinstance(exc, MappingError), exc
        return
    assert all(t is None or all(c in cols.COLUMNS or "@" in c for c in t.columns)
               for t in mapping.values())


@FUZZ
@given(st.lists(header_text, min_size=1, max_size=8))
def test_saved_mapping_reads_back_the_same(tmp_path_factory, headers):
    """--save-map writes what load_mapping reads back: the same column (and
    unit) for every header that was mapped, whatever the header's text."""
    matches = propose_mapping(headers)
    path = tmp_path_factory.mktemp("map") / "saved.toml"
    path.write_text(mapping_toml(matches, "raw.csv"), encoding="utf-8")
    again = load_mapping(str(path))
    seen = set()
    for m in matches:
        folded = " ".join(m.raw.split()).casefold()
        if folded in seen:
            continue  # a repeated header is written once, as it first appears
        seen.add(folded)
        key = next(k for k in again if " ".join(k.split()).casefold() == folded)
        if m.target is None:
            assert again[key] is None
        else:
            assert again[key] is not None and again[key].columns == m.target.columns
            assert again[key].unit == m.target.unit


@FUZZ
@given(mutated(RAW_SEEDS))
def test_mutated_raw_tables_plan_or_refuse(tmp_path_factory, data):
    """Read, map, convert and plan the merge into a small catalogue: a plan
    (every problem located in the raw file or the catalogue) or our error."""
    table = _table(data)
    if table is None:
        return
    folder = tmp_path_factory.mktemp("into")
    into = folder / "catalogue.csv"
    into.write_text(TINY_CSV, encoding="utf-8")
    try:
        rows, problems = read_rows(table, propose_mapping(table.header))
        plan = plan_merge(str(into), rows, raw_path=RAW, add_columns=True)
    except PickerError as exc:
        ours(exc)
        return
    for p in problems + plan.problems:
        assert p.file in (RAW, str(into), "command line") and "\n" not in str(p), p
    assert into.read_text(encoding="utf-8") == TINY_CSV  # planning writes nothing
    assert sorted(p.name for p in folder.iterdir()) == ["catalogue.csv"]


@FUZZ
@given(header=header_text, cell=nasty_cell | st.text(
    alphabet=st.sampled_from(list("0123456789.,~-–/ toµΩmVA≤<>max*$€()NnPpCHhannel")),
    max_size=16), mark=st.sampled_from([".", ","]))
def test_one_cell_under_any_header(header, cell, mark):
    """cell_values and read_kind: a value (finite), or ValueError/QuantityError
    that read_rows turns into a located problem."""
    m = match_header(1, header)
    if m.target is None:
        return
    name = m.target.columns[0]
    try:
        if cols.spec_of(name)[0] is None:
            if name == "kind":
                read_kind(cell, m.target.family)
            return
        values, _ = cell_values(cell, m.target, mark)
    except ValueError as exc:  # QuantityError is a ValueError too
        assert str(exc) and "\n" not in str(exc).replace(cell, "")
        return
    assert all(math.isfinite(v) for v in values.values()), values


@FUZZ
@given(st.text(max_size=30), st.sampled_from([".", ","]), st.sampled_from(["max", "min", None]))
def test_number_cleaning(text, mark, holds):
    try:
        clean_number(text, mark, holds)
    except ValueError as exc:
        assert str(exc)


@FUZZ
@given(st.one_of(nasty_cell, st.sampled_from(sorted(cols.COLUMNS)),
                 st.tuples(st.sampled_from(["rds_on_mohm", "hfe_min", "price", "vce_sat_mV"]),
                           nasty_cell).map("@".join)),
       st.sampled_from(["", "Ω", "mV", "µA", "%", "x"]))
def test_mapping_right_hand_sides(column, unit):
    try:
        target = target_from_name(column, unit)
    except PickerError as exc:
        ours(exc)
        return
    assert target is None or target.columns


# -- regressions found by fuzzing ------------------------------------------------------

def test_regression_saved_mapping_with_a_repeated_header(tmp_path):
    """A raw table with two 'Part Number' columns was saved with the key twice,
    which TOML forbids: the next --map failed. Each header is written once."""
    matches = propose_mapping(["Part number", "Part number", "part  number", "Case"])
    path = tmp_path / "saved.toml"
    path.write_text(mapping_toml(matches, "raw.csv"), encoding="utf-8")
    again = load_mapping(str(path))
    assert {k: t and t.name for k, t in again.items()} == {"Part number": "part",
                                                           "Case": "package"}


def test_regression_saved_mapping_with_line_breaks_in_comments(tmp_path):
    """A raw file name or a note holding a line break broke the comment it was
    written in (the rest of the line became TOML, or a control character made
    the file invalid)."""
    matches = propose_mapping(["Part number", "Part\rnumber", "Case"])
    path = tmp_path / "saved.toml"
    path.write_text(mapping_toml(matches, "raw\nx = 1.csv"), encoding="utf-8")
    assert load_mapping(str(path))["Part number"].name == "part"


def test_regression_point_conditions_out_of_range():
    """A point column such as price@1e999999 raised decimal.Overflow, or
    ValueError on a 5,000-digit integer, from the header reader (catalogue,
    import and mapping files alike); now a HeaderProblem (a located catalogue
    error, a MappingError)."""
    import pytest

    from picker.catalog.load import load_catalog

    for header in ("price@1e999999", "price@1e99999999999999", "rds_on_mohm@1e999999V",
                   "price@" + "9" * 5000, "hfe_min@1e-99mA"):
        with pytest.raises(cols.HeaderProblem, match="out of range|whole quantity"):
            cols.canonical(header)
        with pytest.raises(MappingError):
            target_from_name(header)
        data = TINY_CSV.replace("price@1000", header, 1).encode()
        catalog = load_catalog("c.csv", source="test", data=data, cache=False)
        assert any(p.line == 1 and ("range" in p.message or "whole" in p.message)
                   for p in catalog.errors)


def test_regression_mapping_integer_of_thousands_of_digits(tmp_path):
    """tomllib raises a plain ValueError for an integer of over 4,300 digits:
    it escaped load_mapping (exit 3); now a MappingError with its line."""
    import pytest

    path = tmp_path / "map.toml"
    path.write_text('[columns]\n"A" = "part"\n"B" = ' + "1" * 5000 + "\n", encoding="utf-8")
    with pytest.raises(MappingError, match="thousands of digits") as info:
        load_mapping(str(path))
    assert info.value.line == 3


def test_regression_save_map_into_a_folder(tmp_path):
    """`--save-map FOLDER` raised IsADirectoryError from the write (exit 3):
    every write failure is now a WriteRefused naming the file (exit 2)."""
    from conftest import invoke

    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV, encoding="utf-8")
    (tmp_path / "folder").mkdir()
    result = invoke("catalog", "import", str(RAW_PATHS[0]), "--into", str(cat), "--dry-run",
                    "--save-map", str(tmp_path / "folder"))
    assert result.exception is None or isinstance(result.exception, SystemExit)
    assert result.exit_code == 2 and "is a folder" in result.output


def test_regression_price_header_with_a_quantity_past_any_float():
    """'Price 999...9' (hundreds of digits) read as an infinite quantity break,
    and int() of it raised OverflowError from the header mapping (exit 3); now
    the header is left out with its reason, as any header without a usable break."""
    m = match_header(1, "Price " + "9" * 400)
    assert m.target is None and "quantity break" in m.note
    assert match_header(1, "Price 1000").target.columns == ("price@1000",)
