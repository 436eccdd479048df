"""Unit price at the build quantity from price breaks (models/README.md §7).

Source: the usual reading of a quantity break table (common practice): the
price at quantity N applies from N pieces up, until the next break.
"""

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from picker.models.pricing import unit_price_at

NAN = np.nan
BREAKS = np.array([1, 100, 1000, 10000])


def test_break_lookup_by_hand():
    """Breaks 1 / 100 / 1000 / 10000 at 0.50 / 0.30 / 0.20 / 0.12:
    5000 pieces → largest break <= 5000 is 1000 → 0.20; 10000 → 0.12; 99 → 1 → 0.50;
    1 → 0.50."""
    prices = np.tile([0.50, 0.30, 0.20, 0.12], (4, 1))
    price, below = unit_price_at(BREAKS, prices, np.array([5000, 10000, 99, 1]))
    np.testing.assert_array_equal(price, [0.20, 0.12, 0.50, 0.50])
    assert not below.any()


def test_below_the_first_break():
    """Breaks priced from 100 only, 50 pieces: the 100 price (0.30), with below_first_break."""
    price, below = unit_price_at(BREAKS, np.array([[NAN, 0.30, 0.20, NAN]]), 50)
    assert price[0] == 0.30 and below[0]


def test_missing_breaks_and_no_price_per_part():
    """5000 pieces, one call for the catalogue:
    part 0 priced at 1 and 10000 only → 1 is the largest priced break <= 5000 → 0.50;
    part 1 priced at 100 and 10000 → 0.30; part 2 priced at 10000 only → 0.12, below;
    part 3 no price → NaN, not below."""
    prices = np.array([[0.50, NAN, NAN, 0.12], [NAN, 0.30, NAN, 0.11],
                       [NAN, NAN, NAN, 0.12], [NAN, NAN, NAN, NAN]])
    price, below = unit_price_at(BREAKS, prices, 5000)
    np.testing.assert_array_equal(price[:3], [0.50, 0.30, 0.12])
    assert np.isnan(price[3])
    assert list(below) == [False, False, True, False]


def test_breaks_in_any_column_order_and_per_part_quantity():
    """Columns price@1000, price@1, price@100: 250 pieces → the 100 break, 2000 → the 1000."""
    prices = np.array([[0.20, 0.50, 0.30]] * 2)
    price, below = unit_price_at(np.array([1000, 1, 100]), prices, np.array([250, 2000]))
    np.testing.assert_array_equal(price, [0.30, 0.20])
    assert not below.any()


def test_no_break_columns_at_all():
    """A catalogue without any price@N column: every price unknown."""
    price, below = unit_price_at(np.array([]), np.empty((2, 0)), 5000)
    assert np.isnan(price).all() and not below.any()


falling_tables = st.lists(st.floats(0.001, 10.0), min_size=1, max_size=6).map(
    lambda p: sorted(p, reverse=True))


@given(prices=falling_tables, gaps=st.lists(st.booleans(), min_size=6, max_size=6),
       q1=st.integers(1, 10**6), dq=st.integers(0, 10**6))
def test_price_never_rises_with_quantity(prices, gaps, q1, dq):
    """When the break prices fall with quantity, buying more never costs more per part,
    whatever breaks a part leaves blank."""
    breaks = np.array([1, 10, 100, 1000, 10000, 100000][:len(prices)])
    row = np.array([NAN if gap else p for p, gap in zip(prices, gaps)])
    price, _ = unit_price_at(breaks, np.array([row, row]), np.array([q1, q1 + dq]))
    if np.isnan(row).all():
        assert np.isnan(price).all()
    else:
        assert price[1] <= price[0]
