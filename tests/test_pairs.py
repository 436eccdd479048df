"""The joint choice of two linked roles (picker/engine/pairs.py) against a brute force
over every pair, by the order models/README.md §10 gives: lowest summed cost, then
more preferred parts, then the switch's drop, then the driver's Vce(sat), then
catalogue order. The pair verdicts here are arbitrary functions of the pair (the
search must not assume anything about them); the engine's own verdicts are checked
the same way in tests/test_links_engine.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from picker.engine.pairs import PairVerdict, brute_force_pair, cheapest_pair, cost_units


def verdicts(seed: int, n_d: int, n_s: int, p_feasible: float):
    """A table of pair outcomes: feasible at random, drop and Vce(sat) from a few
    levels (so they tie too), NaN now and then."""
    rng = np.random.default_rng(seed)
    feasible = rng.random((n_d, n_s)) < p_feasible
    drop = rng.choice([0.03, 0.04, 0.05, np.nan], size=(n_d, n_s))
    vce = rng.choice([0.05, 0.06, np.nan], size=(n_d, n_s))
    calls = []

    def evaluate(d, s):
        calls.append(len(d))
        return PairVerdict(feasible[d, s], drop[d, s], vce[d, s])
    return evaluate, calls


def prices(rng, n: int) -> np.ndarray:
    """Prices from a short list (ties), some missing; sums like 0.1 + 0.2 = 0.3 occur."""
    cost = rng.choice([0.1, 0.2, 0.3, 0.05, 0.15, 0.25, 0.0085, 0.044], size=n)
    cost[rng.random(n) < 0.1] = np.nan
    return cost


@pytest.mark.parametrize("seed", range(40))
def test_search_equals_brute_force(seed):
    rng = np.random.default_rng(1000 + seed)
    n_d, n_s = int(rng.integers(1, 30)), int(rng.integers(1, 30))
    p = float(rng.choice([0.0, 0.02, 0.2, 0.8]))
    evaluate, _ = verdicts(seed, n_d, n_s, p)
    d_cost, s_cost = prices(rng, n_d), prices(rng, n_s)
    d_pref, s_pref = rng.random(n_d) < 0.3, rng.random(n_s) < 0.3
    got = cheapest_pair(d_cost, s_cost, evaluate, driver_preferred=d_pref, switch_preferred=s_pref,
                        first_batch=int(rng.choice([1, 3, 16, 4096])))
    want = brute_force_pair(d_cost, s_cost, evaluate, driver_preferred=d_pref, switch_preferred=s_pref)
    if want is None:
        assert got is None
    else:
        assert (got.driver, got.switch) == (want.driver, want.switch)
        assert got.cost == pytest.approx(want.cost)


def test_equal_sums_on_paper_tie():
    """0.1 + 0.2 and 0.3 + 0.0 are one cost (in floating point they differ by 5.6e-17):
    the tie goes to the pair with more preferred parts."""
    assert 0.1 + 0.2 != 0.3 + 0.0
    d_cost, s_cost = np.array([0.1, 0.3]), np.array([0.2, 0.0])
    allowed = {(0, 0), (1, 1)}

    def evaluate(d, s):
        ok = np.array([(a, b) in allowed for a, b in zip(d, s)])
        return PairVerdict(ok, np.full(len(d), 0.04), np.full(len(d), 0.05))
    got = cheapest_pair(d_cost, s_cost, evaluate, driver_preferred=np.array([False, True]))
    assert (got.driver, got.switch) == (1, 1)
    assert cost_units([0.1])[0] + cost_units([0.2])[0] == cost_units([0.3])[0]


def test_prefilters_leave_parts_out_and_unpriced_parts_are_never_chosen():
    d_cost, s_cost = np.array([np.nan, 0.02, 0.01]), np.array([0.5, 0.1])

    def evaluate(d, s):
        return PairVerdict(np.ones(len(d), bool), np.zeros(len(d)), np.zeros(len(d)))
    got = cheapest_pair(d_cost, s_cost, evaluate, driver_ok=np.array([True, True, False]))
    assert (got.driver, got.switch) == (1, 1)


def test_the_search_stops_early_when_cheap_pairs_work():
    """2000 x 2000 candidates, one pair in five feasible: the first batch holds the
    answer, so a few thousand of the four million pairs are evaluated."""
    rng = np.random.default_rng(5)
    n = 2000
    evaluate, calls = verdicts(11, n, n, 0.2)
    d_cost, s_cost = rng.uniform(0.005, 0.5, n), rng.uniform(0.01, 0.8, n)
    got = cheapest_pair(d_cost, s_cost, evaluate)
    assert got is not None and got.evaluated == sum(calls) < 10_000
