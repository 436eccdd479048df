"""Round trips.

- A catalogue written out by `catalog show --format csv` loads again to the
  same DataFrame: every column, every value, the same dtypes (the file line
  index aside). For the demo, files of other shapes (semicolons and decimal
  commas, Windows-1252, quoted cells with line breaks, text a spreadsheet
  would run) and generated catalogues.
- A quantity formatted with every digit (`format_quantity(v, unit, None)`)
  parses back to the same float, for every unit and any finite value; with
  3 significant digits, to within half a unit in the third digit.
"""

from __future__ import annotations

import io
import math

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from conftest import DEMO, TINY_CSV, invoke, run_cli
from fuzzing import FUZZ
from picker.catalog import columns as cols
from picker.catalog.load import load_catalog
from picker.catalog.quantities import UNITS, format_quantity, parse_quantity
from picker.cells import restore


def _frame(data: bytes) -> pd.DataFrame:
    """The loaded catalogue without its file-line index. Text columns are
    compared as object columns: pandas 3 infers its string dtype for a text
    column with rows and keeps object for one without, so a catalogue whose
    rows were all left out for errors would otherwise differ in dtype only."""
    df = load_catalog("round.csv", source="test", data=data, cache=False).df
    text = [c for c in df.columns
            if isinstance(df[c].dtype, pd.StringDtype) or df[c].dtype == object]
    return df.astype({c: object for c in text}).reset_index(drop=True)


def _same(before: pd.DataFrame, after: pd.DataFrame) -> None:
    assert list(after.columns) == list(before.columns)
    pd.testing.assert_frame_equal(after, before, check_exact=True)


def _show_csv(path) -> bytes:
    result = invoke("catalog", "show", "-c", str(path), "--format", "csv")
    assert result.exit_code == 0, result.output
    return result.stdout_bytes  # (result.stdout turns CRLF into LF, inside cells too)


def test_demo_round_trips_through_the_real_command():
    """The executable, as a user runs it: picker catalog show --format csv."""
    result = run_cli("catalog", "show", "-c", str(DEMO), "--format", "csv")
    assert result.returncode == 0, result.stderr
    _same(_frame(DEMO.read_bytes()), _frame(result.stdout.encode("utf-8")))


SHAPES = {
    "tiny": TINY_CSV.encode("utf-8"),
    "semicolons, decimal commas, cp1252, CRLF": TINY_CSV.replace(",", ";").replace("0.", "0,")
    .replace("SOT-23", "SOT-23 µ").replace("\n", "\r\n").encode("cp1252"),
    "quoted cells, line breaks, formulas, units": (
        TINY_CSV.splitlines()[0] + ",-odd column\n"
        + "\n".join(ln + ",x" for ln in TINY_CSV.splitlines()[1:]) + "\n")
    .replace("Testa Parts,pmos,SOT-23,active,yes",
             '"=Testa, ""Parts""",pmos,"SOT-23\nreel",active,yes', 1)
    .replace(",40,60,", ",40 mΩ,0.06 Ω,", 1).replace(",,\n", ",-5 V drive only,@x\n", 1)
    .encode("utf-8"),
    "negative numbers kept": (TINY_CSV.splitlines()[0] + ",idss_hot_C,rds_tc_pct/C\n"
                              + "\n".join(ln + ",-40,-0.25" for ln in TINY_CSV.splitlines()[1:])
                              + "\n").encode("utf-8"),
}


@pytest.mark.parametrize("shape", list(SHAPES))
def test_catalogues_of_every_shape_round_trip(shape, tmp_path):
    path = tmp_path / "cat.csv"
    path.write_bytes(SHAPES[shape])
    before = _frame(SHAPES[shape])
    assert len(before) == 4
    _same(before, _frame(_show_csv(path)))


# -- generated catalogues --------------------------------------------------------------------------

text_cell = st.text(st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"),
                    max_size=12).map(str.strip)
NUMERIC = ["vds_max_V", "vgs_th_max_V", "rds_on_mohm@4.5V", "rds_on_mohm@2.5V", "idss_uA",
           "idss_hot_C", "rds_tc_pct/C", "hfe_min@1mA", "price@1", "price@1000", "tj_max_C"]
number = st.one_of(st.floats(0, 1e6, allow_subnormal=True), st.integers(0, 10**9),
                   st.floats(1e-300, 1e300), st.just(""))


def _unknown_header(text: str) -> bool:
    """A header the catalogue keeps as an unknown text column."""
    try:
        return bool(text) and cols.canonical(restore(text)) is None
    except cols.HeaderProblem:
        return False


@st.composite
def catalogue(draw) -> bytes:
    extra = draw(st.lists(text_cell.filter(_unknown_header), max_size=2,
                          unique_by=lambda t: restore(t).casefold()))
    numeric = draw(st.lists(st.sampled_from(NUMERIC), unique=True, max_size=6))
    header = ["part", "maker", "kind", "package", "notes", *numeric, *extra]
    rows = []
    for k in range(draw(st.integers(0, 6))):
        kind = draw(st.sampled_from(cols.KINDS))
        values = [f"P{k}-" + draw(text_cell), draw(text_cell), kind, draw(text_cell),
                  draw(text_cell)]
        for name in numeric:
            v = draw(number)
            sign = cols.spec_of(name)[1]
            negative = sign == "any" or (sign == "magnitude" and kind in cols.P_TYPE_KINDS)
            if v != "" and negative and draw(st.booleans()):
                v = -v
            values.append(repr(v) if isinstance(v, float) else str(v))
        values += [draw(text_cell) for _ in extra]
        rows.append(values)
    delimiter = draw(st.sampled_from([",", ";", "\t"]))
    out = io.StringIO()
    import csv

    csv.writer(out, delimiter=delimiter, lineterminator="\n",
               quoting=csv.QUOTE_ALL).writerows([header] + rows)
    return out.getvalue().encode("utf-8")


@FUZZ
@given(catalogue())
def test_generated_catalogues_round_trip(tmp_path_factory, data):
    path = tmp_path_factory.mktemp("round") / "cat.csv"
    path.write_bytes(data)
    before = _frame(data)
    _same(before, _frame(_show_csv(path)))


# -- quantities ------------------------------------------------------------------------------------

finite = st.floats(allow_nan=False, allow_infinity=False)


@FUZZ
@given(value=finite, unit=st.sampled_from(sorted(UNITS)))
def test_every_digit_formatted_parses_back_to_the_same_float(value, unit):
    text = format_quantity(value, unit, None)
    assert parse_quantity(text, unit) == value, text


@FUZZ
@given(value=st.one_of(st.just(0.0), st.floats(1e-15, 1e15), st.floats(-1e15, -1e-15)),
       unit=st.sampled_from(sorted(UNITS)))
def test_three_digits_formatted_parse_back_within_rounding(value, unit):
    """Three significant digits: the value read back is within half a unit of
    the third digit (relative 5e-3), the table's promise."""
    back = parse_quantity(format_quantity(value, unit, 3), unit)
    assert math.isclose(back, value, rel_tol=5e-3, abs_tol=0.0), (value, back)


def test_regression_per_degree_coefficient_reads_back():
    """Found by the round trip: a '1/C' value was written '2.5 1/°C', which
    reads back as 2.51 (spaces are dropped on reading, so the unit's '1'
    joined the number). It is written '2.5 /°C' now."""
    assert format_quantity(2.5, "1/C", None) == "2.5 /°C"
    assert parse_quantity(format_quantity(2.5, "1/C", None), "1/C") == 2.5
    assert parse_quantity(format_quantity(0.004, "1/C", 3), "1/C") == 0.004



@pytest.mark.parametrize("notes, read", [("it's rated -40 °C", "it's rated -40 °C"),
                                         ("'-40 °C rated", "-40 °C rated"),
                                         ("''=x", "'=x"), ("'plain", "'plain")])
def test_an_inert_cell_reads_back_and_other_apostrophes_stay(notes, read):
    """The loader drops the apostrophe picker's CSV output puts before a
    formula character, and nothing else."""
    text = TINY_CSV.replace("0.20,0.050,\n", f"0.20,0.050,\"{notes}\"\n", 1)
    df = load_catalog("c.csv", source="test", data=text.encode(), cache=False).df
    assert df["notes"].iloc[0] == read
