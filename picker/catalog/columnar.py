"""Text cells as Arrow columns: the columnar reader's cells, and what is done
to a whole column at once (stripping, numbers, mapping text).

Every function here gives exactly what the same work cell by cell in Python
gives (`str.strip`, `float`, the unit parser): the vectorised step takes the
cells it can decide from their bytes alone, and hands every other cell to the
Python function it stands for. pyarrow is imported here only, and only
where a large file is read.
"""

from __future__ import annotations

import os
from typing import Callable

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

# Bytes that may be, or be part of, a character str.strip() removes: ASCII
# whitespace (with the separators 0x1c-0x1f) and every non-ASCII byte (a UTF-8
# sequence that may be a no-break or another wide space). A cell starting or
# ending with one is stripped in Python; no other cell needs it.
_MAY_BE_SPACE = np.zeros(256, dtype=bool)
_MAY_BE_SPACE[[9, 10, 11, 12, 13, 28, 29, 30, 31, 32]] = True
_MAY_BE_SPACE[128:] = True

# The bytes of a number with nothing else: digits, point, minus. On cells of
# these bytes alone pyarrow's conversion to float accepts exactly what Python's
# float() accepts, and rounds the same (correctly, both); checked in the tests.
_SIMPLE = b"0123456789.-"
SPACING = bytes(np.flatnonzero(_MAY_BE_SPACE).tolist())

# A plain number as the unit parser reads it with no unit: sign, digits with
# one decimal point, an exponent of at most six digits. ASCII digits only
# (RE2's \d); any other cell goes to the parser.
PLAIN_NUMBER = r"^[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]{1,6})?$"


def as_column(cells) -> pa.ChunkedArray:
    """A column of text cells as one Arrow column; a list of str is
    converted, its blank cells ("") made null as the columnar reader makes them."""
    if hasattr(cells, "arrow"):  # tabular.ArrowCells
        return cells.arrow
    if isinstance(cells, pa.ChunkedArray):
        return cells
    if isinstance(cells, pa.Array):
        return pa.chunked_array([cells])
    return pa.chunked_array([pa.array([c or None for c in cells], type=pa.string())],
                            type=pa.string())


def filled_text(column: pa.ChunkedArray) -> pa.ChunkedArray:
    """Blank (null) cells as ""."""
    return pc.fill_null(column, "") if column.null_count else column


def blank(column: pa.ChunkedArray) -> np.ndarray:
    """True for each blank cell (null, or no text)."""
    return to_numpy_bool(pc.is_null(column)) | (lengths(column) == 0)


def _buffers(chunk: pa.Array) -> tuple[np.ndarray, np.ndarray]:
    """(offsets (len + 1,), bytes) of a string chunk, as numpy views."""
    wide = pa.types.is_large_string(chunk.type)
    offsets = np.frombuffer(chunk.buffers()[1], dtype=np.int64 if wide else np.int32)
    offsets = offsets[chunk.offset:chunk.offset + len(chunk) + 1]
    data = chunk.buffers()[2]
    codes = np.frombuffer(data, dtype=np.uint8) if data is not None else np.zeros(0, np.uint8)
    return offsets, codes


def _edge_bytes(chunk: pa.Array) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(filled, first byte, last byte) of every cell of a chunk (0 where empty)."""
    offsets, codes = _buffers(chunk)
    starts, ends = offsets[:-1], offsets[1:]
    filled = ends > starts
    if codes.size == 0:
        zero = np.zeros(len(chunk), dtype=np.uint8)
        return filled, zero, zero
    first = codes[np.where(filled, starts, 0)]
    last = codes[np.where(filled, ends - 1, 0)]
    return filled, np.where(filled, first, 0), np.where(filled, last, 0)


def strip(column: pa.ChunkedArray) -> pa.ChunkedArray:
    """Every cell as str.strip() leaves it; only cells with a space-like
    byte at an edge are looked at in Python."""
    if not has_byte(column, *SPACING):
        return column
    chunks = []
    for chunk in column.chunks:
        filled, first, last = _edge_bytes(chunk)
        flagged = filled & (_MAY_BE_SPACE[first] | _MAY_BE_SPACE[last])
        if flagged.any():
            positions = np.flatnonzero(flagged)
            stripped = [s.strip() or None for s in chunk.take(pa.array(positions)).to_pylist()]
            chunk = pc.replace_with_mask(chunk, pa.array(flagged), pa.array(stripped, chunk.type))
        chunks.append(chunk)
    return pa.chunked_array(chunks, type=column.type)


def lengths(column: pa.ChunkedArray) -> np.ndarray:
    """Bytes in each cell."""
    return np.concatenate([np.diff(_buffers(c)[0]) for c in column.chunks]) if column.num_chunks \
        else np.zeros(0, dtype=np.int64)


def longest(column: pa.ChunkedArray) -> int:
    """Bytes in the longest cell (0 for no cells)."""
    found = [int(np.diff(_buffers(c)[0]).max()) for c in column.chunks if len(c)]
    return max(found, default=0)


def _regions(column: pa.ChunkedArray):
    """The bytes of each chunk's cells, one bytes object a chunk (a copy: the
    byte tests below run at memory speed on bytes)."""
    for chunk in column.chunks:
        if len(chunk) == 0 or chunk.buffers()[2] is None:
            continue
        offsets, _ = _buffers(chunk)
        lo, hi = int(offsets[0]), int(offsets[-1])
        yield chunk.buffers()[2].slice(lo, hi - lo).to_pybytes()


_EVERY_BYTE = bytes(range(256))


def only_bytes(column: pa.ChunkedArray, allowed: bytes) -> bool:
    """True when every byte of every cell is one of `allowed`."""
    return all(not region.translate(None, allowed) for region in _regions(column))


def has_byte(column: pa.ChunkedArray, *bytes_: int) -> bool:
    """Does any cell hold any of these bytes?"""
    others = bytes(b for b in _EVERY_BYTE if b not in bytes_)
    return any(region.translate(None, others) for region in _regions(column))


def numbers(column, slow: Callable[[str], tuple[float, str | None]], *,
            decimal_comma: bool = False, out: np.ndarray | None = None
            ) -> tuple[np.ndarray, list[tuple[int, str]]]:
    """Floats from a column of stripped text cells (blank cells null): blank
    -> NaN; a plain number (PLAIN_NUMBER, with a decimal comma where the file
    uses them) converted by pyarrow; every other cell, and a plain number too
    large for a float, through `slow(cell) -> (value, error message or None)`,
    called once per distinct cell. Written into `out` if given. Returns
    (values, [(row, message)])."""
    column = as_column(column)
    n = len(column)
    values = np.empty(n) if out is None else out
    if n == 0:
        return values, []
    text = column
    if decimal_comma and has_byte(column, ord(",")):
        text = pc.replace_substring(column, ",", ".")
    plain = None
    if only_bytes(text, _SIMPLE):
        try:
            _into(values, pc.cast(text, pa.float64()))
            plain = True
        except pa.ArrowInvalid:  # e.g. '1-2' or '.': decided below, cell by cell
            pass
    if plain is True and longest(text) < 300:
        rest = np.zeros(0, dtype=np.int64)  # (digits and points alone: too short to overflow)
    else:
        if plain is None:
            plain = to_numpy_bool(pc.fill_null(pc.match_substring_regex(text, PLAIN_NUMBER),
                                               False))
            values[:] = np.nan
            if plain.any():
                chosen = pc.filter(text, pa.array(plain))
                values[plain] = pc.cast(chosen, pa.float64()).to_numpy(zero_copy_only=False)
        filled = ~to_numpy_bool(pc.is_null(text)) if text.null_count else True
        rest = np.flatnonzero(filled & ~(plain & np.isfinite(values)))
    bad = []
    if rest.size:
        values[rest] = np.nan
        cells = column.take(pa.array(rest)).to_pylist()
        seen: dict[str, tuple[float, str | None]] = {}
        for pos, cell in zip(rest.tolist(), cells):
            found = seen.get(cell)
            if found is None:
                found = seen[cell] = slow(cell)
            values[pos] = found[0]
            if found[1] is not None:
                bad.append((pos, found[1]))
    return values, bad


def _into(out: np.ndarray, floats: pa.ChunkedArray) -> None:
    """Copy a float column into `out`, NaN where it is null."""
    at = 0
    for chunk in floats.chunks:
        k = len(chunk)
        validity, data = chunk.buffers()[0], chunk.buffers()[1]
        out[at:at + k] = np.frombuffer(data, dtype=np.float64)[chunk.offset:chunk.offset + k]
        if chunk.null_count:
            bits = np.unpackbits(np.frombuffer(validity, dtype=np.uint8), bitorder="little")
            np.putmask(out[at:at + k], bits[chunk.offset:chunk.offset + k] == 0, np.nan)
        at += k


class Encoded:
    """A text column as its distinct cells and, per row, which one: the work
    of a Python function on each distinct cell spread to every row by numpy."""

    def __init__(self, column) -> None:
        column = as_column(column)
        encoded = pc.dictionary_encode(column).combine_chunks() if len(column) else None
        self.uniques: list[str] = [] if encoded is None else encoded.dictionary.to_pylist()
        self.indices = np.zeros(0, dtype=np.int32) if encoded is None else \
            encoded.indices.to_numpy(zero_copy_only=False)

    def mask(self, test: Callable[[str], bool]) -> np.ndarray:
        """test(cell) for every row."""
        return np.array([bool(test(u)) for u in self.uniques], dtype=bool)[self.indices] \
            if self.uniques else np.zeros(len(self.indices), dtype=bool)

    def text(self, fn: Callable[[str], str]) -> pa.ChunkedArray:
        """fn(cell) for every row, as an Arrow column."""
        mapped = pa.array([fn(u) for u in self.uniques], type=pa.string())
        return pa.chunked_array([pc.take(mapped, pa.array(self.indices))], type=pa.string())


def map_text(column, fn: Callable[[str], str]) -> pa.ChunkedArray:
    """`fn` applied to every cell, computed once per distinct cell (for
    columns of few distinct values: kind, status, yes/no)."""
    return Encoded(column).text(fn)


_ASCII_SPACE = r"[\t\n\x0b\x0c\r \x1c-\x1f]+"


def fold_key(column, fn: Callable[[str], str]) -> pa.ChunkedArray:
    """The key parts are compared by (case folded, spaces removed) for
    every cell: ASCII cells in pyarrow (where lower-casing is case folding),
    the others through `fn`, the Python definition."""
    column = as_column(column)
    if len(column) == 0:
        return column
    folded = pc.ascii_lower(column)
    if has_byte(column, 9, 10, 11, 12, 13, 28, 29, 30, 31, 32):
        folded = pc.replace_substring_regex(folded, _ASCII_SPACE, "")
    ascii_ = np.asarray(pc.string_is_ascii(column).to_numpy(zero_copy_only=False), dtype=bool)
    if ascii_.all():
        return folded
    others = np.flatnonzero(~ascii_)
    mapped = [fn(s) for s in column.take(pa.array(others)).to_pylist()]
    merged = pc.replace_with_mask(folded.combine_chunks(), pa.array(~ascii_),
                                  pa.array(mapped, folded.type))
    return pa.chunked_array([merged])


def to_numpy_bool(array) -> np.ndarray:
    return np.asarray(array.to_numpy(zero_copy_only=False), dtype=bool)


def threads() -> int:
    """Threads for column work: PICKER_THREADS if it holds a whole number >= 1
    (1 turns them off; the engine reads the same variable), else the CPUs
    this process may run on."""
    text = os.environ.get("PICKER_THREADS", "").strip()
    if text.isdigit() and int(text) >= 1:
        return int(text)
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on every platform
        return os.cpu_count() or 1


def map_columns(fn: Callable, items: list, *, rows: int) -> list:
    """[fn(item) for item in items], on threads when the columns are long."""
    n = min(threads(), len(items))
    if n <= 1 or rows < 50_000:
        return [fn(item) for item in items]
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(n) as pool:
        return list(pool.map(fn, items))
