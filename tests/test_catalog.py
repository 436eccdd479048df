"""Loading and checking the catalogue: encodings, separators, every rule with
the exact line and column it names, and never a foreign exception."""

import csv
import io
import os
import re

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import DEMO, TINY_CSV, sha256
from picker.catalog.load import closest_parts, load_catalog, select
from picker.errors import CatalogError, PickerError

HEADER = TINY_CSV.splitlines()[0]
COLUMNS = HEADER.split(",")


def col(name: str) -> int:
    """1-based column of `name` in the tiny catalogue's header."""
    return COLUMNS.index(name) + 1


def with_rows(*rows: str) -> str:
    return "\n".join([HEADER, *rows]) + "\n"


GOOD_P = "GP-1,Testa,pmos,SOT-23,active,no,20,8,3,0.4,1.0,40,60,1,300,150,,,,,,,0.2,0.05,"
GOOD_N = "GN-2,Testa,nmos,SOT-23,active,no,20,8,3,0.4,1.0,40,60,1,300,150,,,,,,,0.2,0.05,"


def load_text(tmp_path, text: str, name="cat.csv", encoding="utf-8"):
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return load_catalog(path, source="test"), path


def test_demo_catalogue_has_no_errors():
    catalog = load_catalog(DEMO, source="test")
    assert catalog.errors == []
    assert len(catalog.df) == catalog.rows_read >= 80
    counts = catalog.df["kind"].value_counts()
    assert counts["pmos"] >= 30 and counts["nmos"] >= 15
    assert counts["npn"] >= 20 and counts["pnp"] >= 10


def _semicolon_decimal_comma(text: str) -> str:
    out = io.StringIO()
    writer = csv.writer(out, delimiter=";", lineterminator="\n")
    for row in csv.reader(io.StringIO(text)):
        writer.writerow([re.sub(r"^(-?\d+)\.(\d+)$", r"\1,\2", cell) for cell in row])
    return out.getvalue()


@pytest.mark.parametrize("variant", ["semicolon-decimal-comma", "windows-1252", "utf-8-bom", "tab",
                                     "crlf"])
def test_same_dataframe_whatever_the_file_dialect(tmp_path, variant):
    text = DEMO.read_text(encoding="utf-8").replace("Ω", "ohm")
    reference = load_text(tmp_path, text, "ref.csv")[0].df
    if variant == "semicolon-decimal-comma":
        data = _semicolon_decimal_comma(text).encode("utf-8")
        assert b"0,061" in data  # the conversion really wrote decimal commas
    elif variant == "windows-1252":
        data = text.replace("<1 uA", "<1 µA").encode("cp1252")
    elif variant == "utf-8-bom":
        data = b"\xef\xbb\xbf" + text.encode("utf-8")
    elif variant == "tab":
        out = io.StringIO()
        csv.writer(out, delimiter="\t", lineterminator="\n").writerows(csv.reader(io.StringIO(text)))
        data = out.getvalue().encode("utf-8")
    else:
        data = text.replace("\n", "\r\n").encode("utf-8")
    path = tmp_path / f"{variant}.csv"
    path.write_bytes(data)
    pd.testing.assert_frame_equal(load_catalog(path, source="test").df, reference)


def test_micro_sign_read_in_both_encodings(tmp_path):
    row = "MU-1,Testa,pmos,SOT-23,active,no,20,8,3,0.4,1.0,40,60,1.5 µA,300,150,,,,,,,0.2,0.05,"
    for encoding in ("utf-8", "cp1252"):
        catalog, _ = load_text(tmp_path, with_rows(row), f"{encoding}.csv", encoding)
        assert catalog.df["idss_uA"].iloc[0] == 1.5


def test_blank_is_unknown_never_zero(tmp_path):
    catalog, _ = load_text(tmp_path, with_rows(GOOD_P.replace(",1,300,", ",,300,")))
    assert np.isnan(catalog.df["idss_uA"].iloc[0])


def test_p_channel_negative_values_are_magnitudes(tmp_path):
    catalog, _ = load_text(tmp_path, TINY_CSV)
    row = catalog.df.set_index("part").loc["TQP-100"]
    assert (row["vds_max_V"], row["vgs_max_V"], row["id_max_A"]) == (20.0, 8.0, 3.0)
    assert (row["vgs_th_min_V"], row["vgs_th_max_V"]) == (0.4, 1.0)


def test_headers_matched_case_insensitively_and_unknown_columns_kept(tmp_path):
    text = TINY_CSV.replace("rds_on_mohm@2.5V", "RDS_ON_MOHM@-2.50V").replace("part,maker", "PART,Maker")
    lines = text.splitlines()
    lines[0] += ",shelf"
    lines[1:] = [line + ("," + "B4" if i == 0 else ",") for i, line in enumerate(lines[1:])]
    text = "\n".join(lines) + "\n"
    catalog, _ = load_text(tmp_path, text)
    assert "rds_on_mohm@2.5V" in catalog.df.columns and "part" in catalog.df.columns
    assert catalog.df["shelf"].iloc[0] == "B4"
    assert catalog.df.index.name == "line" and list(catalog.df.index) == [2, 3, 4, 5]


def test_units_in_cells_converted(tmp_path):
    row = GOOD_P.replace(",40,60,", ",0.040 Ω,60mohm,")
    catalog, _ = load_text(tmp_path, with_rows(row))
    assert catalog.df[["rds_on_mohm@4.5V", "rds_on_mohm@2.5V"]].iloc[0].tolist() == [40.0, 60.0]


# Each rule: the rows, then (line, column, severity, fragment of the message).
RULES = [
    ("missing part", [GOOD_P.replace("GP-1", "", 1)], (2, col("part"), "error", "part number is missing")),
    ("missing kind", [GOOD_P.replace(",pmos,", ",,")], (2, col("kind"), "error", "kind is missing")),
    ("unknown kind", [GOOD_P.replace(",pmos,", ",jfet,")], (2, col("kind"), "error", "unknown kind 'jfet'")),
    ("duplicate part", [GOOD_P, GOOD_N.replace("GN-2", "gp -1")], (3, col("part"), "error", "already on line 2")),
    ("not a number", [GOOD_P.replace(",40,60,", ",forty,60,")], (2, col("rds_on_mohm@4.5V"), "error", "is not a number")),
    ("wrong unit", [GOOD_P.replace(",40,60,", ",45 mA,60,")], (2, col("rds_on_mohm@4.5V"), "error", "is a current; expected a resistance")),
    ("negative rating", [GOOD_N.replace(",20,8,3,", ",-20,8,3,")], (2, col("vds_max_V"), "error", "negative rating")),
    ("threshold min above max", [GOOD_P.replace(",0.4,1.0,", ",1.2,1.0,")], (2, col("vgs_th_min_V"), "error", "is above vgs_th_max_V")),
    ("rds point at threshold", [GOOD_P.replace(",0.4,1.0,", ",0.4,2.5,")], (2, col("rds_on_mohm@2.5V"), "warning", "at or below vgs_th_max_V")),
    ("too many fields", [GOOD_P + ",extra"], (2, len(COLUMNS) + 1, "error", "separator is missing or doubled")),
    ("rds not falling", [GOOD_P.replace(",40,60,", ",70,60,")], (2, col("rds_on_mohm@4.5V"), "warning", "does not fall")),
    ("price rising", [GOOD_P.replace(",0.2,0.05,", ",0.2,0.25,")], (2, col("price@1000"), "warning", "rises with quantity")),
    ("no thermal data", [GOOD_P.replace(",300,150,", ",,150,")], (2, col("rth_ja_C/W"), "warning", "no rth_ja_C/W")),
    ("eol part", [GOOD_P.replace(",active,", ",eol,")], (2, col("status"), "warning", "end-of-life")),
]


@pytest.mark.parametrize("name,rows,expected", RULES, ids=[r[0] for r in RULES])
def test_each_rule_names_its_line_and_column(tmp_path, name, rows, expected):
    catalog, path = load_text(tmp_path, with_rows(*rows))
    line, column, severity, fragment = expected
    found = [p for p in catalog.problems if fragment in p.message]
    assert len(found) == 1, catalog.problems
    p = found[0]
    assert (p.line, p.column, p.severity) == (line, column, severity)
    assert str(p).startswith(f"{path}:{line}:{column}: {severity}: ")
    if severity == "error":
        assert line in catalog.error_lines and line not in catalog.df.index
    else:
        assert line in catalog.df.index  # warnings leave the row in


def test_price_break_that_is_not_a_whole_number(tmp_path):
    text = TINY_CSV.replace("price@1000", "price@1.5")
    catalog, path = load_text(tmp_path, text)
    p = catalog.errors[0]
    assert (p.line, p.column) == (1, col("price@1000"))
    assert "not a whole quantity" in p.message
    assert "price@1.5" not in catalog.df.columns


def test_rows_with_errors_left_out_and_counted(tmp_path):
    catalog, path = load_text(tmp_path, with_rows(GOOD_P, GOOD_N.replace(",nmos,", ",fet,")))
    assert catalog.df["part"].tolist() == ["GP-1"]
    assert catalog.left_out_notice() == (
        f"1 catalogue row left out for errors; run `picker catalog check {path}` to see them")
    with pytest.raises(CatalogError, match="unknown kind"):
        load_catalog(path, source="test", strict=True)


@pytest.mark.parametrize("text,fragment", [
    ("", "empty"),
    ("maker,package\nX,SOT-23\n", "no 'part' column"),
    ("part,kind\nA,pmos\n\x00\n", "NUL byte"),
    (",\n,,\n", "no header line"),  # regression: found by the random-bytes test
])
def test_unreadable_files(tmp_path, text, fragment):
    with pytest.raises(CatalogError, match=fragment):
        load_text(tmp_path, text)


def test_missing_file_and_bad_bytes(tmp_path):
    with pytest.raises(CatalogError, match="no such catalogue file"):
        load_catalog(tmp_path / "nope.csv", source="test")
    bad = tmp_path / "bad.csv"
    bad.write_bytes(b"part,kind\nA\x81B,pmos\n")
    with pytest.raises(CatalogError) as err:
        load_catalog(bad, source="test")
    assert (err.value.line, err.value.column) == (2, 2)


def test_loading_never_changes_the_file(tmp_path):
    catalog, path = load_text(tmp_path, TINY_CSV)
    before = sha256(path)
    load_catalog(path, source="test")
    assert sha256(path) == before


def test_closest_names_and_selection(tmp_path):
    catalog, _ = load_text(tmp_path, TINY_CSV)
    assert closest_parts(catalog.df, "TQP-10")[0] == "TQP-100"
    assert select(catalog.df, parts=["tqp100"])["part"].tolist() == ["TQP-100"]
    assert select(catalog.df, kinds=["pmos"], text="testa")["part"].tolist() == ["TQP-100", "TQP-200"]
    with pytest.raises(CatalogError, match="closest: TQP-100"):
        select(catalog.df, parts=["TQP-1000"])


@settings(max_examples=300, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.binary(max_size=400))
def test_random_bytes_give_a_catalogue_or_our_error(tmp_path, data):
    path = tmp_path / "fuzz.csv"
    path.write_bytes(data)
    try:
        load_catalog(path, source="test")
    except PickerError:
        pass


CELL = st.one_of(st.sampled_from(["", "pmos", "npn", "1.5", "-2", "25 mΩ", "4k7", "x", "1e999",
                                  "nan", '"', "µA", "SOT-23", "0,5"]), st.text(max_size=8))


@settings(max_examples=300, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.lists(CELL, min_size=1, max_size=len(COLUMNS) + 2), max_size=6),
       st.sampled_from([",", ";", "\t"]))
def test_random_csv_like_text_gives_a_catalogue_or_our_error(tmp_path, rows, delimiter):
    text = HEADER.replace(",", delimiter) + "\n" + "\n".join(delimiter.join(r) for r in rows)
    path = tmp_path / "fuzz.csv"
    path.write_text(text, encoding="utf-8")
    try:
        catalog = load_catalog(path, source="test")
    except PickerError:
        return
    assert len(catalog.df) + len(catalog.error_lines) == catalog.rows_read


@pytest.mark.parametrize("text_edit", [
    lambda t: t,                                    # plain: the vectorised reader
    lambda t: t.replace("\n", "\r\n"),              # CRLF line ends
    lambda t: t.replace(",SOT-23,", ", SOT-23 ,"),  # cells padded with spaces
    lambda t: t.replace("\n", "\n\n", 3),           # blank lines: line numbers move
    lambda t: t.replace("Halvorsen", '"Halvorsen"'),  # quotes: the general reader
])
def test_vectorised_reader_gives_the_same_as_the_general_one(tmp_path, monkeypatch, text_edit):
    """Large files take a vectorised path (no quotes, no ragged rows); it must
    give exactly what the csv-module path gives, line numbers included."""
    import picker.catalog.tabular as tabular

    path = tmp_path / "cat.csv"
    path.write_text(text_edit(DEMO.read_text(encoding="utf-8")), encoding="utf-8", newline="")
    general = load_catalog(path, source="test")
    monkeypatch.setattr(tabular, "FAST_BYTES", 0)
    fast = load_catalog(path, source="test")
    pd.testing.assert_frame_equal(fast.df, general.df)
    assert fast.problems == general.problems


def test_cache_serves_the_same_catalogue_and_never_a_stale_one(tmp_path, monkeypatch):
    """A second load comes from the columnar cache and equals the parsed one;
    a changed file or a corrupt cache entry is parsed again."""
    pytest.importorskip("pyarrow")
    from picker.catalog import cache

    monkeypatch.setenv("PICKER_CACHE_DIR", str(tmp_path / "cache"))
    monkeypatch.setattr(cache, "MIN_BYTES", 0)
    path = tmp_path / "cat.csv"
    path.write_text(DEMO.read_text(encoding="utf-8"), encoding="utf-8")
    parsed = load_catalog(path, source="test")
    entries = list((tmp_path / "cache").glob("catalog-*.feather"))
    assert len(entries) == 1
    calls = []
    monkeypatch.setattr("picker.catalog.load._convert", lambda table: calls.append(1))
    cached = load_catalog(path, source="test")
    assert calls == []  # not parsed again
    pd.testing.assert_frame_equal(cached.df, parsed.df)
    assert cached.problems == parsed.problems and cached.rows_read == parsed.rows_read

    monkeypatch.undo()
    monkeypatch.setenv("PICKER_CACHE_DIR", str(tmp_path / "cache"))
    monkeypatch.setattr(cache, "MIN_BYTES", 0)
    entries[0].write_bytes(b"not a feather file")  # corrupt: rebuilt, not trusted
    assert load_catalog(path, source="test").df.equals(parsed.df)
    # Same path, size and modification time, other bytes: the content hash catches it.
    stat = path.stat()
    path.write_text(path.read_text().replace("HLP6125-T,", "HLP6125-X,"))
    os.utime(path, ns=(stat.st_atime_ns, stat.st_mtime_ns))
    assert path.stat().st_size == stat.st_size
    assert "HLP6125-X" in load_catalog(path, source="test").df["part"].tolist()


# -- leakage figures that cannot be read as written (models/README.md §4) ------------------

LEAK_HEADER = "part,kind,idss_uA,idss_hot_uA,idss_hot_C,icbo_nA,icbo_hot_nA,icbo_hot_C,rth_ja_C/W"
LEAK_RULES = [
    # (rows after the header, line, column name, fragment of the warning)
    ("zero at 25 °C", "LK-1,pmos,0,,,,,,300", 2, "idss_uA", "idss_uA is 0, read as blank"),
    ("zero with a hot point", "LK-1,npn,,,,0,500,100,300", 2, "icbo_nA",
     "taken from icbo_hot_nA 500 nA at 100 °C, doubling every 10 °C"),
    ("zero hot figure", "LK-1,npn,,,,10,0,100,300", 2, "icbo_hot_nA", "icbo_hot_nA is 0"),
    ("falling hot point", "LK-1,npn,,,,10,8,100,300", 2, "icbo_hot_nA",
     "leakage does not fall as the die warms"),
    ("hot point equal", "LK-1,pmos,1,1,85,,,,300", 2, "idss_hot_uA", "is not above idss_uA 1 µA"),
    ("hot point not hot", "LK-1,pmos,1,5,20,,,,300", 2, "idss_hot_C", "is not above 25 °C"),
    ("hot figure alone", "LK-1,pmos,1,5,,,,,300", 2, "idss_hot_uA", "without idss_hot_C"),
    ("temperature alone", "LK-1,npn,,,,10,,85,300", 2, "icbo_hot_C", "without icbo_hot_nA"),
]


@pytest.mark.parametrize("name,row,line,column,fragment", LEAK_RULES, ids=[r[0] for r in LEAK_RULES])
def test_leakage_warnings_name_the_cell(tmp_path, name, row, line, column, fragment):
    """Each leakage figure the method cannot read as written is one warning
    (not an error: the row stays in) at its file:line:column."""
    catalog, path = load_text(tmp_path, LEAK_HEADER + "\n" + row + "\n")
    assert catalog.errors == []
    assert len(catalog.warnings) == 1, [str(p) for p in catalog.warnings]
    p = catalog.warnings[0]
    position = LEAK_HEADER.split(",").index(column) + 1
    assert (p.line, p.column, p.column_name) == (line, position, column)
    assert fragment in p.message
    assert str(p).startswith(f"{path}:{line}:{position}: warning: ")
    assert line in catalog.df.index


def test_clean_leakage_points_raise_nothing(tmp_path):
    """A hot point above the 25 °C figure, and no point at all, are fine."""
    text = LEAK_HEADER + "\nLK-1,pmos,1,10,85,,,,300\nLK-2,npn,,,,10,500,100,300\nLK-3,npn,,,,,,,300\n"
    catalog, _ = load_text(tmp_path, text)
    assert catalog.problems == []


def test_new_bipolar_columns_are_read_in_their_units(tmp_path):
    """vbe_sat_max_V (V, a magnitude: a PNP's -0.85 V reads 0.85) and hfe_max (a
    plain number) are catalogue columns (interfaces.md); a unit that does not
    fit is an error at the cell."""
    text = ("part,kind,vbe_sat_max_V,hfe_max\nBJ-1,npn,850 mV,400\nBJ-2,pnp,-0.9,300\n"
            "BJ-3,npn,0.85 A,300\n")
    catalog, path = load_text(tmp_path, text)
    df = catalog.df.set_index("part")
    assert df.loc["BJ-1", "vbe_sat_max_V"] == pytest.approx(0.85) and df.loc["BJ-1", "hfe_max"] == 400
    assert df.loc["BJ-2", "vbe_sat_max_V"] == pytest.approx(0.9)
    (error,) = catalog.errors
    assert (error.line, error.column) == (4, 3) and "is a current" in error.message
