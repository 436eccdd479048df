"""The method document, picker/models/README.md, is the project's own and is
what the code, the tests and the screens cite by section.

These checks fail when a citation points at a section the document does not
have, when the document stops shipping with the package, or when the help
stops pointing to it.
"""

from __future__ import annotations

import re
import tomllib
from importlib import resources

from conftest import ROOT, invoke

DOC = ROOT / "picker" / "models" / "README.md"
CITATION = re.compile(r"README\.md §(\d+)(?:-§?(\d+))?")
HEADING = re.compile(r"^## §(\d+) ", re.MULTILINE)


def _sections() -> list[int]:
    return [int(n) for n in HEADING.findall(DOC.read_text(encoding="utf-8"))]


def test_sections_one_to_nine_in_order():
    """§1-§9 each once, in order (a later section, such as linked roles, may follow)."""
    found = _sections()
    assert found[:9] == list(range(1, 10)), found
    assert len(found) == len(set(found)), f"a section heading twice: {found}"


def test_every_citation_names_a_section_that_exists():
    """Every 'README.md §N' (or '§N-§M') in the package, the scripts and the
    tests points at a heading of the method document."""
    have = set(_sections())
    missing = []
    for folder in ("picker", "scripts", "tests"):
        for path in (ROOT / folder).rglob("*.py"):
            for m in CITATION.finditer(path.read_text(encoding="utf-8")):
                first, last = int(m.group(1)), int(m.group(2) or m.group(1))
                for n in range(first, last + 1):
                    if n not in have:
                        missing.append(f"{path.relative_to(ROOT)}: §{n}")
    assert not missing, missing


def test_the_document_ships_with_the_package():
    """package-data carries it, and the installed package can read it."""
    meta = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert "README.md" in meta["tool"]["setuptools"]["package-data"]["picker.models"]
    text = resources.files("picker.models").joinpath("README.md").read_text(encoding="utf-8")
    assert "## §1 " in text and "## §9 " in text


def test_choose_help_and_the_readme_point_to_it():
    result = invoke("choose", "--help")
    assert result.exit_code == 0
    assert "picker/models/README.md" in " ".join(result.output.split())
    assert "picker/models/README.md" in (ROOT / "README.md").read_text(encoding="utf-8")
