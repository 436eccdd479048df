"""Unit price at the build quantity from quantity price breaks (models.md §7)."""

import numpy as np


def unit_price_at(break_qty, prices, quantity):
    """Unit price of each part at ``quantity`` pieces bought.

    break_qty: shape (m,), the N of the ``price@N`` columns, any order.
    prices [currency per part]: shape (n, m), NaN where a part has no price at
    that break. quantity [parts]: scalar or (n,).

    Rule (models.md §7, the usual reading of a break table): the price of the
    largest break ``N <= quantity`` among the breaks this part is priced at.
    Below every priced break: the lowest priced break's price, with
    ``below_first_break`` True. No price at all, or NaN quantity: NaN, False.
    Returns ``(unit_price, below_first_break)``, both shape (n,).
    """
    break_qty = np.asarray(break_qty, dtype=float).reshape(-1)
    prices = np.atleast_2d(np.asarray(prices, dtype=float))
    n_parts = prices.shape[0]
    quantity = np.broadcast_to(np.asarray(quantity, dtype=float), (n_parts,))
    if break_qty.size == 0:
        return np.full(n_parts, np.nan), np.zeros(n_parts, dtype=bool)

    priced = np.isfinite(prices) & np.isfinite(break_qty)
    reached = priced & (break_qty <= quantity[:, None])
    rows = np.arange(n_parts)
    largest_reached = np.argmax(np.where(reached, break_qty, -np.inf), axis=1)
    lowest_priced = np.argmin(np.where(priced, break_qty, np.inf), axis=1)

    any_reached = reached.any(axis=1)
    below = priced.any(axis=1) & ~any_reached & ~np.isnan(quantity)
    unit_price = np.where(any_reached, prices[rows, largest_reached],
                          np.where(below, prices[rows, lowest_priced], np.nan))
    return unit_price, below
