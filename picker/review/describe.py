"""A catalogue part in words, for the description cell of a revised BOM line.

`describe_part` gives the catalogue's own `description` cell where it has
one; otherwise a line in our wording, built from the part's catalogue
figures: what it is and its package, then its ratings, then the one figure
that decides a switch run from a single cell (the on-resistance at the lowest
gate drive listed, or the gain at the lowest collector current listed):

    P-channel MOSFET in SOT-23, rated 20 V and 4.2 A; on-resistance at most 80 mΩ at 1.5 V gate drive
    NPN transistor in SOT-23, rated 45 V and 100 mA; gain (hFE) at least 260 at 100 µA

A figure the catalogue lacks is left out, never guessed. Nothing here prints.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from picker.catalog.load import points, values
from picker.catalog.quantities import format_quantity

WHAT = {"pmos": "P-channel MOSFET", "nmos": "N-channel MOSFET", "npn": "NPN transistor",
        "pnp": "PNP transistor"}


def describe_part(df: pd.DataFrame, position: int) -> str:
    """The description of the catalogue part at row `position` of `df`."""
    row = df.iloc[[position]]
    own = row["description"].iat[0] if "description" in row else None
    if isinstance(own, str) and own.strip():
        return " ".join(own.split())
    kind = str(row["kind"].iat[0]) if "kind" in row else ""
    package = row["package"].iat[0] if "package" in row else None
    head = WHAT.get(kind, "transistor")
    if isinstance(package, str) and package.strip():
        head += f" in {package.strip()}"
    mosfet = kind in ("pmos", "nmos")
    ratings = [_quantity(row, name, unit) for name, unit in
               ((("vds_max_V", "V"), ("id_max_A", "A")) if mosfet else
                (("vceo_max_V", "V"), ("ic_max_A", "A")))]
    ratings = [r for r in ratings if r]
    text = head + (f", rated {' and '.join(ratings)}" if ratings else "")
    figure = _on_resistance(row) if mosfet else _gain(row)
    return text + (f"; {figure}" if figure else "")


def _quantity(row: pd.DataFrame, name: str, unit: str) -> str:
    value = float(values(row, name)[0])
    return format_quantity(abs(value), unit) if math.isfinite(value) else ""


def _lowest_point(row: pd.DataFrame, prefix: str) -> tuple[float, float] | None:
    """(condition, value) of the family's point at the lowest condition with a value."""
    conditions, matrix = points(row, prefix)
    known = np.flatnonzero(np.isfinite(matrix[0])) if matrix.size else np.zeros(0, dtype=int)
    if not known.size:
        return None
    k = int(known[np.argmin(conditions[known])])
    return float(conditions[k]), float(matrix[0, k])


def _on_resistance(row: pd.DataFrame) -> str:
    point = _lowest_point(row, "rds_on_mohm")
    if point is None:
        return ""
    drive, mohm = point
    return (f"on-resistance at most {format_quantity(mohm, 'mohm')} at "
            f"{format_quantity(drive, 'V')} gate drive")


def _gain(row: pd.DataFrame) -> str:
    point = _lowest_point(row, "hfe_min")
    if point is None:
        return ""
    current_mA, gain = point
    return f"gain (hFE) at least {gain:.3g} at {format_quantity(current_mA, 'mA')}"
