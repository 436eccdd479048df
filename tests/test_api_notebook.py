"""A notebook session, cell by cell, using only the names in `picker.__all__`.

An engineer keeps design notes in a notebook: loads the team's catalogue,
asks a question, looks at the finalists, tries a what-if, reviews the BOM.
Each cell is a step of that session; the checks after it are what the
engineer would look at, against the command line's own output or a hand
calculation named beside it. A last test runs the README's "Use from Python"
example as written. Both are read with `ast` first: neither may reach past
`picker.__all__`.
"""

from __future__ import annotations

import ast
import contextlib
import io
import json
import re
from pathlib import Path

import pytest

import picker
from tests.conftest import DEMO, EXAMPLES, ROOT, run_cli

README = ROOT / "README.md"


def _picker_names(tree: ast.AST) -> set[str]:
    """Every `picker.<name>` the code reads, and every `from picker... import`."""
    names = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name) \
                and node.value.id == "picker":
            names.add(node.attr)
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("picker"):
            names.add(f"from {node.module} import ...")
    return names


def test_this_notebook_uses_only_the_public_names():
    tree = ast.parse(Path(__file__).read_text(encoding="utf-8"))
    assert _picker_names(tree) - set(picker.__all__) == {"__all__"}


def test_a_design_session(tmp_path):
    # [1] the team's catalogue (here: a copy of the demo, as a team keeps its own)
    mine = tmp_path / "parts.csv"
    mine.write_bytes(DEMO.read_bytes())
    catalog = picker.load_catalog(mine)
    assert catalog.part_count == len(catalog.df) > 0
    assert catalog.path == str(mine) and catalog.source == "argument"
    import hashlib  # the content hash is the file's SHA-256 (FIPS 180-4, hashlib)
    assert catalog.content_hash == hashlib.sha256(mine.read_bytes()).hexdigest()

    # [2] the lantern's requirement file, and what it asks of the cell switch
    design = picker.load_design(EXAMPLES / "kettlewick-power.toml")
    switch_role = design.roles["cell-switch"]
    assert (switch_role.load_A, switch_role.max_drop_V) == (1.2, 0.06)

    # [3] the answer
    result = picker.choose(design, catalog)
    switch = result.roles["cell-switch"]
    finalists = switch.feasible
    assert switch.choice == finalists.index[0]
    # ranked by cost at the volume (models/README.md §8): the first is the cheapest feasible
    assert finalists["cost"].iloc[0] == finalists["cost"].min()
    # every finalist's drop is within the limit the file sets (60 mV)
    assert (finalists["drop_V"] <= 0.06).all()
    # Ohm's law on the reported figures: drop = load x on-resistance, loss = load x drop
    assert finalists["drop_V"].to_numpy() == pytest.approx(1.2 * finalists["rds_on_ohm"].to_numpy(), rel=1e-9)
    assert finalists["loss_W"].to_numpy() == pytest.approx(1.2 * finalists["drop_V"].to_numpy(), rel=1e-9)

    # [4] the same answer the command line gives
    cli = run_cli("choose", str(EXAMPLES / "kettlewick-power.toml"), "--catalog", str(mine),
                  "--format", "json")
    assert json.loads(cli.stdout) == result.to_dict()

    # [5] a what-if: twice the load; the choice can only get dearer or vanish
    heavier = picker.design(design, role="cell-switch", load="2.4 A").only("cell-switch")
    again = picker.choose(heavier, catalog).roles["cell-switch"]
    if again.choice is not None:
        assert again.candidates.loc[again.choice, "cost"] >= finalists["cost"].iloc[0]
    assert set(again.feasible.index) <= set(finalists.index)

    # [6] how far down the cell the finalists still work
    low = picker.lowest_supply(design, catalog, role="cell-switch", parts=list(finalists.index[:3]))
    assert (low["lowest_supply_status"] == "found").all()
    # feasible at the empty cell means working at 3.0 V: the figure is at most 3.0 V
    assert (low["lowest_supply_V"] <= design.supply.min_V).all()

    # [7] the BOM's cost-down review at the file's volume
    review = picker.review(EXAMPLES / "kettlewick-bom.csv", catalog, design=design)
    totals = review.totals
    assert review.volume == design.volume
    assert totals["saving_per_build"] == pytest.approx(totals["saving_per_board"] * design.volume, abs=1e-3)
    proposals = review.lines[review.lines["status"] == "proposal"]
    assert (proposals["saving_per_board"] > 0).all()

    # [8] a typo in a file is an error that says where
    broken = tmp_path / "broken.toml"
    text = (EXAMPLES / "kettlewick-power.toml").read_text(encoding="utf-8")
    broken.write_text(text.replace('max = "4.2 V"', 'max = "4.2 Q"'), encoding="utf-8")
    with pytest.raises(picker.RequirementError) as caught:
        picker.load_design(broken)
    line = text.split("\n").index('max = "4.2 V"          # full cell') + 1
    assert (caught.value.file, caught.value.line, caught.value.column) == (str(broken), line, 1)


def _readme_example() -> str:
    text = README.read_text(encoding="utf-8")
    section = text.split("## Use from Python", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```python\n(.*?)```", section, flags=re.S)
    assert len(blocks) == 1
    return blocks[0]


def test_the_readme_example_uses_only_the_public_names():
    assert _picker_names(ast.parse(_readme_example())) - set(picker.__all__) == set()


def test_the_readme_example_runs(monkeypatch):
    monkeypatch.chdir(ROOT)
    monkeypatch.delenv("PICKER_CATALOG", raising=False)
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):
        exec(compile(_readme_example(), "README.md", "exec"), {})
    out = printed.getvalue()
    assert "no such file" in out  # the last cell's error, printed as the example says
    result = picker.choose(picker.load_design(EXAMPLES / "kettlewick-power.toml"))
    assert result.roles["cell-switch"].choice in out
