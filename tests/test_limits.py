"""Bounds: inputs past a sane size are refused with a clear message naming
the file, before they can exhaust memory.

- catalogues, BOMs, suppliers' tables: MAX_BYTES (2 GiB), and less where
  reading the file (MEMORY_PER_BYTE, 25 times its size) would pass the
  machine's memory, checked from the file's size before a byte is read
  (tested on sparse files, which take no disk space); a pipe or a device is
  read up to the bound and no further; MAX_ROWS (10 million), checked by the
  vectorised reader before any cell is split and by the general reader as it
  goes (tested with the bound lowered);
- a BOM's references, ranges expanded: MAX_REFS (1 million) in all, and a
  range longer than MAX_RANGE (10,000) is kept as written, not expanded;
- requirement files: MAX_FILE_BYTES (1 MB, only that much is ever read),
  MAX_ROLES (200) roles, MAX_REFS (1,000) refs a role, quantities per board
  and the build volume; the same bounds for command-line options;
- import mapping files: MAX_MAPPING_BYTES (1 MB).
"""

from __future__ import annotations

import os
import pathlib
import resource
import time

import pytest

from conftest import EXAMPLES, TINY_CSV, run_cli
from picker.review import bom as bom_module
from picker.catalog import importer
from picker.design import requirements
from picker.catalog import tabular
from picker.review.bom import read_bom
from picker.catalog.load import load_catalog
from picker.errors import BomError, CatalogError, RequirementError, TooLarge
from picker.design.requirements import load_requirements, parse_requirements
from picker.design.quick import from_options

REQ_TEXT = (EXAMPLES / "kettlewick-power.toml").read_text(encoding="utf-8")


def _sparse(path: pathlib.Path, size: int) -> pathlib.Path:
    with open(path, "wb") as fh:
        fh.write(b"part,kind\n")
        fh.truncate(size)
    return path


@pytest.fixture
def unread(monkeypatch):
    """Reading a file's bytes fails the test: the bound must be checked first."""
    def refuse(self):
        raise AssertionError(f"{self} was read before its size was checked")

    monkeypatch.setattr(pathlib.Path, "read_bytes", refuse)


def _memory(monkeypatch, gib: float) -> None:
    """Make the machine's physical memory `gib` GiB, for tabular.memory_bound."""
    pages = {"SC_PHYS_PAGES": int(gib * 1024**3 // 4096), "SC_PAGE_SIZE": 4096}
    monkeypatch.setattr(tabular.os, "sysconf", lambda name: pages[name])


# -- bytes ----------------------------------------------------------------------------------------

def test_catalogue_over_2_gib_is_refused_unread(tmp_path, unread, monkeypatch):
    _memory(monkeypatch, 1024)
    path = _sparse(tmp_path / "huge.csv", tabular.MAX_BYTES + 1)
    with pytest.raises(TooLarge, match=r"catalogue is 2\.0 GiB; picker reads files up to 2 GiB "
                                       r"\(split it") as info:
        load_catalog(path, cache=False)
    assert info.value.file == str(path)


def test_a_file_too_large_for_the_memory_is_refused_unread(tmp_path, unread, monkeypatch):
    """On an 8 GiB machine the bound is 8 GiB / 25 = 328 MiB."""
    _memory(monkeypatch, 8)
    assert tabular.memory_bound() == 8 * 1024**3 // tabular.MEMORY_PER_BYTE
    path = _sparse(tmp_path / "big.csv", 400 * 1024**2)
    with pytest.raises(TooLarge, match=r"catalogue is 400 MiB; reading it would take about 10 GiB "
                                       r"of memory; picker reads files up to 0\.32 GiB on this "
                                       r"machine"):
        load_catalog(path, cache=False)


def test_bom_and_raw_table_over_2_gib_are_refused_unread(tmp_path, unread):
    path = _sparse(tmp_path / "huge.csv", tabular.MAX_BYTES + 1)
    with pytest.raises(TooLarge, match="BOM is 2.0 GiB"):
        read_bom(str(path))
    with pytest.raises(TooLarge, match="raw table is 2.0 GiB"):
        tabular.read_table(path, error=CatalogError, what="raw table")


@pytest.mark.skipif(not os.path.exists("/dev/zero"), reason="needs /dev/zero")
def test_regression_an_endless_stream_is_read_up_to_the_bound(monkeypatch):
    """Found while testing the bounds: a pipe or a device has no size, so the
    size check passed and `catalog check /dev/zero` read until memory ran
    out. Such a file is now read up to the bound and no further."""
    monkeypatch.setattr(tabular, "MAX_BYTES", 100_000)
    with pytest.raises(TooLarge, match="catalogue is over 98 KiB|catalogue is over 100,000 bytes"):
        load_catalog("/dev/zero", cache=False)


def test_the_bound_itself_is_allowed(tmp_path, monkeypatch):
    monkeypatch.setattr(tabular, "MAX_BYTES", len(TINY_CSV.encode()))
    path = tmp_path / "cat.csv"
    path.write_text(TINY_CSV, encoding="utf-8")
    assert len(load_catalog(path, cache=False).df) == 4
    path.write_text(TINY_CSV + "\n", encoding="utf-8")
    with pytest.raises(TooLarge):
        load_catalog(path, cache=False)


@pytest.mark.skipif(os.name != "posix", reason="sparse files and rusage")
def test_the_command_refuses_a_huge_catalogue_quickly_and_in_little_memory(tmp_path):
    """The executable on a 3 GiB (sparse) catalogue: exit 2, one line naming
    the file, in seconds, its peak memory far below the file's size."""
    path = _sparse(tmp_path / "huge.csv", 3 * 1024**3)
    start = time.perf_counter()
    result = run_cli("catalog", "check", str(path))
    took = time.perf_counter() - start
    assert result.returncode == 2 and "Traceback" not in result.stderr
    last = result.stderr.strip().splitlines()[-1]
    assert last.startswith(f"Error: {path}: catalogue is 3.0 GiB; ") and \
        last.endswith("(split it, or keep only the parts you use)")
    peak_kib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss  # KiB on Linux
    assert peak_kib < 1024 * 1024, f"peak {peak_kib} KiB"
    assert took < 60


# -- rows -----------------------------------------------------------------------------------------

def _rows(n: int) -> bytes:
    header, *body = TINY_CSV.splitlines()
    lines = [header] + [body[k % 4].replace("TQ", f"R{k}-", 1) for k in range(n)]
    return ("\n".join(lines) + "\n").encode()


@pytest.mark.parametrize("reader", ["general", "vectorised"])
def test_rows_over_the_bound_are_refused(monkeypatch, reader):
    monkeypatch.setattr(tabular, "MAX_ROWS", 10)
    monkeypatch.setattr(tabular, "FAST_BYTES", 0 if reader == "vectorised" else 1 << 62)
    assert len(load_catalog("c.csv", source="t", data=_rows(10), cache=False).df) == 10
    with pytest.raises(TooLarge, match="more than 10 rows") as info:
        load_catalog("c.csv", source="t", data=_rows(11), cache=False)
    assert info.value.file == "c.csv"


def test_the_vectorised_reader_refuses_before_splitting_cells(monkeypatch):
    import pandas as pd

    monkeypatch.setattr(tabular, "MAX_ROWS", 10)
    monkeypatch.setattr(tabular, "FAST_BYTES", 0)

    def never(*args, **kwargs):
        raise AssertionError("cells were split before the row count was checked")

    import pyarrow.csv

    monkeypatch.setattr(pyarrow.csv, "read_csv", never)
    with pytest.raises(TooLarge):
        tabular.read_table("c.csv", error=CatalogError, what="catalogue", data=_rows(50))


def test_the_general_reader_stops_at_the_bound(monkeypatch):
    """It keeps at most MAX_ROWS + 1 rows in memory, then refuses."""
    monkeypatch.setattr(tabular, "MAX_ROWS", 10)
    monkeypatch.setattr(tabular, "FAST_BYTES", 1 << 62)  # the general reader, whatever the size
    original = tabular.csv.reader
    seen = []

    class Counting:  # counts the rows the reader of the whole text hands out
        def __init__(self, source, *args, **kwargs):
            self.reader = original(source, *args, **kwargs)
            self.whole = not isinstance(source, list)  # not the header's delimiter test

        @property
        def line_num(self):
            return self.reader.line_num

        def __iter__(self):
            return self

        def __next__(self):
            row = next(self.reader)
            if self.whole:
                seen.append(row)
            return row

    monkeypatch.setattr(tabular.csv, "reader", Counting)
    with pytest.raises(TooLarge):
        tabular.read_table("c.csv", error=CatalogError, what="catalogue", data=_rows(10_000))
    assert len(seen) == 12  # the header and MAX_ROWS + 1 rows


def test_bom_rows_over_the_bound(monkeypatch):
    monkeypatch.setattr(tabular, "MAX_ROWS", 3)
    data = b"Ref,Qty,MPN\n" + b"".join(b"Q%d,1,P%d\n" % (k, k) for k in range(4))
    with pytest.raises(TooLarge, match="BOM has more than 3 rows"):
        read_bom("b.csv", data=data)


# -- a BOM's references ---------------------------------------------------------------------------

def test_bom_refs_in_all_are_bounded(monkeypatch):
    monkeypatch.setattr(bom_module, "MAX_REFS", 100)
    data = b"Ref,Qty,MPN\nQ1-Q60,60,A\nR1-R60,60,B\n"
    with pytest.raises(BomError, match="more than 100 refs") as info:
        read_bom("b.csv", data=data)
    assert (info.value.line, info.value.column) == (3, 1)


def test_a_range_past_max_range_is_not_expanded():
    data = f"Ref,Qty,MPN\nQ1-Q{bom_module.MAX_RANGE + 1},1,A\nQ1-Q99999999,1,B\n".encode()
    bom = read_bom("b.csv", data=data)
    assert [ln.refs for ln in bom.lines] == [(f"Q1-Q{bom_module.MAX_RANGE + 1}",),
                                             ("Q1-Q99999999",)]
    assert [(w.line, w.column) for w in bom.warnings] == [(2, 1), (3, 1)]


# -- requirement files and options -----------------------------------------------------------------

def test_requirement_file_over_the_bound_is_refused_reading_only_the_bound(tmp_path, monkeypatch):
    path = tmp_path / "big.toml"
    path.write_bytes(REQ_TEXT.encode() + b"#" * requirements.MAX_FILE_BYTES)
    reads = []
    real_open = open

    class Counting:
        def __init__(self, fh):
            self.fh = fh

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.fh.close()

        def read(self, n=-1):
            data = self.fh.read(n)
            reads.append(len(data))
            return data

    monkeypatch.setattr("builtins.open", lambda p, mode="r", *a, **k: Counting(real_open(p, mode)))
    with pytest.raises(RequirementError, match="too large for a requirement file"):
        load_requirements(path)
    assert sum(reads) <= requirements.MAX_FILE_BYTES + 1


def _roles(n: int, refs_each: int = 1) -> str:
    head = REQ_TEXT.split("[[role]]")[0]
    body = ""
    for k in range(n):
        refs = ", ".join(f'"Q{k}_{j}"' for j in range(refs_each))
        body += (f'\n[[role]]\nname = "r{k}"\nrefs = [{refs}]\nuse = "npn-switch"\n'
                 'collector_current = "1 mA"\nbase_resistor = "10 kohm"\n')
    return head + body


def test_roles_bounded():
    assert len(parse_requirements(_roles(requirements.MAX_ROLES), "r.toml").roles) == 200
    with pytest.raises(RequirementError, match="more than 200 roles") as info:
        parse_requirements(_roles(requirements.MAX_ROLES + 1), "r.toml")
    assert info.value.line is not None


def test_refs_of_a_role_bounded():
    assert len(parse_requirements(_roles(1, requirements.MAX_REFS), "r.toml").roles[0].refs) == 1000
    with pytest.raises(RequirementError, match="more than 1000 refs in one role") as info:
        parse_requirements(_roles(1, requirements.MAX_REFS + 1), "r.toml")
    assert info.value.line is not None


@pytest.mark.parametrize("key, value, message", [
    ("volume", "1000000001", "over the limit of 1,000,000,000"),
    ("qty", "100001", "over the limit of 100,000"),
    ("volume", "9" * 5000, "over the limit"),
])
def test_counts_bounded_in_files_and_options(key, value, message):
    text = REQ_TEXT.replace("volume = 5000", f"volume = {value}") if key == "volume" else \
        REQ_TEXT.replace('refs = ["Q1"]', f'refs = ["Q1"]\nqty = {value}')
    if len(value) < 4000:
        with pytest.raises(RequirementError, match=message):
            parse_requirements(text, "r.toml")
    options = {"use": "npn-switch", "collector_current": "1mA", "base_resistor": "10k", key: value}
    with pytest.raises(RequirementError, match=message):
        from_options(options)


def test_refs_option_bounded():
    refs = ",".join(f"Q{k}" for k in range(requirements.MAX_REFS + 1))
    with pytest.raises(RequirementError, match="more than 1000 refs"):
        from_options({"use": "npn-switch", "collector_current": "1mA", "base_resistor": "10k",
                      "refs": refs})


# -- mapping files --------------------------------------------------------------------------------

def test_mapping_file_over_the_bound_is_refused_unread(tmp_path, unread):
    path = _sparse(tmp_path / "map.toml", importer.MAX_MAPPING_BYTES + 1)
    with pytest.raises(TooLarge, match="a mapping file is at most 1,000,000 bytes") as info:
        importer.load_mapping(str(path))
    assert info.value.file == str(path)


@pytest.mark.skipif(not os.path.exists("/dev/zero"), reason="needs /dev/zero")
def test_mapping_from_an_endless_stream():
    with pytest.raises(TooLarge, match="mapping is over 977 KiB|mapping is over 1,000,000"):
        importer.load_mapping("/dev/zero")
