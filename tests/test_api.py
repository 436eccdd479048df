"""The Python API (`picker.__all__`) is the command line's engine: the same
JSON, the same errors, the same figures; and `import picker` stays cheap.

The truth for every comparison here is the command line run as a user runs
it (`python -m picker ...` in a subprocess): what the API returns must be
what `picker` prints, value for value."""

from __future__ import annotations

import importlib
import json
import pkgutil
import subprocess
import sys

import pytest

import picker
from tests.conftest import DEMO, EXAMPLES, ROOT, run_cli

EXAMPLE_FILES = sorted(EXAMPLES.glob("*.toml"))
BOM = EXAMPLES / "kettlewick-bom.csv"
POWER = EXAMPLES / "kettlewick-power.toml"


@pytest.fixture(scope="module")
def demo():
    return picker.load_catalog(DEMO)


def _cli_json(*args: str) -> dict:
    done = run_cli(*args, "--format", "json")
    assert done.returncode in (0, 1), done.stderr
    return json.loads(done.stdout)


# -- the JSON identity ------------------------------------------------------------------

@pytest.mark.parametrize("example", EXAMPLE_FILES, ids=lambda p: p.name)
def test_to_dict_is_the_json_of_picker_choose(example, demo):
    """Every example in catalog/examples: `picker choose FILE --format json`
    parsed equals `picker.choose(...).to_dict()`, key for key and float for
    float (JSON writes a float's shortest repr, which reads back exactly)."""
    assert EXAMPLE_FILES, "no examples found"
    cli = _cli_json("choose", str(example), "--catalog", str(DEMO))
    api = picker.choose(picker.load_design(example), demo).to_dict()
    assert api == cli


def test_to_dict_is_the_json_of_a_quick_question(demo):
    """The command line's quick question and the same keywords of picker.design."""
    cli = _cli_json("choose", "--use", "npn-switch", "--ic", "5mA", "--rb", "4k7",
                    "--base-drive", "1.8V", "--max-off", "1uA", "--volume", "2000",
                    "--catalog", str(DEMO))
    design = picker.design(use="npn-switch", collector_current="5mA", base_resistor="4k7",
                           base_drive="1.8V", max_off="1uA", volume=2000)
    assert picker.choose(design, demo).to_dict() == cli


def test_to_dict_with_a_file_an_override_and_one_role(demo):
    """`--role latch --overdrive 3` over a file: picker.design(base, role=...) then .only()."""
    cli = _cli_json("choose", str(POWER), "--role", "latch", "--overdrive", "3",
                    "--catalog", str(DEMO))
    design = picker.design(picker.load_design(POWER), role="latch", overdrive=3).only("latch")
    assert picker.choose(design, demo).to_dict() == cli


@pytest.mark.parametrize("args, kwargs", [
    (("--volume", "5000"), {"volume": 5000, "volume_source": "--volume"}),
    (("-R", str(POWER)), {"design": POWER}),
])
def test_review_to_dict_is_the_json_of_picker_review(args, kwargs, demo):
    """`picker review BOM --format json` and picker.review(...).to_dict()."""
    cli = _cli_json("review", str(BOM), *args, "--catalog", str(DEMO))
    api = picker.review(BOM, demo, **kwargs).to_dict()
    assert api == cli


def test_to_dict_is_a_copy(demo):
    result = picker.choose(picker.load_design(POWER), demo)
    first = result.to_dict()
    first["roles"].clear()
    assert result.to_dict()["roles"]


# -- the views agree with the document ----------------------------------------------------

def test_candidates_hold_the_json_candidates_row_for_row(demo):
    """One row a part in rank order, with the figures, checks and notes of
    the JSON candidate (the same document, flattened)."""
    result = picker.choose(picker.load_design(POWER), demo)
    doc = result.to_dict()
    for role in doc["roles"]:
        table = result.roles[role["name"]].candidates
        assert list(table.index) == [c["part"] for c in role["candidates"]]
        assert list(table["rank"]) == list(range(1, len(table) + 1))
        for c in role["candidates"]:
            row = table.loc[c["part"]]
            for name, value in c["figures"].items():
                assert row[name] == value or (value is None and row[name] != row[name]) \
                    or (value is None and row[name] is None), (c["part"], name)
            for name, outcome in c["checks"].items():
                assert row[f"check_{name}"] == outcome
            assert row["notes"] == ", ".join(c["notes"])
        assert result.roles[role["name"]].choice == role["choice"]
        assert role["choice"] is None or table.index[0] == role["choice"]


def test_candidate_lines_point_at_the_catalogue_rows(demo):
    """`line` is the catalogue file's line: that line of demo.csv starts with the part."""
    lines = DEMO.read_text(encoding="utf-8").split("\n")
    result = picker.choose(picker.load_design(POWER), demo)
    for name, role in result.roles.items():
        for part, line in role.candidates["line"].items():
            assert lines[line - 1].split(",")[0] == part


def test_totals_are_the_chosen_parts_costs(demo):
    """models/README.md §9: the cost per board is the sum of the chosen parts' costs per board."""
    result = picker.choose(picker.load_design(POWER), demo)
    total = sum(r.candidates.loc[r.choice, "cost"] for r in result.roles.values() if r.choice)
    assert result.cost_per_board == pytest.approx(total, rel=1e-12)
    assert result.complete is (not result.missing)


def test_near_misses_are_the_rejected_parts_cheapest_first(demo):
    result = picker.choose(picker.load_design(POWER), demo)
    near = result.roles["cell-switch"].near_misses(5)
    table = result.roles["cell-switch"].candidates
    assert len(near) == 5 and not table.loc[near.index, "feasible"].any()
    costs = near["cost"].tolist()
    assert costs == sorted(costs)
    for part, row in near.iterrows():
        failed = [c for c in row["failed"].split(", ") if c]
        assert failed and all(table.loc[part, f"check_{c}"] != "pass" for c in failed)
        assert row["why"]


def test_lowest_supply_is_the_figure_picker_curve_prints(demo):
    """`picker curve --format json` gives each part's lowest working supply;
    picker.lowest_supply gives the same voltages, statuses and corners."""
    parts = ["VTQ24P15-3", "AGXP219-23", "BWF418P-A"]
    cli = _cli_json("curve", *parts, "-R", str(POWER), "-r", "cell-switch", "--catalog", str(DEMO))
    low = picker.lowest_supply(POWER, demo, role="cell-switch", parts=parts)
    assert list(low.index) == parts
    for part in parts:
        want = cli["lowest_supply"][part]
        assert low.loc[part, "lowest_supply_status"] == want["status"]
        assert low.loc[part, "lowest_supply_corner"] == want["corner"]
        assert low.loc[part, "lowest_supply_V"] == want["V"]
        for corner in ("cold", "hot"):
            assert low.loc[part, f"lowest_supply_{corner}_V"] == want[corner]["V"]
        assert low.loc[part, "description"]


def test_lowest_supply_needs_a_role_when_there_are_several(demo):
    with pytest.raises(picker.RequirementError, match="6 roles"):
        picker.lowest_supply(POWER, demo)


# -- design inputs and where they came from ----------------------------------------------------

def test_every_input_from_the_file_names_the_line_that_sets_it():
    """A source `file:N` points at a line of the file that writes that key."""
    design = picker.load_design(POWER)
    lines = POWER.read_text(encoding="utf-8").split("\n")
    from_file = [i for i in design.inputs if i.source.startswith(str(POWER) + ":")]
    assert len(from_file) > 30
    for item in from_file:
        n = int(item.source.rsplit(":", 1)[1])
        assert lines[n - 1].split("=")[0].strip() == item.key, item
        assert all(v in lines[n - 1] for v in item.value.split(", ")), item


def test_inputs_name_the_keyword_the_default_and_the_assumption():
    d = picker.design(use="high-side-pmos", load="1.5 A", max_drop="60 mV")
    source = {(i.section.split()[0], i.key): i.source for i in d.inputs}
    assert source[("role", "load")] == "load"
    assert source[("role", "gate_drive_drop")] == "default"
    assert source[("supply", "min")] == "assumed (quick question)"
    assert source[("margins", "derate_v")] == "default"


def test_an_override_names_the_keyword_over_the_file():
    d = picker.design(POWER, role="cell-switch", load="2 A")
    item = next(i for i in d.inputs if i.section == "role cell-switch" and i.key == "load")
    assert (item.value, item.source) == ("2 A", "load")
    other = next(i for i in d.inputs if i.section == "role latch" and i.key == "collector_current")
    assert other.source.startswith(str(POWER) + ":")


# -- errors: the same classes and messages as the command line ---------------------------------

def _cli_error(*args: str) -> str:
    done = run_cli(*args)
    assert done.returncode == 2, (done.stdout, done.stderr)
    return done.stderr.strip().removeprefix("Error: ")


def test_a_broken_requirement_file_is_the_same_error(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(POWER.read_text(encoding="utf-8").replace('"1.2 A"', '"1.2 V"'), encoding="utf-8")
    with pytest.raises(picker.RequirementError) as caught:
        picker.load_design(bad)
    assert str(caught.value) == _cli_error("choose", str(bad))
    assert caught.value.file == str(bad) and caught.value.line == 32 and caught.value.column == 1


def test_a_missing_catalogue_is_the_same_error():
    with pytest.raises(picker.CatalogError) as caught:
        picker.load_catalog("no-such.csv")
    assert str(caught.value) == _cli_error("choose", str(POWER), "--catalog", "no-such.csv")
    assert caught.value.file == "no-such.csv"


def test_a_bad_keyword_value_names_the_keyword():
    with pytest.raises(picker.RequirementError, match=r"^max_drop: "):
        picker.design(use="high-side-pmos", load="1 A", max_drop="-5 mV")
    with pytest.raises(picker.RequirementError, match=r"^use is required"):
        picker.design(load="1 A")
    with pytest.raises(picker.RequirementError, match=r"max_drop is required.*max_drop="):
        picker.design(use="high-side-pmos", load="1 A")


def test_an_unknown_keyword_is_a_type_error_with_the_closest_name():
    with pytest.raises(TypeError, match="'max_dorp'.*'max_drop'"):
        picker.design(use="high-side-pmos", max_dorp="60 mV")


def test_errors_are_picker_errors_and_builtin_ones():
    assert issubclass(picker.RequirementError, picker.PickerError)
    assert issubclass(picker.RequirementError, ValueError)
    assert issubclass(picker.WriteRefused, OSError)


# -- the package's surface --------------------------------------------------------------------

def test_only_the_names_of_all_are_public():
    assert dir(picker) == sorted(picker.__all__)
    for name in picker.__all__:
        assert getattr(picker, name) is not None
    with pytest.raises(AttributeError):
        picker.no_such_name  # noqa: B018


def test_every_public_name_has_a_docstring_with_an_example():
    for name in picker.__all__:
        obj = getattr(picker, name)
        if name.startswith("__") or isinstance(obj, type) and issubclass(obj, Exception):
            continue
        assert ">>> " in (obj.__doc__ or ""), f"{name} has no example in its docstring"


def test_import_picker_loads_neither_pandas_nor_numpy():
    code = ("import sys, picker; picker.__version__; picker.PickerError; "
            "print(sorted({'pandas', 'numpy', 'rapidfuzz'} & set(sys.modules)))")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          cwd=ROOT, check=True)
    assert done.stdout.strip() == "[]"


def test_picker_design_and_review_stay_the_functions_whatever_is_imported():
    """The subpackages picker.design and picker.review share the functions'
    names: loading every module of the package must not rebind them."""
    for info in pkgutil.walk_packages(picker.__path__, "picker."):
        if not info.name.startswith(("picker.cli", "picker.__main__")):  # (the CLI runs on import)
            importlib.import_module(info.name)
    importlib.import_module("picker.cli")
    assert callable(picker.design) and picker.design.__module__ == "picker.api.design"
    assert callable(picker.review) and picker.review.__module__ == "picker.api.review"
    from picker.design.requirements import Requirements  # the subpackages still import
    from picker.review import bom
    assert Requirements.__module__ == "picker.design.requirements"
    assert bom.__name__ == "picker.review.bom"


def test_the_functions_win_even_when_a_subpackage_loads_first():
    """A fresh interpreter that loads the BOM reader before touching the API."""
    code = ("from picker.review.bom import read_bom; import picker; "
            "from picker.design.keys import USES; "
            "print(picker.review.__module__, picker.design.__module__)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          cwd=ROOT, check=True)
    assert done.stdout.split() == ["picker.api.review", "picker.api.design"]
