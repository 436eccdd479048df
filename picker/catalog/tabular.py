"""Reading delimited text files people make: catalogues, BOMs, suppliers' tables.

One reader for all of them: it decodes UTF-8 (with or without a byte-order
mark), UTF-16 with a byte-order mark, or Windows-1252; detects a comma,
semicolon or tab separator from the header line; and returns every cell as
text with the file line each row starts on, so later errors can name it.
Nothing here knows what the columns mean.
"""

from __future__ import annotations

import csv
import io
import os
import re
import stat
from dataclasses import dataclass
from pathlib import Path

from picker.errors import PickerError, TooLarge

DELIMITERS = (",", ";", "\t")
DELIMITER_NAMES = {",": "comma", ";": "semicolon", "\t": "tab"}
MAX_BYTES = 2 * 1024**3  # refuse files over 2 GiB rather than exhaust memory
MAX_ROWS = 10_000_000
# Reading a catalogue takes about this many times its size in memory at the
# peak (measured: a 25 MB, 200,000-part file peaks at 17x on the vectorised
# reader, 22x on the general one, the interpreter and pandas included), so
# a file is also refused when that would pass the machine's memory.
MEMORY_PER_BYTE = 25


@dataclass
class TextTable:
    """A delimited file as text cells: header, rows, and where each row starts."""

    path: str
    encoding: str
    delimiter: str
    header: list[str]
    header_line: int
    columns: list  # cells by column position: a list of str, or a numpy object array
    lines: list[int]  # file line on which each data row starts
    problems: list[tuple[int, int, str]]  # (line, column, message) for ragged rows

    @property
    def decimal_comma(self) -> bool:
        """A semicolon- or tab-separated file may write decimals with a comma."""
        return self.delimiter != ","

    def cells(self, position: int) -> list[str]:
        """The cells of column `position` (0-based), one per data row."""
        column = self.columns[position]
        return column if isinstance(column, list) else column.tolist()


def memory_bound() -> int:
    """The largest file picker reads here: MAX_BYTES, or less where
    MEMORY_PER_BYTE times it would pass the machine's physical memory."""
    try:
        memory = os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE")
    except (AttributeError, ValueError, OSError):  # not on this platform
        return MAX_BYTES
    return min(MAX_BYTES, memory // MEMORY_PER_BYTE) if memory > 0 else MAX_BYTES


def _too_large(what: str, size: int, path: str, bound: int, *, limit: int | None = None,
               stream: bool = False) -> TooLarge:
    is_ = f"{what} is {'over ' if stream else ''}{_size(size)}"
    if limit is not None and bound == limit:
        return TooLarge(f"{is_}; a {what} file is at most {limit:,} bytes (is it the right "
                        "file?)", file=path)
    if bound >= MAX_BYTES:
        why = f"picker reads files up to {MAX_BYTES / 1024**3:g} GiB"
    else:
        why = (f"reading it would take about {size * MEMORY_PER_BYTE / 1024**3:.0f} GiB of "
               f"memory; picker reads files up to {bound / 1024**3:.2f} GiB on this machine")
    return TooLarge(f"{is_}; {why} (split it, or keep only the parts you use)", file=path)


def _size(size: int) -> str:
    if size >= 1024**3:
        return f"{size / 1024**3:.1f} GiB"
    return f"{size / 1024**2:.0f} MiB" if size >= 1024**2 else f"{size:,} bytes"


def read_bytes(path: str | os.PathLike, error: type[PickerError], what: str,
               limit: int | None = None) -> bytes:
    """The file's bytes, or `error` with a message that says what to do. A file
    past `memory_bound()` (or `limit`) is refused (TooLarge) from its size,
    before a byte is read; a pipe or a device, which has no size to look at,
    is read up to the bound and no further."""
    p = Path(path)
    bound = memory_bound() if limit is None else min(limit, memory_bound())
    try:
        st = p.stat()
        if p.is_dir():
            raise error(f"{what} '{p}' is a folder; give the path of a CSV file", file=str(p))
        if st.st_size > bound:
            raise _too_large(what, st.st_size, str(p), bound, limit=limit)
        if stat.S_ISREG(st.st_mode):
            return p.read_bytes()
        with open(p, "rb") as fh:  # a pipe, /dev/stdin, a device: it may never end
            data = fh.read(bound + 1)
        if len(data) > bound:
            raise _too_large(what, bound, str(p), bound, limit=limit, stream=True)
        return data
    except FileNotFoundError:
        raise error(f"no such {what} file; check the path", file=str(p)) from None
    except PermissionError:
        raise error(f"cannot read this {what} file (permission denied)", file=str(p)) from None
    except IsADirectoryError:
        raise error(f"{what} '{p}' is a folder; give the path of a CSV file", file=str(p)) from None
    except OSError as exc:
        raise error(f"cannot read this {what} file: {exc.strerror or exc}", file=str(p)) from None


def decode(data: bytes, path: str, error: type[PickerError]) -> tuple[str, str]:
    """Text and encoding name: UTF-8 (BOM optional), UTF-16 with BOM, else
    Windows-1252. Bytes that are neither are reported with their line."""
    if data.startswith(b"\xef\xbb\xbf"):
        candidates = ["utf-8-sig"]
    elif data.startswith((b"\xff\xfe", b"\xfe\xff")):
        candidates = ["utf-16"]
    else:
        candidates = ["utf-8", "cp1252"]
    last: UnicodeDecodeError | None = None
    for encoding in candidates:
        try:
            return data.decode(encoding), encoding
        except UnicodeDecodeError as exc:
            last = exc
    assert last is not None
    line = data[: last.start].count(b"\n") + 1
    column = last.start - (data.rfind(b"\n", 0, last.start) + 1) + 1
    raise error(f"byte 0x{data[last.start]:02x} is neither UTF-8 nor Windows-1252 text; "
                "save the file as UTF-8", file=path, line=line, column=column)


def detect_delimiter(header_line: str, known: set[str] | None = None) -> str:
    """The separator of a header line: the candidate that splits it into the
    most fields, ties broken by how many fields are known column names."""
    def score(delim: str) -> tuple[int, int]:
        try:
            fields = next(csv.reader([header_line], delimiter=delim), [])
        except csv.Error:  # a field past the csv module's size limit: count plainly
            fields = header_line.split(delim)
        hits = sum(1 for f in fields if known and f.strip().lower() in known)
        return (hits, len(fields))
    return max(DELIMITERS, key=lambda d: (score(d)[0], score(d)[1], -DELIMITERS.index(d)))


def read_table(path: str | os.PathLike, *, error: type[PickerError], what: str,
               known: set[str] | None = None, data: bytes | None = None) -> TextTable:
    """Read a delimited file into text cells, with the line of every row.

    The header is the first line that is not blank. Rows whose field count
    differs from the header's are kept (padded or cut) but listed in
    `problems` with the line and the first column that does not fit; wholly
    blank lines are skipped. Cells are stripped of surrounding spaces.
    """
    path = str(path)
    if data is None:
        data = read_bytes(path, error, what)
    if b"\x00" in data and not data.startswith((b"\xff\xfe", b"\xfe\xff")):
        at = data.index(b"\x00")
        raise error("the file contains a NUL byte; it is not a text CSV file "
                    "(export it again as CSV)", file=path, line=data[:at].count(b"\n") + 1)
    text, encoding = decode(data, path, error)
    text = text.lstrip("\ufeff")  # a second byte-order mark: saved by two tools that add one
    # the first line with text, lines ended as the csv module ends them (CR, LF)
    first_line = next((m.group() for m in re.finditer(r"[^\r\n]+", text) if m.group().strip()),
                      None)
    if first_line is None:
        raise error(f"the {what} file is empty; it needs a header line", file=path)
    delimiter = detect_delimiter(first_line, known)
    table = None
    if len(data) > FAST_BYTES and encoding in ("utf-8", "utf-8-sig", "cp1252"):
        table = _read_plain(data, text, delimiter, path, what)
    if table is None:
        table = _read_general(text, delimiter, path, error, what)
    header, header_line, columns, row_lines, problems = table
    if len(row_lines) > MAX_ROWS:
        raise TooLarge(f"the {what} has more than {MAX_ROWS:,} rows; picker reads "
                       "up to that many (split the file)", file=path)
    return TextTable(path, encoding, delimiter, header, header_line, columns, row_lines, problems)


FAST_BYTES = 1 << 20  # files above 1 MiB try the vectorised reader first


def _read_plain(data: bytes, text: str, delimiter: str, path: str = "", what: str = "file"):
    """The fast path for large, plain files: no quote character anywhere and
    every non-blank line with the header's field count. Then lines can be found
    with numpy and the cells split by pandas' C parser. None otherwise (the
    general reader then handles quoting and reports ragged rows). A file of
    more than MAX_ROWS rows is refused (TooLarge) before its cells are split."""
    if b'"' in data or data.count(b"\r") != data.count(b"\r\n"):
        return None
    import numpy as np
    import pandas as pd

    codes = np.frombuffer(data, dtype=np.uint8)  # an ASCII-compatible encoding
    ends = np.flatnonzero(codes == 10)
    if len(ends) == 0 or ends[-1] != len(codes) - 1:
        ends = np.append(ends, len(codes))
    starts = np.concatenate(([0], ends[:-1] + 1))
    if (ends - starts).max() > csv.field_size_limit():
        return None  # a line that may hold an over-long cell: the general reader decides
    def per_line(positions: np.ndarray) -> np.ndarray:
        return np.searchsorted(positions, ends) - np.searchsorted(positions, starts)

    separators = per_line(np.flatnonzero(codes == ord(delimiter)))
    returns = (ends > starts) & (codes[np.maximum(ends - 1, 0)] == 13)
    spaces = per_line(np.flatnonzero((codes == 32) | (codes == 9))) if delimiter != "\t" \
        else per_line(np.flatnonzero(codes == 32))
    length = (ends - starts) - returns
    blank = length - separators - spaces <= 0  # nothing but separators and spaces
    if np.any(blank & (length > 0)):
        return None  # such a line: pandas reads it as a row, the general reader skips it
    filled = np.flatnonzero(~blank)
    if len(filled) - 1 > MAX_ROWS:  # counted before any cell is split
        raise TooLarge(f"the {what} has more than {MAX_ROWS:,} rows; picker reads up to that "
                       "many (split the file)", file=path)
    if len(filled) < 2 or np.any(separators[filled] != separators[filled[0]]):
        return None
    try:
        frame = pd.read_csv(io.StringIO(text), sep=delimiter, header=None, dtype=object,
                            keep_default_na=False, na_values=[], skip_blank_lines=True,
                            quoting=csv.QUOTE_NONE, engine="c")
    except (pd.errors.ParserError, ValueError):  # e.g. a line of separators only, of another
        return None  # width: pandas keeps it as a row; the general reader skips it
    if len(frame) != len(filled):
        return None
    header = [str(h).strip() for h in frame.iloc[0]]
    # Cells are stripped as str.strip() does: besides spaces and tabs, the ASCII
    # controls Python counts as whitespace and any non-ASCII byte (a UTF-8 or
    # Windows-1252 character that may be a no-break or other wide space) at a
    # cell's edge make the reader strip every cell.
    spacing = np.zeros(256, dtype=bool)
    spacing[[32, 11, 12, 28, 29, 30, 31]] = True
    spacing[128:] = True
    spacing[9] = ord(delimiter) != 9
    space = np.flatnonzero(spacing[codes])
    edges = np.array([ord(delimiter), 10, 13])
    before = codes[np.maximum(space - 1, 0)]
    after = codes[np.minimum(space + 1, len(codes) - 1)]
    padded = bool(np.isin(before, edges).any() or np.isin(after, edges).any()
                  or (len(space) and (space[0] == 0 or space[-1] == len(codes) - 1)))
    columns = []
    for i in range(frame.shape[1]):
        column = frame.iloc[1:, i]
        columns.append((column.str.strip() if padded else column).to_numpy(dtype=object))
    lines = (filled + 1).tolist()
    return header, lines[0], columns, lines[1:], []


def _read_general(text: str, delimiter: str, path: str, error, what: str):
    """Any file the csv module can read: quoted fields, embedded newlines,
    ragged rows (reported, padded or cut), exact line numbers."""
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=False)
    header: list[str] | None = None
    header_line = 0
    width = 0
    columns: list[list[str]] = []
    row_lines: list[int] = []
    problems: list[tuple[int, int, str]] = []
    line_before = 0
    try:
        for row in reader:
            start = line_before + 1
            line_before = reader.line_num
            if not any(cell.strip() for cell in row):
                continue
            if header is None:
                header = [cell.strip() for cell in row]
                header_line, width = start, len(header)
                columns = [[] for _ in header]
                continue
            if len(row) != width:
                column = min(len(row), width) + 1
                problems.append((start, column, f"this row has {len(row)} fields, the header "
                                 f"has {width}; a separator is missing or doubled"))
                row = (row + [""] * width)[:width]
            for store, cell in zip(columns, row):
                store.append(cell.strip())
            row_lines.append(start)
            if len(row_lines) > MAX_ROWS:
                break
    except csv.Error as exc:
        if "field limit" in str(exc):
            raise error(f"a cell is longer than {csv.field_size_limit():,} characters (a quote "
                        "that is never closed?); picker reads cells up to that length",
                        file=path, line=line_before + 1) from None
        raise error(f"the CSV structure is broken: {exc}", file=path, line=reader.line_num) from None
    if header is None:  # only separators and spaces
        raise error(f"the {what} file has no header line (only empty fields)", file=path)
    return header, header_line, columns, row_lines, problems
