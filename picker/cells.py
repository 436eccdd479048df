"""Text cells as picker reads and writes them: JSON-safe values, and the
leading apostrophe that keeps a spreadsheet from running a cell as a formula.

Used at every level (the catalogue reader, the revised BOM, the renderer),
so it imports nothing of picker's.
"""

from __future__ import annotations

import math
from typing import Any

# Characters a spreadsheet treats as the start of a formula (OWASP, "CSV
# Injection"): such cells are written with a leading apostrophe.
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def clean(value: Any) -> Any:
    """JSON-safe: NaN and infinities become null, numpy scalars plain floats."""
    if isinstance(value, dict):
        return {k: clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [clean(v) for v in value]
    if hasattr(value, "item") and not isinstance(value, (str, bytes)):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def neutralise(text: str) -> str:
    """A text cell a spreadsheet would run as a formula, made inert with a
    leading apostrophe. A cell that already starts with apostrophes before
    such a character gets one more, so `restore` gives back every cell
    exactly: restore(neutralise(t)) == t for any text."""
    return "'" + text if text.lstrip("'").startswith(FORMULA_START) else text


def restore(text: str) -> str:
    """The inverse of `neutralise`, for reading back text picker wrote (the
    catalogue loader applies it to text cells): one leading apostrophe
    before a formula character, or before more apostrophes and then one, is
    dropped. Other text is returned as it is."""
    return text[1:] if text.startswith("'") and text.lstrip("'").startswith(FORMULA_START) \
        else text
