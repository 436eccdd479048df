"""Formula injection: no CSV picker writes hands a spreadsheet a formula.

The rule (OWASP, "CSV Injection"): a cell a spreadsheet would evaluate
starts with '=', '+', '-', '@', a tab or a carriage return; such a text cell
is written with a leading apostrophe, which spreadsheets read as "text".
Numbers in numeric columns are written as numbers, negative ones included:
-40 in a temperature column is a number, not a formula. One test per case
and per writer:

- the one renderer of every `--format csv` (catalog show and check, choose,
  lineup, review, catalog import's report): every text cell and header;
- `review --write-bom`: the cells picker writes or changes (part, maker,
  price, the picker_change note) are made inert; every cell of the user's
  own is kept byte for byte, even one starting with '=' (it is the user's
  data, and "never lose a byte" wins: the revised copy is no more dangerous
  than the BOM the user gave us);
- `catalog import` / `catalog add`: a part, maker, package or notes cell
  starting with '=', '+', '@', a tab or a CR is refused with its location (a
  formula that leaked into a supplier's export is not part data); one
  starting with '-' ("-40 °C rated") is written with the apostrophe, and the
  catalogue loader drops it again, so the value reads back exactly;
- `--save-map` writes TOML, not CSV: every header is a quoted TOML string,
  read back exactly.
"""

from __future__ import annotations

import csv
import io

import pytest

from conftest import EXAMPLES, TINY_CSV, invoke
from picker.review.bom import read_bom
from picker.review.revised import Change, revised_bom
from picker.catalog.load import load_catalog
from picker.cells import FORMULA_START, neutralise, restore
from picker.present.render import Column, write_csv

STARTS = ["=", "+", "-", "@", "\t", "\r"]
IDS = ["equals", "plus", "minus", "at", "tab", "carriage-return"]


def _rows(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text, newline="")))


def _inert(cell: str) -> bool:
    return not cell.startswith(tuple(FORMULA_START))


def test_the_rule_covers_the_owasp_characters():
    assert set(FORMULA_START) == set(STARTS)


# -- the renderer -------------------------------------------------------------------------------

@pytest.mark.parametrize("start", STARTS, ids=IDS)
def test_renderer_text_cells_and_headers(start):
    out = io.StringIO()
    columns = [Column(f"{start}head"), Column("note"), Column("t_C", numeric=True)]
    write_csv(columns, [{f"{start}head": f"{start}cmd|' /C calc'!A0", "note": [f"{start}a", "b"],
                         "t_C": -40.0}], out)
    header, row = _rows(out.getvalue())
    assert header[0] == "'" + f"{start}head" and row[0].startswith("'" + start)
    assert row[1] == "'" + f"{start}a; b"
    assert row[2] == "-40"  # a negative number in a numeric column stays a number


@pytest.mark.parametrize("value, text", [(-40.0, "-40"), (-0.5, "-0.5"), (-1e-9, "-1e-09"),
                                         (-3, "-3"), (0.0, "0")])
def test_renderer_negative_numbers_in_numeric_columns(value, text):
    out = io.StringIO()
    write_csv([Column("x", numeric=True)], [{"x": value}], out)
    assert _rows(out.getvalue())[1] == [text]


def test_renderer_a_number_in_a_text_column_is_text():
    """'-5V' or a bare -5 in a text column is neutralised: only numeric
    columns carry numbers."""
    out = io.StringIO()
    write_csv([Column("note")], [{"note": "-5V"}, {"note": -5}], out)
    assert _rows(out.getvalue())[1:] == [["'-5V"], ["'-5"]]


@pytest.mark.parametrize("text", ["=1+1", "'=1+1", "''-x", "'", "plain", "", "-", "@@", "'\t"])
def test_neutralise_and_restore_are_inverse(text):
    assert restore(neutralise(text)) == text and _inert(neutralise(text))


# -- the commands' CSV output --------------------------------------------------------------------

def _catalogue_with(start: str, tmp_path):
    """The tiny catalogue with text cells starting with `start` (quoted, so a
    tab or CR survive as far as the loader's stripping lets them) and two
    numeric columns holding negative numbers."""
    lines = TINY_CSV.splitlines()
    header = lines[0] + ",idss_hot_C,rds_tc_pct/C," + f'"{start}extra"'
    body = [lines[1].replace("Testa Parts", f'"{start}Testa Parts"').replace(
        "SOT-23", f'"{start}SOT-23"') + f',-40,-0.3,"{start}x"']
    body += [ln + ",,," for ln in lines[2:]]
    path = tmp_path / "cat.csv"
    path.write_text("\n".join([header] + body) + "\n", encoding="utf-8")
    return path


@pytest.mark.parametrize("start", STARTS, ids=IDS)
def test_catalog_show_csv(start, tmp_path):
    cat = _catalogue_with(start, tmp_path)
    result = invoke("catalog", "show", "-c", str(cat), "--format", "csv")
    assert result.exit_code == 0, result.output
    rows = _rows(result.stdout)
    header = rows[0]
    numeric = {header.index("idss_hot_C"), header.index("rds_tc_pct/C")}
    for row in rows:
        for i, cell in enumerate(row):
            assert _inert(cell) or i in numeric, (header[i], cell)
    first = dict(zip(header, rows[1]))
    assert (first["idss_hot_C"], first["rds_tc_pct/C"]) == ("-40", "-0.3")
    assert first["maker"].startswith("'") or start in "\t\r"  # stripped on loading
    assert "'" + f"{start}extra".strip() in header or start in "\t\r"


@pytest.mark.parametrize("start", STARTS, ids=IDS)
def test_catalog_check_csv(start, tmp_path):
    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV.replace("TQP-100,", f'TQP-100,"{start}maker x",', 1)
                   .replace("part,maker", "part,odd,maker", 1)
                   .replace("\nTQP-200,", "\nTQP-200,,", 1).replace("\nTQN-300,", "\nTQN-300,,", 1)
                   .replace("\nTQB-400,", f"\nTQB-400,{start}=2,", 1), encoding="utf-8")
    cat.write_text(cat.read_text(encoding="utf-8").replace(",pmos,", ",=HYPERLINK(1),", 1),
                   encoding="utf-8")
    result = invoke("catalog", "check", str(cat), "--format", "csv")
    rows = _rows(result.stdout)
    assert len(rows) > 1
    assert all(_inert(cell) for row in rows for cell in row)


@pytest.mark.parametrize("start", STARTS, ids=IDS)
def test_choose_and_lineup_csv(start, tmp_path):
    cat = _catalogue_with(start, tmp_path)
    for argv in (["choose", "--use", "high-side-pmos", "--load", "1A", "--max-drop", "80mV",
                  "--role", f"{start}role"],
                 ["lineup", "TQP-100", "TQP-200"]):
        result = invoke(*argv, "-c", str(cat), "--format", "csv")
        assert result.exit_code in (0, 1), result.output
        rows = _rows(result.stdout)
        header = rows[0]
        for row in rows[1:]:
            for name, cell in zip(header, row):
                if not _inert(cell):  # only a number may start with '-' or '+'
                    float(cell)


@pytest.mark.parametrize("start", STARTS, ids=IDS)
def test_review_csv(start, tmp_path):
    bom = tmp_path / "bom.csv"
    bom.write_text(f'Ref,Qty,MPN,Manufacturer,Description\nQ1,1,TQP-100,"{start}maker",'
                   f'"{start}cmd|x"\nQ2,1,"{start}TQP-200",Testa,"P-CH"\n', encoding="utf-8")
    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV, encoding="utf-8")
    result = invoke("review", str(bom), "-c", str(cat), "--format", "csv")
    assert result.exit_code in (0, 1), result.output
    rows = _rows(result.stdout)
    header = rows[0]
    for row in rows[1:]:
        for name, cell in zip(header, row):
            if not _inert(cell):
                float(cell)


@pytest.mark.parametrize("start", STARTS, ids=IDS)
def test_import_report_csv(start, tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text(f'Part Number,Polarity,"{start}Shelf"\nNEW-1,NPN,"{start}1"\n', encoding="utf-8")
    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV, encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(cat), "--dry-run",
                    "--format", "csv")
    rows = _rows(result.stdout)
    assert len(rows) > 1
    header = rows[0]
    for row in rows[1:]:
        for name, cell in zip(header, row):
            if not _inert(cell):
                float(cell)


# -- the revised BOM -----------------------------------------------------------------------------

@pytest.mark.parametrize("start", STARTS, ids=IDS)
def test_revised_bom_cells_picker_writes_are_inert(start, tmp_path):
    path = tmp_path / "bom.csv"
    path.write_bytes(b"Ref,Qty,MPN,Manufacturer,Price\nQ1,1,OLD-1,Old Maker,0.1\n")
    bom = read_bom(path)
    data = revised_bom(bom, {0: Change(f"{start}NEW", f"{start}Maker", 0.05, f"{start}why")})
    rows = _rows(data.decode())
    assert rows[0][-1] == "picker_change"
    part, maker, price, note = rows[1][2], rows[1][3], rows[1][4], rows[1][5]
    assert part.startswith("'") and maker.startswith("'") and note.startswith("'")
    assert price == "0.05"


@pytest.mark.parametrize("start", STARTS, ids=IDS)
def test_revised_bom_keeps_the_users_own_cells_byte_for_byte(start, tmp_path):
    """The user's cells are the user's data: kept exactly, even one a
    spreadsheet would run (picker never adds one; see the module docstring)."""
    line = f'Q2,1,KEEP-2,"{start}HYPERLINK(""x"")",0.2\r\n'
    original = ("Ref,Qty,MPN,Manufacturer,Price\r\nQ1,1,OLD-1,Old Maker,0.1\r\n" + line).encode()
    path = tmp_path / "bom.csv"
    path.write_bytes(original)
    data = revised_bom(read_bom(path), {0: Change("NEW-1", "New Maker", 0.05, "cheaper")})
    assert line[:-2].encode() + b",\r\n" in data  # the user's bytes, one field added


def test_write_bom_command_end_to_end(tmp_path):
    """The real command: the revised BOM read back as CSV holds no live
    formula among the cells picker wrote."""
    out = tmp_path / "revised.csv"
    result = invoke("review", str(EXAMPLES / "kettlewick-bom.csv"), "-c",
                    str(EXAMPLES.parent / "demo.csv"), "--write-bom", str(out))
    assert result.exit_code in (0, 1), result.output
    rows = _rows(out.read_text(encoding="utf-8"))
    change = rows[0].index("picker_change")
    assert any(row[change] for row in rows[1:])
    assert all(_inert(row[change]) for row in rows[1:] if len(row) > change)


# -- the catalogue import ------------------------------------------------------------------------

@pytest.mark.parametrize("start", ["=", "+", "@", "\t", "\r"], ids=IDS[:2] + IDS[3:])
def test_import_refuses_formula_text_with_its_location(start, tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text(f'Part Number,Polarity,Remarks\nNEW-1,NPN,"x"\nNEW-2,NPN,"{start}cmd"\n',
                   encoding="utf-8")
    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV, encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(cat), "--format", "json")
    if start in "\t\r":  # the reader strips a leading tab or CR: no formula is left
        assert result.exit_code == 0, result.output
        return
    assert result.exit_code == 2
    assert f"{raw}:3:3" in result.output and "formula" in result.output
    assert cat.read_text(encoding="utf-8") == TINY_CSV


def test_import_writes_a_minus_text_inert_and_reads_it_back(tmp_path):
    raw = tmp_path / "raw.csv"
    raw.write_text("Part Number,Polarity,Remarks,Case\nNEW-1,NPN,-40 °C rated,-SOT\n",
                   encoding="utf-8")
    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV, encoding="utf-8")
    result = invoke("catalog", "import", str(raw), "--into", str(cat))
    assert result.exit_code == 0, result.output
    last = cat.read_text(encoding="utf-8").splitlines()[-1]
    assert "'-40 °C rated" in last and "'-SOT" in last
    row = load_catalog(cat, source="test", cache=False).df.set_index("part").loc["NEW-1"]
    assert (row["notes"], row["package"]) == ("-40 °C rated", "-SOT")


def test_add_refuses_a_formula_and_writes_a_minus_inert(tmp_path):
    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV, encoding="utf-8")
    refused = invoke("catalog", "add", "--part", "=cmd()", "--kind", "npn", "--into", str(cat))
    assert refused.exit_code == 2 and "formula" in refused.output
    done = invoke("catalog", "add", "--part", "NEW-9", "--kind", "npn", "--notes", "-5 V only",
                  "--into", str(cat))
    assert done.exit_code == 0, done.output
    assert cat.read_text(encoding="utf-8").splitlines()[-1].endswith(",'-5 V only")


def test_saved_mapping_is_toml_and_keeps_formula_like_headers(tmp_path):
    from picker.catalog.importer import load_mapping, mapping_toml, propose_mapping

    headers = ["=Part Number", "-Polarity", "@Case", "Part Number"]
    path = tmp_path / "map.toml"
    path.write_text(mapping_toml(propose_mapping(headers), "raw.csv"), encoding="utf-8")
    assert set(load_mapping(str(path))) == set(headers)


# -- regressions ----------------------------------------------------------------------------------

def test_regression_lone_carriage_return_in_a_cell_is_quoted():
    """Found by these tests: the csv module's writer (lines ending '\\n')
    left a cell holding a lone CR unquoted, so every reader split the row
    there. The renderer now quotes a cell holding any line break."""
    out = io.StringIO()
    write_csv([Column("a"), Column("b")], [{"a": "x\ry", "b": "\r"}, {"a": "", "b": ""}], out)
    assert out.getvalue() == 'a,b\n"x\ry","\'\r"\n,\n'
    assert _rows(out.getvalue()) == [["a", "b"], ["x\ry", "'\r"], ["", ""]]


def test_regression_one_empty_field_is_not_a_blank_line():
    out = io.StringIO()
    write_csv([Column("a")], [{"a": None}, {"a": "x"}], out)
    assert out.getvalue() == 'a\n""\nx\n'


def test_regression_role_named_with_spaces_on_the_command_line(tmp_path):
    """`choose --use ... --role " x"`: the role was read stripped ('x') and
    then looked up as typed (' x'), so the command failed 'no role named'."""
    cat = tmp_path / "cat.csv"
    cat.write_text(TINY_CSV, encoding="utf-8")
    result = invoke("choose", "--use", "high-side-pmos", "--load", "1A", "--max-drop", "80mV",
                    "--role", " main switch ", "-c", str(cat), "--format", "csv")
    assert result.exit_code in (0, 1), result.output
    assert _rows(result.stdout)[1][0] == "main switch"
