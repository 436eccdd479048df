"""Fuzzing the catalogue reader (picker.catalog.tabular + picker.catalog.load): any bytes
give a Catalog whose every problem names the file and line, or a CatalogError
naming the file; never another exception.

Inputs: random bytes; random rows under the catalogue header; the demo and
the tiny test catalogue with up to four edits each (dropped and doubled
separators, truncated lines, NUL bytes, other encodings, NaN and infinity
spellings, huge numbers, very long lines, stray quotes, odd line ends). The
vectorised reader for large plain files is checked against the general one
on the same mutated files."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from conftest import DEMO, TINY_CSV
from fuzzing import FUZZ, csv_like, mutated, ours
from picker.catalog import tabular
from picker.catalog.load import load_catalog
from picker.errors import CatalogError, PickerError

PATH = "fuzz/catalogue.csv"
SEEDS = [
    DEMO.read_bytes(),
    TINY_CSV.encode("utf-8"),
    # semicolons and decimal commas, Windows-1252, CRLF: the other shape the interface allows
    TINY_CSV.replace(",", ";").replace("0.", "0,").replace("\n", "\r\n").encode("cp1252"),
    ("\ufeff" + TINY_CSV.replace(",", "\t").replace("SOT-23", "SOT-23 µ")).encode("utf-8"),
    TINY_CSV.replace("-20,-8", "-20 V,8V").replace("40,60", "40 mΩ,0.06 Ω").encode("utf-16"),
]
HEADER = TINY_CSV.splitlines()[0].split(",")


def _load(data: bytes):
    """The catalogue, or None after checking the error is ours and names the file."""
    try:
        return load_catalog(PATH, source="fuzz", data=data, cache=False)
    except PickerError as exc:
        ours(exc, file=PATH)
        assert isinstance(exc, CatalogError) or type(exc).__name__ == "TooLarge"
        return None


def _consistent(catalog) -> None:
    assert len(catalog.df) + len(catalog.error_lines) == catalog.rows_read
    for p in catalog.problems:
        assert p.file == PATH and p.line is not None, p
        assert "\n" not in str(p)
    for name in catalog.df.columns:
        column = catalog.df[name]
        if column.dtype.kind == "f":
            assert not np.isinf(column.to_numpy()).any(), name  # NaN is unknown; inf never


@FUZZ
@given(st.binary(max_size=600))
def test_random_bytes(data):
    catalog = _load(data)
    if catalog is not None:
        _consistent(catalog)


@FUZZ
@given(csv_like(HEADER))
def test_random_rows_under_the_catalogue_header(data):
    catalog = _load(data)
    if catalog is not None:
        _consistent(catalog)


@FUZZ
@given(mutated(SEEDS))
def test_mutated_catalogues(data):
    catalog = _load(data)
    if catalog is not None:
        _consistent(catalog)


def _read_with_threshold(data: bytes, fast_bytes: int):
    """read_table with the vectorised reader tried from `fast_bytes` on: a
    tuple to compare, or the error's text."""
    saved = tabular.FAST_BYTES
    tabular.FAST_BYTES = fast_bytes
    try:
        t = tabular.read_table(PATH, error=CatalogError, what="catalogue", data=data)
    except PickerError as exc:
        return str(ours(exc, file=PATH))
    finally:
        tabular.FAST_BYTES = saved
    return (t.encoding, t.delimiter, t.header, t.header_line,
            [t.cells(i) for i in range(len(t.columns))],
            t.lines, t.problems)


@FUZZ
@given(mutated(SEEDS[:2] + SEEDS[3:4], max_edits=3))
def test_vectorised_reader_agrees_with_the_general_reader(data):
    """Whatever the file, the vectorised reader (tried on files over 1 MiB)
    reads exactly what the csv-module reader reads, or leaves the file to it:
    header, cells, line numbers, problems and errors alike."""
    assert _read_with_threshold(data, 0) == _read_with_threshold(data, 1 << 62)


def test_values_are_finite_or_unknown():
    """Every numeric cell is a finite number or NaN (unknown): 'inf',
    'Infinity', '1e999' are errors with the cell's line and column."""
    text = TINY_CSV.replace("0.20,0.050", "inf,1e999").replace("0.15,0.040", "Infinity,-inf")
    catalog = load_catalog(PATH, source="fuzz", data=text.encode(), cache=False)
    where = {(p.line, p.column_name) for p in catalog.errors}
    assert {(2, "price@1"), (2, "price@1000"), (3, "price@1"), (3, "price@1000")} <= where
    assert all(math.isfinite(v) or math.isnan(v) for v in catalog.df["price@1"])


# -- regressions found by fuzzing ------------------------------------------------------

def _both_readers(data: bytes):
    """(general, vectorised) readings of `data`, as _read_with_threshold gives them."""
    return _read_with_threshold(data, 1 << 62), _read_with_threshold(data, 0)


def test_regression_header_cell_over_the_csv_field_limit():
    """A header line with a cell over the csv module's 128 KiB field limit
    raised _csv.Error from the separator detection (exit 3); the vectorised
    reader read such a file while the general one refused it. Now both refuse
    it, naming the line."""
    data = ("part,kind,notes" + "9" * 140_000 + "\nA-1,npn,\n").encode()
    general, fast = _both_readers(data)
    assert general == fast and "longer than 131,072 characters" in general
    assert general.startswith(f"{PATH}:1: ")


def test_regression_second_byte_order_mark():
    """A file saved by two tools that each add a byte-order mark: the general
    reader kept the second one in the first header ('\\ufeffpart': no part
    column), the vectorised reader dropped it. Both drop it now."""
    data = b"\xef\xbb\xbf\xef\xbb\xbf" + TINY_CSV.encode()
    general, fast = _both_readers(data)
    assert general == fast and general[2][0] == "part"


@pytest.mark.parametrize("line", [b",,,", b" ", b" ; ;", b"\t"])
def test_regression_lines_of_separators_or_spaces(line):
    """A line of separators only, of another width than the header, made the
    vectorised reader's pandas call raise ParserError (exit 3 on catalogues
    over 1 MiB); lines of spaces were rows to pandas and skipped by the
    general reader. Such a file now goes to the general reader."""
    data = line + b"\n" + TINY_CSV.encode()
    general, fast = _both_readers(data)
    assert general == fast


@pytest.mark.parametrize("space", ["\x1f", "\x0b", "\u00a0", "\u3000", "\u2009"])
def test_regression_cells_padded_with_other_spaces(space):
    """Cells are stripped as str.strip() strips: the vectorised reader only
    looked for spaces and tabs around cells, so 'SOT-23\\x1f' kept its
    padding there and lost it in the general reader."""
    data = TINY_CSV.replace(",SOT-23,", f",SOT-23{space},", 1).encode()
    general, fast = _both_readers(data)
    assert general == fast and general[4][3][0] == "SOT-23"
