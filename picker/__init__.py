"""picker: choose the discrete transistors of a battery product's power path.

The same engine as the command line, from Python:

>>> import picker
>>> catalog = picker.load_catalog()                     # no path: the bundled demo
>>> design = picker.design(use="high-side-pmos", load="1.2 A", max_drop="60 mV",
...                        max_off="5 uA", volume=5000)
>>> result = picker.choose(design, catalog)
>>> result.roles["high-side-pmos"].choice in set(catalog.df["part"])
True

`picker.load_design(path)` reads a requirement file, `picker.review(bom, ...)`
reviews a BOM, `picker.lowest_supply(...)` gives how far down the cell each
part still works. Every problem with an input is a `PickerError` (a
`CatalogError`, `RequirementError`, ...) with `file`, `line` and `column`.
Only the names in `picker.__all__` are public.

Importing picker is cheap: pandas and numpy are loaded on first use of a name
that needs them (the command line's `picker --help` imports this package).
"""

__version__ = "0.1.0"

# Two subpackages share a name with an API function: picker.design (requirement
# files) and picker.review (the BOM review). Python binds a subpackage to its
# parent's attribute when it first loads it, so both are loaded here (each is a
# docstring: no cost) and their bindings removed: from then on `picker.design`
# and `picker.review` are the API functions, whatever is imported later. Reach
# their modules with `from picker.review import bom` or
# `from picker.review.bom import read_bom`, never `import picker.review.bom as
# bom` (that form reads the attribute; tests/test_architecture.py checks).
from importlib import import_module as _import_module  # noqa: E402

_import_module("picker.design")
_import_module("picker.review")
del design, review  # the subpackages' bindings (see above); __getattr__ gives the functions

from picker.errors import (BomError, CatalogError, MappingError, PickerError,  # noqa: E402
                           QuantityError, RequirementError, TooLarge, UsageError, WriteRefused)

__all__ = [
    "load_catalog", "load_design", "design", "choose", "review", "lowest_supply",
    "Catalog", "Design", "Result", "RoleChoice", "Review",
    "PickerError", "CatalogError", "RequirementError", "BomError", "QuantityError",
    "MappingError", "UsageError", "WriteRefused", "TooLarge",
    "__version__",
]

# name -> the module of picker.api that defines it (imported on first use)
_LAZY = {
    "load_catalog": "catalog", "Catalog": "catalog",
    "load_design": "design", "design": "design", "Design": "design",
    "choose": "result", "lowest_supply": "result", "Result": "result", "RoleChoice": "result",
    "review": "review", "Review": "review",
}


def __getattr__(name: str):
    if name in _LAZY:
        value = getattr(_import_module(f"picker.api.{_LAZY[name]}"), name)
        globals()[name] = value  # later look-ups are plain attribute reads
        return value
    raise AttributeError(f"module 'picker' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
