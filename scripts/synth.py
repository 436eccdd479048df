"""Seeded synthetic catalogues and BOMs for the benchmarks (invented values).

    python scripts/synth.py catalog 100000 out.csv [--seed 1]
    python scripts/synth.py bom 1000 cat.csv out.csv [--seed 1]

The spreads follow the demo catalogue: thresholds 0.4-2.5 V, on-resistance
10-300 mΩ at 4.5 V rising towards lower drives, leakage, θJA by package,
price breaks falling with quantity; about 3 % of cells blank.
"""

from __future__ import annotations

import argparse
import sys

import numpy as np
import pandas as pd

PACKAGES = {"SOT-23": 300.0, "SOT-323": 420.0, "SOT-723": 600.0, "SOT-883": 650.0,
            "DFN1010": 220.0, "DFN2020": 110.0, "SOT-23-6": 190.0, "SC-70": 430.0}
MAKERS = ["Synthwick Devices", "Lorrow Semi", "Pellant Micro", "Ostrel Discretes"]
COLUMNS = ["part", "maker", "kind", "package", "status", "preferred", "vds_max_V", "vgs_max_V",
           "id_max_A", "vgs_th_min_V", "vgs_th_max_V", "rds_on_mohm@4.5V", "rds_on_mohm@2.5V",
           "rds_on_mohm@1.8V", "idss_uA", "vceo_max_V", "ic_max_A", "hfe_min@1mA",
           "hfe_min@10mA", "hfe_min@100mA", "vce_sat_mV@10mA", "vce_sat_mV@100mA", "icbo_nA",
           "rth_ja_C/W", "tj_max_C", "price@1", "price@100", "price@1000", "price@10000"]


def catalog_frame(n: int, seed: int = 1, kinds=("pmos", "nmos", "npn", "pnp")) -> pd.DataFrame:
    """n invented parts as raw catalogue columns (the CSV's text, as numbers)."""
    rng = np.random.default_rng(seed)
    kind = rng.choice(list(kinds), n)
    mos = np.isin(kind, ["pmos", "nmos"])
    package = rng.choice(list(PACKAGES), n)
    vt_max = rng.uniform(0.5, 2.5, n).round(2)
    vt_min = (vt_max * rng.uniform(0.35, 0.6, n)).round(2)
    r45 = rng.uniform(10, 300, n).round(1)
    # R = R_fix + K/(Vg - Vt): points at lower drives from the same curve
    r_fix = r45 * rng.uniform(0.2, 0.5, n)
    k = (r45 - r_fix) * (4.5 - vt_max)

    def at(v):
        with np.errstate(divide="ignore", invalid="ignore"):
            r = r_fix + k / (v - vt_max)
        return np.where(v > vt_max + 0.2, r.round(1), np.nan)

    price1 = rng.uniform(0.05, 0.6, n).round(3)
    frame = pd.DataFrame({
        "part": [f"SX{kd[0].upper()}{i:07d}-{p[:3]}" for i, (kd, p) in enumerate(zip(kind, package))],
        "maker": rng.choice(MAKERS, n),
        "kind": kind,
        "package": package,
        "status": rng.choice(["active", "active", "active", "nrnd", "eol"], n),
        "preferred": rng.choice(["yes", "no", "no", "no"], n),
        "vds_max_V": np.where(mos, rng.choice([8, 12, 20, 30], n), np.nan),
        "vgs_max_V": np.where(mos, rng.choice([6, 8, 12, 20], n), np.nan),
        "id_max_A": np.where(mos, rng.uniform(0.5, 8, n).round(1), np.nan),
        "vgs_th_min_V": np.where(mos, vt_min, np.nan),
        "vgs_th_max_V": np.where(mos, vt_max, np.nan),
        "rds_on_mohm@4.5V": np.where(mos, r45, np.nan),
        "rds_on_mohm@2.5V": np.where(mos, at(2.5), np.nan),
        "rds_on_mohm@1.8V": np.where(mos, at(1.8), np.nan),
        "idss_uA": np.where(mos, rng.choice([0.1, 0.5, 1, 5, 10], n), np.nan),
        "vceo_max_V": np.where(mos, np.nan, rng.choice([12, 20, 30, 45, 65], n)),
        "ic_max_A": np.where(mos, np.nan, rng.choice([0.1, 0.2, 0.5, 1.0], n)),
        "hfe_min@1mA": np.where(mos, np.nan, rng.uniform(40, 300, n).round()),
        "hfe_min@10mA": np.where(mos, np.nan, rng.uniform(60, 400, n).round()),
        "hfe_min@100mA": np.where(mos, np.nan, rng.uniform(20, 200, n).round()),
        "vce_sat_mV@10mA": np.where(mos, np.nan, rng.uniform(50, 250, n).round()),
        "vce_sat_mV@100mA": np.where(mos, np.nan, rng.uniform(150, 500, n).round()),
        "icbo_nA": np.where(mos, np.nan, rng.choice([5, 10, 15, 50, 100], n)),
        "rth_ja_C/W": np.array([PACKAGES[p] for p in package]) * rng.uniform(0.85, 1.15, n).round(2),
        "tj_max_C": 150.0,
        "price@1": price1,
        "price@100": (price1 * 0.45).round(4),
        "price@1000": (price1 * 0.22).round(4),
        "price@10000": (price1 * 0.15).round(4),
    })
    # about 3 % of the measured cells blank: catalogues have gaps
    for name in ("idss_uA", "rth_ja_C/W", "icbo_nA", "price@10000", "rds_on_mohm@2.5V"):
        frame.loc[rng.random(n) < 0.03, name] = np.nan
    return frame


def write_catalog(n: int, path: str, seed: int = 1) -> None:
    catalog_frame(n, seed).to_csv(path, index=False, float_format="%.6g")


def write_bom(lines: int, catalog_csv: str, path: str, seed: int = 1, unknown_share: float = 0.1) -> None:
    """A BOM of `lines` transistor lines drawn from the catalogue, spelled the way
    BOMs spell them (reel suffixes, case, dropped dashes, one-character typos),
    plus parts the catalogue does not have and some passives."""
    rng = np.random.default_rng(seed)
    parts = pd.read_csv(catalog_csv, usecols=["part", "maker"])
    picks = parts.sample(lines, random_state=seed, replace=len(parts) < lines).reset_index(drop=True)
    rows = []
    for i, (part, maker) in enumerate(zip(picks["part"], picks["maker"])):
        style = rng.integers(0, 5)
        if rng.random() < unknown_share:
            part = f"ZZ{rng.integers(10**6, 10**7)}"
        elif style == 1:
            part = part + "-TR"
        elif style == 2:
            part = part.lower()
        elif style == 3:
            part = part.replace("-", "", 1)
        elif style == 4:
            j = int(rng.integers(2, len(part)))
            part = part[:j] + "7" + part[j + 1:]
        qty = int(rng.integers(1, 4))
        refs = ", ".join(f"Q{3 * i + k + 1}" for k in range(qty))
        rows.append({"Ref Des": refs, "Qty": qty, "Manufacturer": maker, "MPN": part,
                     "Description": "transistor"})
    for i in range(lines // 10):
        rows.append({"Ref Des": f"R{i + 1}", "Qty": 1, "Manufacturer": "Ohmcraft",
                     "MPN": f"RC0402-{i:04d}", "Description": "resistor 10k 0402"})
    pd.DataFrame(rows).to_csv(path, index=False)


def main(argv: list[str]) -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    sub = parser.add_subparsers(dest="what", required=True)
    c = sub.add_parser("catalog")
    c.add_argument("n", type=int)
    c.add_argument("out")
    c.add_argument("--seed", type=int, default=1)
    b = sub.add_parser("bom")
    b.add_argument("lines", type=int)
    b.add_argument("catalog")
    b.add_argument("out")
    b.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    if args.what == "catalog":
        write_catalog(args.n, args.out, args.seed)
    else:
        write_bom(args.lines, args.catalog, args.out, args.seed)


if __name__ == "__main__":
    main(sys.argv[1:])


def loaded_frame(n: int, seed: int = 1, kinds=("pmos",)) -> pd.DataFrame:
    """The same parts as the catalogue loader would return them (index = file
    line, `preferred` as bool): for timing the engine without the CSV."""
    frame = catalog_frame(n, seed, kinds)
    frame["preferred"] = frame["preferred"] == "yes"
    frame.index = pd.RangeIndex(2, n + 2, name="line")
    return frame
