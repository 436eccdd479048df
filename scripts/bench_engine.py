"""Benchmark: `evaluate_role` over a synthetic catalogue of 100,000 MOSFETs
(or, with --kind npn, 100,000 NPN switches: a latch role with a pull-down, an
open base and a [resistors] tolerance, so every v2 switch rule runs).

The catalogue is built directly as a DataFrame in the loader's format (the
columns and units of `picker.catalog.load.load_catalog`'s result: one row per part,
values in the unit the column name carries, NaN for blank), seeded, with
spreads like a real low-voltage MOSFET list and some blank cells. One
high-side pass-switch role; the median of 5 runs of `evaluate_role` (the
catalogue already loaded). Target: under 0.2 s for 100k parts on a laptop.

    PYTHONPATH=. python scripts/bench_engine.py [--parts N] [--runs R] [--kind pmos|npn] [--profile]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from picker.engine.evaluate import evaluate_role  # noqa: E402
from picker.design.requirements import parse_requirements  # noqa: E402

TARGET_S = 0.2
REQUIREMENTS = """
[supply]
min = "3.0 V"
max = "4.2 V"
capacity = "2.6 Ah"
[ambient]
min = "-20 degC"
max = "45 degC"
[build]
volume = 5000
[[role]]
name = "cell-switch"
refs = ["Q1"]
use = "high-side-pmos"
load = "1.2 A"
max_drop = "60 mV"
gate_drive = "supply"
gate_drive_drop = "0.3 V"
max_off_current = "5 uA"
max_tj = "85 degC"
"""


def synthetic_catalog(n: int, seed: int = 20240611) -> pd.DataFrame:
    """n invented P-channel parts with plausible spreads; about 3 % blank cells
    per column, some parts with fewer on-resistance points, some unpriced."""
    rng = np.random.default_rng(seed)

    def blank(values: np.ndarray, fraction: float = 0.03) -> np.ndarray:
        values = values.astype(float)
        values[rng.random(n) < fraction] = np.nan
        return values

    vt_max = np.round(rng.uniform(0.7, 2.6, n), 2)
    r45 = np.round(np.exp(rng.normal(np.log(40.0), 0.6, n)), 1)  # mΩ at 4.5 V
    # On-resistance at lower drive, by the model's own shape plus scatter.
    r_fix = r45 * rng.uniform(0.2, 0.6, n)
    k = (r45 - r_fix) * (4.5 - vt_max)

    def at(v: float) -> np.ndarray:
        r = np.where(v > vt_max + 0.2, r_fix + k / np.maximum(v - vt_max, 1e-9), np.nan)
        return np.round(r * rng.uniform(1.0, 1.05, n), 1)

    price1 = np.round(rng.uniform(0.1, 0.6, n), 3)
    df = pd.DataFrame({
        "part": [f"SYN-{i:06d}" for i in range(n)],
        "maker": rng.choice(["Synth A", "Synth B", "Synth C"], n),
        "kind": "pmos",
        "package": rng.choice(["SOT-23", "SOT-323", "DFN2020", "SOT-723"], n),
        "status": rng.choice(["active", "nrnd", "eol"], n, p=[0.9, 0.07, 0.03]),
        "preferred": rng.random(n) < 0.1,
        "vds_max_V": blank(rng.choice([8.0, 12.0, 20.0, 30.0], n)),
        "vgs_max_V": blank(rng.choice([6.0, 8.0, 12.0, 20.0], n)),
        "id_max_A": blank(np.round(rng.uniform(0.5, 10.0, n), 1)),
        "vgs_th_max_V": blank(vt_max),
        "rds_on_mohm@10V": blank(at(10.0), 0.6),
        "rds_on_mohm@4.5V": blank(r45),
        "rds_on_mohm@2.5V": blank(at(2.5), 0.2),
        "rds_on_mohm@1.8V": blank(at(1.8), 0.4),
        "idss_uA": blank(rng.choice([0.1, 1.0, 5.0, 10.0], n)),
        "idss_hot_uA": blank(rng.choice([5.0, 10.0, 30.0], n), 0.7),
        "idss_hot_C": blank(np.full(n, 85.0), 0.7),
        "vgs_th_tc_mV/C": blank(rng.uniform(2.0, 4.0, n), 0.9),
        "rds_tc_pct/C": blank(rng.uniform(0.3, 0.7, n), 0.9),
        "rth_ja_C/W": blank(np.round(rng.uniform(80.0, 650.0, n))),
        "tj_max_C": blank(np.full(n, 150.0)),
        "price@1": blank(price1, 0.02),
        "price@100": blank(np.round(price1 * 0.45, 4), 0.02),
        "price@1000": blank(np.round(price1 * 0.22, 4), 0.02),
        "price@10000": blank(np.round(price1 * 0.16, 4), 0.1),
    }, index=pd.Index(np.arange(2, n + 2), name="line"))
    df.loc[df["idss_hot_uA"].isna(), "idss_hot_C"] = np.nan
    return df


SWITCH_REQUIREMENTS = """
[supply]
min = "3.0 V"
max = "4.2 V"
[ambient]
min = "-20 degC"
max = "45 degC"
[build]
volume = 5000
[resistors]
series = "E24"
[[role]]
name = "latch"
refs = ["Q2", "Q3"]
use = "npn-switch"
collector_current = "45 uA"
base_drive = "supply"
base_resistor = "470 kohm"
base_pulldown = "2.2 Mohm"
base_off = "open"
max_off_current = "0.5 uA"
"""


def synthetic_switches(n: int, seed: int = 20240612) -> pd.DataFrame:
    """n invented NPN parts: gain points at 0.1/1/10/100 mA with roll-off at
    both ends, Vce(sat) points, Vbe(sat), hFE max, leakage with some hot points
    (some falling, some zero), about 3 % blank cells per column."""
    rng = np.random.default_rng(seed)

    def blank(values: np.ndarray, fraction: float = 0.03) -> np.ndarray:
        values = values.astype(float)
        values[rng.random(n) < fraction] = np.nan
        return values

    peak = np.round(rng.uniform(80.0, 400.0, n))
    price1 = np.round(rng.uniform(0.02, 0.2, n), 3)
    df = pd.DataFrame({
        "part": [f"SYB-{i:06d}" for i in range(n)],
        "maker": rng.choice(["Synth A", "Synth B", "Synth C"], n),
        "kind": "npn",
        "package": rng.choice(["SOT-23", "SOT-323", "SOT-723"], n),
        "status": rng.choice(["active", "nrnd", "eol"], n, p=[0.9, 0.07, 0.03]),
        "preferred": rng.random(n) < 0.1,
        "vceo_max_V": blank(rng.choice([20.0, 30.0, 45.0, 65.0], n)),
        "ic_max_A": blank(rng.choice([0.1, 0.2, 0.5], n)),
        "hfe_min@0.1mA": blank(np.round(peak * rng.uniform(0.4, 0.8, n)), 0.3),
        "hfe_min@1mA": blank(np.round(peak * rng.uniform(0.8, 1.0, n))),
        "hfe_min@10mA": blank(peak),
        "hfe_min@100mA": blank(np.round(peak * rng.uniform(0.5, 0.9, n)), 0.4),
        "vce_sat_mV@10mA": blank(np.round(rng.uniform(40.0, 120.0, n))),
        "vce_sat_mV@100mA": blank(np.round(rng.uniform(150.0, 400.0, n)), 0.3),
        "vbe_on_V": blank(np.full(n, 0.65), 0.5),
        "vbe_sat_max_V": blank(np.round(rng.uniform(0.8, 0.95, n), 2), 0.3),
        "hfe_max": blank(np.round(peak * rng.uniform(2.0, 3.0, n)), 0.3),
        "icbo_nA": blank(rng.choice([0.0, 1.0, 10.0, 15.0, 50.0], n, p=[0.02, 0.3, 0.4, 0.2, 0.08])),
        "icbo_hot_nA": blank(rng.choice([0.5, 500.0, 5000.0], n), 0.7),
        "icbo_hot_C": blank(np.full(n, 100.0), 0.7),
        "rth_ja_C/W": blank(np.round(rng.uniform(250.0, 650.0, n))),
        "tj_max_C": blank(np.full(n, 150.0)),
        "price@1": blank(price1, 0.02),
        "price@1000": blank(np.round(price1 * 0.22, 4), 0.02),
        "price@10000": blank(np.round(price1 * 0.16, 4), 0.1),
    }, index=pd.Index(np.arange(2, n + 2), name="line"))
    df.loc[df["icbo_hot_nA"].isna(), "icbo_hot_C"] = np.nan
    return df


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--parts", type=int, default=100_000)
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--kind", choices=("pmos", "npn"), default="pmos",
                    help="pmos: a pass switch role; npn: a saturated switch role")
    ap.add_argument("--profile", action="store_true", help="cProfile one run, top 25 by cumulative time")
    args = ap.parse_args()

    if args.kind == "npn":
        df, req = synthetic_switches(args.parts), parse_requirements(SWITCH_REQUIREMENTS, "bench")
    else:
        df, req = synthetic_catalog(args.parts), parse_requirements(REQUIREMENTS, "bench")
    role = req.roles[0]
    evaluate_role(df, role, req)  # warm-up: imports, first allocations

    times = []
    for _ in range(args.runs):
        start = time.perf_counter()
        result = evaluate_role(df, role, req)
        times.append(time.perf_counter() - start)
    median = statistics.median(times)
    feasible = int(result.table["feasible"].sum())
    print(f"{args.parts:,} parts, {feasible:,} feasible; evaluate_role median of {args.runs}: "
          f"{median:.3f} s ({args.parts / median:,.0f} parts/s); runs: "
          + ", ".join(f"{t:.3f}" for t in times))
    scale = args.parts / 100_000
    if args.kind == "pmos":  # the target is the pass switch's
        print(f"target {TARGET_S * scale:.3f} s for {args.parts:,}: "
              + ("met" if median <= TARGET_S * scale else "MISSED"))

    if args.profile:
        import cProfile
        import pstats

        prof = cProfile.Profile()
        prof.enable()
        evaluate_role(df, role, req)
        prof.disable()
        pstats.Stats(prof).sort_stats("cumulative").print_stats(25)


if __name__ == "__main__":
    main()
