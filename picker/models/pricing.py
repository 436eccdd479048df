"""Unit price at the build quantity from quantity price breaks (models/README.md §7)."""

import numpy as np


def unit_price_at(break_qty, prices, quantity):
    """Unit price of each part at ``quantity`` pieces bought.

    break_qty: shape (m,), the N of the ``price@N`` columns, any order.
    prices [currency per part]: shape (n, m), NaN where a part has no price at
    that break. quantity [parts]: scalar or (n,).

    Rule (models/README.md §7, the usual reading of a break table): the price of the
    largest break ``N <= quantity`` among the breaks this part is priced at.
    Below every priced break: the lowest priced break's price, with
    ``below_first_break`` True. No price at all, or NaN quantity: NaN, False.
    Returns ``(unit_price, below_first_break)``, both shape (n,).
    """
    break_qty = np.asarray(break_qty, dtype=float).reshape(-1)
    prices = np.atleast_2d(np.asarray(prices, dtype=float))
    n_parts = prices.shape[0]
    quantity = np.broadcast_to(np.asarray(quantity, dtype=float), (n_parts,))
    unit_price = np.full(n_parts, np.nan)
    lowest = np.full(n_parts, np.nan)  # the price at the lowest priced break
    reached = np.zeros(n_parts, dtype=bool)
    # Breaks in ascending order, one column over all parts at a time: a later
    # (larger) break that is reached and priced replaces the price found so far.
    for j in np.argsort(break_qty, kind="stable"):
        if not np.isfinite(break_qty[j]):
            continue
        price = prices[:, j]
        priced = np.isfinite(price)
        lowest = np.where(np.isnan(lowest) & priced, price, lowest)
        hit = priced & (break_qty[j] <= quantity)
        unit_price = np.where(hit, price, unit_price)
        reached |= hit
    below = ~reached & np.isfinite(lowest) & ~np.isnan(quantity)
    return np.where(reached, unit_price, np.where(below, lowest, np.nan)), below
