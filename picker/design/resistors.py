"""The [resistors] table of a requirement file (models/README.md §6, §10): the
IEC 60063 series "auto" values come from, the tolerance every resistor is
taken at (by default the series' usual one) and the largest "auto" value."""

from __future__ import annotations

from dataclasses import dataclass

from picker.catalog.quantities import format_quantity
from picker.design.keys import (DEFAULT_RESISTOR_MAX_OHM, DEFAULT_SERIES, SERIES, SERIES_TOLERANCE,
                                SMALLEST_RESISTOR_OHM, _closest, _or)


@dataclass(frozen=True)
class Resistors:
    """The [resistors] table (models/README.md §6): the IEC 60063 series "auto"
    values come from, their tolerance (a fraction; by default the series'
    usual one) and the largest value an "auto" resistor may take."""

    series: str = DEFAULT_SERIES
    tolerance: float = SERIES_TOLERANCE[DEFAULT_SERIES]
    max_ohm: float = DEFAULT_RESISTOR_MAX_OHM



def read_resistors(where, table: dict, quantity) -> Resistors:
    """The [resistors] table (its keys already checked): series, tolerance
    (default: the series'), max. `quantity` reads a value with its unit and
    rule (requirements._quantity); `where` names the line of a problem."""
    series = table.get("series", DEFAULT_SERIES)
    if not isinstance(series, str) or series.strip().upper() not in SERIES:
        close = _closest(str(series).strip().upper(), SERIES, cutoff=0.5)
        tip = f"did you mean {_or(close)}?" if close else f"one of {', '.join(SERIES)}"
        where.fail(("resistors", "series"), f"'{series}' is not an IEC 60063 series; {tip}")
    series = series.strip().upper()
    tolerance = SERIES_TOLERANCE[series]
    if "tolerance" in table:
        tolerance = quantity(where, ("resistors", "tolerance"), table["tolerance"], "1",
                              "non-negative", "5 %")
        if tolerance >= 1:
            where.fail(("resistors", "tolerance"), f"'{table['tolerance']}' is {tolerance:.4g} "
                       f"× the value, {tolerance * 100:.4g} %: a tolerance is under 100 %; "
                       'write it with its unit, e.g. "5 %" (or 0.05)')
    max_ohm = DEFAULT_RESISTOR_MAX_OHM
    if "max" in table:
        max_ohm = quantity(where, ("resistors", "max"), table["max"], "ohm", "positive", "2.2 Mohm")
        if max_ohm < SMALLEST_RESISTOR_OHM:
            where.fail(("resistors", "max"), f"'{table['max']}' is below "
                       f"{format_quantity(SMALLEST_RESISTOR_OHM, 'ohm')}, the smallest value an "
                       '"auto" resistor takes; e.g. max = "2.2 Mohm"')
    return Resistors(series, tolerance, max_ohm)
