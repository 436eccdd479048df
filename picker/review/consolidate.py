"""Consolidation: one part for several BOM lines of a kind, where buying them
together reaches a price break that pays (models/README.md §7).

Reads the line results of `picker.review.propose` (each line's mask of the
parts that may replace it, its cost now and after its own proposal) and
returns the groups to apply and the alternatives to mention.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from picker.models import pricing
from picker.review.kinds import KindParts

EPS_MONEY = 1e-12  # a saving must exceed this to count


@dataclass
class Group:
    """One part for several lines of one kind."""

    kind: str
    part: str
    maker: str
    package: str
    rows: list[int]  # BOM data rows
    units: int  # parts per board, all lines together
    unit_price: float  # at volume x units
    cost_now: float
    cost_line_by_line: float
    cost: float

    @property
    def lines_removed(self) -> int:
        return len(self.rows) - 1



def consolidate(results: list, kinds: dict[str, KindParts], volume: int
                ) -> tuple[list[Group], list[Group]]:
    """One part for several lines of a kind, where it costs no more than the
    line-by-line proposals: the part may replace each of them (its mask), and
    it is priced at the combined quantity, volume x the lines' parts per board.

    Greedy, per kind: among parts serving two or more remaining lines, take
    the one that saves most against the line-by-line cost of those lines (ties:
    more lines, preferred, part number); a line it serves at a higher cost than
    that line's own proposal is left out when that saves more; repeat with the
    lines left. Vectorised over the parts; the loop is over groups found.
    """
    groups: list[Group] = []
    alternatives: list[Group] = []  # one part for all lines of a kind, where the plan differs
    for kind, kp in kinds.items():
        lines = [r for r in results if r.kind == kind and r._mask is not None and r.qty
                 and math.isfinite(r.unit_now) and r.status in ("kept", "proposal", "fix")]
        if len(lines) < 2:
            continue
        mask = np.vstack([r._mask for r in lines])
        q = np.array([r.qty for r in lines], dtype=float)
        now = np.array([r.cost_now for r in lines])
        after = np.array([r.cost_after for r in lines])
        cols_ = np.flatnonzero((mask.sum(axis=0) >= 2) & np.isfinite(kp.prices).any(axis=1))
        if not cols_.size:
            continue
        m = mask[:, cols_]
        prices = kp.prices[cols_]
        remaining = np.ones(len(lines), dtype=bool)

        def cost_of(member: np.ndarray, j: int) -> tuple[float, float]:
            units = float(q[member].sum())
            unit = float(pricing.unit_price_at(kp.breaks, prices[j:j + 1], volume * units)[0][0])
            return unit, unit * units

        weights = m.astype(np.float64)  # lines x parts, for the sums as matrix products
        while remaining.sum() >= 2:
            left = remaining.astype(np.float64)
            counts, units, base = np.vstack([left, q * left, after * left]) @ weights
            cand = np.flatnonzero(counts >= 2)
            if not cand.size:
                break
            units, base = units[cand], base[cand]
            unit = pricing.unit_price_at(kp.breaks, prices[cand], volume * units)[0]
            gain = base - unit * units
            ok = np.isfinite(gain) & (gain >= -EPS_MONEY)
            if not ok.any():
                break
            cand, gain = cand[ok], gain[ok]
            part = kp.part[cols_[cand]]
            pick = np.lexsort((part, ~kp.preferred[cols_[cand]], -counts[cand], -gain))[0]
            j, best_gain = int(cand[pick]), gain[pick]
            member = m[:, j] & remaining
            unit_j, cost_j = cost_of(member, j)
            while True:  # leave out a line served dearer than its own proposal, if that pays
                dear = member & (q * unit_j > after + EPS_MONEY)
                if not dear.any():
                    break
                trial = member & ~dear
                if trial.sum() < 2:
                    break
                t_unit, t_cost = cost_of(trial, j)
                if after[trial].sum() - t_cost <= best_gain + EPS_MONEY:
                    break
                member, unit_j, cost_j = trial, t_unit, t_cost
                best_gain = after[trial].sum() - t_cost
            chosen = [lines[i] for i in np.flatnonzero(member)]
            p = cols_[j]
            groups.append(Group(kind, str(kp.part[p]), str(kp.maker[p]), str(kp.package[p]),
                                [r.line.row for r in chosen], int(q[member].sum()), unit_j,
                                float(now[member].sum()), float(after[member].sum()), cost_j))
            remaining &= ~member
        everything = np.flatnonzero(m.all(axis=0))  # one part for every line of the kind
        if everything.size and not (len(groups) and groups[-1].kind == kind
                                    and len(groups[-1].rows) == len(lines)):
            units = float(q.sum())
            unit = pricing.unit_price_at(kp.breaks, prices[everything], volume * units)[0]
            pick = everything[np.lexsort((kp.part[cols_[everything]], unit))[0]]
            u = float(pricing.unit_price_at(kp.breaks, prices[pick:pick + 1], volume * units)[0][0])
            if math.isfinite(u) and u * units < now.sum() - EPS_MONEY:
                p = cols_[pick]
                alternatives.append(Group(kind, str(kp.part[p]), str(kp.maker[p]), str(kp.package[p]),
                                          [r.line.row for r in lines], int(units), u, float(now.sum()),
                                          float(after.sum()), u * units))
    return groups, alternatives
