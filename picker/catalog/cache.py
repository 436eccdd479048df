"""A columnar cache of parsed catalogues, so a repeated command does not parse
the CSV again.

The parsed DataFrame is stored as one Arrow IPC (Feather) file in the user's
cache folder, named after the catalogue's path, size and modification time;
the check's findings and the SHA-256 of the bytes it was parsed from travel in
its metadata. An entry is used only when that hash equals the hash of the
file as it is now (computed on another core while the entry is read); a
stale, unreadable or foreign entry is ignored and rebuilt, never trusted.
Entries are written through `picker.safe_io`, like every file picker writes.
"""

from __future__ import annotations

import hashlib
import json
import os
import stat as stat_module
import sys
import threading
from pathlib import Path

FORMAT = 2  # bump when what is stored changes
MIN_BYTES = 1 << 20  # smaller catalogues parse faster than a cache lookup pays off
COMPRESSION = "lz4"  # decompresses at memory speed; about half the size of the raw columns


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


def _worth(st: os.stat_result) -> bool:
    return st.st_size >= MIN_BYTES and stat_module.S_ISREG(st.st_mode)


def file_sha256(path: str) -> str | None:
    """The SHA-256 of the file's bytes as they are now, read in pieces."""
    try:
        with open(path, "rb") as fh:
            return hashlib.file_digest(fh, "sha256").hexdigest()
    except OSError:
        return None


def load(path: str, st: os.stat_result):
    """(DataFrame, meta dict, findings) from a valid cache entry, or None."""
    if not _worth(st):
        return None
    entry = entry_path(path, st.st_size, st.st_mtime_ns)
    if not entry.exists():
        return None
    digest: list[str | None] = []
    hashing = threading.Thread(target=lambda: digest.append(file_sha256(path)), daemon=True)
    hashing.start()
    try:
        import pyarrow as pa
        import pyarrow.feather as feather

        from picker.catalog.findings import ProblemList

        table = feather.read_table(entry, memory_map=False)
        metadata = table.schema.metadata or {}
        meta = json.loads(metadata[b"picker"])
        if meta.get("format") != FORMAT:
            return None
        problems = ProblemList.from_arrow(path, pa.ipc.open_stream(
            pa.py_buffer(metadata[b"picker-findings"])).read_all())
        hashing.join()
        if digest[0] is None or meta.get("sha256") != digest[0]:
            return None
        df = table.to_pandas(split_blocks=True, self_destruct=True)
        del table
        df.index.name = "line"
        return df, meta, problems
    except Exception:  # noqa: BLE001 - a corrupt or foreign entry is rebuilt, never trusted
        return None
    finally:
        hashing.join()


def store(path: str, st: os.stat_result, df, meta: dict, problems) -> None:
    """Write an entry atomically; a cache that cannot be written is skipped."""
    if not _worth(st):
        return
    try:
        import pyarrow as pa
        import pyarrow.feather as feather

        from picker.catalog.findings import ProblemList
        from picker.safe_io import write_atomic

        if not isinstance(problems, ProblemList):
            problems = ProblemList.of(list(problems))
        findings = problems.to_arrow()
        sink = pa.BufferOutputStream()
        with pa.ipc.new_stream(sink, findings.schema) as writer:
            writer.write(findings)
        table = pa.Table.from_pandas(df, preserve_index=True)
        table = table.replace_schema_metadata({
            **(table.schema.metadata or {}),
            b"picker": json.dumps(dict(meta, format=FORMAT)).encode(),
            b"picker-findings": sink.getvalue().to_pybytes()})
        out = pa.BufferOutputStream()
        feather.write_feather(table, out, compression=COMPRESSION)
        entry = entry_path(path, st.st_size, st.st_mtime_ns)
        entry.parent.mkdir(parents=True, exist_ok=True)
        write_atomic(entry, out.getvalue().to_pybytes(), overwrite=True, backup=False)
    except Exception:  # noqa: BLE001 - the cache is an optimisation; the result is already in hand
        return
