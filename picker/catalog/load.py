"""The parts catalogue: load a CSV into one DataFrame, and check it.

`load_catalog` returns a `Catalog`: a DataFrame indexed by the file line of
each row (index name `line`), columns named as in the interface (values in the
unit the name carries: `rds_on_mohm@2.5V` in mΩ, `idss_uA` in µA), unknown
columns kept as text, blank cells NaN; plus every problem found, each with its
file, line and column. Rows with errors are left out of the DataFrame and
counted; warnings leave the row in.
"""

from __future__ import annotations

import hashlib
import os
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

import numpy as np
import pandas as pd

from picker.catalog import columnar
from picker.catalog import columns as cols
from picker.catalog.convert import (NO, TEXT, UNKNOWN_MARKERS, YES, _as_text, _arrow,  # noqa: F401
                                    _normalise_text, _numbers, _slow_number, _text)
from picker.catalog.findings import Findings, Problem, ProblemList  # noqa: F401 (Problem: re-exported)
from picker.catalog.leakage_rules import leakage_rules
from picker.catalog.tabular import read_bytes, read_table
from picker.cells import restore
from picker.errors import CatalogError

KNOWN_HEADERS = set(cols._BY_LOWER) | {"rds_on_mohm", "price"}  # for separator detection


@dataclass
class Catalog:
    """A loaded catalogue: good rows, every problem, and where it came from."""

    df: pd.DataFrame
    problems: Sequence[Problem]  # a ProblemList in file order (Problem objects made on first use)
    path: str
    source: str  # how the path was chosen: 'option', 'PICKER_CATALOG', 'bundled demo'
    rows_read: int
    fingerprint: str = ""  # sha256 of the file's bytes
    encoding: str = "utf-8"
    delimiter: str = ","
    error_lines: list[int] = field(default_factory=list)

    @property
    def errors(self) -> list[Problem]:
        if isinstance(self.problems, ProblemList):
            return self.problems.of_severity("error")
        return [p for p in self.problems if p.severity == "error"]

    @property
    def warnings(self) -> list[Problem]:
        if isinstance(self.problems, ProblemList):
            return self.problems.of_severity("warning")
        return [p for p in self.problems if p.severity == "warning"]

    def describe(self) -> str:
        """One line saying which catalogue is in use."""
        return f"catalogue: {self.path} ({self.source}, {len(self.df)} parts)"

    def left_out_notice(self) -> str | None:
        """The visible line other commands print when rows were left out."""
        n = len(self.error_lines)
        if not n:
            return None
        return (f"{n} catalogue row{'s' if n != 1 else ''} left out for errors; "
                f"run `picker catalog check {self.path}` to see them")


# -- where the catalogue comes from ------------------------------------------

def bundled_catalog() -> Path:
    """The demo catalogue shipped inside the package."""
    return Path(str(resources.files("picker.data").joinpath("demo.csv")))


def resolve_catalog(option: str | os.PathLike | None) -> tuple[str, str]:
    """(path, source): the --catalog option, else $PICKER_CATALOG, else the demo."""
    if option:
        return str(option), "--catalog"
    env = os.environ.get("PICKER_CATALOG", "").strip()
    if env:
        return env, "PICKER_CATALOG"
    return str(bundled_catalog()), "bundled demo"


# -- loading ------------------------------------------------------------------

def load_catalog(path: str | os.PathLike | None = None, *, source: str | None = None,
                 strict: bool = False, data: bytes | None = None, cache: bool = True) -> Catalog:
    """Load and check a catalogue. Raises CatalogError when the file cannot be
    read at all, or (strict) when any row has an error. A large catalogue read
    from disk is parsed once and then served from the cache (picker.catalog.cache)
    while its bytes stay the same; `cache=False` always parses."""
    if source is None:
        path, source = resolve_catalog(path)
    path = str(path)
    stat = None
    catalog = None
    if data is None:
        try:
            stat = os.stat(path)
        except OSError:
            stat = None
        if cache and stat is not None:
            from picker.catalog import cache as store

            hit = store.load(path, stat)
            if hit is not None:
                df, meta, problems = hit
                catalog = Catalog(df, problems, path, source, meta["rows_read"],
                                  meta["sha256"], meta["encoding"], meta["delimiter"],
                                  meta["error_lines"])
        if catalog is None:
            data = read_bytes(path, CatalogError, "catalogue")
    if catalog is None:
        hashing = _digest_aside(data)  # on another core while the file is parsed
        table = read_table(path, error=CatalogError, what="catalogue", known=KNOWN_HEADERS,
                           data=data)
        catalog = _convert(table, apostrophes=_apostrophe_cells(data))
        del table
        catalog.source = source
        catalog.fingerprint = hashing()
        if cache and stat is not None:
            from picker.catalog import cache as store

            meta = {"sha256": catalog.fingerprint, "rows_read": catalog.rows_read,
                    "encoding": catalog.encoding, "delimiter": catalog.delimiter,
                    "error_lines": catalog.error_lines}
            store.store(path, stat, catalog.df, meta, catalog.problems)
    if strict and catalog.errors:
        errors = catalog.errors
        first = errors[0]
        raise CatalogError(f"{first.message} ({len(errors)} error(s) in all; "
                           f"run `picker catalog check {path}`)",
                           file=first.file, line=first.line, column=first.column)
    return catalog


def _digest_aside(data: bytes):
    """The SHA-256 of `data`, computed on a thread (hashlib lets go of the
    interpreter's lock on large inputs); returns a function that waits for it."""
    if len(data) < (1 << 22):
        digest = hashlib.sha256(data).hexdigest()
        return lambda: digest
    import threading

    box: list[str] = []
    worker = threading.Thread(target=lambda: box.append(hashlib.sha256(data).hexdigest()),
                              daemon=True)
    worker.start()

    def result() -> str:
        worker.join()
        return box[0]
    return result


def _apostrophe_cells(data: bytes) -> bool:
    """May a cell start with an apostrophe (as a cell picker's CSV output made
    inert does)? A quick look at the bytes: most files have no apostrophe at
    all, or only inside words ("it's"); UTF-16 files are always looked at."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        return True
    at = data.find(b"'")
    while at != -1:
        k = at - 1
        while k >= 0 and data[k] == 32:
            k -= 1
        if k < 0 or data[k] in b",;\t\r\n\"\xbf":  # \xbf: the end of a UTF-8 byte-order mark
            return True
        at = data.find(b"'", at + 1)
    return False


def _convert(table, apostrophes: bool = True) -> Catalog:
    """`apostrophes`: the file has a "'" somewhere, so text cells may be ones
    picker's CSV output made inert for spreadsheets ("'-5 V"): they are read
    back as they were (`cells.restore`), so a catalogue written by
    `catalog show --format csv` loads to the same table.

    Column by column: numbers through `columnar.numbers` (plain numbers in
    one step, the unit parser for the other cells), text as Arrow strings."""
    path = table.path
    lines = np.asarray(table.lines, dtype=np.int64)
    findings = Findings(path, lines, table.header_line)

    def error(pos, col: int | None, message, name: str | None = None) -> None:
        """One row (a position), every row of an array, or the header (None)."""
        findings.add("error", pos, col, message, name)

    def warning(pos, col: int | None, message, name: str | None = None) -> None:
        findings.add("warning", pos, col, message, name)

    for line, column, message in table.problems:
        pos = int(np.searchsorted(lines, line))
        error(pos, column, message)

    # Header: canonical names, duplicates, unusable point conditions.
    names: list[str | None] = []
    seen: dict[str, int] = {}
    bad_header: set[int] = set()
    for i, raw in enumerate(table.header, start=1):
        try:
            name = cols.canonical(raw) if raw else None
        except cols.HeaderProblem as exc:
            error(None, i, str(exc))
            bad_header.add(i)
            names.append(None)
            continue
        if name is not None and name in seen:
            error(None, i, f"column '{raw}' repeats column {seen[name]} ({name}); "
                  "remove one of them")
            bad_header.add(i)
            name = None
        if name is not None:
            seen[name] = i
        names.append(name)
    for required in ("part", "kind"):
        if required not in seen:
            raise CatalogError(f"no '{required}' column in the header; a catalogue needs "
                               f"'part' and 'kind' (found: {', '.join(table.header)})",
                               file=path, line=table.header_line)

    n = len(table.lines)
    # Every numeric column is parsed straight into one 2-D block (the
    # DataFrame's own: no copy to join them); text columns go in beside it.
    units = {i: cols.spec_of(name)[0] for i, name in enumerate(names, start=1) if name}
    numeric = [i for i, unit in units.items() if unit is not None]
    block = np.empty((len(numeric), n))
    text: list[tuple[int, str, object]] = []  # (position among the kept columns, name, cells)
    kept: list[str] = []
    keys: set[str] = set()
    col_of: dict[str, int] = {}
    for i, (raw, name) in enumerate(zip(table.header, names), start=1):
        cells = table.columns[i - 1]
        if name is None:
            key = restore(raw) if apostrophes else raw
            if key and key not in keys and i not in bad_header:
                keys.add(key)
                text.append((len(kept), key, _text(cells, apostrophes)))  # unknown: kept as text
                kept.append(key)
            continue
        keys.add(name)
        col_of[name] = i
        if units[i] is None:
            text.append((len(kept), name, _text(cells, apostrophes)))
        kept.append(name)

    def parse(i: int) -> list:
        return _numbers(table.columns[i - 1], units[i], table.decimal_comma,
                        out=block[numeric.index(i)])[1]

    # pyarrow's conversion lets go of the interpreter's lock: columns side by side
    for i, bad in zip(numeric, columnar.map_columns(parse, numeric, rows=n)):
        for pos, message in bad:
            error(pos, i, message, names[i - 1])
    index = pd.Index(lines, name="line")
    df = pd.DataFrame(block.T, columns=[names[i - 1] for i in numeric], index=index, copy=False)
    for position, name, values in text:
        df.insert(position, name, values)
    if n == 0:
        df = df.iloc[0:0]

    _normalise_text(df, col_of, error)
    _signs(df, col_of, error)
    _row_rules(df, col_of, error, warning)

    bad_rows = findings.error_rows()
    keep = np.ones(n, dtype=bool)
    keep[bad_rows] = False
    return Catalog(df if keep.all() else df[keep].copy(), findings.problems(), path, "", n,
                   encoding=table.encoding, delimiter=table.delimiter,
                   error_lines=lines[bad_rows].tolist())


def _signs(df: pd.DataFrame, col_of: dict, error) -> None:
    """Negative values: magnitudes on P-channel and PNP rows (as datasheets
    print them), errors elsewhere; coefficients with sign 'any' are kept."""
    p_type = df["kind"].isin(cols.P_TYPE_KINDS).to_numpy()
    for name, col in col_of.items():
        unit, sign = cols.spec_of(name)
        if unit is None or sign == "any":
            if name == "vgs_th_tc_mV/C":
                df[name] = df[name].abs()
            continue
        values = df[name].to_numpy(dtype=float)
        negative = values < 0
        if not negative.any():
            continue
        allowed = negative & p_type if sign == "magnitude" else np.zeros_like(negative)
        df[name] = np.where(allowed, -values, values)
        spec = cols.COLUMNS.get(name)
        what = "rating" if spec is not None and spec.rating else "value"
        for pos in np.flatnonzero(negative & ~allowed):
            hint = ("only P-channel and PNP values may be written negative"
                    if sign == "magnitude" else "it must be positive")
            error(int(pos), col, f"negative {what} {values[pos]:g} in {name}; {hint}", name)


def _row_rules(df: pd.DataFrame, col_of: dict, error, warning) -> None:
    """The catalogue check's rules between columns of a row."""
    def arr(name: str) -> np.ndarray:
        return df[name].to_numpy(dtype=float) if name in df else np.full(len(df), np.nan)

    th_min, th_max = arr("vgs_th_min_V"), arr("vgs_th_max_V")
    for pos in np.flatnonzero(th_min > th_max):
        error(int(pos), col_of["vgs_th_min_V"], f"vgs_th_min_V {th_min[pos]:g} V is above "
              f"vgs_th_max_V {th_max[pos]:g} V; swap or correct them", "vgs_th_min_V")
    th_typ = arr("vgs_th_typ_V")
    for pos in np.flatnonzero((th_typ > th_max) | (th_typ < th_min)):
        warning(int(pos), col_of["vgs_th_typ_V"], f"vgs_th_typ_V {th_typ[pos]:g} V lies outside "
                "the min..max threshold range", "vgs_th_typ_V")

    rds = cols.point_columns(df.columns, "rds_on_mohm")
    mosfet = df["kind"].isin(cols.MOSFET_KINDS).to_numpy()
    for drive, name in rds:
        for pos in np.flatnonzero(np.isfinite(arr(name)) & (drive <= th_max)):
            warning(int(pos), col_of[name], f"on-resistance given at {drive:g} V gate drive, at or "
                    f"below vgs_th_max_V {th_max[pos]:g} V: the part is not surely on there, so "
                    "this point is left out and the part is evaluated from its other points "
                    "(picker/models/README.md §1)", name)
    _falling(df, rds, col_of, warning, "on-resistance", "does not fall as gate drive rises",
             rising_is_bad=True)
    prices = cols.point_columns(df.columns, "price")
    _falling(df, prices, col_of, warning, "unit price", "rises with quantity", rising_is_bad=True,
             strict=True)

    leakage_rules(df, col_of, arr, warning)

    if "rth_ja_C/W" in df:
        no_thermal = mosfet & ~np.isfinite(arr("rth_ja_C/W"))
    else:
        no_thermal = mosfet
    warning(np.flatnonzero(no_thermal), col_of.get("rth_ja_C/W"), "no rth_ja_C/W: "
            "self-heating cannot be checked for this MOSFET", "rth_ja_C/W")
    eol = np.flatnonzero((df["status"] == "eol").to_numpy(dtype=bool))
    if eol.size:  # one message per part, joined in Arrow
        import pyarrow as pa
        import pyarrow.compute as pc

        part = _arrow(df["part"]).take(pa.array(eol)).cast(pa.string())
        warning(eol, col_of.get("status"), pc.binary_join_element_wise(
            "'", part, "' is end-of-life (eol)", ""), "status")


def _falling(df, points, col_of, warning, what: str, verb: str, *, rising_is_bad: bool,
             strict: bool = False) -> None:
    """Warn where the value at a larger condition is not below (or, with
    strict, is above) the value at the next smaller condition."""
    for (c_lo, lo), (c_hi, hi) in zip(points, points[1:]):
        a, b = df[lo].to_numpy(dtype=float), df[hi].to_numpy(dtype=float)
        bad = (b > a) if strict else (b >= a)
        for pos in np.flatnonzero(bad):
            warning(int(pos), col_of[hi], f"{what} {verb}: {b[pos]:g} at {hi.split('@')[1]} "
                    f"vs {a[pos]:g} at {lo.split('@')[1]}", hi)


# -- helpers for the models and the CLI ----------------------------------------

def values(df: pd.DataFrame, name: str, default: float = np.nan) -> np.ndarray:
    """Column `name` as a float array; `default` where the column is absent or blank."""
    if name not in df:
        return np.full(len(df), default, dtype=float)
    out = df[name].to_numpy(dtype=float, na_value=np.nan)
    return out if default != default else np.where(np.isfinite(out), out, default)


def points(df: pd.DataFrame, prefix: str, column=None) -> tuple[np.ndarray, np.ndarray]:
    """(conditions (m,), values (n, m)) of one point family, conditions ascending.
    Missing points are NaN. With no such column: shapes (0,) and (n, 0).
    `column(name)` gives a column's values (default: `values(df, name)`)."""
    found = cols.point_columns(df.columns, prefix)
    conditions = np.array([c for c, _ in found], dtype=float)
    if not found:
        return conditions, np.empty((len(df), 0))
    column = column or (lambda name: values(df, name))
    matrix = np.column_stack([column(name) for _, name in found])
    return conditions, matrix


def normalise_part(name: str) -> str:
    """The key parts are compared by: case and every non-alphanumeric ignored."""
    return re.sub(r"[^0-9a-z]", "", name.casefold())


def closest_parts(df: pd.DataFrame, name: str, limit: int = 5) -> list[str]:
    """Catalogue part numbers closest to `name` (for 'did you mean')."""
    from rapidfuzz import fuzz, process

    names = df["part"].astype(str).tolist()
    found = process.extract(normalise_part(name), [normalise_part(n) for n in names],
                            scorer=fuzz.WRatio, limit=limit, score_cutoff=50)
    return [names[i] for _, _, i in found]


def select(df: pd.DataFrame, *, parts: list[str] = (), kinds: list[str] = (),
           packages: list[str] = (), text: str | None = None) -> pd.DataFrame:
    """The rows matching every filter given: named parts (case, spaces and
    punctuation ignored), kinds, packages (case-insensitive) and a text found
    in part, maker, package or notes. A named part that does not exist raises
    CatalogError with the closest names."""
    out = df
    if parts:
        keys = df["part"].astype(str).map(normalise_part)
        wanted = [normalise_part(p) for p in parts]
        for name, key in zip(parts, wanted):
            if not (keys == key).any():
                close = closest_parts(df, name)
                hint = f"closest: {', '.join(close)}" if close else "no similar part numbers"
                raise CatalogError(f"no part '{name}' in the catalogue; {hint}")
        out = out[keys.isin(wanted)]
    if kinds:
        bad = [k for k in kinds if k.lower() not in cols.KINDS]
        if bad:
            raise CatalogError(f"unknown kind '{bad[0]}'; expected pmos, nmos, npn or pnp")
        out = out[out["kind"].isin([k.lower() for k in kinds])]
    if packages and "package" in out:
        out = out[out["package"].astype(str).str.lower().isin([p.lower() for p in packages])]
    if text and len(out):  # (on no rows, agg() would give a DataFrame, not a Series)
        fields = [c for c in ("part", "maker", "package", "notes") if c in out]
        hay = out[fields].astype(str).agg(" ".join, axis=1).str.lower()
        out = out[hay.str.contains(text.lower(), regex=False)]
    return out
