"""The package's folders are its architecture: imports run one way, downward.

Levels, top to bottom (DEVELOPERS.md, "Architecture"): the CLI, then the
presentation (words, tables, plots), the BOM review, the engine, the
requirement files, the catalogue, the models; `errors`, `safe_io` and `cells`
are used by all and use nothing of picker's. A module may import its own
level or any level below it, never one above. The graph is read from the
source with the standard library's `ast`, so a late import inside a function
counts as much as one at the top.
"""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent / "picker"

LEVELS = ["cli", "api", "present", "review", "engine", "design", "catalog", "models", "base"]
BASE = {"errors", "safe_io", "cells", "data"}


def _level(module: str) -> str:
    """'picker.engine.evaluate' -> 'engine'; 'picker' (the package itself) -> 'api'."""
    parts = module.split(".")
    if len(parts) == 1:
        return "api"
    head = parts[1]
    if head in BASE:
        return "base"
    if head in ("__init__", "__main__"):
        return "api" if head == "__init__" else "cli"
    return head if head in LEVELS else "api"


def _module_of(path: Path) -> str:
    rel = path.relative_to(ROOT.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__" and len(parts) > 1:
        parts = parts[:-1]
    return ".".join(parts)


def _imports(path: Path) -> list[tuple[int, str]]:
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module == "picker":
                found += [(node.lineno, f"picker.{a.name}") for a in node.names]
            elif node.module.startswith("picker."):
                found.append((node.lineno, node.module))
        elif isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names if a.name.startswith("picker")]
    return found


def test_every_module_belongs_to_a_level():
    unknown = [str(p.relative_to(ROOT)) for p in ROOT.rglob("*.py")
               if _level(_module_of(p)) not in LEVELS]
    assert unknown == []


def test_imports_run_downward_only():
    upward = []
    for path in sorted(ROOT.rglob("*.py")):
        mine = LEVELS.index(_level(_module_of(path)))
        for line, target in _imports(path):
            theirs = LEVELS.index(_level(target))
            if theirs < mine:
                upward.append(f"{path.relative_to(ROOT.parent)}:{line} imports {target}")
    assert upward == [], "imports that point upward:\n" + "\n".join(upward)


def test_the_check_sees_an_upward_import():
    """The reader itself: an engine module importing the renderer is caught."""
    assert LEVELS.index(_level("picker.present.render")) < LEVELS.index(_level("picker.engine.evaluate"))
    assert _level("picker.cells") == "base" and _level("picker.cli.common") == "cli"


# -- module size, and the architecture table ----------------------------------------------

MAX_LINES = 500  # "about 500" (DEVELOPERS.md): past it, split along a seam
DEVELOPERS = ROOT.parent / "DEVELOPERS.md"


def test_no_module_is_over_about_500_lines():
    long = {str(p.relative_to(ROOT.parent)): n for p in sorted(ROOT.rglob("*.py"))
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert long == {}, f"modules over {MAX_LINES} lines: split them along a seam"


def _table_rows() -> dict[str, str]:
    """DEVELOPERS.md's architecture table: the first cell's path -> the row's text."""
    rows = {}
    for line in DEVELOPERS.read_text(encoding="utf-8").splitlines():
        if line.startswith("| `picker/"):
            first = line.split("|")[1].strip().strip("`")
            rows[first] = line
    return rows


def test_the_architecture_table_names_every_module():
    """Each subpackage's row names each of its modules (`name`), and each
    top-level module has a row: the table stays true as modules are added."""
    rows = _table_rows()
    missing = []
    for path in sorted(ROOT.rglob("*.py")):
        rel = path.relative_to(ROOT)
        if path.name.startswith("_") and path.name != "__init__.py" or rel.parts[0] == "data":
            continue
        if len(rel.parts) == 1:
            key = f"picker/{rel.name}"
            if key not in rows and rel.name != "__init__.py":
                missing.append(key)
            continue
        row = rows.get(f"picker/{rel.parts[0]}/", "")
        if path.name != "__init__.py" and f"`{path.stem}`" not in row:
            missing.append(str(Path("picker") / rel))
    assert missing == [], "add these to DEVELOPERS.md's architecture table: " + ", ".join(missing)


# -- the two subpackages that share a name with an API function --------------------------

SHARED = ("picker.design", "picker.review")  # subpackages; `picker.design(...)` is the API


def _reaches_through_the_attribute(tree: ast.AST) -> list[tuple[int, str]]:
    """`import picker.review.bom as bom` and `monkeypatch.setattr("picker.review....")`
    read the attribute `picker.review`, which is the API function, not the subpackage."""
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names
                      if a.asname and a.name.startswith(tuple(s + "." for s in SHARED))]
        elif isinstance(node, ast.Call) and node.args and isinstance(node.args[0], ast.Constant) \
                and isinstance(node.args[0].value, str) \
                and node.args[0].value.startswith(tuple(s + "." for s in SHARED)) \
                and getattr(node.func, "attr", getattr(node.func, "id", "")) in ("setattr", "delattr", "patch"):
            found.append((node.lineno, node.args[0].value))
    return found


def test_no_code_reaches_a_shared_subpackage_through_its_attribute():
    """Write `from picker.review import bom` (or `from picker.review.bom import
    ...`) and patch objects, not dotted strings: see picker/__init__.py."""
    bad = []
    for folder in ("picker", "tests", "scripts"):
        for path in sorted((ROOT.parent / folder).rglob("*.py")):
            for line, what in _reaches_through_the_attribute(ast.parse(path.read_text(encoding="utf-8"))):
                bad.append(f"{path.relative_to(ROOT.parent)}:{line}: {what}")
    assert bad == [], "use `from picker.review import bom` instead:\n" + "\n".join(bad)


def test_the_check_sees_an_import_through_the_attribute():
    tree = ast.parse("import picker.review.bom as b\nm.setattr('picker.design.keys.X', 1)\n"
                     "from picker.review import bom\nimport picker.review.bom\n")
    assert _reaches_through_the_attribute(tree) == [(1, "picker.review.bom"), (2, "picker.design.keys.X")]
