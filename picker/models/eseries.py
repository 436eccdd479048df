"""Preferred resistor values: the series of IEC 60063, and the search for the
largest value of a series that a check accepts (models/README.md §10).

The series are kept as the standard's tables, not computed: E6, E12 and E24
carry two significant figures and depart from the rounded `10^(i/n)` at
several values (E24 at 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2, where the
formula gives 2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6 and 8.3; E12 and E6 with
it); E48, E96 and E192 carry three and follow the formula, except E192's
9.20 (the formula gives 9.19). Source: IEC 60063 (preferred number series
for resistors and capacitors), tables written from memory and checked
against the standard's published values in tests/test_eseries.py.

Each table holds one decade's mantissas as integers (E6-E24: tenths, 10 for
1.0; E48-E192: hundredths, 100 for 1.00), so a value in ohms is an exact
integer times a power of ten.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Callable

if TYPE_CHECKING:  # numpy is imported where it is used: the series' names and
    import numpy as np  # tolerances are read when a requirement file is, at start-up

_E24 = (10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91)
_E192 = (
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120,
    121, 123, 124, 126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145,
    147, 149, 150, 152, 154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176,
    178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203, 205, 208, 210, 213,
    215, 218, 221, 223, 226, 229, 232, 234, 237, 240, 243, 246, 249, 252, 255, 258,
    261, 264, 267, 271, 274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309, 312,
    316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361, 365, 370, 374, 379,
    383, 388, 392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448, 453, 459,
    464, 470, 475, 481, 487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
    562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642, 649, 657, 665, 673,
    681, 690, 698, 706, 715, 723, 732, 741, 750, 759, 768, 777, 787, 796, 806, 816,
    825, 835, 845, 856, 866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988,
)
# Each coarser series is every second value of the next finer one (IEC 60063).
TABLES: dict[str, tuple[int, ...]] = {
    "E6": _E24[::4], "E12": _E24[::2], "E24": _E24,
    "E48": _E192[::4], "E96": _E192[::2], "E192": _E192,
}
SERIES = tuple(TABLES)
_SCALE = {name: 10 if name in ("E6", "E12", "E24") else 100 for name in SERIES}

# A series' usual tolerance where the requirement file names none: 20 % for
# E6, 10 % for E12, 5 % for E24, 1 % for E48 and finer (common practice).
DEFAULT_TOLERANCE = {"E6": 0.20, "E12": 0.10, "E24": 0.05, "E48": 0.01, "E96": 0.01, "E192": 0.01}
DEFAULT_SERIES = "E24"
LOWEST_OHM = 100.0  # the smallest value an "auto" resistor may take (models/README.md §10)
# Above about 2.2 Mohm board leakage, flux residue, humidity and the
# gate-drain coupling take over from the resistor (common practice).
DEFAULT_MAX_OHM = 2.2e6


def values(series: str, low_ohm: float = LOWEST_OHM, high_ohm: float = DEFAULT_MAX_OHM) -> np.ndarray:
    """The values of `series` [ohm] from `low_ohm` to `high_ohm`, both included, ascending.

    Every value is an integer mantissa times a power of ten, so 470 kohm is
    exactly 470000.0 (values under 1 ohm are the nearest float).
    """
    import numpy as np

    table, scale = TABLES[series], _SCALE[series]
    if not (0 < low_ohm <= high_ohm < np.inf):
        return np.empty(0)
    first = int(np.floor(np.log10(low_ohm))) - 1
    last = int(np.ceil(np.log10(high_ohm))) + 1
    out = []
    for decade in range(first, last + 1):
        for mantissa in table:
            # mantissa / scale * 10**decade, as one exact integer operation where it can be
            power = decade - (1 if scale == 10 else 2)
            ohm = float(mantissa * 10 ** power) if power >= 0 else mantissa / 10 ** -power
            if low_ohm <= ohm <= high_ohm:
                out.append(ohm)
    return np.array(out, dtype=float)


def largest_passing(passes: Callable[[np.ndarray], np.ndarray], n: int, series: str,
                    tolerance: float, low_ohm: float = LOWEST_OHM,
                    high_ohm: float = DEFAULT_MAX_OHM) -> np.ndarray:
    """For each of `n` parts, the largest value [ohm] of `series` in
    [`low_ohm`, `high_ohm`] whose check passes with the resistor at its
    upper tolerance, `R (1 + tolerance)`; NaN where none does.

    `passes(r_ohm)` takes one resistance per part (an (n,) array, already at
    `+tolerance`) and returns an (n,) boolean array. The check must pass for
    every value below one that passes (each of models/README.md §10's does: a
    smaller base resistor gives more base current, a smaller pull-up holds
    the gate shut harder and turns it off sooner, a smaller pull-down holds
    the base lower), so each part's answer is found by bisection over the
    series' index: about log2(number of values) calls, each over all parts.
    """
    import numpy as np

    grid = values(series, low_ohm, high_ohm)
    if n == 0 or grid.size == 0:
        return np.full(n, np.nan)
    worst = grid * (1.0 + tolerance)
    lo = np.full(n, -1)  # the largest index known to pass (-1: none yet)
    hi = np.full(n, grid.size)  # the smallest index known to fail (size: none)
    ok = np.asarray(passes(np.full(n, worst[-1])), dtype=bool)  # the top value first
    lo[ok] = grid.size - 1
    hi[~ok] = grid.size - 1
    while True:
        open_ = hi - lo > 1
        if not open_.any():
            break
        mid = (lo + hi) // 2
        trial = worst[np.clip(mid, 0, grid.size - 1)]
        ok = np.asarray(passes(trial), dtype=bool)
        lo = np.where(open_ & ok, mid, lo)
        hi = np.where(open_ & ~ok, mid, hi)
    return np.where(lo >= 0, grid[np.maximum(lo, 0)], np.nan)


def largest_at_most(bound_ohm, series: str, low_ohm: float = LOWEST_OHM,
                    high_ohm: float = DEFAULT_MAX_OHM) -> np.ndarray:
    """The largest value [ohm] of `series` in [`low_ohm`, `high_ohm`] that is at
    most `bound_ohm` (an array, or a scalar); NaN where none is (or the bound
    is NaN). For checks that reduce to `R (1 + tol) <= bound`, pass
    `bound / (1 + tol)`."""
    import numpy as np

    grid = values(series, low_ohm, high_ohm)
    bound = np.asarray(bound_ohm, dtype=float)
    if grid.size == 0:
        return np.full(bound.shape, np.nan)
    at = np.searchsorted(grid, np.nan_to_num(bound, nan=-np.inf), side="right") - 1
    return np.where((at >= 0) & ~np.isnan(bound), grid[np.maximum(at, 0)], np.nan)
