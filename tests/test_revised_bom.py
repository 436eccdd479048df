"""`picker review --write-bom`: the revised BOM a purchaser buys from says
exactly what it contains.

- A replaced line describes the new part (the catalogue's own description,
  else its catalogue figures), its old part, maker, description and price
  kept in the change column only.
- Lines one part now serves are merged into one (refs and quantities
  combined, in BOM order); the change column says what each of them was.
- Every reference designator and quantity of the original is accounted for.

Outside references: Python's csv module (RFC 4180: a field holding the
delimiter or a quote is quoted, quotes doubled) reads every revised BOM as
the reference reader, beside picker's own reader; the reference designators
are expanded here by a few lines of our own, not by picker's; the checks are
counts (each ref on exactly one line, the quantities adding up). The prices
are worked by hand in tests/test_review.py (the consolidation at 3000 boards:
TNB-2 at the 10000 break, 0.010). BOMs and catalogues are invented test data.
"""

from __future__ import annotations

import csv
import io
import re
from collections import Counter
from pathlib import Path

import pytest

from conftest import DEMO, EXAMPLES, ROOT, invoke
from picker.review.bom import read_bom
from picker.review.revised import check_revised

DATA = ROOT / "tests" / "data" / "review"
COST = DATA / "cost-catalogue.csv"


# -- an independent reading: the csv module and our own ref expansion ------------------------

def _refs(text: str) -> list[str]:
    """'Q1, Q3', 'Q4-Q7', 'Q8 - Q9', 'Q10..Q11', 'Q12 Q13' -> one name per part."""
    text = re.sub(r"\s*(?:-|\.\.)\s*", "-", text)
    out = []
    for token in re.split(r"[,;\s]+", text.strip()):
        m = re.fullmatch(r"([A-Za-z]+)(\d+)-(?:[A-Za-z]+)?(\d+)", token)
        if m:
            out += [f"{m.group(1)}{k}" for k in range(int(m.group(2)), int(m.group(3)) + 1)]
        elif token:
            out.append(token)
    return [r.upper() for r in out]


def _table(path: Path, encoding: str = "utf-8", delimiter: str = ",") -> list[dict]:
    with open(path, newline="", encoding=encoding) as fh:
        return list(csv.DictReader(fh, delimiter=delimiter))


def _account(rows: list[dict], refs: str, qty: str, part: str) -> tuple[Counter, int, dict]:
    """(every ref counted, the total quantity, ref -> part), by the csv module's cells."""
    counted = Counter(ref for r in rows for ref in _refs(r[refs]))
    total = sum(int(r[qty]) for r in rows if r[qty].strip())
    part_of = {ref: r[part] for r in rows for ref in _refs(r[refs])}
    return counted, total, part_of


def _revise(tmp_path: Path, bom: Path, *args: str) -> Path:
    out = tmp_path / "revised.csv"
    result = invoke("review", str(bom), *args, "--write-bom", str(out))
    assert result.exit_code == 0, result.output
    return out


def _demo_row(part: str) -> dict:
    return next(r for r in _table(DEMO) if r["part"] == part)


# -- the demo ----------------------------------------------------------------------------------

def test_demo_revision_accounts_for_every_ref_and_quantity(tmp_path):
    out = _revise(tmp_path, EXAMPLES / "kettlewick-bom.csv", "--volume", "5000")
    before, after = _table(EXAMPLES / "kettlewick-bom.csv"), _table(out)
    refs_before, qty_before, _ = _account(before, "Refs", "Qty", "Part number")
    refs_after, qty_after, part_of = _account(after, "Refs", "Qty", "Part number")
    assert refs_after == refs_before and max(refs_after.values()) == 1
    assert qty_after == qty_before == 40  # the Qty column, summed by hand
    assert len(after) == len(before) - 1  # the USB-detect line merged into the latch line
    assert all(len(r) == 8 and None not in r for r in after)  # every row as wide as the header
    # the parts each ref now has: the drop-in for the gauge sinks, one part for Q2, Q3, Q10
    assert {ref: part_of[ref] for ref in ("Q4", "Q7", "Q2", "Q3", "Q10", "Q1")} == {
        "Q4": "QLB-4N62K", "Q7": "QLB-4N62K", "Q2": "QLB-4N60K", "Q3": "QLB-4N60K",
        "Q10": "QLB-4N60K", "Q1": "HLP6125-T-TR"}
    latch = next(r for r in after if "Q10" in _refs(r["Refs"]))
    assert (latch["Refs"], latch["Qty"], latch["Item"]) == ("Q2, Q3, Q10", "3", "2")
    note = latch["picker_change"]
    assert note.startswith("merged 2 lines into this one: one part, QLB-4N60K, for all 3")
    assert "line 3 (Q2, Q3): 2 of hlg614b-t" in note
    assert 'line 7 (Q10; Item 6): 1 of QLB-4N60K by Quillon Semiconductor, "USB-present ' \
           'detect, NPN in SOT-23", 0.014 each in the BOM, kept, its line left out' in note
    # every line changed is marked; every other line is the original
    original = {r["Item"]: r for r in before}
    for r in after:
        old = original[r["Item"]]
        if r["picker_change"]:
            continue
        assert {k: v for k, v in r.items() if k != "picker_change"} == old


def test_a_replaced_line_describes_its_new_part(tmp_path):
    """The gauge sinks' line said 'low-noise NPN': its new part is not low-noise,
    and the description now gives the new part's catalogue figures (read
    from the demo catalogue with the csv module); the old words are kept in
    the change column only."""
    out = _revise(tmp_path, EXAMPLES / "kettlewick-bom.csv", "--volume", "5000")
    sinks = next(r for r in _table(out) if r["Refs"] == "Q4-Q7")
    new = _demo_row("QLB-4N62K")
    assert (new["kind"], new["package"], new["vceo_max_V"], new["ic_max_A"],
            new["hfe_min@0.1mA"]) == ("npn", "SOT-23", "45", "0.1", "260")
    text = sinks["Description"]
    assert "low-noise" not in text and "gauge" not in text
    for words in ("NPN", "SOT-23", "45 V", "100 mA", "260", "100 µA"):
        assert words in text, (words, text)
    assert sinks["Part number"] == "QLB-4N62K" and sinks["Maker"] == "Quillon Semiconductor"
    assert sinks["Unit price"] == "0.009"
    assert sinks["picker_change"].startswith(
        'replaced; was MWB4518K by Marrowfield Electronics, "gauge LED sinks - low-noise NPN, '
        '45 V, SOT-23", 0.085 each in the BOM; now QLB-4N62K: drop-in')


def test_the_catalogues_own_description_wins(tmp_path):
    """A catalogue with a `description` column: the revised line takes its words."""
    catalogue = tmp_path / "catalogue.csv"
    rows = COST.read_text(encoding="utf-8").splitlines()
    words = {"TNB-2": '"NPN for buzzers and latches, 45 V"'}
    rows = [rows[0] + ",description"] + [r + "," + words.get(r.split(",")[0], "")
                                         for r in rows[1:]]
    catalogue.write_text("\n".join(rows) + "\n", encoding="utf-8")
    out = _revise(tmp_path, DATA / "three-lines.csv", "--volume", "3000", "-c", str(catalogue))
    sinks = next(r for r in _table(out) if r["Ref"] == "Q2-Q5")
    assert sinks["MPN"] == "TNB-2" and sinks["Description"] == "NPN for buzzers and latches, 45 V"
    assert 'was TNB-1 by Testa Parts, "NPN LED sinks"' in sinks["picker_change"]


# -- merged lines -----------------------------------------------------------------------------

def test_two_lines_merged_into_one(tmp_path):
    """consolidate.csv at 3000 boards: TNB-2 for both lines at the 10000 break
    (worked in tests/test_review.py): one line, 4 parts, Q1-Q4."""
    out = _revise(tmp_path, DATA / "consolidate.csv", "--volume", "3000", "-c", str(COST))
    (line,) = _table(out)
    assert (line["Ref"], line["Qty"], line["MPN"], line["Price"]) == ("Q1, Q2, Q3, Q4", "4",
                                                                      "TNB-2", "0.01")
    assert line["Description"] != "NPN switch"  # TNB-1's line now holds TNB-2: described anew
    note = line["picker_change"]
    assert "line 2 (Q1, Q2): 2 of TNB-1" in note and "replaced" in note
    assert 'line 3 (Q3, Q4): 2 of TNB-2 by Testa Parts, "NPN buzzer switch", 0.018 each in the ' \
           'BOM, kept, its line left out of this BOM' in note


FREE_TEXT = """\
Ref,Qty,MPN,Description,Price
Q1-Q2,2,TNB-1,"latch pair, NPN",0.02
Q3 - Q4,2,TNB-2,buzzer driver,0.018
Q5..Q6,2,TNB-1,"status LEDs, NPN ""B"" grade",0.02
Q7 Q8,2,TNB-2,spare sinks,0.018
R1,1,RS-0402-10K,"10k, 0402",0.001
"""


def test_free_text_ranges_and_quoted_commas_survive_a_merge(tmp_path):
    bom = tmp_path / "bom.csv"
    bom.write_text(FREE_TEXT, encoding="utf-8")
    out = _revise(tmp_path, bom, "--volume", "3000", "-c", str(COST))
    before, after = _table(bom), _table(out)
    refs_before, qty_before, _ = _account(before, "Ref", "Qty", "MPN")
    refs_after, qty_after, part_of = _account(after, "Ref", "Qty", "MPN")
    assert refs_after == refs_before and qty_after == qty_before == 9
    assert sum(refs_after.values()) == 9 and max(refs_after.values()) == 1
    assert {part_of[f"Q{k}"] for k in range(1, 9)} == {"TNB-2"}
    merged = [r for r in after if r["picker_change"].startswith("merged")]
    assert len(merged) == 1 and len(after) == 2
    (line,) = merged
    assert line["Ref"] == "Q1-Q2, Q3 - Q4, Q5..Q6, Q7 Q8" and line["Qty"] == "8"
    # the quoted comma and the doubled quotes of line 4 come back through the note
    assert '"status LEDs, NPN ""B"" grade"' not in line["picker_change"]
    assert '"status LEDs, NPN "B" grade"' in line["picker_change"]
    assert after[-1] == {**before[-1], "picker_change": ""}  # the resistor line as it was
    again = read_bom(out)  # and picker's own reader agrees
    assert sorted(r for ln in again.lines for r in ln.refs) == sorted(refs_before)
    assert sum(ln.qty for ln in again.lines) == 9


def test_semicolon_cp1252_bom_with_requirements(tmp_path):
    """failing-incumbents.csv (semicolons, decimal commas, Windows-1252): the
    fixes are written with decimal commas, described anew, and accounted for."""
    out = _revise(tmp_path, DATA / "failing-incumbents.csv", "-R",
                  str(EXAMPLES / "kettlewick-power.toml"))
    before = _table(DATA / "failing-incumbents.csv", "cp1252", ";")
    after = _table(out, "cp1252", ";")
    assert _account(after, "Reference", "Qty", "Part Number")[:2] == \
        _account(before, "Reference", "Qty", "Part Number")[:2]
    q1 = next(r for r in after if r["Reference"] == "Q1")
    assert q1["Part Number"] != "HLP6125-W" and "," in q1["Unit Price (EUR)"]
    assert "SOT-323" in q1["Description"] and "cell switch" not in q1["Description"]
    assert q1["picker_change"].startswith("replaced; was HLP6125-W")


# -- the check itself --------------------------------------------------------------------------

def test_the_read_back_check_finds_a_lost_line_and_a_wrong_part(tmp_path):
    from picker.catalog.load import load_catalog
    from picker.review.propose import Options, review
    from picker.review.revised import revised_bom

    bom = read_bom(EXAMPLES / "kettlewick-bom.csv")
    rv = review(bom, load_catalog(DEMO, source="test").df, Options(volume=5000))
    changes = rv.changes()
    data = revised_bom(bom, changes)
    assert check_revised(bom, data, changes) == []
    lines = data.split(b"\r\n")
    lost = b"\r\n".join(ln for ln in lines if not ln.startswith(b"12,"))  # the 330R line
    assert any("refs or quantities differ" in p for p in check_revised(bom, lost, changes))
    wrong = data.replace(b",QLB-4N62K,", b",MWB4518K,")
    found = check_revised(bom, wrong, changes)
    assert any("Q4 has MWB4518K, meant to have QLB-4N62K" in p for p in found)
    rows = list(csv.reader(io.StringIO(data.decode("utf-8"), newline="")))
    for row in rows:
        if row[2] == "Q4-Q7":
            row[-1] = ""  # the change column of the replaced line emptied
    text = io.StringIO(newline="")
    csv.writer(text, lineterminator="\r\n").writerows(rows)
    found = check_revised(bom, text.getvalue().encode("utf-8"), changes)
    assert found == ["line 4: changed but not marked"]


@pytest.mark.parametrize("row, expected", [
    # the figures a datasheet gives, in our words; SI prefixes per the SI Brochure, Table 7
    ({"kind": "pmos", "package": "SOT-23", "vds_max_V": "20", "id_max_A": "4.2",
      "rds_on_mohm@2.5V": "42", "rds_on_mohm@4.5V": "32"},
     "P-channel MOSFET in SOT-23, rated 20 V and 4.2 A; on-resistance at most 42 mΩ at "
     "2.5 V gate drive"),
    ({"kind": "npn", "package": "SOT-23", "vceo_max_V": "45", "ic_max_A": "0.1",
      "hfe_min@1mA": "200", "hfe_min@0.1mA": ""},
     "NPN transistor in SOT-23, rated 45 V and 100 mA; gain (hFE) at least 200 at 1 mA"),
    ({"kind": "pnp", "package": "SOT-89"}, "PNP transistor in SOT-89"),  # nothing guessed
    ({"kind": "nmos", "package": "", "id_max_A": "0.9"}, "N-channel MOSFET, rated 900 mA"),
    ({"kind": "npn", "description": "  our   latch NPN, gain group C "}, "our latch NPN, gain group C"),
])
def test_a_part_in_words(row, expected):
    from picker.catalog.load import load_catalog
    from picker.review.describe import describe_part

    text = io.StringIO()
    csv.writer(text, lineterminator="\n").writerows([["part", *row], ["ZZ-1", *row.values()]])
    data = text.getvalue().encode()
    df = load_catalog("words.csv", source="test", data=data, cache=False).df
    assert describe_part(df, 0) == expected
