"""The real executable on mutated files: `python -m picker` as a user runs
it, on catalogues, BOMs, requirement files and suppliers' tables with up to
four edits each. Every run ends with exit 0, 1 or 2, no traceback and no
"internal error"; an exit 2 says why on one line that starts "Error:"
(`catalog check` lists every error it found instead).

Under CI this is CLI_RUNS (300) invocations: 150 examples, each running two
commands at once (the machine has two cores). Locally PICKER_FUZZ_CLI sets
the number of examples (default 15)."""

from __future__ import annotations

import os
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

from conftest import DEMO, EXAMPLES, ROOT, TINY_CSV
from fuzzing import CI, FUZZ, mutated

CLI_EXAMPLES = 150 if CI else int(os.environ.get("PICKER_FUZZ_CLI", "15"))
CLI_RUNS = 2 * CLI_EXAMPLES
CLI = settings(FUZZ, max_examples=CLI_EXAMPLES)

CATALOGUES = [TINY_CSV.encode("utf-8"), DEMO.read_bytes()]
LINEUP_PARTS = [("TQP-100", "TQP-200"), ("HLP6125-T", "HLP6140-T")]  # two parts of each
BOMS = [EXAMPLES.joinpath("kettlewick-bom.csv").read_bytes()] + [
    p.read_bytes() for p in sorted((ROOT / "tests" / "data" / "review").glob("*.csv"))
    if p.name != "cost-catalogue.csv"]
REQUIREMENTS = [p.read_bytes() for p in sorted(EXAMPLES.glob("*.toml"))]
# a P-channel role to compare the two parts in, where the file has one
ROLES = [("cell-switch" if b"cell-switch" in r else None) for r in REQUIREMENTS]
RAW_TABLES = [p.read_bytes() for p in sorted((ROOT / "tests" / "data" / "import").glob("*.csv"))]

COMMANDS = {
    "check": ["catalog", "check", "{cat}"],
    "show": ["catalog", "show", "-c", "{cat}", "--format", "csv"],
    "choose": ["choose", "{req}", "-c", "{cat}", "--format", "json"],
    "review": ["review", "{bom}", "-c", "{cat}", "--format", "csv", "--write-bom", "{out}"],
    "import": ["catalog", "import", "{raw}", "--into", "{into}", "--add-columns"],
    "lineup": ["lineup", "{part1}", "{part2}", "-R", "{req}", "-r", "{role}", "-c", "{cat}"],
}


def run(args: list[str], home: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(ROOT), COLUMNS="120",
               PICKER_CACHE_DIR=str(home / "cache"))
    for name in ("PICKER_CATALOG", "PICKER_DEBUG"):
        env.pop(name, None)
    return subprocess.run([sys.executable, "-m", "picker", *args], capture_output=True,
                          text=True, errors="replace", env=env, timeout=120, cwd=home)


@CLI
@given(cat=st.sampled_from([0, 1]).flatmap(lambda i: mutated([CATALOGUES[i]]).map(
           lambda data: (i, data))),
       req=st.sampled_from(range(len(REQUIREMENTS))).flatmap(lambda i: mutated(
           [REQUIREMENTS[i]], delimiters=b'="[].').map(lambda data: (i, data))),
       bom=mutated(BOMS), raw=mutated(RAW_TABLES),
       pair=st.lists(st.sampled_from(sorted(COMMANDS)), min_size=2, max_size=2, unique=True))
def test_the_executable_on_mutated_files(tmp_path_factory, cat, bom, req, raw, pair):
    home = tmp_path_factory.mktemp("cli")
    (cat_seed, cat), (req_seed, req) = cat, req
    files = {"cat": cat, "bom": bom, "req": req, "raw": raw, "into": TINY_CSV.encode()}
    places = {"part1": LINEUP_PARTS[cat_seed][0], "part2": LINEUP_PARTS[cat_seed][1],
              "role": ROLES[req_seed]}
    for name, data in files.items():
        (home / f"{name}.in").write_bytes(data)
        places[name] = str(home / f"{name}.in")
    places["out"] = str(home / "revised.csv")
    commands = [COMMANDS[c] for c in pair]
    if places["role"] is None:  # lineup with datasheet values only
        commands = [[a for a in argv if a not in ("-R", "{req}", "-r", "{role}")]
                    for argv in commands]
    argvs = [[a.format(**places) for a in argv] for argv in commands]
    with ThreadPoolExecutor(max_workers=2) as pool:
        results = list(pool.map(lambda argv: run(argv, home), argvs))
    for argv, result in zip(argvs, results):
        said = result.stdout + result.stderr
        assert result.returncode in (0, 1, 2), (argv, result.returncode, said[-2000:])
        assert "Traceback" not in said and "internal error" not in said, (argv, said[-2000:])
        if result.returncode == 2 and argv[:2] == ["catalog", "check"]:
            assert ": error: " in result.stdout or result.stderr.startswith("Error: "), said
        elif result.returncode == 2:
            assert any(line.startswith("Error: ") for line in result.stderr.splitlines()), \
                (argv, result.stderr[-2000:])
    # The inputs are never written; the import target is either as it was or
    # a catalogue with a .bak of the old one.
    for name in ("cat", "bom", "req", "raw"):
        assert (home / f"{name}.in").read_bytes() == files[name]
    if (home / "into.in.bak").exists():
        assert (home / "into.in.bak").read_bytes() == TINY_CSV.encode()
    else:
        assert (home / "into.in").read_bytes() == TINY_CSV.encode()
    leftovers = [p.name for p in home.iterdir() if p.name.endswith(".tmp")]
    assert not leftovers, leftovers


def test_the_run_count_meets_the_ci_budget():
    assert not CI or CLI_RUNS >= 300
