"""`picker.load_catalog` and the `Catalog` it returns."""

from __future__ import annotations

import os

import pandas as pd

from picker.catalog import load as _load


class Catalog:
    """A parts catalogue, loaded and checked.

    Attributes: `df` (one row a part, indexed by the file line, values in the
    unit each column names, unknown cells NaN), `path`, `source` (how the
    path was chosen), `content_hash` (SHA-256 of the file's bytes),
    `part_count`, `rows_read`, `warnings` and `errors` (each with `file`,
    `line`, `column`, `message`; rows with errors are left out of `df`).

    >>> import picker
    >>> catalog = picker.load_catalog()
    >>> catalog.source
    'bundled demo'
    >>> catalog.part_count == len(catalog.df) and len(catalog.content_hash)
    64
    """

    def __init__(self, loaded: _load.Catalog) -> None:
        self._loaded = loaded

    @property
    def df(self) -> pd.DataFrame:
        """The parts: one row each, indexed by the line of the file."""
        return self._loaded.df

    @property
    def path(self) -> str:
        return self._loaded.path

    @property
    def source(self) -> str:
        """How the path was chosen: 'bundled demo', 'argument', '--catalog', ..."""
        return self._loaded.source

    @property
    def content_hash(self) -> str:
        """SHA-256 of the catalogue file's bytes, in hex: the same file, the same hash."""
        return self._loaded.fingerprint

    @property
    def part_count(self) -> int:
        """Parts in `df` (rows with errors are not counted)."""
        return len(self._loaded.df)

    @property
    def rows_read(self) -> int:
        return self._loaded.rows_read

    @property
    def warnings(self) -> list:
        """The catalogue check's warnings (the rows stay in `df`)."""
        return self._loaded.warnings

    @property
    def errors(self) -> list:
        """The catalogue check's errors (those rows are left out of `df`)."""
        return self._loaded.errors

    @property
    def left_out(self) -> list[int]:
        """File lines of the rows left out for errors."""
        return list(self._loaded.error_lines)

    def describe(self) -> str:
        """One line saying which catalogue this is."""
        return self._loaded.describe()

    def left_out_notice(self) -> str | None:
        """A line saying how many rows were left out (None when none were)."""
        return self._loaded.left_out_notice()

    def __repr__(self) -> str:
        return (f"<picker.Catalog {self.path!r}: {self.part_count} parts, "
                f"{len(self.warnings)} warnings, {len(self.left_out)} rows left out>")


def load_catalog(path: str | os.PathLike | None = None, *, strict: bool = False,
                 cache: bool = True) -> Catalog:
    """Load and check a parts catalogue (CSV); with no path, the bundled demo.

    `strict`: raise `CatalogError` on the first row with an error instead of
    leaving the bad rows out. `cache`: serve a large catalogue from the parse
    cache while its bytes stay the same. A file that cannot be read raises
    `CatalogError` with the file (and line and column where there is one).

    >>> import picker
    >>> picker.load_catalog().part_count > 0
    True
    >>> picker.load_catalog("no-such-file.csv")
    Traceback (most recent call last):
    picker.errors.CatalogError: no-such-file.csv: no such catalogue file; check the path
    """
    if path is None:
        return open_catalog(str(_load.bundled_catalog()), "bundled demo", strict=strict,
                            cache=cache)
    return open_catalog(os.fspath(path), "argument", strict=strict, cache=cache)


def open_catalog(path: str, source: str, *, strict: bool = False, cache: bool = True) -> Catalog:
    """`load_catalog` with the path's source named (the CLI's '--catalog',
    'PICKER_CATALOG' or 'bundled demo')."""
    return Catalog(_load.load_catalog(path, source=source, strict=strict, cache=cache))


def as_catalog(catalog) -> Catalog:
    """A Catalog from a Catalog, a path, or None (the bundled demo)."""
    if isinstance(catalog, Catalog):
        return catalog
    if catalog is None or isinstance(catalog, (str, os.PathLike)):
        return load_catalog(catalog)
    raise TypeError(f"expected a picker.Catalog, a path or None, not {type(catalog).__name__}")
