"""The cheapest feasible pair of two linked roles (models/README.md §10).

Two roles that drive each other (a pass switch and the transistor that pulls
its gate) are chosen together: the pair (driver part, switch part), both
feasible with each other, with the lowest summed cost; ties go to the pair
with more preferred parts, then the smaller switch drop, then the smaller
driver Vce(sat), then the switch's and then the driver's catalogue order.

Whether a pair works is the caller's to say (`evaluate`, over arrays of
pairs); this module decides which pairs to ask about. It never asks about
all of them when it need not: the pairs are taken in order of summed cost,
in growing batches (all pairs costing at most a threshold that admits about
`batch` more), and the search stops after the first batch that holds a
feasible pair. Every pair costing no more than that batch's threshold has
then been evaluated, so the cheapest feasible pair, and every pair tied
with it, is among them: the answer is exactly what an evaluation of every
pair would give.

Costs are compared as whole numbers of 10^-9 of the currency unit, so sums
that are equal on paper (0.1 + 0.2 and 0.3) are equal here too.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

COST_QUANTUM = 1e-9  # summed costs are compared in these units of currency
FIRST_BATCH = 4096  # pairs in the first batch; each later batch admits 4x more
EVAL_ROWS = 65_536  # pairs handed to `evaluate` at a time (bounds the memory)


@dataclass(frozen=True)
class PairVerdict:
    """What `evaluate` says about a batch of pairs (one entry per pair)."""

    feasible: np.ndarray  # bool
    drop_V: np.ndarray  # the switch's drop with this driver (NaN: unknown)
    vce_sat_V: np.ndarray  # the driver's Vce(sat) with this switch (NaN: unknown)


@dataclass(frozen=True)
class PairChoice:
    driver: int  # position among the driver candidates
    switch: int  # position among the switch candidates
    cost: float  # summed cost
    evaluated: int  # pairs evaluated to find it


def cost_units(cost) -> np.ndarray:
    """Costs as int64 counts of COST_QUANTUM (NaN: -1, never chosen)."""
    cost = np.asarray(cost, dtype=float)
    units = np.rint(np.nan_to_num(cost, nan=-1.0) / COST_QUANTUM)
    return np.where(np.isfinite(cost) & (cost >= 0), units, -1).astype(np.int64)


def cheapest_pair(driver_cost, switch_cost, evaluate: Callable[[np.ndarray, np.ndarray], PairVerdict], *,
                  driver_preferred=None, switch_preferred=None, driver_ok=None, switch_ok=None,
                  first_batch: int = FIRST_BATCH) -> PairChoice | None:
    """The pair of §10's joint choice, or None when no priced pair is feasible.

    driver_cost, switch_cost: cost per board of each candidate (NaN: no price,
    never chosen). `evaluate(d, s)` takes equal-length int arrays of
    positions and returns a PairVerdict. driver_ok / switch_ok (optional
    bool arrays) leave out candidates that cannot be feasible with any
    partner (checks of their own that fail whatever the partner); the
    preferred arrays count toward the first tie-break.
    """
    d_units, s_units = cost_units(driver_cost), cost_units(switch_cost)
    d_keep = d_units >= 0 if driver_ok is None else (d_units >= 0) & np.asarray(driver_ok, dtype=bool)
    s_keep = s_units >= 0 if switch_ok is None else (s_units >= 0) & np.asarray(switch_ok, dtype=bool)
    d_pos, s_pos = np.flatnonzero(d_keep), np.flatnonzero(s_keep)
    if d_pos.size == 0 or s_pos.size == 0:
        return None
    d_pos = d_pos[np.argsort(d_units[d_pos], kind="stable")]
    s_pos = s_pos[np.argsort(s_units[s_pos], kind="stable")]
    cd, cs = d_units[d_pos], s_units[s_pos]
    d_pref = np.zeros(len(d_units), bool) if driver_preferred is None else np.asarray(driver_preferred, bool)
    s_pref = np.zeros(len(s_units), bool) if switch_preferred is None else np.asarray(switch_preferred, bool)

    top = int(cd[-1] + cs[-1])
    covered_T, covered_n, evaluated, want = int(cd[0] + cs[0]) - 1, 0, 0, first_batch
    total = cd.size * cs.size
    while covered_n < total:
        T = _threshold(cd, cs, covered_T, top, covered_n + want)
        d_i, s_j = _pairs_between(cd, cs, covered_T, T)
        best = None
        for lo in range(0, d_i.size, EVAL_ROWS):
            d, s = d_pos[d_i[lo:lo + EVAL_ROWS]], s_pos[s_j[lo:lo + EVAL_ROWS]]
            verdict = evaluate(d, s)
            evaluated += d.size
            ok = np.asarray(verdict.feasible, dtype=bool)
            if not ok.any():
                continue
            d, s = d[ok], s[ok]
            keys = (d_units[d] + s_units[s], -(d_pref[d].astype(int) + s_pref[s]),
                    np.nan_to_num(np.asarray(verdict.drop_V, float)[ok], nan=np.inf),
                    np.nan_to_num(np.asarray(verdict.vce_sat_V, float)[ok], nan=np.inf), s, d)
            at = np.lexsort(keys[::-1])[0]
            candidate = tuple(k[at] for k in keys)
            if best is None or candidate < best:
                best = candidate
        if best is not None:
            d, s = int(best[5]), int(best[4])
            cost = float(np.asarray(driver_cost, float)[d] + np.asarray(switch_cost, float)[s])
            return PairChoice(d, s, cost, evaluated)
        covered_n += d_i.size
        covered_T = T
        want *= 4
    return None


def _count(cd: np.ndarray, cs: np.ndarray, T: int) -> int:
    """Pairs whose summed cost is at most T (cd, cs sorted)."""
    return int(np.searchsorted(cd, T - cs, side="right").sum())


def _threshold(cd: np.ndarray, cs: np.ndarray, low: int, high: int, at_least: int) -> int:
    """The smallest summed cost T in (low, high] with at least `at_least` pairs
    costing T or less (high where there are fewer pairs than that)."""
    lo, hi = low, high  # count(lo) < at_least <= count(hi), or hi == high
    if _count(cd, cs, hi) < at_least:
        return high
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if _count(cd, cs, mid) >= at_least:
            hi = mid
        else:
            lo = mid
    return hi


def _pairs_between(cd: np.ndarray, cs: np.ndarray, low: int, high: int) -> tuple[np.ndarray, np.ndarray]:
    """Positions (into the sorted cd, cs) of the pairs costing more than `low`
    and at most `high`, switch by switch."""
    start = np.searchsorted(cd, low - cs, side="right")
    stop = np.searchsorted(cd, high - cs, side="right")
    lengths = stop - start
    n = int(lengths.sum())
    s_j = np.repeat(np.arange(cs.size), lengths)
    offsets = np.cumsum(lengths) - lengths
    d_i = start[s_j] + (np.arange(n) - offsets[s_j])
    return d_i, s_j


def brute_force_pair(driver_cost, switch_cost, evaluate, *, driver_preferred=None,
                     switch_preferred=None) -> PairChoice | None:
    """Every priced pair evaluated and sorted by §10's order: the reference the
    search is tested against (and a fallback for tiny catalogues)."""
    d_units, s_units = cost_units(driver_cost), cost_units(switch_cost)
    d_all, s_all = np.meshgrid(np.flatnonzero(d_units >= 0), np.flatnonzero(s_units >= 0), indexing="ij")
    d, s = d_all.ravel(), s_all.ravel()
    if d.size == 0:
        return None
    verdict = evaluate(d, s)
    ok = np.asarray(verdict.feasible, dtype=bool)
    if not ok.any():
        return None
    d_pref = np.zeros(len(d_units), bool) if driver_preferred is None else np.asarray(driver_preferred, bool)
    s_pref = np.zeros(len(s_units), bool) if switch_preferred is None else np.asarray(switch_preferred, bool)
    rows = [(int(d_units[a] + s_units[b]), -(int(d_pref[a]) + int(s_pref[b])),
             float(np.nan_to_num(verdict.drop_V[k], nan=np.inf)),
             float(np.nan_to_num(verdict.vce_sat_V[k], nan=np.inf)), int(b), int(a))
            for k, (a, b) in enumerate(zip(d, s)) if ok[k]]
    best = min(rows)
    a, b = best[5], best[4]
    return PairChoice(a, b, float(np.asarray(driver_cost, float)[a] + np.asarray(switch_cost, float)[b]), d.size)
