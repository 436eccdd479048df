"""picker's speed, each figure beside its floor measured in the same run.

    python scripts/bench.py [--quick] [--runs 5] [--workdir DIR]

Prints one table: the median of several runs of each measure, the floor it is
compared with, their ratio and the target. Synthetic catalogues and BOMs are
generated once into the work folder (seeded: scripts/synth.py) and reused.
`--quick` uses 100k parts instead of 1M where the full run uses 1M.
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(ROOT))


def picker_command() -> list[str]:
    script = shutil.which("picker")
    return [script] if script else [sys.executable, "-m", "picker"]


def run_once(cmd: list[str], env: dict | None = None) -> float:
    """Wall time of one run of a command, in seconds."""
    environment = dict(os.environ, **(env or {}))
    t = time.perf_counter()
    done = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=environment)
    if done.returncode not in (0, 1):
        raise SystemExit(f"command failed ({done.returncode}): {' '.join(cmd)}")
    return time.perf_counter() - t


def wall(cmd: list[str], runs: int, env: dict | None = None) -> float:
    """Median wall time of a command over `runs` runs, after one warm-up run."""
    run_once(cmd, env)
    return statistics.median(run_once(cmd, env) for _ in range(runs))


def paired(cmd: list[str], floor: list[str], runs: int) -> tuple[float, float]:
    """Median wall times of a command and of its floor, run in turn (command,
    floor, command, ...) after a warm-up of each, so that a machine that
    speeds up or slows down during the measurement moves both alike."""
    run_once(cmd)
    run_once(floor)
    times: tuple[list[float], list[float]] = ([], [])
    for _ in range(runs):
        times[0].append(run_once(cmd))
        times[1].append(run_once(floor))
    return statistics.median(times[0]), statistics.median(times[1])


def timed(fn, runs: int) -> float:
    """Median wall time of `fn()` over `runs` calls, after one warm-up call."""
    fn()
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def main(argv: list[str]) -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--workdir", default=os.path.join(tempfile.gettempdir(), "picker-bench"))
    args = parser.parse_args(argv)
    work = Path(args.workdir)
    work.mkdir(parents=True, exist_ok=True)
    big = 100_000 if args.quick else 1_000_000
    rows: list[tuple[str, str, str, str, str]] = []

    import synth

    picker = picker_command()
    py = sys.executable
    example = str(ROOT / "catalog" / "examples" / "kettlewick-power.toml")

    # 1. start-up: help, and the main job on the demo catalogue
    # start-up figures are short and the machine's speed drifts: more runs, in turn with the floor
    starts = max(args.runs, 21)
    help_s, floor_s = paired(picker + ["--help"], [py, "-c", "import typer, rich"], starts)
    rows.append(("picker --help", f"{help_s * 1000:.0f} ms", f"{floor_s * 1000:.0f} ms (import typer, rich)",
                 f"{help_s / floor_s:.2f}x", "<= 1.3x"))
    choose_s, stack_s = paired(picker + ["choose", example],
                               [py, "-c", "import pandas, numpy, typer, rich, rapidfuzz"], starts)
    rows.append(("picker choose (demo)", f"{choose_s * 1000:.0f} ms",
                 f"{stack_s * 1000:.0f} ms (import pandas, numpy, typer, rich, rapidfuzz)",
                 f"{choose_s / stack_s:.2f}x", "<= 1.3x"))

    # 1b. the design report beside the choice it reports, on the same file
    report_out = str(work / "design-review.html")
    report_s, plain_s = paired(picker + ["report", example, "-o", report_out, "--force"],
                               picker + ["choose", example], max(args.runs, 11))
    rows.append(("picker report (demo, HTML)", f"{report_s * 1000:.0f} ms",
                 f"{plain_s * 1000:.0f} ms (picker choose, same file)",
                 f"{report_s / plain_s:.2f}x", "<= 2x"))

    # 2. the engine alone: one pass-switch role over `big` P-channel parts
    from picker.engine.evaluate import evaluate_role
    from picker.design.requirements import load_requirements

    import scalar_reference

    req = load_requirements(example)
    role = req.role("cell-switch")
    frame = synth.loaded_frame(big, seed=1, kinds=("pmos",))
    engine_s = timed(lambda: evaluate_role(frame, role, req), max(3, args.runs // 2))
    rate = big / engine_s
    sample = frame.head(20_000).reset_index(drop=True).to_dict("records")
    spec = {"supply_min": req.supply.min_V, "supply_max": req.supply.max_V,
            "gate_drive_drop": role.gate_drive_drop_V, "ambient_min": req.ambient.min_C,
            "ambient_max": req.ambient.max_C, "load": role.load_A, "max_drop": role.max_drop_V,
            "max_off": role.max_off_current_A, "max_tj": role.max_tj_C, "volume": req.volume}
    scalar_s = timed(lambda: [scalar_reference.evaluate(p, spec) for p in sample], 3)
    scalar_rate = len(sample) / scalar_s
    rows.append((f"engine, {big:,} parts, one role", f"{rate / 1e6:.2f} M parts/s ({engine_s:.2f} s)",
                 f"{scalar_rate / 1e3:.1f} k parts/s (per-part Python, 20k slice)",
                 f"{rate / scalar_rate:.0f}x", ">= 2 M/s and >= 30x"))

    # 3. catalogue load: first parse, then from the cache
    cat_path = work / f"catalog-{big}.csv"
    if not cat_path.exists():
        synth.write_catalog(big, str(cat_path))
    load = [py, "-c", f"from picker.catalog.load import load_catalog; load_catalog({str(cat_path)!r}, source='bench')"]
    cache = work / "cache"
    first = []
    for _ in range(max(1, args.runs // 2)):
        shutil.rmtree(cache, ignore_errors=True)  # nothing cached: the CSV is parsed
        first.append(run_once(load, env={"PICKER_CACHE_DIR": str(cache)}))
    second = wall(load, args.runs, env={"PICKER_CACHE_DIR": str(cache)})  # from the cache
    first_s = statistics.median(first)
    rows.append((f"catalogue load, {big:,} parts", f"{second:.2f} s (second, cached)",
                 f"{first_s:.2f} s (first, parsed)", f"{first_s / second:.1f}x faster", ">= 3x"))

    # 4. BOM review: 1,000 lines against 100k parts
    cat100k = work / "catalog-100000.csv"
    if not cat100k.exists():
        synth.write_catalog(100_000, str(cat100k))
    bom = work / "bom-1000.csv"
    if not bom.exists():
        synth.write_bom(1000, str(cat100k), str(bom))
    review = picker + ["review", str(bom), "--catalog", str(cat100k), "--volume", "5000",
                       "--format", "json"]
    review_s = wall(review, max(3, args.runs // 2), env={"PICKER_CACHE_DIR": str(cache)})
    rows.append(("review, 1,000-line BOM x 100k parts", f"{review_s:.2f} s",
                 f"{stack_s:.2f} s (import pandas, numpy, typer, rich, rapidfuzz)",
                 f"{review_s / stack_s:.1f}x", "< 3 s"))

    width = [max(len(r[i]) for r in rows + [("measure", "figure", "floor", "ratio", "target")])
             for i in range(5)]
    line = "  ".join
    print(line(h.ljust(w) for h, w in zip(("measure", "figure", "floor", "ratio", "target"), width)))
    for r in rows:
        print(line(c.ljust(w) for c, w in zip(r, width)))
    print(f"\nmedian of {args.runs} runs ({starts} for the start-up figures, each in turn with its "
          f"floor); python {sys.version.split()[0]}, {os.cpu_count()} cores, "
          f"{os.environ.get('PICKER_THREADS') or 'all'} engine threads; work folder {work}")


if __name__ == "__main__":
    main(sys.argv[1:])
