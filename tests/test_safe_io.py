"""Every file picker writes goes through `safe_io.write_atomic`: a temporary
file in the same folder, flushed and fsync'd, renamed over the target, the
old version kept as `.bak` where a file is replaced.

The kill tests run writers as subprocesses and SIGKILL them at random
moments (seeded delays): KILLS (100 under CI) times a loop of large writes
through write_atomic, then REAL_PATH_KILLS (25) times each the real `catalog
import` and `review --write-bom` commands. After every kill the target is byte-identical to the version
before or to the complete new one, never a mix and never truncated, and a
`.bak`, where there is one, is a complete earlier version. POSIX only
(SIGKILL, fsync of a folder)."""

from __future__ import annotations

import ast
import os
import random
import re
import signal
import stat
import subprocess
import sys
import time
from pathlib import Path

import pytest

from conftest import EXAMPLES, ROOT, TINY_CSV, invoke
from fuzzing import CI
from picker.errors import PickerError, WriteRefused
from picker.safe_io import STALE_SECONDS, file_state, stale_temporaries, write_atomic

posix_only = pytest.mark.skipif(not hasattr(signal, "SIGKILL") or os.name != "posix",
                                reason="needs POSIX signals")
# Under CI the full counts; on a developer's machine a fifth, unless
# PICKER_KILLS asks for more (a long run: PICKER_KILLS=1000).
KILLS = 100 if CI else int(os.environ.get("PICKER_KILLS", "20"))
REAL_PATH_KILLS = 25 if CI else max(1, KILLS // 4)


# -- write_atomic, one case at a time ---------------------------------------------------------

def test_new_file_has_the_content_and_the_umask_permissions(tmp_path):
    target = tmp_path / "new.csv"
    assert write_atomic(target, b"a,b\n") is None
    assert target.read_bytes() == b"a,b\n"
    mask = os.umask(0)
    os.umask(mask)
    assert stat.S_IMODE(target.stat().st_mode) == 0o666 & ~mask
    assert sorted(p.name for p in tmp_path.iterdir()) == ["new.csv"]


def test_replacing_keeps_the_old_version_as_bak_and_the_mode(tmp_path):
    target = tmp_path / "cat.csv"
    target.write_bytes(b"old\n")
    target.chmod(0o640)
    backup = write_atomic(target, b"new\n", overwrite=True)
    assert backup == tmp_path / "cat.csv.bak"
    assert (target.read_bytes(), backup.read_bytes()) == (b"new\n", b"old\n")
    assert stat.S_IMODE(target.stat().st_mode) == 0o640
    assert sorted(p.name for p in tmp_path.iterdir()) == ["cat.csv", "cat.csv.bak"]


def test_an_existing_file_is_not_replaced_without_overwrite(tmp_path):
    target = tmp_path / "out.csv"
    target.write_bytes(b"mine\n")
    with pytest.raises(WriteRefused, match="exists") as info:
        write_atomic(target, b"theirs\n")
    assert info.value.file == str(target) and target.read_bytes() == b"mine\n"


def test_a_file_changed_on_disk_since_it_was_read_is_not_replaced(tmp_path):
    target = tmp_path / "cat.csv"
    target.write_bytes(b"as read\n")
    state = file_state(target)
    target.write_bytes(b"edited by someone else\n")
    with pytest.raises(WriteRefused, match="changed on disk"):
        write_atomic(target, b"picker's\n", overwrite=True, expect=state)
    assert target.read_bytes() == b"edited by someone else\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["cat.csv"]


@pytest.mark.parametrize("where, message", [("missing/out.csv", "does not exist"),
                                            ("folder", "is a folder")])
def test_no_folder_or_a_folder_in_the_way(tmp_path, where, message):
    (tmp_path / "folder").mkdir()
    with pytest.raises(WriteRefused, match=message):
        write_atomic(tmp_path / where, b"x", overwrite=True)


def test_a_failing_disk_leaves_the_target_and_no_temporary(tmp_path, monkeypatch):
    """A full disk (ENOSPC at fsync) is our error naming the file; the target
    is as it was and the temporary file is gone."""
    import errno

    target = tmp_path / "cat.csv"
    target.write_bytes(b"old\n")

    def full(fd):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(os, "fsync", full)
    with pytest.raises(WriteRefused, match="No space left") as info:
        write_atomic(target, b"new\n", overwrite=True, backup=False)
    assert isinstance(info.value, PickerError) and info.value.file == str(target)
    assert target.read_bytes() == b"old\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["cat.csv"]


@pytest.mark.skipif(os.name != "posix", reason="symbolic links")
def test_a_symbolic_link_is_followed_and_kept(tmp_path):
    real = tmp_path / "shared" / "cat.csv"
    real.parent.mkdir()
    real.write_bytes(b"old\n")
    link = tmp_path / "cat.csv"
    link.symlink_to(real)
    write_atomic(link, b"new\n", overwrite=True)
    assert link.is_symlink() and real.read_bytes() == b"new\n"
    assert (real.parent / "cat.csv.bak").read_bytes() == b"old\n"


def test_stale_temporaries_are_removed_by_the_next_write_fresh_ones_kept(tmp_path):
    """The clean-up that was the import's own is now write_atomic's: every
    writer removes what an interrupted write of the same file left, once it
    is older than STALE_SECONDS (a fresh one may be a live writer's)."""
    target = tmp_path / "cat [1].csv"  # glob characters in the name
    target.write_bytes(b"old\n")
    stale = tmp_path / ".cat [1].csv.abc123.tmp"
    fresh = tmp_path / ".cat [1].csv.def456.tmp"
    old_backup_temp = tmp_path / ".cat [1].csv.bak.ghi789.tmp"
    for p in (stale, fresh, old_backup_temp):
        p.write_bytes(b"partial")
    past = time.time() - STALE_SECONDS - 60
    for p in (stale, old_backup_temp):
        os.utime(p, (past, past))
    assert stale_temporaries(target) == sorted([stale, old_backup_temp])
    cleaned: list[Path] = []
    write_atomic(target, b"new\n", overwrite=True, cleaned=cleaned)
    assert sorted(cleaned) == sorted([stale, old_backup_temp])
    assert fresh.exists() and not stale.exists() and not old_backup_temp.exists()


# -- every write in picker goes through write_atomic -----------------------------------------

# Calls that write files. picker/safe_io.py is the one place allowed to make
# them; elsewhere only these (file, call) pairs, each of which writes to memory.
WRITERS = {"write_text", "write_bytes", "to_csv", "to_excel", "to_parquet", "to_feather",
           "savefig", "replace", "rename", "copy", "copyfile", "copy2", "move", "mkstemp",
           "write_feather", "write_table", "dump"}
ALLOWED = {("plot.py", "savefig"),  # into an io.BytesIO in figure_bytes
           ("cache.py", "write_feather"),  # into a pyarrow BufferOutputStream
           ("render.py", "dump"),  # none today; json.dump to a stream would be fine
           }


def _calls(tree):
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            func = node.func
            name = func.attr if isinstance(func, ast.Attribute) else getattr(func, "id", "")
            yield node, name


def test_no_module_writes_a_file_but_through_write_atomic():
    found = []
    for path in sorted((ROOT / "picker").rglob("*.py")):
        if path.name == "safe_io.py":
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node, name in _calls(tree):
            if name == "open" and len(node.args) > 1:
                mode = node.args[1]
                if isinstance(mode, ast.Constant) and re.search(r"[wax+]", str(mode.value)):
                    found.append(f"{path.name}:{node.lineno} open(..., {mode.value!r})")
            elif name in WRITERS and (path.name, name) not in ALLOWED:
                if name == "replace" and isinstance(node.func, ast.Attribute) and not (
                        isinstance(node.func.value, ast.Name) and node.func.value.id in ("os",)):
                    continue  # str.replace, Series.replace...
                if name in ("copy", "move", "dump", "rename") and not (
                        isinstance(node.func, ast.Attribute)
                        and isinstance(node.func.value, ast.Name)
                        and node.func.value.id in ("shutil", "os", "json", "pickle")):
                    continue  # dict.copy(), DataFrame.rename()...
                found.append(f"{path.name}:{node.lineno} {name}()")
    assert found == [], "writes that bypass write_atomic: " + ", ".join(found)


def test_plot_writes_into_memory_only():
    source = (ROOT / "picker" / "present" / "plot.py").read_text(encoding="utf-8")
    assert re.findall(r"savefig\((\w+)", source) == ["buf"]


# -- every writing command, end to end -----------------------------------------------------------

@pytest.fixture
def recorded(monkeypatch):
    """The files write_atomic wrote (its temporary files' targets), in order.
    (Spied on inside safe_io, so modules that imported write_atomic by name
    are seen too.)"""
    import picker.safe_io as safe_io

    targets = []
    original = safe_io._write_temp

    def spy(folder, name, data, mode):
        targets.append(name)
        return original(folder, name, data, mode)

    monkeypatch.setattr(safe_io, "_write_temp", spy)
    return targets


def test_every_writing_command_writes_through_write_atomic(tmp_path, recorded):
    """review --write-bom (new, then --force with a .bak), catalog import
    (--save-map too), catalog add, curve --png/--svg: each output file is one
    write_atomic call, and the folder holds nothing else."""
    pytest.importorskip("matplotlib")
    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV, encoding="utf-8")
    demo = tmp_path / "demo.csv"
    demo.write_bytes((ROOT / "catalog" / "demo.csv").read_bytes())
    bom = EXAMPLES / "kettlewick-bom.csv"
    out = tmp_path / "revised.csv"
    steps = [
        (["review", str(bom), "-c", str(demo), "--write-bom", str(out)], "revised.csv"),
        (["review", str(bom), "-c", str(demo), "--write-bom", str(out), "--force"], "revised.csv"),
        (["catalog", "import", str(ROOT / "tests" / "data" / "import" / "corvane-mosfets.csv"),
          "--into", str(cat), "--save-map", str(tmp_path / "map.toml"), "--add-columns"],
         "map.toml"),
        (["catalog", "add", "--part", "NEW-1", "--kind", "pmos", "--vds", "20V", "--into", str(cat),
          "--add-columns"], "cat.csv"),
        (["curve", "-R", str(EXAMPLES / "kettlewick-power.toml"), "-r", "cell-switch", "-c",
          str(demo), "--png", str(tmp_path / "c.png"), "--svg", str(tmp_path / "c.svg")],
         "c.png"),
    ]
    for argv, name in steps:
        before = len(recorded)
        result = invoke(*argv, env={"PICKER_CACHE_DIR": str(tmp_path / "cache")})
        assert result.exit_code in (0, 1), (argv, result.output[-800:])
        assert name in recorded[before:], (argv, recorded[before:])
    assert recorded.count("cat.csv") == 2  # the import, then the add
    names = sorted(p.name for p in tmp_path.iterdir() if p.is_file())
    assert names == ["c.png", "c.svg", "cat.csv", "cat.csv.bak", "demo.csv", "map.toml",
                     "revised.csv", "revised.csv.bak"]


# -- killed writers ------------------------------------------------------------------------------

LOOP = r"""
import sys
sys.path.insert(0, sys.argv[4])
from picker.safe_io import write_atomic

def version(k, size):
    head = b"version %08d\n" % k
    return head * (size // len(head))

target, size, k = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
print("ready", flush=True)
while True:
    k += 1
    write_atomic(target, version(k, size), overwrite=True, backup=True)
"""
SIZE = 2 << 20


def _version_of(data: bytes) -> int:
    """The version number of a complete version file; AssertionError otherwise."""
    head = data[:17]
    assert re.fullmatch(rb"version \d{8}\n", head), head
    k = int(head[8:16])
    assert data == head * (SIZE // len(head)), f"version {k} is not complete ({len(data)} bytes)"
    return k


@posix_only
def test_killed_writers_leave_the_old_or_the_new_file_never_a_mix(tmp_path):
    """KILLS writers killed at seeded random moments while they replace a
    2 MiB file again and again: after each kill the target is a complete
    version, the one before this writer or one it wrote, and the .bak a
    complete earlier one. Temporary files found after a kill show the kill
    landed mid-write; they are counted and removed (a later write would)."""
    rng = random.Random(20240229)
    target = tmp_path / "data.bin"
    target.write_bytes(b"version 00000000\n" * (SIZE // 17))
    script = tmp_path / "loop.py"
    script.write_text(LOOP, encoding="utf-8")
    current, mid_write, writes = 0, 0, 0
    for kill in range(KILLS):
        base = (kill + 1) * 100_000
        proc = subprocess.Popen([sys.executable, str(script), str(target), str(SIZE), str(base),
                                 str(ROOT)], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
        try:
            assert proc.stdout.readline().strip() == b"ready", proc.stderr.read()
            time.sleep(rng.uniform(0.0, 0.12))
            proc.send_signal(signal.SIGKILL)
            proc.wait(timeout=30)
        finally:
            if proc.poll() is None:
                proc.kill()
                proc.wait()
        assert proc.returncode == -signal.SIGKILL
        now = _version_of(target.read_bytes())
        assert now == current or base < now, (kill, current, now)
        writes += (now - base) if now > base else 0
        backup = target.with_name("data.bin.bak")
        if backup.exists():
            older = _version_of(backup.read_bytes())
            assert older <= now  # equal when killed between the backup and the rename
        temps = [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]
        mid_write += bool(temps)
        for p in temps:
            p.unlink()
        current = now
    print(f"{KILLS} kills survived; {writes} complete writes between them; "
          f"{mid_write} kills landed while a temporary file was being written")
    assert mid_write > 0 or KILLS < 20


def _big_catalogue(rows: int) -> bytes:
    header, *body = TINY_CSV.splitlines()
    lines = [header]
    for k in range(rows):
        template = body[k % len(body)]
        lines.append(template.replace("TQ", f"SYN{k:06d}-", 1))
    return ("\n".join(lines) + "\n").encode("utf-8")


def _run_and_kill(argv, home: Path, delay: float | None, trigger: str | None = None):
    """Run picker in `home`: to the end (delay None), or SIGKILL it `delay`
    seconds after it starts or, with `trigger` (a glob), `delay` seconds
    after a file matching it appears (a temporary file: the write under way)."""
    env = dict(os.environ, PYTHONPATH=str(ROOT), PICKER_CACHE_DIR=str(home / "cache"))
    env.pop("PICKER_CATALOG", None)
    start = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-m", "picker", *argv], stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE, env=env, cwd=home)
    try:
        if delay is None:
            _, err = proc.communicate(timeout=300)
            assert proc.returncode in (0, 1), err.decode(errors="replace")[-2000:]
            return time.perf_counter() - start
        if trigger is not None:
            while proc.poll() is None and not any(home.glob(trigger)):
                time.sleep(0.0002)
        time.sleep(delay)
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
    return time.perf_counter() - start


def _moment(rng: random.Random, took: float, temp: str):
    """Where to kill: a third of the kills at a random time in the second
    half of the run, the rest within 3 ms of a temporary file appearing (the
    target's own, or the .bak's)."""
    if rng.random() < 1 / 3:
        return rng.uniform(0.5 * took, 1.1 * took), None
    return rng.uniform(0.0, 0.003), rng.choice([temp, temp.replace(".*.tmp", ".bak.*.tmp")])


@posix_only
def test_killed_import_leaves_the_catalogue_before_or_after(tmp_path):
    """`picker catalog import` killed at REAL_PATH_KILLS seeded moments around
    its write (see `_moment`): the catalogue is the old bytes or the whole new
    ones; a .bak is the old bytes."""
    rng = random.Random(7)
    raw = ROOT / "tests" / "data" / "import" / "corvane-mosfets.csv"
    before = _big_catalogue(12_000)
    full = tmp_path / "full"
    full.mkdir()
    (full / "cat.csv").write_bytes(before)
    argv = ["catalog", "import", str(raw), "--into", "cat.csv", "--add-columns"]
    took = _run_and_kill(argv, full, None)
    after = (full / "cat.csv").read_bytes()
    assert after != before
    outcomes = {"before": 0, "after": 0, "mid-write": 0}
    for kill in range(REAL_PATH_KILLS):
        home = tmp_path / f"k{kill}"
        home.mkdir()
        (home / "cat.csv").write_bytes(before)
        _run_and_kill(argv, home, *_moment(rng, took, ".cat.csv.*.tmp"))
        now = (home / "cat.csv").read_bytes()
        assert now in (before, after), f"kill {kill}: a mix of {len(now)} bytes"
        outcomes["before" if now == before else "after"] += 1
        if (home / "cat.csv.bak").exists():
            assert (home / "cat.csv.bak").read_bytes() == before
        others = {p.name for p in home.iterdir()} - {"cat.csv", "cat.csv.bak", "cache"}
        assert all(name.endswith(".tmp") for name in others), others
        outcomes["mid-write"] += bool(others)
    print(f"import killed {REAL_PATH_KILLS} times: {outcomes}")


@posix_only
def test_killed_review_leaves_the_revised_bom_before_or_after(tmp_path):
    """`picker review --write-bom OUT --force` over an older OUT, killed at
    REAL_PATH_KILLS seeded moments around its write (see `_moment`): OUT is
    the older file or the whole new one; a .bak is the older file; the BOM
    itself is never touched."""
    rng = random.Random(11)
    bom = (EXAMPLES / "kettlewick-bom.csv").read_bytes()
    demo = ROOT / "catalog" / "demo.csv"
    older = b"an older revised BOM\n" * 1000
    full = tmp_path / "full"
    full.mkdir()
    (full / "bom.csv").write_bytes(bom)
    (full / "out.csv").write_bytes(older)
    argv = ["review", "bom.csv", "-c", str(demo), "--write-bom", "out.csv", "--force"]
    took = _run_and_kill(argv, full, None)
    new = (full / "out.csv").read_bytes()
    assert new != older
    outcomes = {"before": 0, "after": 0, "mid-write": 0}
    for kill in range(REAL_PATH_KILLS):
        home = tmp_path / f"k{kill}"
        home.mkdir()
        (home / "bom.csv").write_bytes(bom)
        (home / "out.csv").write_bytes(older)
        _run_and_kill(argv, home, *_moment(rng, took, ".out.csv.*.tmp"))
        assert (home / "out.csv").read_bytes() in (older, new)
        assert (home / "bom.csv").read_bytes() == bom
        if (home / "out.csv.bak").exists():
            assert (home / "out.csv.bak").read_bytes() == older
        now = (home / "out.csv").read_bytes()
        outcomes["before" if now == older else "after"] += 1
        outcomes["mid-write"] += any(p.name.endswith(".tmp") for p in home.iterdir())
    print(f"review --write-bom killed {REAL_PATH_KILLS} times: {outcomes}")
