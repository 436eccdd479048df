"""A columnar cache of parsed catalogues, so a repeated command does not parse
the CSV again.

The parsed DataFrame and the check's findings are stored as one Feather
(Arrow IPC) file in the user's cache folder, named after the catalogue's path,
size and modification time, and carrying the SHA-256 of the bytes it was
parsed from. A cache entry is used only when that hash equals the hash of the
file as it is now; a stale, unreadable or foreign entry is ignored and
rebuilt, never trusted. Needs pyarrow (`pip install picker[fast]`); without it
every load parses the CSV.
"""

from __future__ import annotations

import hashlib
import json
import os
import sys
from pathlib import Path

FORMAT = 1  # bump when what is stored changes
MIN_BYTES = 1 << 20  # smaller catalogues parse faster than a cache lookup pays off


def cache_dir() -> Path:
    """$PICKER_CACHE_DIR, else the platform's user cache folder."""
    if os.environ.get("PICKER_CACHE_DIR"):
        return Path(os.environ["PICKER_CACHE_DIR"])
    if sys.platform == "win32":
        base = Path(os.environ.get("LOCALAPPDATA", Path.home() / "AppData" / "Local"))
    elif sys.platform == "darwin":
        base = Path.home() / "Library" / "Caches"
    else:
        base = Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache")
    return base / "picker"


def entry_path(path: str, size: int, mtime_ns: int) -> Path:
    key = hashlib.sha256(f"{os.path.abspath(path)}\0{size}\0{mtime_ns}\0{FORMAT}".encode()).hexdigest()
    return cache_dir() / f"catalog-{key[:32]}.feather"


def _available() -> bool:
    try:
        import pyarrow  # noqa: F401
    except ImportError:
        return False
    return True


def load(path: str, size: int, mtime_ns: int, content_sha256: str):
    """(DataFrame, meta dict) from a valid cache entry, or None."""
    if size < MIN_BYTES or not _available():
        return None
    entry = entry_path(path, size, mtime_ns)
    if not entry.exists():
        return None
    try:
        import pyarrow.feather as feather

        table = feather.read_table(entry)
        meta = json.loads(table.schema.metadata[b"picker"])
        if meta.get("format") != FORMAT or meta.get("sha256") != content_sha256:
            return None
        df = table.to_pandas()
        df.index.name = "line"
        return df, meta
    except Exception:  # noqa: BLE001 - a corrupt or foreign entry is rebuilt, never trusted
        return None


def store(path: str, size: int, mtime_ns: int, df, meta: dict) -> None:
    """Write an entry atomically; a cache that cannot be written is skipped."""
    if size < MIN_BYTES or not _available():
        return
    try:
        import pyarrow as pa
        import pyarrow.feather as feather

        from picker.safe_io import write_atomic

        table = pa.Table.from_pandas(df, preserve_index=True)
        document = dict(meta, format=FORMAT)
        table = table.replace_schema_metadata({**(table.schema.metadata or {}),
                                               b"picker": json.dumps(document).encode()})
        sink = pa.BufferOutputStream()
        feather.write_feather(table, sink, compression="zstd")
        entry = entry_path(path, size, mtime_ns)
        entry.parent.mkdir(parents=True, exist_ok=True)
        write_atomic(entry, sink.getvalue().to_pybytes(), overwrite=True, backup=False)
    except Exception:  # noqa: BLE001 - the cache is an optimisation; the result is already in hand
        return
