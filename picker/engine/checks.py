"""Check outcomes as small integers, and the two ways a check is decided.

Outcomes are stored as int8 while evaluating 10⁵-10⁶ parts:
PASS = 1, FAIL = 0, UNKNOWN = -1. Missing data (NaN) never passes a check
(models/README.md §8).
"""

from __future__ import annotations

import numpy as np

PASS, FAIL, UNKNOWN = 1, 0, -1
OUTCOME = {PASS: "pass", FAIL: "fail", UNKNOWN: "unknown"}


def check(ok: np.ndarray, known: np.ndarray) -> np.ndarray:
    """Outcome codes from a boolean test and where its inputs are known."""
    ok = np.asarray(ok, dtype=bool).astype(np.int8)  # PASS = 1, FAIL = 0
    return np.where(known, ok, np.int8(UNKNOWN))


def limit_check(value: np.ndarray, limit: float, *, at_least: bool = False) -> np.ndarray:
    """value <= limit (or >= with at_least); unknown where value is NaN."""
    with np.errstate(invalid="ignore"):
        ok = value >= limit if at_least else value <= limit
    return check(ok, np.isfinite(value))
