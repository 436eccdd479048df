"""Benchmark of `picker review`: a 1,000-line BOM against a 100,000-part catalogue.

Everything is synthetic and seeded (invented part numbers and makers): the
catalogue is written as a CSV and loaded once with the catalogue loader (its
time is printed apart), the BOM's part numbers are catalogue parts written the
way BOMs drift (case, dropped dashes, reel suffixes, one wrong character, two
characters swapped) plus parts the catalogue does not know and non-transistor
lines. The review is timed end to end, from the BOM file to the JSON document
and the revised BOM's bytes: median of 3 runs. Target: under 3 s.

    PYTHONPATH=. python scripts/bench_review.py [--parts 100000] [--lines 1000] [--seed 7]
"""

from __future__ import annotations

import argparse
import statistics
import string
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

KINDS = ("pmos", "nmos", "npn", "pnp")
PACKAGES = ("SOT-23", "SOT-323", "SOT-723", "SOT-883", "SOT-23-6", "DFN1010", "DFN2020", "SC-70")
SUFFIXES = ("-TR", "/TR", "-REEL", "-R7", "TR", "-TR-PBF")


def catalogue_csv(n: int, rng: np.random.Generator) -> str:
    """n invented parts in the interface's columns, plausible values, seeded."""
    letters = np.array(list(string.ascii_uppercase))
    prefixes = ["".join(rng.choice(letters, 3)) for _ in range(400)]
    makers = [f"Maker {p.title()}" for p in prefixes]
    seen: set[str] = set()
    rows = []
    header = ["part", "maker", "kind", "package", "status", "preferred", "vds_max_V", "vgs_max_V",
              "id_max_A", "vgs_th_min_V", "vgs_th_max_V", "rds_on_mohm@10V", "rds_on_mohm@4.5V",
              "rds_on_mohm@2.5V", "rds_on_mohm@1.8V", "idss_uA", "idss_hot_uA", "idss_hot_C",
              "vceo_max_V", "ic_max_A", "hfe_min@0.1mA", "hfe_min@1mA", "hfe_min@10mA",
              "vce_sat_mV@10mA", "vce_sat_mV@100mA", "vbe_on_V", "icbo_nA", "icbo_hot_nA",
              "icbo_hot_C", "rth_ja_C/W", "tj_max_C", "price@1", "price@100", "price@1000",
              "price@10000"]
    kinds = rng.choice(KINDS, n, p=[0.3, 0.25, 0.27, 0.18])
    while len(rows) < n:
        i = len(rows)
        m = int(rng.integers(len(prefixes)))
        kind = kinds[i]
        number = f"{rng.integers(10, 99999)}{kind[0].upper()}{rng.choice(list('ABCK'))}"
        package = PACKAGES[int(rng.integers(len(PACKAGES)))]
        part = f"{prefixes[m]}{'-' if rng.random() < 0.5 else ''}{number}-{PACKAGES.index(package)}"
        if part.casefold() in seen:
            continue
        seen.add(part.casefold())
        status = rng.choice(["active", "active", "active", "active", "nrnd", "eol"])
        cells = {"part": part, "maker": makers[m], "kind": kind, "package": package,
                 "status": status, "preferred": "yes" if rng.random() < 0.1 else "no"}
        rth = float(rng.choice([250, 300, 330, 400, 600]))
        base = float(rng.choice([0.01, 0.02, 0.04, 0.08, 0.15]))
        cells.update({"rth_ja_C/W": rth, "tj_max_C": 150, "price@1": round(base * 4, 4),
                      "price@100": round(base * 2, 4), "price@1000": round(base, 4),
                      "price@10000": round(base * 0.7, 4)})
        if kind in ("pmos", "nmos"):
            vt = float(rng.choice([0.8, 1.0, 1.2, 1.5]))
            r = float(rng.choice([20, 30, 40, 60, 90]))
            cells.update({"vds_max_V": float(rng.choice([12, 20, 30])), "vgs_max_V": float(rng.choice([8, 12])),
                          "id_max_A": float(rng.choice([1, 2, 3, 4, 5])), "vgs_th_min_V": vt / 2,
                          "vgs_th_max_V": vt, "rds_on_mohm@4.5V": r, "rds_on_mohm@2.5V": round(r * 1.4, 1),
                          "idss_uA": float(rng.choice([0.1, 1, 10])), "idss_hot_uA": "", "idss_hot_C": ""})
            if vt < 1.5 and rng.random() < 0.5:
                cells["rds_on_mohm@1.8V"] = round(r * 2.0, 1)
            if rng.random() < 0.3:
                cells["rds_on_mohm@10V"] = round(r * 0.8, 1)
        else:
            h = float(rng.choice([100, 150, 200, 300]))
            cells.update({"vceo_max_V": float(rng.choice([30, 40, 45, 60])), "ic_max_A": float(rng.choice([0.1, 0.2, 0.5])),
                          "hfe_min@0.1mA": h * 0.7, "hfe_min@1mA": h, "hfe_min@10mA": h * 1.1,
                          "vce_sat_mV@10mA": float(rng.choice([100, 150, 250])),
                          "vce_sat_mV@100mA": float(rng.choice([300, 500, 600])), "vbe_on_V": 0.65,
                          "icbo_nA": float(rng.choice([10, 15, 50])),
                          "icbo_hot_nA": 5000 if rng.random() < 0.5 else "", "icbo_hot_C": 150})
            if cells["icbo_hot_nA"] == "":
                cells["icbo_hot_C"] = ""
        rows.append(",".join(str(cells.get(c, "")) for c in header))
    return "\n".join([",".join(header)] + rows) + "\n"


def corrupt(part: str, rng: np.random.Generator) -> tuple[str, str]:
    """A catalogue part number as a BOM might write it, and how it was spoiled."""
    how = rng.choice(["exact", "case", "dash", "suffix", "typo", "swap"],
                     p=[0.3, 0.12, 0.12, 0.2, 0.18, 0.08])
    if how == "case":
        return part.lower(), how
    if how == "dash":
        return part.replace("-", "", 1), how
    if how == "suffix":
        return part + SUFFIXES[int(rng.integers(len(SUFFIXES)))], how
    if how in ("typo", "swap"):
        digits = [i for i, c in enumerate(part) if c.isdigit()]
        if len(digits) < 2:
            return part, "exact"
        i = digits[int(rng.integers(len(digits) - 1))]
        if how == "typo":
            return part[:i] + str((int(part[i]) + 1 + int(rng.integers(8))) % 10) + part[i + 1:], how
        return part[:i] + part[i + 1] + part[i] + part[i + 2:], how
    return part, "exact"


def bom_csv(parts: list[str], lines: int, rng: np.random.Generator) -> tuple[str, dict, list]:
    """The BOM text, the count of each spelling, and per line (true part or None, spelling)."""
    out = ["Item,Qty,Refs,Maker,Part number,Description,Unit price"]
    kinds: dict[str, int] = {}
    truth: list[tuple[str | None, str]] = []
    ref = 1
    for item in range(1, lines + 1):
        roll = rng.random()
        qty = int(rng.choice([1, 1, 1, 2, 4]))
        if roll < 0.1:  # a resistor: carried through
            refs = f"R{item}"
            out.append(f'{item},1,{refs},Resistor Maker,RS-{item:05d}-F,10k 0402 resistor,0.002')
            kinds["other"] = kinds.get("other", 0) + 1
            truth.append((None, "other"))
            continue
        if roll < 0.18:  # a transistor the catalogue does not know
            part, how, true = f"ZZQ{rng.integers(10**6, 10**7)}X", "unknown", None
        else:
            true = parts[int(rng.integers(len(parts)))]
            part, how = corrupt(true, rng)
        truth.append((true, how))
        kinds[how] = kinds.get(how, 0) + 1
        refs = f"Q{ref}" if qty == 1 else f"Q{ref}-Q{ref + qty - 1}"
        ref += qty
        out.append(f'{item},{qty},"{refs}",Some Maker,{part},small transistor,0.05')
    return "\r\n".join(out) + "\r\n", kinds, truth


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--parts", type=int, default=100_000)
    ap.add_argument("--lines", type=int, default=1000)
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--runs", type=int, default=3)
    args = ap.parse_args()

    from picker.review.bom import read_bom
    from picker.review.revised import revised_bom
    from picker.catalog.load import load_catalog
    from picker.present.bom_review import review_json
    from picker.review.propose import Options, review

    rng = np.random.default_rng(args.seed)
    with tempfile.TemporaryDirectory() as folder:
        cat_path = Path(folder) / "catalogue.csv"
        t = time.perf_counter()
        cat_path.write_text(catalogue_csv(args.parts, rng))
        made = time.perf_counter() - t
        t = time.perf_counter()
        catalog = load_catalog(cat_path, source="bench")
        loaded = time.perf_counter() - t
        df = catalog.df
        text, spelled, truth = bom_csv(df["part"].tolist(), args.lines, rng)
        bom_path = Path(folder) / "bom.csv"
        bom_path.write_bytes(text.encode("utf-8"))
        print(f"catalogue: {len(df):,} parts ({catalog.rows_read:,} rows, "
              f"{len(catalog.errors)} errors), made in {made:.2f} s, loaded once in {loaded:.2f} s")
        print(f"BOM: {args.lines:,} lines; spellings: "
              + ", ".join(f"{k} {v}" for k, v in sorted(spelled.items())))
        times, stages = [], []
        for _ in range(args.runs):
            t0 = time.perf_counter()
            bom = read_bom(bom_path)
            t1 = time.perf_counter()
            rv = review(bom, df, Options(volume=5000))
            t2 = time.perf_counter()
            doc = review_json(rv)
            data = revised_bom(bom, rv.changes())
            t3 = time.perf_counter()
            times.append(t3 - t0)
            stages.append((t1 - t0, t2 - t1, t3 - t2))
        statuses: dict[str, int] = {}
        for line in doc["lines"]:
            key = line["status"] + (" (to confirm)" if line["confirm"] else "")
            statuses[key] = statuses.get(key, 0) + 1
        read_s, review_s, out_s = (statistics.median(s) for s in zip(*stages))
        tally: dict[str, dict[str, int]] = {}
        for (true, how), r in zip(truth, rv.lines):
            got = r.part or None
            status = r.match.status if r.match is not None else "none"
            verdict = ("right" if got == true else "wrong") if got else "none"
            if true is None and got is None:
                verdict = "right"
            row = tally.setdefault(how, {})
            key = f"{verdict}{'?' if status == 'confirm' else ''}"
            row[key] = row.get(key, 0) + 1
        print("matches by spelling (right/wrong/none; '?' = marked to confirm):")
        for how, counts in sorted(tally.items()):
            print(f"  {how:8s} " + ", ".join(f"{k} {v}" for k, v in sorted(counts.items())))
        print("lines: " + ", ".join(f"{k} {v}" for k, v in sorted(statuses.items())))
        print(f"consolidation groups: {len(doc['consolidation'])}; revised BOM: {len(data):,} bytes")
        median = statistics.median(times)
        print(f"review end to end, median of {args.runs}: {median:.2f} s "
              f"(read BOM {read_s:.2f} s, match + screen + consolidate {review_s:.2f} s, "
              f"JSON + revised BOM {out_s:.2f} s); runs: {', '.join(f'{x:.2f}' for x in times)}")
        print("target < 3 s:", "met" if median < 3.0 else "MISSED")


if __name__ == "__main__":
    main()
