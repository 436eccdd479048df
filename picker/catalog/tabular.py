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
from collections.abc import Sequence
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
    columns: list  # cells by column position: a list of str, or ArrowCells
    lines: list[int]  # file line on which each data row starts
    problems: list[tuple[int, int, str]]  # (line, column, message) for ragged rows

    @property
    def decimal_comma(self) -> bool:
        """A semicolon- or tab-separated file may write decimals with a comma."""
        return self.delimiter != ","

    def cells(self, position: int) -> list[str]:
        """The cells of column `position` (0-based), one per data row."""
        column = self.columns[position]
        return column if isinstance(column, list) else list(column)


class ArrowCells(Sequence):
    """A column from the columnar reader: its Arrow array (`arrow`, blank
    cells null) for the vectorised work, and a list of str (blank "") when
    read as one, made on first use."""

    def __init__(self, arrow) -> None:
        self.arrow = arrow
        self._list: list[str] | None = None

    def _cells(self) -> list[str]:
        if self._list is None:
            self._list = [c if c is not None else "" for c in self.arrow.to_pylist()]
        return self._list

    def __len__(self) -> int:
        return len(self.arrow)

    def __getitem__(self, i):
        return self._cells()[i]

    def __iter__(self):
        return iter(self._cells())

    def __eq__(self, other) -> bool:
        return list(self) == list(other)


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

    A file over FAST_BYTES with no quote character and the header's field
    count on every line is read by the columnar reader (pyarrow's, on all
    cores; its cells are Arrow columns); any other file, or one that reader
    leaves, by the general one (the csv module; lists of str). Both give the
    same header, cells, lines and problems (tested).
    """
    path = str(path)
    if data is None:
        data = read_bytes(path, error, what)
    if b"\x00" in data and not data.startswith((b"\xff\xfe", b"\xfe\xff")):
        at = data.index(b"\x00")
        raise error("the file contains a NUL byte; it is not a text CSV file "
                    "(export it again as CSV)", file=path, line=data[:at].count(b"\n") + 1)
    if data.isascii():  # the common large file: no need to decode it as a whole
        text, encoding, raw = None, "utf-8", data
    else:
        text, encoding = decode(data, path, error)
        text = text.lstrip("\ufeff")  # a second byte-order mark: saved by two tools that add one
        raw = data if encoding == "utf-8" else None
    first_line = _first_line(raw if text is None else text)
    if first_line is None:
        raise error(f"the {what} file is empty; it needs a header line", file=path)
    delimiter = detect_delimiter(first_line, known)
    table = None
    if len(data) > FAST_BYTES and encoding in ("utf-8", "utf-8-sig", "cp1252"):
        if raw is None:
            raw = text.encode("utf-8")
        table = _read_columnar(raw, delimiter, path, what)
    if table is None:
        if text is None:
            text = data.decode("utf-8")
        table = _read_general(text, delimiter, path, error, what)
    header, header_line, columns, row_lines, problems = table
    if len(row_lines) > MAX_ROWS:
        raise TooLarge(f"the {what} has more than {MAX_ROWS:,} rows; picker reads "
                       "up to that many (split the file)", file=path)
    return TextTable(path, encoding, delimiter, header, header_line, columns, row_lines, problems)


def _first_line(text: str | bytes) -> str | None:
    """The first line with text (lines ended as the csv module ends them:
    CR, LF), for the separator's detection."""
    pattern = r"[^\r\n]+" if isinstance(text, str) else rb"[^\r\n]+"
    for m in re.finditer(pattern, text):
        line = m.group() if isinstance(text, str) else m.group().decode("utf-8")
        if line.strip():
            return line
    return None


FAST_BYTES = 1 << 16  # files above 64 KiB try the columnar reader first


def _read_columnar(raw: bytes, delimiter: str, path: str = "", what: str = "file"):
    """The columnar reader, for large, plain files (UTF-8 bytes `raw`): no
    quote character anywhere, CR only before LF, and every line with text
    holding the header's field count. None for any other file (the general
    reader then handles quoting and reports ragged rows). A file of more than
    MAX_ROWS rows is refused (TooLarge) before its cells are split."""
    if b'"' in raw or (b"\r" in raw and raw.count(b"\r") != raw.count(b"\r\n")):
        return None
    # The header: the first line with a cell that is not blank, as the general reader finds it.
    start, line = 0, 1
    while True:
        end = raw.find(b"\n", start)
        stop = len(raw) if end == -1 else end
        fields = raw[start:stop].rstrip(b"\r").decode("utf-8").split(delimiter)
        if any(f.strip() for f in fields):
            break
        if end == -1:
            return None  # no header: the general reader says so
        start, line = end + 1, line + 1
    limit = csv.field_size_limit()
    if end == -1 or end + 1 == len(raw) or max(map(len, fields)) > limit:
        return None  # a header alone, or a cell the csv module refuses (the general reader says so)
    body = end + 1
    if raw.startswith(b"\xef\xbb\xbf", body):
        return None  # pyarrow would drop a byte-order mark there; the general reader keeps it
    newlines = raw.count(b"\n", body)
    if newlines + 1 > MAX_ROWS and _lines_with_text(raw, body, delimiter) > MAX_ROWS:
        raise TooLarge(f"the {what} has more than {MAX_ROWS:,} rows; picker reads up to that "
                       "many (split the file)", file=path)
    import pyarrow as pa
    import pyarrow.csv as pacsv

    from picker.catalog import columnar

    names = [f"c{i}" for i in range(len(fields))]
    try:
        read = pacsv.read_csv(
            pa.py_buffer(memoryview(raw)[body:]),
            read_options=pacsv.ReadOptions(column_names=names, use_threads=True,
                                           block_size=BLOCK_BYTES),
            parse_options=pacsv.ParseOptions(delimiter=delimiter, quote_char=False,
                                             double_quote=False, escape_char=False,
                                             newlines_in_values=False, ignore_empty_lines=True),
            convert_options=pacsv.ConvertOptions(column_types=dict.fromkeys(names, pa.string()),
                                                 strings_can_be_null=True, check_utf8=False,
                                                 null_values=[""]))
    except (pa.ArrowInvalid, pa.ArrowException, ValueError):
        return None  # a ragged row, most likely: the general reader reports it
    columns = [read.column(i) for i in range(read.num_columns)]
    del read
    if any(columnar.longest(c) > limit for c in columns):
        return None  # a cell the csv module refuses: the general reader says so
    columns = [columnar.strip(c) for c in columns]  # (a column with no space-like byte as it is)
    n = len(columns[0]) if columns else 0
    if n and _blank_rows(columns):
        return None  # a line of separators and spaces: a row here, skipped by the general reader
    if newlines + (not raw.endswith(b"\n")) == n:
        lines = list(range(line + 1, line + 1 + n))  # no empty line: one row a line
    else:
        lines = _nonempty_lines(raw, body, line + 1)
        if len(lines) != n:
            return None
    return [f.strip() for f in fields], line, [ArrowCells(c) for c in columns], lines, []


BLOCK_BYTES = 1 << 24  # the columnar reader's blocks (each a chunk of every column)

def _blank_rows(columns) -> bool:
    """Is any row blank in every column? (Only rows blank in the first are looked at further.)"""
    import numpy as np

    from picker.catalog import columnar

    rows = np.flatnonzero(columnar.blank(columns[0]))
    for column in columns[1:]:
        if rows.size == 0:
            return False
        rows = rows[columnar.blank(column)[rows]]
    return rows.size > 0


def _nonempty_lines(raw: bytes, body: int, first: int) -> list[int]:
    """The file lines (numbered from `first` at byte `body`) that are not empty."""
    import numpy as np

    codes = np.frombuffer(raw, dtype=np.uint8)[body:]
    ends = np.flatnonzero(codes == 10)
    if len(ends) == 0 or ends[-1] != len(codes) - 1:
        ends = np.append(ends, len(codes))
    starts = np.concatenate(([0], ends[:-1] + 1))
    size = ends - starts
    empty = (size == 0) | ((size == 1) & (codes[np.minimum(starts, len(codes) - 1)] == 13))
    return (np.flatnonzero(~empty) + first).tolist()


def _lines_with_text(raw: bytes, body: int, delimiter: str) -> int:
    """Lines from byte `body` on holding anything but separators, spaces and CR."""
    import numpy as np

    codes = np.frombuffer(raw, dtype=np.uint8)[body:]
    content = np.ones(256, dtype=bool)
    content[[ord(delimiter), 32, 9, 13, 10]] = False
    ends = np.flatnonzero(codes == 10)
    line_of = np.searchsorted(ends, np.flatnonzero(content[codes]))
    return int(np.unique(line_of).size)


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
