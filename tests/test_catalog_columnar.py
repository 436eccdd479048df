"""The columnar loading path against the cell-by-cell one.

Large catalogues are read by pyarrow's CSV reader and converted a column at a
time (picker.catalog.columnar); small ones, and files with quotes or ragged
rows, by the csv module. Both must give the same DataFrame, the same
findings with the same file:line:column, and the same left-out rows: checked
on the demo catalogue, on a synthetic catalogue with the usual blemishes
(units in cells, unknown markers, decimal commas, padding, blank lines,
errors of every kind) and on fuzzed files.

The numbers themselves are checked against an outside reference: Python's
float(), which rounds a decimal string correctly (IEEE 754-2019 §5.12.2,
"correctly rounded" conversion from decimal character sequences; CPython's
float() implements it with David Gay's algorithm), and, for cells with units,
against the unit parser applied to each cell alone.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import DEMO
from fuzzing import FUZZ, mutated
from picker.catalog import columnar, tabular
from picker.catalog.load import UNKNOWN_MARKERS, _slow_number, load_catalog
from picker.catalog.quantities import parse_quantity
from picker.errors import PickerError, QuantityError

# -- numbers: a column at once equals each cell alone ------------------------------------------

PLAIN = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.integers(0, 12).flatmap(lambda k: st.decimals(allow_nan=False, allow_infinity=False,
                                                      places=k)).map(str),
    st.from_regex(r"-?[0-9]{0,25}\.?[0-9]{0,25}", fullmatch=True),
    st.from_regex(r"[+-]?[0-9]{1,4}(\.[0-9]{0,4})?[eE][+-]?[0-9]{1,8}", fullmatch=True),
)
OTHER = st.one_of(
    st.sampled_from(["", "-", "n/a", "NaN", "inf", "-Infinity", "25 mΩ", "0.025 Ω", "4k7", "2R2",
                     "1,5", "1.000,5", "1_000", "１２", "+5", "1e999", "5 V", "µA", "abc", ".", "-.",
                     "1e-0000001", "3.3V", "150 °C", "±2"]),
    st.text(alphabet="0123456789.-+eE, kmuµVAΩ", max_size=8),
)
CELLS = st.lists(st.one_of(PLAIN, OTHER), max_size=40)


def _reference(cells: list[str], unit: str, decimal_comma: bool):
    """Each cell alone: blank -> NaN; else the unit parser (after the unknown markers)."""
    values, bad = [], []
    for pos, cell in enumerate(cells):
        if cell == "":
            values.append(math.nan)
            continue
        if cell.strip().lower() in UNKNOWN_MARKERS:
            values.append(math.nan)
            continue
        try:
            values.append(parse_quantity(cell, unit, decimal_comma=decimal_comma))
        except QuantityError as exc:
            values.append(math.nan)
            bad.append((pos, exc.message))
    return np.array(values, dtype=float), bad


@settings(max_examples=300)
@given(CELLS, st.sampled_from(["mohm", "V", "uA", "1", "degC"]), st.booleans())
def test_a_column_at_once_equals_each_cell_alone(cells, unit, decimal_comma):
    """columnar.numbers (pyarrow for plain numbers, the parser for the rest)
    gives what the unit parser gives cell by cell: every value bit for bit,
    every error with its row and message."""
    values, bad = columnar.numbers(cells, _slow_number(unit, decimal_comma),
                                   decimal_comma=decimal_comma)
    expected, expected_bad = _reference(cells, unit, decimal_comma)
    np.testing.assert_array_equal(values, expected)
    assert bad == expected_bad


@settings(max_examples=500)
@given(st.lists(st.text(alphabet="0123456789.-", max_size=30), min_size=1, max_size=20))
def test_pyarrow_reads_digits_points_and_minus_as_python_does(cells):
    """The assumption `columnar.numbers` rests on: over the bytes 0-9 . -
    pyarrow's string-to-float conversion accepts exactly what Python's
    float() accepts, and rounds to the same float (IEEE 754 §5.12.2)."""
    for cell in cells:
        try:
            expected = float(cell)
        except ValueError:
            expected = None
        try:
            got = pc.cast(pa.array([cell]), pa.float64())[0].as_py()
        except pa.ArrowInvalid:
            got = None
        assert (got is None) == (expected is None), cell
        if got is not None:
            assert got == expected or (math.isnan(got) and math.isnan(expected)), cell
            assert math.copysign(1, got) == math.copysign(1, expected), cell


def test_plain_numbers_round_as_the_decimal_says():
    """Worked cases of correct rounding (IEEE 754 §5.12.2): 0.1 is the double
    nearest 1/10 (0x3FB999999999999A); 2.5e-324 rounds up to the smallest
    subnormal 5e-324; 1.7976931348623157e308 is the largest double, one digit
    more overflows (an error, never infinity)."""
    cells = ["0.1", "2.5e-324", "1.7976931348623157e308", "17976931348623159" + "0" * 292]
    values, bad = columnar.numbers(cells, _slow_number("1", False))
    assert values[0].hex() == "0x1.999999999999ap-4"
    assert values[1] == 5e-324
    assert values[2] == 1.7976931348623157e308
    assert math.isnan(values[3]) and [pos for pos, _ in bad] == [3]


@settings(max_examples=300)
@given(st.lists(st.text(alphabet=" \t\u00a0\u2009\x1c\x0bab µ", max_size=6), max_size=30))
def test_stripping_a_column_is_str_strip(cells):
    """columnar.strip looks only at cells with a space-like byte at an edge;
    the result is str.strip() of every cell (blank: null)."""
    column = columnar.as_column(cells)
    got = columnar.strip(column).to_pylist()
    assert got == [c.strip() or None for c in cells]


# -- the whole load: columnar reader and conversion against the general reader --------------------

def _both(path=None, data=None):
    """load_catalog through the columnar reader and through the general one."""
    saved = tabular.FAST_BYTES
    out = []
    for threshold in (0, 1 << 62):
        tabular.FAST_BYTES = threshold
        try:
            out.append(load_catalog(path or "fuzz/cat.csv", source="test", data=data, cache=False))
        except PickerError as exc:
            out.append(str(exc))
        finally:
            tabular.FAST_BYTES = saved
    return out


def _same(fast, general) -> None:
    if isinstance(general, str) or isinstance(fast, str):
        assert fast == general
        return
    pd.testing.assert_frame_equal(fast.df, general.df)
    assert fast.problems == general.problems
    assert fast.error_lines == general.error_lines and fast.rows_read == general.rows_read
    assert (fast.encoding, fast.delimiter) == (general.encoding, general.delimiter)


def synthetic_catalogue(n: int, seed: int = 3, delimiter: str = ",") -> str:
    """n invented parts with what real catalogues carry: gaps, units written
    in cells, unknown markers, P-channel values written negative, padding,
    blank lines, and a few rows with errors (unknown kinds and units,
    repeated parts, threshold min above max, a unit of the wrong kind)."""
    rng = np.random.default_rng(seed)
    comma = delimiter != ","
    header = ["part", "maker", "kind", "package", "status", "preferred", "vds_max_V",
              "vgs_th_min_V", "vgs_th_max_V", "rds_on_mohm@4.5V", "rds_on_mohm@2.5V", "idss_uA",
              "rth_ja_C/W", "tj_max_C", "price@1", "price@1000", "notes"]
    lines = [delimiter.join(header)]
    for i in range(n):
        kind = ["pmos", "nmos", "npn", "PMOS"][rng.integers(4)]
        sign = "-" if kind.lower() == "pmos" and rng.random() < 0.3 else ""
        vt = rng.uniform(0.5, 2.0)

        def num(v, digits=3):
            text = f"{v:.{digits}g}"
            return text.replace(".", ",") if comma else text

        r45 = rng.uniform(10, 300)
        cells = [f"QX{i:05d}-{rng.integers(10)}", ["Ferrow Semi", "Anvil & Co", " Pellam "][i % 3],
                 kind, ["SOT-23", "DFN 2x2", "SC-70"][i % 3],
                 ["active", "", "nrnd", "eol", "Active"][rng.integers(5)],
                 ["yes", "no", "", "Y"][rng.integers(4)],
                 sign + num(rng.choice([12, 20, 30])), num(vt * 0.5), num(vt),
                 [num(r45), f"{num(r45)} mΩ", num(r45 / 1000, 4) + " ohm", ""][rng.integers(4)],
                 ["", "n/a", num(r45 * 1.6), "-"][rng.integers(4)],
                 ["1", "0.5 uA", "500nA", "", "?"][rng.integers(5)],
                 num(rng.uniform(100, 600)), "150", num(rng.uniform(0.05, 0.6)),
                 num(rng.uniform(0.01, 0.1)), ["", "sample stock", "see note 3"][rng.integers(3)]]
        lines.append(delimiter.join(cells))
    # the blemishes that become errors, each once, in known places
    bad = lines[5].split(delimiter)
    bad[2] = "jfet"
    lines[5] = delimiter.join(bad)
    bad = lines[9].split(delimiter)
    bad[11] = "3 V"  # a voltage in a current column
    lines[9] = delimiter.join(bad)
    lines[12] = lines[7].replace("QX", "qx", 1)  # the same part again (case ignored)
    bad = lines[15].split(delimiter)
    bad[7], bad[8] = num(2.0), num(1.0)  # threshold min above max
    lines[15] = delimiter.join(bad)
    lines.insert(20, "")  # a blank line: the line numbers after it move
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("delimiter", [",", ";"])
def test_synthetic_catalogue_same_by_either_reader(tmp_path, delimiter):
    text = synthetic_catalogue(3000, delimiter=delimiter)
    path = tmp_path / "synthetic.csv"
    path.write_text(text, encoding="utf-8")
    fast, general = _both(path)
    _same(fast, general)
    assert len(general.errors) >= 4 and general.warnings
    where = {(p.line, p.column_name) for p in general.errors}
    assert (6, "kind") in where and (10, "idss_uA") in where and (13, "part") in where
    assert (16, "vgs_th_min_V") in where


def test_demo_same_by_either_reader():
    fast, general = _both(DEMO)
    _same(fast, general)


@FUZZ
@given(mutated([DEMO.read_bytes(), synthetic_catalogue(40).encode("utf-8"),
                synthetic_catalogue(40, delimiter=";").replace("Ω", "ohm").encode("cp1252")],
               max_edits=3))
def test_fuzzed_catalogues_same_by_either_reader(data):
    """Whatever the bytes: the same catalogue, findings and errors either way
    (or the same error)."""
    fast, general = _both(data=data)
    _same(fast, general)


def test_text_columns_are_arrow_strings_and_figures_float64():
    """No Python object per cell: text as Arrow strings, figures as float64."""
    catalog = load_catalog(DEMO, source="test", cache=False)
    df = catalog.df
    assert df["part"].dtype == pd.StringDtype("pyarrow", na_value=np.nan)
    assert df["rds_on_mohm@4.5V"].dtype == np.float64
    assert not any(df[c].dtype == object for c in df.columns)
