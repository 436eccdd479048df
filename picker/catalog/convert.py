"""Catalogue cells into DataFrame columns: numbers in the unit a column
names (the plain ones a column at a time, the unit parser for the rest), text
as Arrow strings, and the text columns the check puts in canonical form
(part, kind, status, preferred). Used by `picker.catalog.load`."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from picker.catalog import columnar
from picker.catalog import columns as cols
from picker.catalog.quantities import parse_quantity
from picker.cells import restore
from picker.errors import QuantityError

UNKNOWN_MARKERS = {"", "-", "–", "—", "?", "n/a", "na", "nan", "none", "unknown", "tbd"}
YES = {"yes", "y", "true", "1", "x"}
NO = {"no", "n", "false", "0", ""}


TEXT = pd.StringDtype("pyarrow", na_value=np.nan)  # every text column: Arrow strings


def _text(cells, apostrophes: bool) -> pd.arrays.ArrowStringArray:
    """A text column as Arrow strings (no Python object per cell); cells made
    inert by picker's CSV output restored (see `_convert`)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    column = columnar.filled_text(columnar.as_column(cells))
    if apostrophes and len(column):
        marked = columnar.to_numpy_bool(pc.starts_with(column, "'"))
        if marked.any():
            rows = np.flatnonzero(marked)
            restored = [restore(c) for c in column.take(pa.array(rows)).to_pylist()]
            column = pa.chunked_array([pc.replace_with_mask(
                column.combine_chunks(), pa.array(marked), pa.array(restored, column.type))])
    return _as_text(column)


def _as_text(column) -> pd.arrays.ArrowStringArray:
    import pyarrow as pa

    column = columnar.as_column(column)
    if not pa.types.is_large_string(column.type):
        column = column.cast(pa.large_string())
    return pd.array(column, dtype=TEXT) if len(column) else pd.array([], dtype=TEXT)


def _slow_number(unit: str, decimal_comma: bool):
    """A cell that is not a plain number: an unknown marker (NaN), or read by
    the unit parser; (value, error message or None)."""
    def parse(cell: str) -> tuple[float, str | None]:
        if cell.strip().lower() in UNKNOWN_MARKERS:
            return np.nan, None
        try:
            return parse_quantity(cell, unit, decimal_comma=decimal_comma), None
        except QuantityError as exc:
            return np.nan, exc.message
    return parse


def _numbers(cells, unit: str, decimal_comma: bool, out: np.ndarray | None = None
             ) -> tuple[np.ndarray, list]:
    """Parse a column of cells to floats in `unit`: the plain numbers in one
    vectorised pass, the rest (units, IEC codes, unknown markers) through
    parse_quantity, once per distinct cell. Unknown -> NaN."""
    return columnar.numbers(cells, _slow_number(unit, decimal_comma),
                            decimal_comma=decimal_comma, out=out)


def _arrow(series: pd.Series):
    """A text column of the DataFrame as an Arrow column (no copy)."""
    import pyarrow as pa

    return pa.chunked_array(series.array.__arrow_array__()) \
        if hasattr(series.array, "__arrow_array__") else columnar.as_column(series.tolist())


def _part_key(name: str) -> str:
    return re.sub(r"\s+", "", name).casefold()


def _normalise_text(df: pd.DataFrame, col_of: dict, error) -> None:
    """part, kind, status, preferred: checked and written in canonical form
    (column by column in Arrow; Python's own str functions on the few
    distinct values, or on the cells that are not ASCII)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    part_column = _arrow(df["part"])
    part_empty = columnar.lengths(part_column) == 0
    error(np.flatnonzero(part_empty), col_of["part"], "the part number is missing", "part")

    raw_kind = columnar.Encoded(_arrow(df["kind"]))
    known = raw_kind.mask(lambda k: k.lower() in cols.KINDS)
    kind_empty = raw_kind.mask(lambda k: k == "")
    error(np.flatnonzero(kind_empty), col_of["kind"],
          "the kind is missing; write pmos, nmos, npn or pnp", "kind")
    unknown = np.flatnonzero(~kind_empty & ~known)
    if unknown.size:
        error(unknown, col_of["kind"], [f"unknown kind '{raw_kind.uniques[k]}'; expected pmos, "
                                        "nmos, npn or pnp" for k in raw_kind.indices[unknown]],
              "kind")
    df["kind"] = _as_text(raw_kind.text(lambda k: k.lower() if k.lower() in cols.KINDS else ""))

    key = columnar.fold_key(part_column, _part_key)
    if len(key) and len(pc.unique(key)) < len(key):
        counts = pa.table({"k": key}).group_by("k").aggregate([("k", "count")])
        twice = counts.filter(pc.greater(counts["k_count"], 1))["k"]
        repeated = columnar.to_numpy_bool(pc.is_in(key, twice)) & ~part_empty
        rows = np.flatnonzero(repeated)
        keys = key.take(pa.array(rows)).to_pylist()
        parts = part_column.take(pa.array(rows)).to_pylist()
        first_line: dict[str, int] = {}
        for pos, k, part in zip(rows.tolist(), keys, parts):
            if k in first_line:
                error(pos, col_of["part"], f"duplicate part '{part}': already on line "
                      f"{first_line[k]} (case and spaces are ignored)", "part")
            else:
                first_line[k] = int(df.index[pos])

    if "status" in df:
        raw = columnar.Encoded(_arrow(df["status"]))
        wrong = np.flatnonzero(raw.mask(lambda v: (v.lower() or "active") not in cols.STATUSES))
        if wrong.size:
            error(wrong, col_of["status"], [f"unknown status '{raw.uniques[k]}'; expected "
                                            "active, nrnd or eol" for k in raw.indices[wrong]],
                  "status")
        df["status"] = _as_text(raw.text(lambda v: v.lower() or "active"))
    else:
        df["status"] = _as_text(pa.array(["active"] * len(df), pa.string()))
    if "preferred" in df:
        raw = columnar.Encoded(_arrow(df["preferred"]))
        wrong = np.flatnonzero(raw.mask(lambda v: v.lower() not in YES | NO))
        if wrong.size:
            error(wrong, col_of["preferred"], [f"preferred is '{raw.uniques[k]}'; expected yes "
                                               "or no" for k in raw.indices[wrong]], "preferred")
        df["preferred"] = raw.mask(lambda v: v.lower() in YES)
    else:
        df["preferred"] = False
