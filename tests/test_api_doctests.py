"""The examples in the public API's docstrings run, and print what they say.

Every name in `picker.__all__` (and the package's own docstring) is searched
for examples with the standard library's doctest; they run from the
repository's root, where the examples' paths (catalog/examples/...) lead."""

from __future__ import annotations

import doctest

import pytest

import picker
from tests.conftest import ROOT


def _tests() -> list[doctest.DocTest]:
    finder = doctest.DocTestFinder(exclude_empty=True)
    found = finder.find(picker, "picker", globs={})
    for name in picker.__all__:
        obj = getattr(picker, name)
        if name.startswith("__") or isinstance(obj, type) and issubclass(obj, Exception):
            continue
        found += finder.find(obj, f"picker.{name}", module=False, globs={})
    return sorted({t.name: t for t in found if t.examples}.values(), key=lambda t: t.name)


TESTS = _tests()


def test_there_are_examples_for_every_public_function():
    names = {t.name for t in TESTS}
    for name in ("load_catalog", "load_design", "design", "choose", "review", "lowest_supply"):
        assert f"picker.{name}" in names


@pytest.mark.parametrize("test", TESTS, ids=lambda t: t.name)
def test_docstring_example(test, monkeypatch):
    monkeypatch.chdir(ROOT)
    monkeypatch.delenv("PICKER_CATALOG", raising=False)
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    output: list[str] = []
    runner.run(test, out=output.append)
    failed, tried = runner.summarize(verbose=False)
    assert failed == 0, "".join(output)
    assert tried > 0
