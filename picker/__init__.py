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

# The subpackage picker.design (requirement files) is loaded first, so that the
# name `picker.design` is the function below for good: Python binds a
# subpackage to its parent's attribute only when it first loads it. Reach the
# subpackage's modules with `from picker.design.<module> import ...`.
import picker.design as _design_subpackage  # noqa: E402,F401  (a docstring: no cost)
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
del design  # the subpackage's binding: `picker.design` is the API function (see __getattr__)


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(f"picker.api.{_LAZY[name]}"), name)
        globals()[name] = value  # later look-ups are plain attribute reads
        return value
    raise AttributeError(f"module 'picker' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
