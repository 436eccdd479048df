"""Benchmark: the joint choice of one linked pair (models/README.md §10) over a
large catalogue, 10,000 P-channel switches x 10,000 NPN drivers by default.

    python scripts/bench_pairs.py [--switches 10000] [--drivers 10000] [--repeat 5]

Prints the time of the pair search alone (the pairs taken in order of summed
cost, each batch judged by the pair model), of the whole evaluation of the two
linked roles (the search and both role tables: every switch against the chosen
driver, every driver against the chosen switch), how many of the pairs were
judged, and, on a corner of the catalogue small enough for it, that a brute
force over every pair picks the same pair. The parts are seeded synthetic ones
(scripts/synth.py) with a gate charge added; times are medians of --repeat runs.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from synth import loaded_frame  # noqa: E402

from picker.design.requirements import parse_requirements  # noqa: E402
from picker.engine import linked  # noqa: E402
from picker.engine.links import PairModel, links_of  # noqa: E402
from picker.engine.pairs import PairVerdict, brute_force_pair, cheapest_pair  # noqa: E402

REQUIREMENTS = """
[supply]
min = "3.0 V"
max = "4.2 V"
[ambient]
min = "-20 degC"
max = "45 degC"
[build]
volume = 5000
[[role]]
name = "pass"
refs = ["Q1"]
use = "high-side-pmos"
load = "0.8 A"
max_drop = "80 mV"
gate_driver = "latch"
gate_pullup = "auto"
max_turn_off = "20 ms"
max_drive_current = "20 uA"
off_load = "100 kohm"
max_off_current = "20 uA"
[[role]]
name = "latch"
refs = ["Q2"]
use = "npn-switch"
base_from = "pass"
base_resistor = "auto"
base_pulldown = "auto"
max_off_current = "0.5 uA"
"""


def catalogue(n_switches: int, n_drivers: int, seed: int = 3) -> pd.DataFrame:
    switches = loaded_frame(n_switches, seed, kinds=("pmos",))
    drivers = loaded_frame(n_drivers, seed + 1, kinds=("npn",))
    rng = np.random.default_rng(seed)
    switches["qg_nC@4.5V"] = rng.uniform(1.5, 15.0, n_switches).round(1)
    drivers["part"] = drivers["part"].str.replace("SXN", "SXB")
    frame = pd.concat([switches, drivers], ignore_index=True)
    frame.index = pd.RangeIndex(2, len(frame) + 2, name="line")
    return frame


def timed(fn, repeat: int) -> tuple[float, object]:
    times, out = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times), out


def main(argv: list[str]) -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--switches", type=int, default=10_000)
    parser.add_argument("--drivers", type=int, default=10_000)
    parser.add_argument("--repeat", type=int, default=5)
    parser.add_argument("--hard", action="store_true",
                        help="a tighter drop (25 mV) and off-state limit (2 uA): few pairs work")
    args = parser.parse_args(argv)
    text = REQUIREMENTS
    if args.hard:
        text = text.replace('max_drop = "80 mV"', 'max_drop = "25 mV"').replace(
            'max_off_current = "20 uA"', 'max_off_current = "2 uA"')
    req = parse_requirements(text, "bench")
    link = links_of(req)[0]
    df = catalogue(args.switches, args.drivers)

    def search():
        P, S = linked._kind_rows(df, link.partner), linked._kind_rows(df, link.switch)
        model = PairModel(link, req, P, S)
        p_cost, s_cost = linked._costs(P, link.partner, req), linked._costs(S, link.switch, req)
        p_ok, s_ok = linked.own_checks_ok(model)

        def judge(p, s):
            out = model.evaluate(p, s)
            return PairVerdict(out["feasible"], out["switch"]["drop_V"], out["partner"]["vce_sat_V"])
        return cheapest_pair(p_cost["cost"], s_cost["cost"], judge, driver_ok=p_ok, switch_ok=s_ok,
                             driver_preferred=P.identity()["preferred"],
                             switch_preferred=S.identity()["preferred"]), int(p_ok.sum()), int(s_ok.sum())

    search()  # warm up
    t_search, (choice, n_p_ok, n_s_ok) = timed(search, args.repeat)
    t_whole, result = timed(lambda: linked.evaluate_link(df, link, req), args.repeat)
    print(f"catalogue: {args.switches:,} P-channel switches x {args.drivers:,} NPN drivers "
          f"({args.switches * args.drivers:,} pairs)")
    print(f"left after each part's own checks: {n_s_ok:,} switches x {n_p_ok:,} drivers")
    if choice is None:
        print("no feasible pair")
    else:
        P = linked._kind_rows(df, link.partner)
        S = linked._kind_rows(df, link.switch)
        print(f"chosen: switch {S.identity()['part'][choice.switch]}, driver "
              f"{P.identity()['part'][choice.driver]}, {choice.cost:.4f} per board; "
              f"{choice.evaluated:,} pairs judged")
    print(f"pair search: {t_search:.3f} s (median of {args.repeat})")
    print(f"whole linked evaluation (search and both role tables): {t_whole:.3f} s")

    # a corner small enough for a brute force over every pair
    small = catalogue(300, 300, seed=11)
    P, S = linked._kind_rows(small, link.partner), linked._kind_rows(small, link.switch)
    model = PairModel(link, req, P, S)
    p_cost, s_cost = linked._costs(P, link.partner, req), linked._costs(S, link.switch, req)

    def judge(p, s):
        out = model.evaluate(p, s)
        return PairVerdict(out["feasible"], out["switch"]["drop_V"], out["partner"]["vce_sat_V"])
    t_brute, brute = timed(lambda: brute_force_pair(p_cost["cost"], s_cost["cost"], judge,
                                                    driver_preferred=P.identity()["preferred"],
                                                    switch_preferred=S.identity()["preferred"]), 1)
    t_small, fast = timed(lambda: linked.evaluate_link(small, link, req), 1)
    same = (brute is None and not fast.chosen) or (
        brute is not None and fast.chosen and fast.switch.chosen_row == brute.switch
        and fast.partner.chosen_row == brute.driver)
    print(f"300 x 300 check: brute force over 90,000 pairs {t_brute:.3f} s, linked evaluation "
          f"{t_small:.3f} s; same pair: {'yes' if same else 'NO'}")


if __name__ == "__main__":
    main(sys.argv[1:])
