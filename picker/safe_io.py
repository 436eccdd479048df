"""Every file picker writes goes through `write_atomic`.

The new content is written to a temporary file in the target's folder,
flushed and fsync'd, then renamed over the target (a rename within one folder
is atomic on POSIX and Windows), so a crash at any moment leaves either the old
file or the new one, never a mix. Where a file is replaced, the previous
version is kept as `<name>.bak` first. A file that changed on disk since it was
read is not overwritten. Temporary files an interrupted write left behind are
removed by the next write of the same file once they are clearly stale.
Every failure is a `WriteRefused` naming the file.
"""

from __future__ import annotations

import glob
import hashlib
import os
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

from picker.errors import WriteRefused


@dataclass(frozen=True)
class FileState:
    """What a file was when it was read: compared again before replacing it."""

    size: int
    mtime_ns: int
    sha256: str


def file_state(path: str | os.PathLike, data: bytes | None = None) -> FileState:
    p = Path(path)
    st = p.stat()
    if data is None:
        data = p.read_bytes()
    return FileState(st.st_size, st.st_mtime_ns, hashlib.sha256(data).hexdigest())


def _fsync_dir(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return  # not supported here (e.g. Windows): the rename is still atomic
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _write_temp(folder: Path, name: str, data: bytes, mode: int | None) -> Path:
    fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        if mode is not None:
            os.chmod(tmp, mode)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return Path(tmp)


STALE_SECONDS = 600  # a temporary file older than this was left by an interrupted write


def stale_temporaries(path: str | os.PathLike) -> list[Path]:
    """Temporary files that an interrupted write of `path` (or of its .bak)
    left behind: older than STALE_SECONDS, so no live writer still owns them."""
    target = Path(path)
    now = time.time()
    found = []
    for pattern in (f".{glob.escape(target.name)}.*.tmp", f".{glob.escape(target.name)}.bak.*.tmp"):
        for p in target.parent.glob(pattern):
            try:
                if now - p.stat().st_mtime > STALE_SECONDS:
                    found.append(p)
            except OSError:
                continue
    return sorted(set(found))


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_atomic(path: str | os.PathLike, data: bytes, *, overwrite: bool = False,
                 backup: bool = True, expect: FileState | None = None,
                 cleaned: list[Path] | None = None) -> Path | None:
    """Write `data` to `path` atomically; returns the backup's path, if any.

    - `overwrite=False` refuses to replace an existing file (WriteRefused).
    - `expect`: the state the file had when it was read; if it differs now
      (another program saved it meanwhile), refuse rather than lose that edit.
    - `backup`: an existing file is first copied to `<path>.bak` (itself
      written atomically), so the previous version survives.
    - Temporary files an earlier, interrupted write of this path left behind
      (`stale_temporaries`) are removed; their paths are added to `cleaned`.
    - A symbolic link is followed: the file it names is replaced, the link kept.
    - A new file gets the permissions the user's umask gives (not the
      temporary file's owner-only ones); a replaced file keeps its own.

    Every failure (permission, a folder in the way, a full disk) is a
    WriteRefused naming the file; the target is then as it was.
    """
    target = Path(path)
    try:
        if target.is_symlink():
            target = Path(os.path.realpath(target))
        folder = target.parent if str(target.parent) else Path(".")
        if not folder.is_dir():
            raise WriteRefused("the folder to write into does not exist", file=str(path))
        if target.is_dir():
            raise WriteRefused("that is a folder; give a file name", file=str(path))
        exists = target.exists()
        if exists and not overwrite:
            raise WriteRefused("the file exists; choose another name or pass --force",
                               file=str(path))
        if exists and expect is not None:
            now = file_state(target)
            if (now.size, now.sha256) != (expect.size, expect.sha256):
                raise WriteRefused("the file changed on disk since picker read it; nothing "
                                   "was written (run the command again)", file=str(path))
        for stale in stale_temporaries(target):
            try:
                stale.unlink()
            except OSError:
                continue
            if cleaned is not None:
                cleaned.append(stale)
        mode = target.stat().st_mode & 0o7777 if exists else 0o666 & ~_umask()
        backup_path = None
        if exists and backup:
            backup_path = target.with_name(target.name + ".bak")
            tmp_backup = _write_temp(folder, backup_path.name, target.read_bytes(), mode)
            os.replace(tmp_backup, backup_path)
        tmp = _write_temp(folder, target.name, data, mode)
        try:
            os.replace(tmp, target)
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
    except WriteRefused:
        raise
    except OSError as exc:
        raise WriteRefused(f"cannot write the file: {exc.strerror or exc}",
                           file=str(path)) from None
    _fsync_dir(folder)
    return backup_path
