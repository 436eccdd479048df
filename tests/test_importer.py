"""`picker catalog import` and `picker catalog add`: header mapping, cell
values, merging, and writing without losing anything.

Outside references named beside the checks:
- SI prefixes (milli = 1e-3, micro = 1e-6, nano = 1e-9, kilo = 1e3): The
  International System of Units, SI Brochure 9th ed., BIPM 2019, Table 7.
  Every conversion factor and expected SI value below is worked by hand from
  them, not computed by picker.
- CSV quoting (a field holding the separator or a quote is quoted, quotes
  doubled): RFC 4180 §2.6-2.7; Python's csv module reads our output as the
  reference reader.
- A rename within one folder replaces the target atomically: POSIX rename(2);
  the crash test kills the writer before it, and the old file must survive.
The raw tables under tests/data/import/ are invented (invented parts and makers).
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import os
import shutil
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

import picker.cli.import_cmd  # noqa: F401  registers the commands until picker/cli/__init__.py does
from picker.catalog.load import bundled_catalog, load_catalog
from picker.errors import MappingError, QuantityError, WriteRefused
from picker.catalog.import_rows import cell_values, read_kind, read_rows
from picker.catalog.importer import Target, load_mapping, mapping_toml, match_header, propose_mapping
from picker.catalog.merge import plan_merge, write_plan
from picker.safe_io import stale_temporaries
from picker.catalog.tabular import read_table

ROOT = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "data" / "import"
MOSFETS = DATA / "corvane-mosfets.csv"
BIPOLARS = DATA / "ostrand-bipolar.csv"


def invoke(*args: str):
    from typer.testing import CliRunner

    from picker.cli import app

    return CliRunner().invoke(app, list(args), env={"PICKER_CATALOG": "", "COLUMNS": "200"})


def error_line(result) -> str:
    """The one 'Error: ...' line a failed command prints on stderr (status lines aside)."""
    lines = [ln for ln in result.stderr.splitlines() if ln.startswith("Error:")]
    assert len(lines) == 1, result.stderr
    assert "Traceback" not in result.output
    return lines[0]


def sha(path: Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


@pytest.fixture
def demo(tmp_path: Path) -> Path:
    """A private copy of the bundled demo catalogue."""
    path = tmp_path / "catalog.csv"
    shutil.copyfile(bundled_catalog(), path)
    return path


# -- 1. header mapping: a truth table of spellings -------------------------------
# (raw header, expected column(s) or None, factor to the column's unit, constants)
# Factors from SI prefixes (BIPM SI Brochure, Table 7): Ω -> mΩ is 1e3, V -> mV
# 1e3, mA -> A 1e-3, µA -> nA 1e3.
HEADERS = [
    # On-resistance: the symbol RDS(on) (IEC 60747-8, JEDEC) or the plain name, with the
    # gate drive as a condition in the header
    ("RDS(on) max at VGS = -2.5 V (Ω)", ("rds_on_mohm@2.5V",), 1000, ()),
    ("RDS(on) @ 4.5V [mΩ]", ("rds_on_mohm@4.5V",), 1, ()),
    ("RDS(ON) (mOhm) VGS=10V", ("rds_on_mohm@10V",), 1, ()),
    ("On-resistance, Vgs = 1.8 V, max (mΩ)", ("rds_on_mohm@1.8V",), 1, ()),
    ("Rds(on) @ 2V5 (Ohm)", ("rds_on_mohm@2.5V",), 1000, ()),
    ("Static drain-source on-state resistance at VGS = -4.5 V, ID = -3 A (Ω)",
     ("rds_on_mohm@4.5V",), 1000, ()),
    # ratings
    ("Drain-source voltage VDS (V)", ("vds_max_V",), 1, ()),
    ("V(BR)DSS", ("vds_max_V",), 1, ()),
    ("Drain-source breakdown voltage (V)", ("vds_max_V",), 1, ()),
    ("Gate-source voltage VGS (V)", ("vgs_max_V",), 1, ()),
    ("VGSS (V)", ("vgs_max_V",), 1, ()),
    ("ID (A)", ("id_max_A",), 1, ()),
    ("Continuous drain current (mA)", ("id_max_A",), 0.001, ()),
    # threshold: the qualifiers choose the column(s)
    ("VGS(th) min and max", ("vgs_th_min_V", "vgs_th_max_V"), 1, ()),
    ("VGS(th) Min (V)", ("vgs_th_min_V",), 1, ()),
    ("Gate-source threshold voltage, max (V)", ("vgs_th_max_V",), 1, ()),
    ("Gate threshold voltage typ (mV)", ("vgs_th_typ_V",), 0.001, ()),
    # leakage, with a temperature condition for the second point
    ("IDSS (µA)", ("idss_uA",), 1, ()),
    ("Zero-gate-voltage drain current (nA)", ("idss_uA",), 0.001, ()),
    ("IDSS at Tj = 85 °C (µA)", ("idss_hot_uA",), 1, (("idss_hot_C", 85.0),)),
    ("Collector cut-off current ICBO at TA = 150 °C (µA)", ("icbo_hot_nA",), 1000,
     (("icbo_hot_C", 150.0),)),
    # bipolar: gain and saturation at a collector current
    ("hFE min @ Ic=1mA", ("hfe_min@1mA",), 1, ()),
    ("DC current gain hFE at IC = 100 µA", ("hfe_min@0.1mA",), 1, ()),
    ("h21E at IC = 0.5 A", ("hfe_min@500mA",), 1, ()),
    ("VCE(sat) @ IC=100mA, IB=10mA (mV)", ("vce_sat_mV@100mA",), 1, ()),
    ("Collector-emitter saturation voltage max (V) IC=500mA", ("vce_sat_mV@500mA",), 1000, ()),
    ("V(BR)CEO (V)", ("vceo_max_V",), 1, ()),
    ("IC (mA)", ("ic_max_A",), 0.001, ()),
    ("VBE(on) typ (V)", ("vbe_on_V",), 1, ()),
    # thermal
    ("RθJA (°C/W)", ("rth_ja_C/W",), 1, ()),
    ("Rth(j-a) K/W", ("rth_ja_C/W",), 1, ()),
    ("Thermal resistance, junction to ambient (K/W)", ("rth_ja_C/W",), 1, ()),
    ("Tj max (°C)", ("tj_max_C",), 1, ()),
    # prices at a quantity break
    ("Unit price at 1k", ("price@1000",), 1, ()),
    ("Price at 10k", ("price@10000",), 1, ()),
    ("Price @ 100 pcs", ("price@100",), 1, ()),
    ("1k+ price", ("price@1000",), 1, ()),
    # text columns in plain English
    ("Package", ("package",), 1, ()),
    ("Case outline", ("package",), 1, ()),
    ("Part number", ("part",), 1, ()),
    ("Manufacturer part number", ("part",), 1, ()),
    ("Type number", ("part",), 1, ()),
    ("Manufacturer", ("maker",), 1, ()),
    ("Channel", ("kind",), 1, ()),
    ("Polarity", ("kind",), 1, ()),
    ("Lifecycle status", ("status",), 1, ()),
    ("Remarks", ("notes",), 1, ()),
    # exact interface names, any case and spacing (columns.canonical)
    ("RDS_ON_MOHM@-2.50V", ("rds_on_mohm@2.5V",), 1, ()),
    ("hfe_min@100uA", ("hfe_min@0.1mA",), 1, ()),
    # left out, each with its reason
    ("PD", None, None, ()),
    ("Total power dissipation (W)", None, None, ()),
    ("Rth(j-c)", None, None, ()),
    ("Gate charge Qg (nC)", None, None, ()),
    ("Rds(on) typ @ 4.5V", None, None, ()),  # typical: the catalogue holds the maximum
    ("RDS(on) (mΩ)", None, None, ()),  # no gate drive named
    ("hFE min", None, None, ()),  # no collector current named
    ("VCE(sat) @ IC=100mA, IB=5mA", None, None, ()),  # Ic/Ib = 20, not 10
    ("hFE typ @ Ic=2mA", None, None, ()),  # typical: the catalogue holds the minimum
    ("ID (V)", None, None, ()),  # a voltage unit on a current
    ("Datasheet revision", None, None, ()),
    ("Colour of the reel", None, None, ()),
    ("Ron2V5 (mΩ)", None, None, ()),  # an in-house spelling: read through a map only (below)
]


def test_truth_table_has_at_least_25_spellings():
    assert len(HEADERS) >= 25
    assert len({h for h, *_ in HEADERS}) == len(HEADERS)


@pytest.mark.parametrize("raw, columns, factor, constants", HEADERS, ids=[h for h, *_ in HEADERS])
def test_header_truth_table(raw, columns, factor, constants):
    m = match_header(1, raw)
    if columns is None:
        assert m.target is None, f"{raw!r} mapped to {m.target}"
        assert m.note, "a header left out says why"
        return
    assert m.target is not None, f"{raw!r} left out: {m.note} (score {m.score})"
    assert m.target.columns == columns
    assert math.isclose(m.target.factor, factor, rel_tol=1e-12)
    assert m.target.constants == constants
    assert m.score >= 80


def test_low_scores_are_listed_with_the_closest_guess():
    m = match_header(3, "Vgs(plateau)")
    assert m.target is None and m.score < 80
    assert m.note.startswith("not a name picker reads") and '--map file: "Vgs(plateau)" =' in m.note


def test_two_headers_for_one_column_the_better_keeps_it():
    found = propose_mapping(["Part Number", "Rds(on) @ 4.5V [mΩ]", "RDS(on) @ VGS=4.5V (Ω)"])
    assert found[1].target.columns == ("rds_on_mohm@4.5V",)
    assert found[2].target is None and "same column as header 2" in found[2].note


# -- 2. cell values -------------------------------------------------------------
PAIR = Target(("vgs_th_min_V", "vgs_th_max_V"), "", "pair")
OHM = Target(("rds_on_mohm@2.5V",), "Ω")
MILLIOHM = Target(("rds_on_mohm@2.5V",))
IDSS = Target(("idss_uA",))
VDS = Target(("vds_max_V",))
HFE = Target(("hfe_min@1mA",), "", "low")
RTH = Target(("rth_ja_C/W",))
PRICE = Target(("price@1000",))

# (cell, target, decimal mark, expected {column: value in the column's unit} or "error")
CELLS = [
    ("0.036", OHM, ".", {"rds_on_mohm@2.5V": 36.0}),  # Ω header: ×1000
    ("64 mΩ", OHM, ".", {"rds_on_mohm@2.5V": 64.0}),  # the cell's own unit wins
    ("45", MILLIOHM, ".", {"rds_on_mohm@2.5V": 45.0}),
    ("30*", MILLIOHM, ".", {"rds_on_mohm@2.5V": 30.0}),  # footnote mark
    ("260¹", MILLIOHM, ".", {"rds_on_mohm@2.5V": 260.0}),
    ("42 (2)", MILLIOHM, ".", {"rds_on_mohm@2.5V": 42.0}),
    ("-0.45 ~ -1.0", PAIR, ".", {"vgs_th_min_V": -0.45, "vgs_th_max_V": -1.0}),
    ("0.4 - 0.95", PAIR, ".", {"vgs_th_min_V": 0.4, "vgs_th_max_V": 0.95}),
    ("400 ~ 900 mV", PAIR, ".", {"vgs_th_min_V": 0.4, "vgs_th_max_V": 0.9}),
    ("0,4 … 0,9", PAIR, ",", {"vgs_th_min_V": 0.4, "vgs_th_max_V": 0.9}),
    ("0.5/1.1", PAIR, ".", {"vgs_th_min_V": 0.5, "vgs_th_max_V": 1.1}),
    ("0.7", PAIR, ".", "error"),  # one value under a min/max header: not guessed
    ("110 ~ 220", HFE, ".", {"hfe_min@1mA": 110.0}),
    ("≤1", IDSS, ".", {"idss_uA": 1.0}),  # a bound in a maximum column
    ("< 100 nA", IDSS, ".", {"idss_uA": 0.1}),
    ("±8", VDS, ".", {"vds_max_V": 8.0}),
    ("1,050", RTH, ".", {"rth_ja_C/W": 1050.0}),  # thousands separator
    ("1.050", RTH, ",", {"rth_ja_C/W": 1050.0}),  # ... in a decimal-comma table
    ("$0.052", PRICE, ".", {"price@1000": 0.052}),
    ("0,061 €", PRICE, ",", {"price@1000": 0.061}),
    ("20 - 30", VDS, ".", "error"),  # a range where one value belongs
    ("≤ 20", VDS, ".", "error"),  # a bound on a rating
    ("12 V", IDSS, ".", "error"),  # wrong dimension
    ("abc", VDS, ".", "error"),
    ("1,5", VDS, ".", "error"),  # a decimal comma in a decimal-point table
]


@pytest.mark.parametrize("text, target, mark, expected", CELLS,
                         ids=[f"{c[0]}->{c[1].name}" for c in CELLS])
def test_cell_truth_table(text, target, mark, expected):
    if expected == "error":
        with pytest.raises(QuantityError):
            cell_values(text, target, mark)
        return
    values, _ = cell_values(text, target, mark)
    assert values.keys() == expected.keys()
    for k, v in expected.items():
        assert math.isclose(values[k], v, rel_tol=1e-12), (k, values[k], v)


@pytest.mark.parametrize("text, family, expected", [
    ("P-Channel", "", "pmos"), ("N-Ch", "", "nmos"), ("N-channel MOSFET", "", "nmos"),
    ("nmos", "", "nmos"), ("PNP", "", "pnp"), ("npn", "", "npn"), ("P", "mos", "pmos"),
    ("N", "", "n"),  # settled later from the row's columns
])
def test_kind_cells(text, family, expected):
    assert read_kind(text, family)[0] == expected


@pytest.mark.parametrize("text", ["Dual N", "N+P complementary", "IGBT"])
def test_kind_cells_not_guessed(text):
    with pytest.raises(ValueError):
        read_kind(text, "")


def test_bare_polarity_settled_by_the_row(tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Polarity,VDS (V),V(BR)CEO (V)\nA1,P,-20,\nB2,N,,45\nC3,N,,\n")
    table = read_table(raw, error=MappingError, what="raw table")
    rows, problems = read_rows(table, propose_mapping(table.header))
    assert [r.values.get("kind") for r in rows[:2]] == ["pmos", "npn"]
    assert rows[0].values["vds_max_V"] == 20.0  # P-type: the magnitude
    assert [(p.line, p.column) for p in problems] == [(4, 2)]


def test_negative_values_on_n_type_parts_are_errors(tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,VDS (V)\nA1,N-channel,-20\n")
    table = read_table(raw, error=MappingError, what="raw table")
    _, problems = read_rows(table, propose_mapping(table.header))
    assert [(p.line, p.column) for p in problems] == [(2, 3)]
    assert "negative" in problems[0].message


# -- 3. import into the demo catalogue, check, round trip ---------------------------
# Expected SI values, worked by hand from the raw tables (SI Brochure Table 7):
# e.g. '0.036' under an Ω header = 0.036 Ω; '64 mΩ' = 0.064 Ω; '-1' µA = 1e-6 A.
SI = {"V": 1.0, "A": 1.0, "mohm": 1e-3, "uA": 1e-6, "nA": 1e-9, "mV": 1e-3, "degC": 1.0,
      "C/W": 1.0, "1": 1.0}
EXPECTED = {
    "CVP2107-T": dict(kind="pmos", maker="Corvane Devices", package="SOT-23", status="active",
                      vds_max_V=20, vgs_max_V=8, id_max_A=3.9, vgs_th_min_V=0.45,
                      vgs_th_max_V=1.0, **{"rds_on_mohm@4.5V": 0.036, "rds_on_mohm@2.5V": 0.047,
                                           "rds_on_mohm@1.8V": 0.064, "rth_ja_C/W": 290,
                                           "price@1000": 0.052, "price@10000": 0.037},
                      idss_uA=1e-6, tj_max_C=150),
    "CVP2215-D": dict(kind="pmos", package="DFN2020", vds_max_V=20, vgs_max_V=12, id_max_A=7.5,
                      vgs_th_min_V=0.5, vgs_th_max_V=1.1,
                      **{"rds_on_mohm@4.5V": 0.017, "rds_on_mohm@2.5V": 0.0225,
                         "rds_on_mohm@1.8V": 0.030, "rth_ja_C/W": 95, "price@1000": 0.105},
                      idss_uA=1e-6),
    "CVN2330-U": dict(kind="nmos", status="nrnd", id_max_A=0.9, vgs_th_max_V=0.9,
                      **{"rds_on_mohm@4.5V": 0.140, "rds_on_mohm@1.8V": 0.260,
                         "rth_ja_C/W": 1050},
                      idss_uA=0.1e-6),
    "CVN3041-T": dict(kind="nmos", status="eol", vds_max_V=30, vgs_th_min_V=1.2,
                      vgs_th_max_V=2.3, **{"rds_on_mohm@4.5V": 0.031, "rds_on_mohm@2.5V": None}),
    "OSB-N45A": dict(kind="npn", maker="Ostrand Semi", vceo_max_V=45, ic_max_A=0.1,
                     **{"hfe_min@1mA": 110, "hfe_min@100mA": 100, "vce_sat_mV@100mA": 0.25,
                        "price@1000": 0.0145, "price@10000": 0.0089},
                     vbe_on_V=0.66, icbo_nA=15e-9, icbo_hot_nA=5e-6, icbo_hot_C=150),
    "OSB-P45A": dict(kind="pnp", vceo_max_V=45, ic_max_A=0.1,
                     **{"vce_sat_mV@100mA": 0.3, "price@1000": 0.015},
                     vbe_on_V=0.66, icbo_nA=15e-9, icbo_hot_nA=4e-6, icbo_hot_C=150),
    "OSB-N30L": dict(kind="npn", package="SOT-89", ic_max_A=2.0, **{"vce_sat_mV@100mA": 0.045},
                     icbo_nA=100e-9, icbo_hot_nA=None, notes="Low saturation, 2 A"),
    "OSB-P30L": dict(kind="pnp", ic_max_A=2.0, **{"hfe_min@100mA": 180, "vce_sat_mV@100mA": 0.06},
                     notes="Pair with OSB-N30L; see note ²"),
}


def _si(column: str, value: float) -> float:
    from picker.catalog import columns as cols

    return value * SI[cols.spec_of(column)[0]]


def test_import_into_the_demo_then_check_and_round_trip(demo):
    before = demo.read_bytes()
    parts_before = len(load_catalog(demo, source="test").df)
    for raw in (MOSFETS, BIPOLARS):
        result = invoke("catalog", "import", str(raw), "--into", str(demo))
        assert result.exit_code == 0, result.output
    check = invoke("catalog", "check", str(demo))
    assert check.exit_code == 0, check.output
    df = load_catalog(demo, source="test").df.set_index("part")
    for part, fields in EXPECTED.items():
        for column, want in fields.items():
            got = df.at[part, column]
            if want is None:
                assert math.isnan(got), (part, column, got)
            elif isinstance(want, str):
                assert got == want, (part, column, got)
            else:
                assert math.isclose(_si(column, got), want, rel_tol=1e-12), (part, column, got)
    after = demo.read_bytes()
    assert after.startswith(before)  # every old row byte-identical: appended only
    assert len(df) == parts_before + 10


def test_appended_rows_read_back_with_a_reference_csv_reader(demo):
    """RFC 4180 §2.6: the notes cell holding a comma is quoted; csv reads it back."""
    invoke("catalog", "import", str(BIPOLARS), "--into", str(demo))
    rows = list(csv.reader(io.StringIO(demo.read_text(encoding="utf-8"))))
    header = rows[0]
    by_part = {r[0]: dict(zip(header, r)) for r in rows[1:]}
    assert by_part["OSB-N30L"]["notes"] == "Low saturation, 2 A"
    assert by_part["OSB-N30L"]["ic_max_A"] == "2"
    assert by_part["OSB-P45A"]["icbo_hot_nA"] == "4000"
    assert all(len(r) == len(header) for r in rows)


# -- 4. merging: identical, conflicts, update, dry run ---------------------------------

def test_identical_rows_skipped_silently_and_counted(demo):
    invoke("catalog", "import", str(MOSFETS), "--into", str(demo))
    digest = sha(demo)
    result = invoke("catalog", "import", str(MOSFETS), "--into", str(demo), "-f", "json")
    assert result.exit_code == 0
    out = json.loads(result.stdout)
    assert out["counts"]["identical_skipped"] == 6 and out["counts"]["appended"] == 0
    assert out["changes"] == [] and out["written"] is False
    assert sha(demo) == digest


def _edited_raw(tmp_path: Path) -> Path:
    raw = tmp_path / "raw-v2.csv"
    text = MOSFETS.read_text(encoding="utf-8")
    text = text.replace("0.036,0.047,64 mΩ", "0.035,0.047,64 mΩ")  # CVP2107-T at 4.5 V
    raw.write_text(text, encoding="utf-8")
    return raw


def test_conflicts_listed_field_by_field_and_kept(demo, tmp_path):
    invoke("catalog", "import", str(MOSFETS), "--into", str(demo))
    digest = sha(demo)
    result = invoke("catalog", "import", str(_edited_raw(tmp_path)), "--into", str(demo),
                    "-f", "json")
    assert result.exit_code == 0, result.output
    out = json.loads(result.stdout)
    assert [(c["part"], c["column"], c["catalogue"], c["imported"], c["action"])
            for c in out["changes"]] == [("CVP2107-T", "rds_on_mohm@4.5V", "36", "35", "kept")]
    assert out["counts"]["conflicts_kept"] == 1 and out["counts"]["identical_skipped"] == 5
    assert sha(demo) == digest


def test_update_rewrites_only_the_changed_cell(demo, tmp_path):
    invoke("catalog", "import", str(MOSFETS), "--into", str(demo))
    old = demo.read_bytes()
    result = invoke("catalog", "import", str(_edited_raw(tmp_path)), "--into", str(demo),
                    "--update")
    assert result.exit_code == 0, result.output
    new = demo.read_bytes()
    old_lines, new_lines = old.splitlines(keepends=True), new.splitlines(keepends=True)
    changed = [i for i, (a, b) in enumerate(zip(old_lines, new_lines)) if a != b]
    assert len(old_lines) == len(new_lines) and len(changed) == 1
    assert new_lines[changed[0]] == old_lines[changed[0]].replace(b",36,47,", b",35,47,")
    assert (demo.parent / "catalog.csv.bak").read_bytes() == old
    df = load_catalog(demo, source="test").df.set_index("part")
    assert df.at["CVP2107-T", "rds_on_mohm@4.5V"] == 35.0


def test_fill_blanks_writes_only_where_the_catalogue_is_blank(demo, tmp_path):
    """Demo HLP6125-T has no rds_on_mohm@10V; the raw table gives one and a
    differing vds: the blank is filled, the vds kept."""
    raw = tmp_path / "raw.csv"
    raw.write_text("Part Number,Type,VDS (V),RDS(on) @ VGS=10V (mΩ)\nHLP6125-T,P-channel,-30,25\n",
                   encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(demo), "--fill-blanks",
                    "-f", "json")
    assert result.exit_code == 0, result.output
    actions = {c["column"]: c["action"] for c in json.loads(result.stdout)["changes"]}
    assert actions == {"vds_max_V": "kept", "rds_on_mohm@10V": "filled"}
    df = load_catalog(demo, source="test").df.set_index("part")
    assert df.at["HLP6125-T", "rds_on_mohm@10V"] == 25.0 and df.at["HLP6125-T", "vds_max_V"] == 20


def test_dry_run_shows_and_writes_nothing(demo):
    digest = sha(demo)
    result = invoke("catalog", "import", str(MOSFETS), "--into", str(demo), "--dry-run")
    assert result.exit_code == 0
    assert "CVP2107-T" in result.stdout and "dry run: nothing written" in result.stdout
    assert sha(demo) == digest and not (demo.parent / "catalog.csv.bak").exists()


def test_a_repeated_part_with_other_values_in_the_raw_table_is_an_error(demo, tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,VDS (V)\nZZ-1,nmos,20\nZZ-1,nmos,30\n", encoding="utf-8")
    digest = sha(demo)
    result = invoke("catalog", "import", str(raw), "--into", str(demo))
    assert result.exit_code == 2
    assert f"{raw}:3:1:" in result.stderr and "repeats line 2" in result.stderr
    assert sha(demo) == digest


# -- 5. bad input: one line with file:line:column, exit 2, nothing written ---------------

def test_a_cell_that_does_not_parse_is_reported_not_guessed(demo, tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,VDS (V),ID (A)\nZZ-1,nmos,20,3\nZZ-2,nmos,twenty,3\n",
                   encoding="utf-8")
    digest = sha(demo)
    result = invoke("catalog", "import", str(raw), "--into", str(demo))
    assert result.exit_code == 2
    line = error_line(result)
    assert line.startswith(f"Error: {raw}:3:3: 'twenty' is not a number") and "--skip-bad-rows" in line
    assert sha(demo) == digest
    result = invoke("catalog", "import", str(raw), "--into", str(demo), "--skip-bad-rows",
                    "-f", "json")
    assert result.exit_code == 0, result.output
    out = json.loads(result.stdout)
    assert [a["part"] for a in out["appended"]] == ["ZZ-1"]
    assert out["held_back_lines"] == [3] and out["counts"]["rows_with_errors"] == 1
    assert out["problems"][0]["line"] == 3 and out["problems"][0]["position"] == 3


def test_an_import_that_would_fail_the_catalogue_check_is_refused(demo, tmp_path):
    """A threshold minimum (2.6 V) above its maximum (2.3 V): the loader's rule;
    the merged rows are checked before anything is written."""
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,Vgs(th) min,Vgs(th) max\nZZ-9,nmos,2.6,2.3\n", encoding="utf-8")
    digest = sha(demo)
    result = invoke("catalog", "import", str(raw), "--into", str(demo))
    assert result.exit_code == 2
    assert error_line(result).startswith(f"Error: {raw}:2:3: the catalogue check would fail")
    assert sha(demo) == digest


@pytest.mark.parametrize("args, fragment", [
    (["catalog", "import", "missing.csv", "--into", "{demo}"], "missing.csv: no such raw table"),
    (["catalog", "import", str(MOSFETS), "--into", "{tmp}/nope.csv"], "nope.csv: no such catalogue"),
    (["catalog", "import", str(MOSFETS)], "--into"),
    (["catalog", "import", str(MOSFETS), "--into", "{demo}", "--kind", "igbt"], "--kind igbt"),
])
def test_missing_files_and_usage(demo, tmp_path, args, fragment):
    args = [a.format(demo=demo, tmp=tmp_path) for a in args]
    result = invoke(*args)
    assert result.exit_code == 2 and fragment in error_line(result)


# -- 6. the mapping file -----------------------------------------------------------------

def test_map_overrides_and_save_map_round_trips(demo, tmp_path):
    """A header with no gate drive is left out (listed); the map names its column."""
    raw = tmp_path / "raw.csv"
    raw.write_text("Device,Maker,Type,RDS(on) (mΩ),Ptot (W)\nZZ-3,Tarnwick,N-channel,40,0.3\n",
                   encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(demo), "--dry-run", "-f", "json")
    mapping = {m["header"]: m["column"] for m in json.loads(result.stdout)["mapping"]}
    assert mapping["RDS(on) (mΩ)"] is None  # no gate drive named: left out, listed
    fix = tmp_path / "fix.toml"
    fix.write_text('[columns]\n"RDS(on) (mΩ)" = "rds_on_mohm@4.5V"\n', encoding="utf-8")
    saved = tmp_path / "source.toml"
    result = invoke("catalog", "import", str(raw), "--into", str(demo), "--map", str(fix),
                    "--save-map", str(saved))
    assert result.exit_code == 0, result.output
    df = load_catalog(demo, source="test").df.set_index("part")
    assert df.at["ZZ-3", "rds_on_mohm@4.5V"] == 40.0 and df.at["ZZ-3", "maker"] == "Tarnwick"
    again = load_mapping(str(saved))
    assert again["RDS(on) (mΩ)"].columns == ("rds_on_mohm@4.5V",)
    assert again["Ptot (W)"] is None and again["Device"].columns == ("part",)


def test_an_in_house_header_is_read_only_through_a_map(demo, tmp_path):
    """'Ron2V5' and 'Leak' are one team's own shorthand, not a name of the
    standards: the vocabulary leaves them out, the message says how to map
    them, and with a map they are read (nA -> µA ×0.001, SI Brochure Table 7)."""
    raw = tmp_path / "raw.csv"
    raw.write_text("Part number,Channel,Ron2V5 (mΩ),Leak (nA)\nZZ-4,P-channel,52,150\n",
                   encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(demo), "--dry-run", "-f", "json")
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout)
    left = {m["header"]: m["note"] for m in doc["mapping"] if m["column"] is None}
    assert set(left) == {"Ron2V5 (mΩ)", "Leak (nA)"}
    assert '--map file: "Ron2V5 (mΩ)" = "<column>"' in left["Ron2V5 (mΩ)"]
    assert any(n.startswith("2 header(s) not read: 'Ron2V5 (mΩ)', 'Leak (nA)'") and "--map" in n
               for n in doc["notes"])
    fix = tmp_path / "team.toml"
    fix.write_text('[columns]\n"Ron2V5 (mΩ)" = "rds_on_mohm@2.5V"\n'
                   '"Leak (nA)" = { column = "idss_uA", unit = "nA" }\n', encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(demo), "--map", str(fix))
    assert result.exit_code == 0, result.output
    row = load_catalog(demo, source="test").df.set_index("part").loc["ZZ-4"]
    assert row["rds_on_mohm@2.5V"] == 52.0 and math.isclose(row["idss_uA"], 0.15, rel_tol=1e-12)


def test_the_help_shows_a_mapping_file_that_reads(tmp_path):
    """The example in 'picker catalog import --help' is a mapping file as written."""
    result = invoke("catalog", "import", "--help")
    assert result.exit_code == 0 and "--map" in result.stdout and "--save-map" in result.stdout
    lines = result.stdout.splitlines()
    first = next(i for i, ln in enumerate(lines) if ln.strip() == "[columns]")
    block = []
    for ln in lines[first:]:
        if not ln.strip():
            break
        block.append(ln.strip())
    path = tmp_path / "example.toml"
    path.write_text("\n".join(block) + "\n", encoding="utf-8")
    mapping = load_mapping(str(path))
    assert {k: t and t.name for k, t in mapping.items()} == {
        "Ron 2V5 (mΩ)": "rds_on_mohm@2.5V", "Vth window": "vgs_th_min_V..vgs_th_max_V",
        "Leak (nA)": "idss_uA", "Reel colour": None}
    assert mapping["Leak (nA)"].factor == pytest.approx(0.001)  # nA -> µA, SI Brochure Table 7


def test_saved_map_keeps_units_and_pairs(tmp_path):
    matches = propose_mapping(["RDS(on) max @ VGS=-2.5V (Ω)", "VGS(th) min and max", 'Odd "quoted" \\ one'])
    path = tmp_path / "m.toml"
    path.write_text(mapping_toml(matches, "raw.csv"), encoding="utf-8")
    again = load_mapping(str(path))
    assert again["RDS(on) max @ VGS=-2.5V (Ω)"] == matches[0].target
    assert again["VGS(th) min and max"] == matches[1].target
    assert again['Odd "quoted" \\ one'] is None


@pytest.mark.parametrize("text, line, fragment", [
    ('[columns]\n"A" = "part"\n"B" = "rds_on_ohm@4.5V"\n', 3, "unknown catalogue column"),
    ('[columns]\n"A" = "vds_max_V..id_max_A"\n', 2, "not a min..max pair"),
    ('[columns]\n"A" = { column = "vds_max_V", unit = "mA" }\n', 2, "does not fit"),
    ('[columns]\n"A" = 3\n', 2, "write a column name"),
    ('[columns]\n"A" = "part\n', 2, "not valid TOML"),
    ('[headers]\n"A" = "part"\n', None, "[columns] table"),
])
def test_bad_mapping_files(tmp_path, demo, text, line, fragment):
    path = tmp_path / "m.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(MappingError) as err:
        load_mapping(str(path))
    assert err.value.line == line and fragment in err.value.message
    result = invoke("catalog", "import", str(MOSFETS), "--into", str(demo), "--map", str(path))
    assert result.exit_code == 2
    where = f"{path}:{line}:" if line else f"{path}:"
    assert error_line(result).startswith(f"Error: {where}")


# -- 7. new columns ----------------------------------------------------------------------

def test_new_columns_refused_unless_asked_then_appended_to_every_row(demo, tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,VDS (V),RDS(on) @ VGS=-1.2V (mΩ)\nZZ-5,P-channel,-12,90\n",
                   encoding="utf-8")
    digest = sha(demo)
    result = invoke("catalog", "import", str(raw), "--into", str(demo))
    assert result.exit_code == 2 and "rds_on_mohm@1.2V is not in the catalogue" in result.stderr
    assert "--add-columns" in result.stderr and sha(demo) == digest
    old = demo.read_bytes().splitlines(keepends=True)
    result = invoke("catalog", "import", str(raw), "--into", str(demo), "--add-columns")
    assert result.exit_code == 0, result.output
    new = demo.read_bytes().splitlines(keepends=True)
    assert new[0] == old[0].rstrip(b"\n") + b",rds_on_mohm@1.2V\n"
    assert all(n == o.rstrip(b"\n") + b",\n" for o, n in zip(old[1:], new[1:len(old)]))
    assert invoke("catalog", "check", str(demo)).exit_code == 0
    df = load_catalog(demo, source="test").df.set_index("part")
    assert df.at["ZZ-5", "rds_on_mohm@1.2V"] == 90.0


# -- 8. the catalogue's own dialect is kept -------------------------------------------------

def test_semicolon_decimal_comma_crlf_bom_catalogue(tmp_path):
    cat = tmp_path / "cat.csv"
    body = ("part;kind;maker;vds_max_V;rds_on_mohm@4.5V;price@1000;notes\r\n"
            "AA-1;nmos;Tarnwick;20;30,5;0,041;first\r\n")
    cat.write_bytes(b"\xef\xbb\xbf" + body.encode("utf-8"))
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,VDS (V),RDS(on) @ 4.5V [Ω],Unit price at 1k,Remarks\n"
                   "BB-2,N-channel,30,0.0425,0.052,\"one; two\"\n", encoding="utf-8")
    before = cat.read_bytes()
    result = invoke("catalog", "import", str(raw), "--into", str(cat))
    assert result.exit_code == 0, result.output
    after = cat.read_bytes()
    assert after == before + "BB-2;nmos;;30;42,5;0,052;\"one; two\"\r\n".encode("utf-8")
    df = load_catalog(cat, source="test").df.set_index("part")
    assert df.at["BB-2", "rds_on_mohm@4.5V"] == 42.5 and df.at["BB-2", "notes"] == "one; two"


def test_windows_1252_catalogue_stays_windows_1252(tmp_path):
    cat = tmp_path / "cat.csv"
    cat.write_bytes("part,kind,maker,notes\nAA-1,npn,Tarnwick,µ-power\n".encode("cp1252"))
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,Remarks\nBB-2,NPN,Ic ≥ 1 µA\n", encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(cat))
    assert result.exit_code == 2 and "cannot be written" in result.stderr  # '≥' is not in cp1252
    raw.write_text("Part,Type,Remarks\nBB-2,NPN,1 µA class\n", encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(cat))
    assert result.exit_code == 0, result.output
    assert cat.read_bytes().endswith("BB-2,npn,,1 µA class\n".encode("cp1252"))


def test_file_without_final_line_break(tmp_path):
    cat = tmp_path / "cat.csv"
    cat.write_bytes(b"part,kind\nAA-1,npn")
    result = invoke("catalog", "add", "--part", "BB-2", "--kind", "pnp", "--into", str(cat))
    assert result.exit_code == 0, result.output
    assert cat.read_bytes() == b"part,kind\nAA-1,npn\nBB-2,pnp\n"


# -- 9. writing safely --------------------------------------------------------------------

CRASH = textwrap.dedent("""
    import os, sys, time
    real_replace = os.replace

    def stalled(src, dst):
        if str(dst).endswith(".bak"):
            return real_replace(src, dst)   # the backup goes through
        print("ready", flush=True)          # the new catalogue is in its temporary file
        time.sleep(120)

    os.replace = stalled
    import picker.safe_io  # noqa: F401  (calls os.replace through the os module)
    import picker.cli.import_cmd  # noqa: F401
    from picker.cli import main
    sys.argv = ["picker", *sys.argv[1:]]
    main()
""")


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs POSIX signals")
def test_a_crash_before_the_rename_leaves_the_catalogue_byte_identical(demo):
    before = demo.read_bytes()
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen([sys.executable, "-c", CRASH, "catalog", "import", str(MOSFETS),
                             "--into", str(demo), "-f", "json"], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=env)
    try:
        line = proc.stdout.readline()
        assert line.strip() == "ready", (line, proc.stderr.read() if proc.poll() else "")
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert demo.read_bytes() == before
    temps = stale = list(demo.parent.glob(".catalog.csv.*.tmp"))
    assert len(temps) == 1 and temps[0].read_bytes().startswith(before)  # the whole new file
    assert sorted(p.name for p in demo.parent.iterdir() if not p.name.startswith(".")) == \
        ["catalog.csv", "catalog.csv.bak"]
    # The next write removes the temporary file once it is clearly stale.
    assert stale_temporaries(str(demo)) == []  # too fresh: it may be another writer's
    old = time.time() - 3600
    os.utime(stale[0], (old, old))
    result = invoke("catalog", "import", str(MOSFETS), "--into", str(demo))
    assert result.exit_code == 0, result.output
    assert "removed a temporary file" in result.stdout and not stale[0].exists()


def test_refused_when_the_catalogue_changed_on_disk(demo):
    table = read_table(MOSFETS, error=MappingError, what="raw table")
    rows, _ = read_rows(table, propose_mapping(table.header))
    plan = plan_merge(str(demo), rows, raw_path=str(MOSFETS))
    with demo.open("ab") as fh:
        fh.write(b"ZZ-7,Someone,nmos,SOT-23,active,no" + b"," * 38 + b"\n")
    edited = demo.read_bytes()
    with pytest.raises(WriteRefused, match="changed on disk"):
        write_plan(plan)
    assert demo.read_bytes() == edited


# -- 10. adding one part by hand --------------------------------------------------------------

def test_add_one_part_through_the_same_path(demo):
    result = invoke("catalog", "add", "--part", "ZZ-2107", "--kind", "P-channel", "--maker",
                    "Tarnwick", "--package", "SOT-23", "--vds", "-20V", "--vgs", "±8",
                    "--id", "-3.2A", "--vth", "-0.45..-0.95V", "--rds-on", "45mohm@2.5V",
                    "--rds-on", "0.034 Ω@-4.5V", "--idss", "1uA", "--rth", "300", "--tj-max", "150",
                    "--price", "0.05@1k", "--set", "idss_hot_uA=10", "--set", "idss_hot_C=85",
                    "--into", str(demo))
    assert result.exit_code == 0, result.output
    assert invoke("catalog", "check", str(demo)).exit_code == 0
    row = load_catalog(demo, source="test").df.set_index("part").loc["ZZ-2107"]
    # worked by hand: 45 mΩ; 0.034 Ω = 34 mΩ; 1 µA; magnitudes of the P-channel values
    assert (row["rds_on_mohm@2.5V"], row["rds_on_mohm@4.5V"], row["idss_uA"]) == (45, 34, 1)
    assert (row["vds_max_V"], row["id_max_A"], row["vgs_th_min_V"], row["vgs_th_max_V"]) == \
        (20, 3.2, 0.45, 0.95)
    assert (row["price@1000"], row["idss_hot_uA"], row["idss_hot_C"]) == (0.05, 10, 85)
    again = invoke("catalog", "add", "--part", "zz-2107", "--kind", "pmos", "--vds", "30V",
                   "--into", str(demo), "-f", "json")
    assert again.exit_code == 0
    change = json.loads(again.stdout)["changes"]
    assert [(c["column"], c["catalogue"], c["imported"], c["action"]) for c in change] == \
        [("vds_max_V", "20", "30", "kept")]


@pytest.mark.parametrize("args, fragment", [
    (["--vds", "30furlongs"], "--vds: '30furlongs': unknown unit"),
    (["--rds-on", "45mohm"], "--rds-on '45mohm': write VALUE@CONDITION"),
    (["--rds-on", "45@0V"], "--rds-on"),
    (["--set", "rdson=3"], "unknown catalogue column 'rdson'"),
    (["--vds", "20", "--set", "vds_max_V=30"], "given twice"),
    (["--vth", "0.9"], "min ~ max range"),
])
def test_add_rejects_bad_values(demo, args, fragment):
    digest = sha(demo)
    result = invoke("catalog", "add", "--part", "ZZ-1", "--kind", "nmos", *args,
                    "--into", str(demo))
    assert result.exit_code == 2 and fragment in result.stderr, result.stderr
    assert sha(demo) == digest


def test_add_needs_a_catalogue_to_write():
    result = invoke("catalog", "add", "--part", "ZZ-1", "--kind", "nmos")
    assert result.exit_code == 2 and "--into" in result.stderr


# -- 11. output formats and help ------------------------------------------------------------

def test_csv_output_is_one_table(demo):
    result = invoke("catalog", "import", str(MOSFETS), "--into", str(demo), "--dry-run", "-f", "csv")
    assert result.exit_code == 0
    rows = list(csv.DictReader(io.StringIO(result.stdout)))
    sections = [r["section"] for r in rows]
    assert sections.count("mapping") == 19 and sections.count("append") == 6
    assert sections.count("counts") == 1
    pd = next(r for r in rows if r["section"] == "mapping" and r["header"] == "Ptot (W)")
    assert pd["column"] == "" and "power dissipation" in pd["note"]


def test_csv_output_exactly(tmp_path):
    """One part differs (kept), one is new; Pd is left out with its reason.
    0.045 Ω = 45 mΩ (SI Brochure Table 7); the P-channel -20 V is a magnitude."""
    cat = tmp_path / "cat.csv"
    cat.write_text("part,kind,vds_max_V,rds_on_mohm@4.5V\nAA-1,nmos,20,30\n", encoding="utf-8")
    raw = tmp_path / "raw.csv"
    raw.write_text("Part number,Channel,VDS (V),RDS(on) at VGS = 4.5 V (Ω),Ptot (W)\n"
                   "AA-1,N-channel,25,0.030,0.3\nBB-2,P-channel,-20,0.045,0.3\n", encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(cat), "-f", "csv")
    assert result.exit_code == 0, result.output
    pd_note = ("power dissipation has no catalogue column (picker uses rth_ja_C/W; take it "
               "from the datasheet rather than from Pd, which depends on the test board)")
    assert result.stdout == (
        "section,position,header,column,conversion,score,how,note,part,catalogue,imported,"
        "action,line,raw_line,kind,maker,appended,identical_skipped,conflicts_kept,updated,"
        "filled,rows_with_errors,new_columns\n"
        "mapping,1,Part number,part,,100,vocabulary,,,,,,,,,,,,,,,,\n"
        "mapping,2,Channel,kind,,100,vocabulary,,,,,,,,,,,,,,,,\n"
        "mapping,3,VDS (V),vds_max_V,,100,vocabulary,,,,,,,,,,,,,,,,\n"
        "mapping,4,RDS(on) at VGS = 4.5 V (Ω),rds_on_mohm@4.5V,Ω -> mΩ ×1000,100,vocabulary,"
        ",,,,,,,,,,,,,,,\n"
        f'mapping,5,Ptot (W),,,100,vocabulary,"{pd_note}",,,,,,,,,,,,,,,\n'
        "change,,,vds_max_V,,,,,AA-1,20,25,kept,2,2,,,,,,,,,\n"
        "append,,,,,,,,BB-2,,,,3,3,pmos,,,,,,,,\n"
        "counts,,,,,,,,,,,,,,,,1,0,1,0,0,0,0\n")
    assert cat.read_text(encoding="utf-8").endswith("AA-1,nmos,20,30\nBB-2,pmos,20,45\n")


def test_table_output_shows_scores_and_left_out_headers(demo):
    result = invoke("catalog", "import", str(MOSFETS), "--into", str(demo), "--dry-run")
    # 'Datasheet revision' scores 69.2 against the vocabulary: shown, left out, --map named
    assert "Header mapping" in result.stdout and "69.2" in result.stdout
    assert "1 header(s) not read: 'Datasheet revision'" in result.stdout
    assert "Ω -> mΩ ×1000" in result.stdout and "power dissipation has no catalogue column" in result.stdout


@pytest.mark.parametrize("command", ["import", "add"])
def test_commands_have_help(command):
    result = invoke("catalog", command, "--help")
    assert result.exit_code == 0 and len(result.stdout) > 200


# -- 12. awkward files ----------------------------------------------------------------------

def test_multi_line_cells_in_the_catalogue_survive_update_and_new_columns(tmp_path):
    """A quoted notes cell spanning two lines (RFC 4180 §2.6): the record ends
    after it, so the update and the new column's field land in the right place."""
    cat = tmp_path / "cat.csv"
    cat.write_bytes(b'part,kind,vds_max_V,notes\nAA-1,nmos,20,"two\nlines, quoted"\n'
                    b'BB-2,nmos,30,plain\n')
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,VDS (V),ID (A)\nAA-1,nmos,25,1.5\nBB-2,nmos,30,\n",
                   encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(cat), "--update", "--add-columns")
    assert result.exit_code == 0, result.output
    assert cat.read_bytes() == (b'part,kind,vds_max_V,notes,id_max_A\n'
                                b'AA-1,nmos,25,"two\nlines, quoted",1.5\nBB-2,nmos,30,plain,\n')
    df = load_catalog(cat, source="test").df.set_index("part")
    assert df.at["AA-1", "notes"] == "two\nlines, quoted" and df.at["AA-1", "id_max_A"] == 1.5


def test_a_ragged_raw_row_is_not_guessed(demo, tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text("Part,Type,VDS (V)\nZZ-1,nmos,20\nZZ-2,nmos\n", encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(demo))
    assert result.exit_code == 2
    assert error_line(result).startswith(f"Error: {raw}:3:3: this row has 2 fields")


def test_a_decimal_comma_in_a_decimal_point_table_is_an_error(demo, tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text('Part,Type,VDS (V),RDS(on) @ 4.5V (Ω)\nZZ-1,nmos,20,"0,036"\n'
                   'ZZ-2,nmos,20,0.040\nZZ-3,nmos,20,0.050\n', encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(demo))
    assert result.exit_code == 2 and f"{raw}:2:4:" in error_line(result)


def test_existing_catalogue_errors_do_not_block_an_import(tmp_path):
    cat = tmp_path / "cat.csv"
    cat.write_text("part,kind,vds_max_V\nAA-1,igbt,20\n", encoding="utf-8")
    result = invoke("catalog", "add", "--part", "BB-2", "--kind", "nmos", "--vds", "30",
                    "--into", str(cat))
    assert result.exit_code == 0, result.output
    again = invoke("catalog", "add", "--part", "AA-1", "--kind", "nmos", "--into", str(cat))
    assert again.exit_code == 2 and "which has errors" in error_line(again)


def test_blank_and_empty_field_lines_keep_their_place(tmp_path):
    """Blank lines and separator-only lines are skipped by the reader; the
    update still lands on the right row and the rest stays byte for byte."""
    cat = tmp_path / "cat.csv"
    cat.write_bytes(b"part,kind,vds_max_V\r\n\r\nAA-1,nmos,20\r\n,,\r\nBB-2,nmos,30\r\n")
    result = invoke("catalog", "add", "--part", "BB-2", "--kind", "nmos", "--vds", "40",
                    "--update", "--into", str(cat))
    assert result.exit_code == 0, result.output
    assert cat.read_bytes() == b"part,kind,vds_max_V\r\n\r\nAA-1,nmos,20\r\n,,\r\nBB-2,nmos,40\r\n"
